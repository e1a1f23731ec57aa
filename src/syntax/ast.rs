//! The netlist AST. Every node carries the byte span of its text.

use crate::source::Span;

#[derive(Clone, Debug, PartialEq)]
pub struct Spanned<T> {
    pub node: T,
    pub span: Span,
}

impl<T> Spanned<T> {
    pub fn new(node: T, span: Span) -> Self {
        Spanned { node, span }
    }
}

/// A value as written: its interpretation depends on the key it is given
/// to, so it stays text until the model stage.
#[derive(Clone, Debug, PartialEq)]
pub enum Value {
    /// A quantity or a bare word (`12V`, `4k7`, `DEMO-N60-3A`).
    Atom(String),
    /// A double-quoted string, escapes resolved.
    Str(String),
    /// `lo..hi`, each end with its own span.
    Range(Spanned<String>, Spanned<String>),
}

impl Value {
    pub fn describe(&self) -> &'static str {
        match self {
            Value::Atom(_) => "a value",
            Value::Str(_) => "a string",
            Value::Range(..) => "a range",
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Param {
    pub key: Spanned<String>,
    pub value: Spanned<Value>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PinEntry {
    /// `None` for a bare net in a two-terminal part's pin list.
    pub pin: Option<Spanned<String>>,
    pub net: Spanned<String>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PartStmt {
    pub kind: Spanned<String>,
    pub reference: Spanned<String>,
    pub pins: Vec<PinEntry>,
    pub pins_span: Span,
    pub value: Option<Spanned<Value>>,
    pub params: Vec<Param>,
}

#[derive(Clone, Debug, PartialEq)]
pub enum RailOptKind {
    Max,
    Min,
    Tol,
}

#[derive(Clone, Debug, PartialEq)]
pub struct RailOpt {
    pub kind: RailOptKind,
    pub value: Spanned<Value>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PinRef {
    pub part: Spanned<String>,
    pub pin: Spanned<String>,
}

#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug, PartialEq)]
pub enum DriveMode {
    Static,
    Pwm {
        freq: Spanned<Value>,
        duty: Option<Spanned<Value>>,
        complement: Option<PinRef>,
        deadtime: Option<Spanned<Value>>,
    },
}

#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug, PartialEq)]
pub enum StatementKind {
    Design {
        name: Spanned<String>,
        rev: Option<Spanned<String>>,
    },
    Library(Spanned<String>),
    Ambient(Spanned<Value>),
    Rail {
        name: Spanned<String>,
        nominal: Spanned<Value>,
        opts: Vec<RailOpt>,
    },
    Ground(Spanned<String>),
    Drive {
        pin: PinRef,
        mode: DriveMode,
    },
    Part(PartStmt),
}

#[derive(Clone, Debug, PartialEq)]
pub struct Statement {
    pub kind: StatementKind,
    /// The whole logical line's statement text.
    pub span: Span,
    /// Zero-based line index of the statement's first physical line.
    pub line: usize,
}

/// `# armature: allow RULE[, RULE] -- reason`
#[derive(Clone, Debug, PartialEq)]
pub struct Suppression {
    pub rules: Vec<Spanned<String>>,
    pub reason: Option<String>,
    pub span: Span,
    /// Zero-based line of the comment.
    pub line: usize,
    /// True when the comment is the only thing on its line (it then
    /// applies to the next statement).
    pub own_line: bool,
}

#[derive(Clone, Debug, Default, PartialEq)]
pub struct Netlist {
    pub statements: Vec<Statement>,
    pub suppressions: Vec<Suppression>,
}

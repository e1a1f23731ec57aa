//! The netlist AST. Every node carries the byte span of its text.
//!
//! Names and values borrow the file's text (`'a`): a big netlist has
//! millions of tokens, and one allocation each would dominate the parse.
//! Only a string with escapes (or one that spans a line continuation)
//! owns its text.

use crate::source::Span;
use std::borrow::Cow;

/// A name or token as written in the file.
pub type Text<'a> = Spanned<&'a str>;

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
pub enum Value<'a> {
    /// A quantity or a bare word (`12V`, `4k7`, `DEMO-N60-3A`).
    Atom(&'a str),
    /// A double-quoted string, escapes resolved.
    Str(Cow<'a, str>),
    /// `lo..hi`, each end with its own span.
    Range(Text<'a>, Text<'a>),
}

impl Value<'_> {
    pub fn describe(&self) -> &'static str {
        match self {
            Value::Atom(_) => "a value",
            Value::Str(_) => "a string",
            Value::Range(..) => "a range",
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Param<'a> {
    pub key: Text<'a>,
    pub value: Spanned<Value<'a>>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PinEntry<'a> {
    /// `None` for a bare net in a two-terminal part's pin list.
    pub pin: Option<Text<'a>>,
    pub net: Text<'a>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PartStmt<'a> {
    pub kind: Text<'a>,
    pub reference: Text<'a>,
    pub pins: Vec<PinEntry<'a>>,
    pub pins_span: Span,
    pub value: Option<Spanned<Value<'a>>>,
    pub params: Vec<Param<'a>>,
}

#[derive(Clone, Debug, PartialEq)]
pub enum RailOptKind {
    Max,
    Min,
    Tol,
}

#[derive(Clone, Debug, PartialEq)]
pub struct RailOpt<'a> {
    pub kind: RailOptKind,
    pub value: Spanned<Value<'a>>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct PinRef<'a> {
    pub part: Text<'a>,
    pub pin: Text<'a>,
}

// Lives inside a boxed `DriveStmt`: its size does not weigh on part lines.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug, PartialEq)]
pub enum DriveMode<'a> {
    Static,
    Pwm {
        freq: Spanned<Value<'a>>,
        duty: Option<Spanned<Value<'a>>>,
        complement: Option<PinRef<'a>>,
        deadtime: Option<Spanned<Value<'a>>>,
    },
}

/// The statements. Rare, large ones are boxed so that the common part
/// line sets the size of every statement.
#[derive(Clone, Debug, PartialEq)]
pub enum StatementKind<'a> {
    Design {
        name: Spanned<Cow<'a, str>>,
        rev: Option<Spanned<Cow<'a, str>>>,
    },
    Library(Spanned<Cow<'a, str>>),
    Ambient(Spanned<Value<'a>>),
    Rail(Box<RailStmt<'a>>),
    Ground(Text<'a>),
    Drive(Box<DriveStmt<'a>>),
    Part(PartStmt<'a>),
}

#[derive(Clone, Debug, PartialEq)]
pub struct RailStmt<'a> {
    pub name: Text<'a>,
    pub nominal: Spanned<Value<'a>>,
    pub opts: Vec<RailOpt<'a>>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct DriveStmt<'a> {
    pub pin: PinRef<'a>,
    pub mode: DriveMode<'a>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Statement<'a> {
    pub kind: StatementKind<'a>,
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
pub struct Netlist<'a> {
    pub statements: Vec<Statement<'a>>,
    pub suppressions: Vec<Suppression>,
}

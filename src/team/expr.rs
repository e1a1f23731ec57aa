//! Team-rule expressions: parse (pest + Pratt), type-check with units,
//! evaluate over a part's facts and ratings.

use crate::source::Span;
use crate::units::{self, Dimension};
use pest::Parser;
use pest::iterators::{Pair, Pairs};
use pest::pratt_parser::{Assoc, Op, PrattParser};
use std::fmt;
use std::sync::OnceLock;

#[derive(pest_derive::Parser)]
#[grammar = "../grammar/expr.pest"]
struct ExprParser;

/// Deepest nesting of parentheses and prefix operators accepted.
pub const MAX_DEPTH: usize = 64;
/// Longest expression accepted (bytes).
pub const MAX_LEN: usize = 8192;

/// Dimension as exponents of (V, A, s, K): every unit the language
/// knows is a product of these.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub struct Dim(pub [i8; 4]);

impl Dim {
    pub const NONE: Dim = Dim([0, 0, 0, 0]);
    pub fn of(d: Dimension) -> Dim {
        Dim(match d {
            Dimension::Number => [0, 0, 0, 0],
            Dimension::Voltage => [1, 0, 0, 0],
            Dimension::Current => [0, 1, 0, 0],
            Dimension::Resistance => [1, -1, 0, 0],
            Dimension::Capacitance => [-1, 1, 1, 0],
            Dimension::Inductance => [1, -1, 1, 0],
            Dimension::Frequency => [0, 0, -1, 0],
            Dimension::Power => [1, 1, 0, 0],
            Dimension::Time => [0, 0, 1, 0],
            Dimension::Charge => [0, 1, 1, 0],
            Dimension::Energy => [1, 1, 1, 0],
            Dimension::Temperature => [0, 0, 0, 1],
            Dimension::ThermalResistance => [-1, -1, 0, 1],
        })
    }
    pub fn named(self) -> Option<Dimension> {
        Dimension::ALL.into_iter().find(|d| Dim::of(*d) == self)
    }
    fn mul(self, o: Dim) -> Dim {
        let mut r = [0i8; 4];
        for (i, x) in r.iter_mut().enumerate() {
            *x = self.0[i].saturating_add(o.0[i]);
        }
        Dim(r)
    }
    fn div(self, o: Dim) -> Dim {
        let mut r = [0i8; 4];
        for (i, x) in r.iter_mut().enumerate() {
            *x = self.0[i].saturating_sub(o.0[i]);
        }
        Dim(r)
    }
    pub fn describe(self) -> String {
        match self.named() {
            Some(Dimension::Number) => "a plain number".to_string(),
            Some(d) => d.article_name().to_string(),
            None => {
                let names = ["V", "A", "s", "K"];
                let mut parts = Vec::new();
                for (i, e) in self.0.iter().enumerate() {
                    match e {
                        0 => {}
                        1 => parts.push(names[i].to_string()),
                        e => parts.push(format!("{}^{e}", names[i])),
                    }
                }
                format!("a quantity in {}", parts.join("·"))
            }
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ty {
    Q(Dim),
    Bool,
    Str,
}

impl fmt::Display for Ty {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Ty::Q(d) => f.write_str(&d.describe()),
            Ty::Bool => f.write_str("a boolean"),
            Ty::Str => f.write_str("a string"),
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BinOp {
    Or,
    And,
    Lt,
    Le,
    Gt,
    Ge,
    Eq,
    Ne,
    Add,
    Sub,
    Mul,
    Div,
}

#[derive(Clone, Debug, PartialEq)]
pub enum Node {
    Num(f64, Dim),
    Str(String),
    Bool(bool),
    Name(String),
    Call(String, Vec<Expr>),
    Neg(Box<Expr>),
    Not(Box<Expr>),
    Bin(BinOp, Box<Expr>, Box<Expr>),
}

#[derive(Clone, Debug, PartialEq)]
pub struct Expr {
    pub node: Node,
    /// Byte range within the expression text.
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub struct ExprError {
    pub message: String,
    pub span: Span,
}

fn pratt() -> &'static PrattParser<Rule> {
    static P: OnceLock<PrattParser<Rule>> = OnceLock::new();
    P.get_or_init(|| {
        PrattParser::new()
            .op(Op::infix(Rule::op_or, Assoc::Left))
            .op(Op::infix(Rule::op_and, Assoc::Left))
            .op(Op::infix(Rule::op_lt, Assoc::Left)
                | Op::infix(Rule::op_le, Assoc::Left)
                | Op::infix(Rule::op_gt, Assoc::Left)
                | Op::infix(Rule::op_ge, Assoc::Left)
                | Op::infix(Rule::op_eq, Assoc::Left)
                | Op::infix(Rule::op_ne, Assoc::Left))
            .op(Op::infix(Rule::op_add, Assoc::Left) | Op::infix(Rule::op_sub, Assoc::Left))
            .op(Op::infix(Rule::op_mul, Assoc::Left) | Op::infix(Rule::op_div, Assoc::Left))
            .op(Op::prefix(Rule::op_not) | Op::prefix(Rule::op_neg))
    })
}

fn rule_name(r: Rule) -> &'static str {
    match r {
        Rule::EOI => "end of expression",
        Rule::WHITESPACE => "whitespace",
        Rule::ident_char | Rule::ident | Rule::name => "a name",
        Rule::number => "a number",
        Rule::qsuffix => "a unit",
        Rule::quantity => "a quantity",
        Rule::string | Rule::string_inner | Rule::string_inner1 => "a string",
        Rule::kw_true | Rule::kw_false | Rule::boolean => "`true` or `false`",
        Rule::op_or => "`or`",
        Rule::op_and => "`and`",
        Rule::op_not => "`not`",
        Rule::op_le => "`<=`",
        Rule::op_ge => "`>=`",
        Rule::op_eq => "`==`",
        Rule::op_ne => "`!=`",
        Rule::op_lt => "`<`",
        Rule::op_gt => "`>`",
        Rule::op_add => "`+`",
        Rule::op_sub => "`-`",
        Rule::op_mul => "`*`",
        Rule::op_div => "`/`",
        Rule::op_neg => "`-`",
        Rule::infix => "an operator",
        Rule::prefix => "`not` or `-`",
        Rule::lparen => "`(`",
        Rule::rparen => "`)`",
        Rule::comma => "`,`",
        Rule::call => "a function call",
        Rule::group => "a parenthesised expression",
        Rule::primary => "a value",
        Rule::expr | Rule::formula => "an expression",
    }
}

/// Nesting depth of parentheses and runs of prefix operators, so that
/// hostile input is refused before it reaches a recursive parser.
fn depth_check(text: &str) -> Result<(), ExprError> {
    if text.len() > MAX_LEN {
        return Err(ExprError {
            message: format!(
                "expression is {} bytes long; the limit is {MAX_LEN}",
                text.len()
            ),
            span: Span::new(0, 0),
        });
    }
    let mut depth = 0usize;
    let mut prefixes = 0usize;
    let bytes = text.as_bytes();
    let mut i = 0;
    while i < bytes.len() {
        let b = bytes[i];
        match b {
            b'(' => {
                depth += 1;
                if depth > MAX_DEPTH {
                    return Err(ExprError {
                        message: format!("expression nests deeper than {MAX_DEPTH} levels"),
                        span: Span::new(i, i + 1),
                    });
                }
            }
            b')' => depth = depth.saturating_sub(1),
            b'-' => {
                prefixes += 1;
            }
            b'n' if text.get(i..i + 3) == Some("not") => prefixes += 1,
            _ => {}
        }
        if prefixes > 4 * MAX_DEPTH {
            return Err(ExprError {
                message: format!(
                    "expression has more than {} prefix operators",
                    4 * MAX_DEPTH
                ),
                span: Span::new(i, i + 1),
            });
        }
        i += 1;
    }
    Ok(())
}

pub fn parse(text: &str) -> Result<Expr, ExprError> {
    depth_check(text)?;
    let mut pairs = ExprParser::parse(Rule::formula, text).map_err(|e| {
        use pest::error::{ErrorVariant, InputLocation};
        let pos = match e.location {
            InputLocation::Pos(p) => p,
            InputLocation::Span((s, _)) => s,
        };
        let expected = match &e.variant {
            ErrorVariant::ParsingError { positives, .. } => {
                let mut n: Vec<&str> = positives.iter().map(|r| rule_name(*r)).collect();
                n.sort_unstable();
                n.dedup();
                n.join(", ")
            }
            ErrorVariant::CustomError { message } => message.clone(),
        };
        let found: String = text.get(pos..).unwrap_or("").chars().take(12).collect();
        ExprError {
            message: format!(
                "expected {expected}, found {}",
                if found.is_empty() {
                    "end of expression".to_string()
                } else {
                    format!("`{found}`")
                }
            ),
            span: Span::new(pos, (pos + 1).min(text.len().max(pos))),
        }
    })?;
    let expr = pairs.next().ok_or(ExprError {
        message: "empty expression".into(),
        span: Span::new(0, 0),
    })?;
    lower(expr.into_inner())
}

fn sp(p: &Pair<Rule>) -> Span {
    Span::new(p.as_span().start(), p.as_span().end())
}

fn lower(pairs: Pairs<Rule>) -> Result<Expr, ExprError> {
    pratt()
        .map_primary(lower_primary)
        .map_prefix(|op, rhs| {
            let rhs = rhs?;
            let span = sp(&op).join(rhs.span);
            Ok(Expr {
                node: if op.as_rule() == Rule::op_not {
                    Node::Not(Box::new(rhs))
                } else {
                    Node::Neg(Box::new(rhs))
                },
                span,
            })
        })
        .map_infix(|lhs, op, rhs| {
            let (lhs, rhs) = (lhs?, rhs?);
            let o = match op.as_rule() {
                Rule::op_or => BinOp::Or,
                Rule::op_and => BinOp::And,
                Rule::op_lt => BinOp::Lt,
                Rule::op_le => BinOp::Le,
                Rule::op_gt => BinOp::Gt,
                Rule::op_ge => BinOp::Ge,
                Rule::op_eq => BinOp::Eq,
                Rule::op_ne => BinOp::Ne,
                Rule::op_add => BinOp::Add,
                Rule::op_sub => BinOp::Sub,
                Rule::op_mul => BinOp::Mul,
                _ => BinOp::Div,
            };
            let span = lhs.span.join(rhs.span);
            Ok(Expr {
                node: Node::Bin(o, Box::new(lhs), Box::new(rhs)),
                span,
            })
        })
        .parse(pairs)
}

fn lower_primary(p: Pair<Rule>) -> Result<Expr, ExprError> {
    let span = sp(&p);
    let node = match p.as_rule() {
        Rule::group => {
            let inner = p.into_inner().find(|x| x.as_rule() == Rule::expr);
            return match inner {
                Some(e) => lower(e.into_inner()).map(|mut x| {
                    x.span = span;
                    x
                }),
                None => Err(ExprError {
                    message: "empty parentheses".into(),
                    span,
                }),
            };
        }
        Rule::call => {
            let mut it = p.into_inner();
            let name = it
                .next()
                .map(|x| x.as_str().to_string())
                .unwrap_or_default();
            let mut args = Vec::new();
            for a in it {
                if a.as_rule() == Rule::expr {
                    args.push(lower(a.into_inner())?);
                }
            }
            Node::Call(name, args)
        }
        Rule::quantity => match units::parse(p.as_str()) {
            Ok(q) => Node::Num(q.value, Dim::of(q.dim)),
            Err(e) => {
                return Err(ExprError {
                    message: e.to_string(),
                    span,
                });
            }
        },
        Rule::number => match p.as_str().parse::<f64>() {
            Ok(v) if v.is_finite() => Node::Num(v, Dim::NONE),
            _ => {
                return Err(ExprError {
                    message: "number out of range".into(),
                    span,
                });
            }
        },
        Rule::string => {
            let inner = p.into_inner().next().map(|x| x.as_str()).unwrap_or("");
            Node::Str(
                inner
                    .replace("\\\"", "\"")
                    .replace("\\'", "'")
                    .replace("\\\\", "\\"),
            )
        }
        Rule::boolean => Node::Bool(p.as_str() == "true"),
        Rule::name => Node::Name(p.as_str().to_string()),
        _ => {
            return Err(ExprError {
                message: "unexpected token".into(),
                span,
            });
        }
    };
    Ok(Expr { node, span })
}

/// What a name means, for the type checker.
pub trait Scope {
    /// The type of a bare name, or an error message.
    fn name(&self, name: &str) -> Result<Ty, String>;
    /// Whether a pin exists (for `v_max(PIN)`).
    fn pin(&self, pin: &str) -> bool;
    /// Whether a key exists (for `has(KEY)`).
    fn key(&self, key: &str) -> bool;
}

fn err(message: String, span: Span) -> ExprError {
    ExprError { message, span }
}

/// Type-check and unit-check an expression.
pub fn check(e: &Expr, scope: &dyn Scope) -> Result<Ty, ExprError> {
    match &e.node {
        Node::Num(_, d) => Ok(Ty::Q(*d)),
        Node::Str(_) => Ok(Ty::Str),
        Node::Bool(_) => Ok(Ty::Bool),
        Node::Name(n) => scope.name(n).map_err(|m| err(m, e.span)),
        Node::Neg(x) => match check(x, scope)? {
            Ty::Q(d) => Ok(Ty::Q(d)),
            t => Err(err(format!("`-` needs a number, found {t}"), e.span)),
        },
        Node::Not(x) => match check(x, scope)? {
            Ty::Bool => Ok(Ty::Bool),
            t => Err(err(format!("`not` needs a boolean, found {t}"), e.span)),
        },
        Node::Call(f, args) => {
            let arity = |n: usize| -> Result<(), ExprError> {
                if args.len() == n {
                    Ok(())
                } else {
                    Err(err(
                        format!(
                            "`{f}` takes {n} argument{}, found {}",
                            if n == 1 { "" } else { "s" },
                            args.len()
                        ),
                        e.span,
                    ))
                }
            };
            match f.as_str() {
                "v_max" | "v_min" => {
                    arity(1)?;
                    match &args[0].node {
                        Node::Name(p) if scope.pin(p) => Ok(Ty::Q(Dim::of(Dimension::Voltage))),
                        Node::Name(p) => Err(err(
                            format!("no pin `{p}` on the rule's kinds"),
                            args[0].span,
                        )),
                        _ => Err(err(format!("`{f}` takes a pin name"), args[0].span)),
                    }
                }
                "has" => {
                    arity(1)?;
                    match &args[0].node {
                        Node::Name(k) if scope.key(k) => Ok(Ty::Bool),
                        Node::Name(k) => Err(err(
                            format!("`{k}` is not a key of the rule's kinds"),
                            args[0].span,
                        )),
                        _ => Err(err("`has` takes a key name".into(), args[0].span)),
                    }
                }
                "abs" => {
                    arity(1)?;
                    match check(&args[0], scope)? {
                        Ty::Q(d) => Ok(Ty::Q(d)),
                        t => Err(err(
                            format!("`abs` needs a number, found {t}"),
                            args[0].span,
                        )),
                    }
                }
                "min" | "max" => {
                    arity(2)?;
                    let a = check(&args[0], scope)?;
                    let b = check(&args[1], scope)?;
                    match (a, b) {
                        (Ty::Q(x), Ty::Q(y)) if x == y => Ok(Ty::Q(x)),
                        _ => Err(err(
                            format!(
                                "`{f}` needs two quantities of one dimension, found {a} and {b}"
                            ),
                            e.span,
                        )),
                    }
                }
                _ => Err(err(
                    format!("unknown function `{f}` (known: min, max, abs, has, v_max, v_min)"),
                    e.span,
                )),
            }
        }
        Node::Bin(op, l, r) => {
            let a = check(l, scope)?;
            let b = check(r, scope)?;
            use BinOp::*;
            match op {
                And | Or => match (a, b) {
                    (Ty::Bool, Ty::Bool) => Ok(Ty::Bool),
                    _ => Err(err(
                        format!(
                            "`{}` needs booleans, found {a} and {b}",
                            if *op == And { "and" } else { "or" }
                        ),
                        e.span,
                    )),
                },
                Eq | Ne if a == b => Ok(Ty::Bool),
                Lt | Le | Gt | Ge | Eq | Ne => match (a, b) {
                    (Ty::Q(x), Ty::Q(y)) if x == y => Ok(Ty::Bool),
                    _ => Err(err(format!("cannot compare {a} with {b}"), e.span)),
                },
                Add | Sub => match (a, b) {
                    (Ty::Q(x), Ty::Q(y)) if x == y => Ok(Ty::Q(x)),
                    _ => Err(err(
                        format!(
                            "cannot {} {a} and {b}",
                            if *op == Add { "add" } else { "subtract" }
                        ),
                        e.span,
                    )),
                },
                Mul | Div => match (a, b) {
                    (Ty::Q(x), Ty::Q(y)) => {
                        // a temperature scales only as a difference
                        Ok(Ty::Q(if *op == Mul { x.mul(y) } else { x.div(y) }))
                    }
                    _ => Err(err(
                        format!(
                            "cannot {} {a} and {b}",
                            if *op == Mul { "multiply" } else { "divide" }
                        ),
                        e.span,
                    )),
                },
            }
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub enum Val {
    Q(f64, Dim),
    Bool(bool),
    Str(String),
}

impl Val {
    /// For message templates: `13.8 V`, `2.3 A`, `40 ns`.
    pub fn show(&self) -> String {
        match self {
            Val::Q(v, d) => match d.named() {
                Some(n) => units::format_si(*v, n),
                None => format!("{} ({})", units::sig3(*v), d.describe()),
            },
            Val::Bool(b) => b.to_string(),
            Val::Str(s) => s.clone(),
        }
    }
}

/// Why an expression could not be evaluated for a part.
#[derive(Clone, Debug, PartialEq)]
pub enum EvalError {
    /// A value the part does not have (a rating the library omits).
    Missing(String),
    Math(String),
}

pub trait Env {
    fn name(&self, name: &str) -> Result<Val, EvalError>;
    fn v_pin(&self, pin: &str, max: bool) -> Result<f64, EvalError>;
    fn has(&self, key: &str) -> bool;
}

pub fn eval(e: &Expr, env: &dyn Env) -> Result<Val, EvalError> {
    use BinOp::*;
    Ok(match &e.node {
        Node::Num(v, d) => Val::Q(*v, *d),
        Node::Str(s) => Val::Str(s.clone()),
        Node::Bool(b) => Val::Bool(*b),
        Node::Name(n) => env.name(n)?,
        Node::Neg(x) => match eval(x, env)? {
            Val::Q(v, d) => Val::Q(-v, d),
            _ => return Err(EvalError::Math("`-` of a non-number".into())),
        },
        Node::Not(x) => match eval(x, env)? {
            Val::Bool(b) => Val::Bool(!b),
            _ => return Err(EvalError::Math("`not` of a non-boolean".into())),
        },
        Node::Call(f, args) => match (f.as_str(), args.as_slice()) {
            ("v_max", [a]) | ("v_min", [a]) => match &a.node {
                Node::Name(p) => Val::Q(env.v_pin(p, f == "v_max")?, Dim::of(Dimension::Voltage)),
                _ => return Err(EvalError::Math("pin name expected".into())),
            },
            ("has", [a]) => match &a.node {
                Node::Name(k) => Val::Bool(env.has(k)),
                _ => Val::Bool(false),
            },
            ("abs", [a]) => match eval(a, env)? {
                Val::Q(v, d) => Val::Q(v.abs(), d),
                _ => return Err(EvalError::Math("`abs` of a non-number".into())),
            },
            ("min", [a, b]) | ("max", [a, b]) => match (eval(a, env)?, eval(b, env)?) {
                (Val::Q(x, d), Val::Q(y, _)) => {
                    Val::Q(if f == "min" { x.min(y) } else { x.max(y) }, d)
                }
                _ => return Err(EvalError::Math(format!("`{f}` of non-numbers"))),
            },
            _ => return Err(EvalError::Math(format!("unknown function `{f}`"))),
        },
        Node::Bin(op, l, r) => {
            // short-circuit booleans
            if matches!(op, And | Or) {
                let a = eval(l, env)?;
                return match (op, a) {
                    (And, Val::Bool(false)) => Ok(Val::Bool(false)),
                    (Or, Val::Bool(true)) => Ok(Val::Bool(true)),
                    (_, Val::Bool(_)) => match eval(r, env)? {
                        Val::Bool(b) => Ok(Val::Bool(b)),
                        _ => Err(EvalError::Math("boolean expected".into())),
                    },
                    _ => Err(EvalError::Math("boolean expected".into())),
                };
            }
            let a = eval(l, env)?;
            let b = eval(r, env)?;
            match (a, b) {
                (Val::Q(x, dx), Val::Q(y, dy)) => match op {
                    Add => Val::Q(x + y, dx),
                    Sub => Val::Q(x - y, dx),
                    Mul => Val::Q(x * y, dx.mul(dy)),
                    Div => {
                        if y == 0.0 {
                            return Err(EvalError::Math("division by zero".into()));
                        }
                        Val::Q(x / y, dx.div(dy))
                    }
                    Lt => Val::Bool(x < y),
                    Le => Val::Bool(x <= y),
                    Gt => Val::Bool(x > y),
                    Ge => Val::Bool(x >= y),
                    Eq => Val::Bool((x - y).abs() <= 1e-12 * x.abs().max(y.abs())),
                    Ne => Val::Bool((x - y).abs() > 1e-12 * x.abs().max(y.abs())),
                    _ => return Err(EvalError::Math("operator on numbers".into())),
                },
                (Val::Str(x), Val::Str(y)) => match op {
                    Eq => Val::Bool(x == y),
                    Ne => Val::Bool(x != y),
                    _ => {
                        return Err(EvalError::Math(
                            "strings only compare with == and !=".into(),
                        ));
                    }
                },
                (Val::Bool(x), Val::Bool(y)) => match op {
                    Eq => Val::Bool(x == y),
                    Ne => Val::Bool(x != y),
                    _ => {
                        return Err(EvalError::Math(
                            "booleans only compare with == and !=".into(),
                        ));
                    }
                },
                _ => return Err(EvalError::Math("operands of different types".into())),
            }
        }
    })
}

/// The value of an expression must be finite to be used.
pub fn finite(v: Val) -> Result<Val, EvalError> {
    match v {
        Val::Q(x, _) if !x.is_finite() => {
            Err(EvalError::Math("the result is not a finite number".into()))
        }
        v => Ok(v),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct S;
    impl Scope for S {
        fn name(&self, n: &str) -> Result<Ty, String> {
            match n {
                "vds_max" => Ok(Ty::Q(Dim::of(Dimension::Voltage))),
                "f_pwm" => Ok(Ty::Q(Dim::of(Dimension::Frequency))),
                "p_loss" => Ok(Ty::Q(Dim::of(Dimension::Power))),
                "rth_ja" => Ok(Ty::Q(Dim::of(Dimension::ThermalResistance))),
                "tj" | "ambient" => Ok(Ty::Q(Dim::of(Dimension::Temperature))),
                "ref" => Ok(Ty::Str),
                _ => Err(format!("unknown name `{n}`")),
            }
        }
        fn pin(&self, p: &str) -> bool {
            p == "d"
        }
        fn key(&self, k: &str) -> bool {
            k == "vds_max"
        }
    }

    fn ty(s: &str) -> Result<Ty, ExprError> {
        check(&parse(s)?, &S)
    }

    #[test]
    fn precedence_and_units() {
        assert_eq!(ty("vds_max >= 2 * v_max(d)"), Ok(Ty::Bool));
        assert_eq!(
            ty("f_pwm > 1kHz and not (vds_max < 30V) or ref == \"Q1\""),
            Ok(Ty::Bool)
        );
        assert_eq!(
            ty("ambient + p_loss * rth_ja"),
            Ok(Ty::Q(Dim::of(Dimension::Temperature)))
        );
        assert_eq!(
            ty("max(vds_max, 10V) - -1V"),
            Ok(Ty::Q(Dim::of(Dimension::Voltage)))
        );
        let e = parse("1 + 2 * 3").ok();
        assert!(matches!(
            e.map(|e| e.node),
            Some(Node::Bin(BinOp::Add, _, _))
        ));
    }

    #[test]
    fn unit_errors_point_at_the_sub_expression() {
        let e = ty("f_pwm > 0Hz and vds_max >= 2A").err();
        let Some(e) = e else { panic!("accepted") };
        assert_eq!(e.message, "cannot compare a voltage with a current");
        assert_eq!(e.span, Span::new(16, 29));
        assert!(ty("ref > 2V").is_err());
        assert!(ty("frob(1)").is_err_and(|e| e.message.contains("unknown function")));
        assert!(ty("v_max(x)").is_err());
        assert!(ty("nope > 1V").is_err());
    }

    #[test]
    fn deep_nesting_is_refused_with_the_limit() {
        let deep = format!("{}1{}", "(".repeat(100), ")".repeat(100));
        let e = parse(&deep).err();
        assert!(e.is_some_and(|e| e.message.contains("64 levels")));
        let huge = format!("{}1{}", "(".repeat(100_000), ")".repeat(100_000));
        assert!(parse(&huge).is_err_and(|e| e.message.contains("limit is 8192")));
        let nots = format!("{}true", "not ".repeat(100_000));
        assert!(parse(&nots).is_err());
        assert!(parse(&"-".repeat(100_000)).is_err());
    }

    struct E;
    impl Env for E {
        fn name(&self, n: &str) -> Result<Val, EvalError> {
            match n {
                "vds_max" => Ok(Val::Q(60.0, Dim::of(Dimension::Voltage))),
                _ => Err(EvalError::Missing(n.into())),
            }
        }
        fn v_pin(&self, _p: &str, _m: bool) -> Result<f64, EvalError> {
            Ok(14.4)
        }
        fn has(&self, k: &str) -> bool {
            k == "vds_max"
        }
    }

    #[test]
    fn evaluation() {
        let ok = |s: &str| parse(s).ok().and_then(|e| eval(&e, &E).ok());
        assert_eq!(ok("vds_max >= 2 * v_max(d)"), Some(Val::Bool(true)));
        assert_eq!(ok("vds_max / 0V"), None);
        assert_eq!(ok("has(vds_max) and not has(trr)"), Some(Val::Bool(true)));
        assert_eq!(ok("vds_max").map(|v| v.show()), Some("60 V".into()));
        let miss = parse("trr < 1ns").ok().map(|e| eval(&e, &E));
        assert_eq!(miss, Some(Err(EvalError::Missing("trr".into()))));
    }
}

//! Netlist text → AST.
//!
//! The file is split into logical lines (joining `\` continuations without
//! moving any byte), each line is parsed by the pest grammar in
//! `grammar/netlist.pest`, and the parse tree is lowered into the AST of
//! `ast.rs` by one `lower_<rule>` function per grammar rule. Errors are
//! collected; a bad line never stops the lines after it.

pub mod ast;

use crate::finding::Finding;
use crate::source::{SourceFile, Span};
use ast::*;
use pest::Parser;
use pest::iterators::Pair;
use std::sync::Arc;

#[derive(pest_derive::Parser)]
#[grammar = "../grammar/netlist.pest"]
struct NetlistParser;

/// The longest logical line accepted, in bytes.
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Readable names for "expected …" messages. Exhaustive on purpose: a new
/// grammar rule does not compile until it has a name here.
fn rule_name(rule: Rule) -> &'static str {
    match rule {
        Rule::EOI => "end of line",
        Rule::WHITESPACE => "whitespace",
        Rule::ident_start | Rule::ident_char | Rule::ident => "a name",
        Rule::pin_name => "a pin name",
        Rule::string | Rule::string_inner => "a quoted string",
        Rule::kw_design => "`design`",
        Rule::kw_rev => "`rev`",
        Rule::kw_library => "`library`",
        Rule::kw_ambient => "`ambient`",
        Rule::kw_rail => "`rail`",
        Rule::kw_ground => "`ground`",
        Rule::kw_drive => "`drive`",
        Rule::kw_pwm => "`pwm`",
        Rule::kw_static => "`static`",
        Rule::kw_duty => "`duty`",
        Rule::kw_complement => "`complement`",
        Rule::kw_deadtime => "`deadtime`",
        Rule::kw_max => "`max`",
        Rule::kw_min => "`min`",
        Rule::kw_tol => "`tol`",
        Rule::statement_keyword => "a statement keyword",
        Rule::number => "a number",
        Rule::qsuffix => "a unit",
        Rule::quantity => "a quantity (like `12V`)",
        Rule::range => "a range (like `0%..100%`)",
        Rule::word_char | Rule::word => "a word",
        Rule::value => "a value",
        Rule::param => "a `key=value` parameter",
        Rule::comma => "`,`",
        Rule::lparen => "`(`",
        Rule::rparen => "`)`",
        Rule::colon => "`:`",
        Rule::equals => "`=`",
        Rule::design_stmt => "a `design` statement",
        Rule::library_stmt => "a `library` statement",
        Rule::ambient_stmt => "an `ambient` statement",
        Rule::rail_opt => "`max`, `min` or `tol`",
        Rule::rail_stmt => "a `rail` statement",
        Rule::ground_stmt => "a `ground` statement",
        Rule::pin_ref => "a pin reference (like `U1.PA3`)",
        Rule::duty_opt => "`duty`",
        Rule::complement_opt => "`complement`",
        Rule::deadtime_opt => "`deadtime`",
        Rule::drive_opt => "`duty`, `complement` or `deadtime`",
        Rule::drive_pwm => "`pwm`",
        Rule::drive_static => "`static`",
        Rule::drive_stmt => "a `drive` statement",
        Rule::named_pin => "a `pin: NET` pair",
        Rule::bare_net => "a net name",
        Rule::pin_entry => "a pin",
        Rule::pin_list => "a pin list in parentheses",
        Rule::primary => "a value",
        Rule::part_stmt => "a part (like `resistor R1 (A, B) 10k`)",
        Rule::statement => "a statement",
        Rule::rule_id => "a rule id",
        Rule::rule_ids => "rule ids",
        Rule::reason => "a reason",
        Rule::suppression => "a suppression comment",
        Rule::comment_text | Rule::comment => "a comment",
        Rule::trailer => "a comment",
        Rule::line => "a statement",
    }
}

/// Replace each line-continuation backslash (the last non-blank character
/// of a line) and the line break after it with spaces, keeping offsets.
fn join_continuations(text: &str) -> std::borrow::Cow<'_, str> {
    if !text.contains('\\') {
        return std::borrow::Cow::Borrowed(text);
    }
    let mut bytes = text.as_bytes().to_vec();
    let mut line_start = 0;
    let n = bytes.len();
    let mut i = 0;
    while i <= n {
        if i == n || bytes[i] == b'\n' {
            // find last non-blank before i
            let mut j = i;
            while j > line_start && matches!(bytes[j - 1], b' ' | b'\t' | b'\r') {
                j -= 1;
            }
            if j > line_start && bytes[j - 1] == b'\\' && i < n {
                for b in bytes.iter_mut().take(i + 1).skip(j - 1) {
                    *b = b' ';
                }
            }
            line_start = i + 1;
        }
        i += 1;
    }
    // Only ASCII bytes were replaced by ASCII spaces: still valid UTF-8.
    match String::from_utf8(bytes) {
        Ok(s) => std::borrow::Cow::Owned(s),
        Err(_) => std::borrow::Cow::Borrowed(text),
    }
}

/// Parse a whole file. Returns the AST of every line that parsed and the
/// errors of those that did not.
pub fn parse(file: &Arc<SourceFile>) -> (Netlist, Vec<Finding>) {
    use rayon::prelude::*;
    let joined = join_continuations(&file.text);
    let text: &str = &joined;
    let mut lines: Vec<(usize, &str)> = Vec::with_capacity(file.line_count());
    let mut offset = 0usize;
    for raw in text.split('\n') {
        let base = offset;
        offset += raw.len() + 1;
        if !raw.trim().is_empty() {
            lines.push((base, raw));
        }
    }
    // lines parse independently: in parallel, merged back in order
    let parsed: Vec<(Netlist, Vec<Finding>)> = lines
        .par_iter()
        .with_min_len(512)
        .map(|&(base, raw)| {
            let mut out = Netlist::default();
            let mut errors = Vec::new();
            parse_line(file, base, raw, &mut out, &mut errors);
            (out, errors)
        })
        .collect();
    let mut out = Netlist::default();
    out.statements.reserve(parsed.len());
    let mut errors = Vec::new();
    for (n, mut e) in parsed {
        out.statements.extend(n.statements);
        out.suppressions.extend(n.suppressions);
        errors.append(&mut e);
    }
    (out, errors)
}

fn parse_line(
    file: &Arc<SourceFile>,
    base: usize,
    raw: &str,
    out: &mut Netlist,
    errors: &mut Vec<Finding>,
) {
    if raw.len() > MAX_LINE_BYTES {
        errors.push(
            Finding::input(
                "parse-error",
                file,
                Span::new(base, base + 1),
                format!("line is {} bytes long; the limit is {} bytes", raw.len(), MAX_LINE_BYTES),
            )
            .label("this line")
            .help("split the statement over several lines with `\\`, or check that the file is a netlist"),
        );
        return;
    }
    let line_no = file.line_index(base);
    match NetlistParser::parse(Rule::line, raw) {
        Ok(mut pairs) => {
            if let Some(line) = pairs.next() {
                lower_line(file, line, base, line_no, out, errors);
            }
        }
        Err(e) => errors.push(pest_error(file, &e, raw, base)),
    }
}

fn pest_error(
    file: &Arc<SourceFile>,
    e: &pest::error::Error<Rule>,
    raw: &str,
    base: usize,
) -> Finding {
    use pest::error::{ErrorVariant, InputLocation};
    let pos = match e.location {
        InputLocation::Pos(p) => p,
        InputLocation::Span((s, _)) => s,
    };
    let found: String = raw
        .get(pos..)
        .unwrap_or("")
        .chars()
        .take_while(|c| !c.is_whitespace())
        .take(20)
        .collect();
    let expected = match &e.variant {
        ErrorVariant::ParsingError { positives, .. } => {
            let mut names: Vec<&str> = positives.iter().map(|r| rule_name(*r)).collect();
            names.sort_unstable();
            names.dedup();
            join_or(&names)
        }
        ErrorVariant::CustomError { message } => message.clone(),
    };
    let found_text = if found.is_empty() {
        "end of line".to_string()
    } else if found.chars().any(|c| c.is_control() && c != '\t') {
        "a control character".to_string()
    } else {
        format!("`{found}`")
    };
    let end = (pos + found.len().max(1)).min(raw.len().max(pos + 1));
    let message = if expected.is_empty() {
        format!("unexpected {found_text}")
    } else {
        format!("expected {expected}, found {found_text}")
    };
    Finding::input(
        "parse-error",
        file,
        Span::new(base + pos, base + end),
        message,
    )
    .label("here")
}

fn join_or(names: &[&str]) -> String {
    match names.len() {
        0 => String::new(),
        1 => names[0].to_string(),
        n => format!("{} or {}", names[..n - 1].join(", "), names[n - 1]),
    }
}

fn span_of(p: &Pair<Rule>, base: usize) -> Span {
    let s = p.as_span();
    Span::new(base + s.start(), base + s.end())
}

fn lower_line(
    file: &Arc<SourceFile>,
    line: Pair<Rule>,
    base: usize,
    line_no: usize,
    out: &mut Netlist,
    errors: &mut Vec<Finding>,
) {
    let mut had_statement = false;
    for p in line.into_inner() {
        match p.as_rule() {
            Rule::suppression => {
                out.suppressions
                    .push(lower_suppression(p, base, line_no, !had_statement));
            }
            Rule::comment => {
                let text = p.as_str().trim_start_matches('#').trim_start();
                if text.starts_with("armature:") {
                    errors.push(
                        Finding::new(
                            "suppression-malformed",
                            crate::finding::Severity::Warning,
                            file,
                            span_of(&p, base),
                            "malformed suppression comment",
                        )
                        .label("not understood")
                        .help("write `# armature: allow RULE -- reason`"),
                    );
                }
            }
            Rule::EOI => {}
            _ => {
                let span = span_of(&p, base);
                if let Some(kind) = lower_statement(file, p, base, errors) {
                    had_statement = true;
                    out.statements.push(Statement {
                        kind,
                        span,
                        line: line_no,
                    });
                }
            }
        }
    }
}

fn lower_suppression(p: Pair<Rule>, base: usize, line: usize, own_line: bool) -> Suppression {
    let span = span_of(&p, base);
    let mut rules = Vec::new();
    let mut reason = None;
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::rule_ids => {
                for r in q.into_inner() {
                    rules.push(Spanned::new(r.as_str().to_string(), span_of(&r, base)));
                }
            }
            Rule::reason => {
                let t = q.as_str().trim();
                if !t.is_empty() {
                    reason = Some(t.to_string());
                }
            }
            _ => {}
        }
    }
    Suppression {
        rules,
        reason,
        span,
        line,
        own_line,
    }
}

fn lower_statement(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    match p.as_rule() {
        Rule::design_stmt => lower_design_stmt(file, p, base, errors),
        Rule::library_stmt => lower_library_stmt(file, p, base, errors),
        Rule::ambient_stmt => lower_ambient_stmt(file, p, base, errors),
        Rule::rail_stmt => lower_rail_stmt(file, p, base, errors),
        Rule::ground_stmt => lower_ground_stmt(p, base),
        Rule::drive_stmt => lower_drive_stmt(file, p, base, errors),
        Rule::part_stmt => lower_part_stmt(file, p, base, errors),
        _ => None,
    }
}

fn lower_ident(p: &Pair<Rule>, base: usize) -> Spanned<String> {
    Spanned::new(p.as_str().to_string(), span_of(p, base))
}

fn lower_string(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Spanned<String> {
    let span = span_of(&p, base);
    let inner = p.into_inner().next().map(|i| i.as_str()).unwrap_or("");
    let mut s = String::with_capacity(inner.len());
    let mut chars = inner.chars();
    while let Some(c) = chars.next() {
        if c == '\\' {
            match chars.next() {
                Some('"') => s.push('"'),
                Some('\\') => s.push('\\'),
                other => {
                    let shown = other.map(|c| c.to_string()).unwrap_or_default();
                    errors.push(
                        Finding::input(
                            "parse-error",
                            file,
                            span,
                            format!("unknown escape `\\{shown}` in a string"),
                        )
                        .label("in this string")
                        .help("only `\\\"` and `\\\\` are escapes; write other characters as they are"),
                    );
                }
            }
        } else {
            s.push(c);
        }
    }
    Spanned::new(s, span)
}

fn lower_value(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Spanned<Value> {
    let span = span_of(&p, base);
    let inner = p.into_inner().next();
    let v = match inner {
        Some(i) => match i.as_rule() {
            Rule::range => {
                let mut ends = i.into_inner();
                let lo = ends.next().map(|e| lower_ident(&e, base));
                let hi = ends.next().map(|e| lower_ident(&e, base));
                match (lo, hi) {
                    (Some(lo), Some(hi)) => Value::Range(lo, hi),
                    _ => Value::Atom(String::new()),
                }
            }
            Rule::string => Value::Str(lower_string(file, i, base, errors).node),
            _ => Value::Atom(i.as_str().to_string()),
        },
        None => Value::Atom(String::new()),
    };
    Spanned::new(v, span)
}

fn lower_design_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let mut strings = p.into_inner().filter(|q| q.as_rule() == Rule::string);
    let name = lower_string(file, strings.next()?, base, errors);
    let rev = strings.next().map(|s| lower_string(file, s, base, errors));
    Some(StatementKind::Design { name, rev })
}

fn lower_library_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let s = p.into_inner().find(|q| q.as_rule() == Rule::string)?;
    Some(StatementKind::Library(lower_string(file, s, base, errors)))
}

fn lower_ambient_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let v = p.into_inner().find(|q| q.as_rule() == Rule::value)?;
    Some(StatementKind::Ambient(lower_value(file, v, base, errors)))
}

fn lower_rail_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let mut name = None;
    let mut nominal = None;
    let mut opts = Vec::new();
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::ident => name = Some(lower_ident(&q, base)),
            Rule::value => nominal = Some(lower_value(file, q, base, errors)),
            Rule::rail_opt => {
                let mut kind = RailOptKind::Max;
                let mut value = None;
                for r in q.into_inner() {
                    match r.as_rule() {
                        Rule::kw_max => kind = RailOptKind::Max,
                        Rule::kw_min => kind = RailOptKind::Min,
                        Rule::kw_tol => kind = RailOptKind::Tol,
                        Rule::value => value = Some(lower_value(file, r, base, errors)),
                        _ => {}
                    }
                }
                if let Some(value) = value {
                    opts.push(RailOpt { kind, value });
                }
            }
            _ => {}
        }
    }
    Some(StatementKind::Rail {
        name: name?,
        nominal: nominal?,
        opts,
    })
}

fn lower_ground_stmt(p: Pair<Rule>, base: usize) -> Option<StatementKind> {
    let id = p.into_inner().find(|q| q.as_rule() == Rule::ident)?;
    Some(StatementKind::Ground(lower_ident(&id, base)))
}

fn lower_pin_ref(p: Pair<Rule>, base: usize) -> Option<PinRef> {
    let mut it = p.into_inner();
    let part = lower_ident(&it.next()?, base);
    let pin = lower_ident(&it.next()?, base);
    Some(PinRef { part, pin })
}

fn lower_drive_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let mut pin = None;
    let mut mode = None;
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::pin_ref => pin = lower_pin_ref(q, base),
            Rule::drive_static => mode = Some(DriveMode::Static),
            Rule::drive_pwm => {
                let mut freq = None;
                let mut duty = None;
                let mut complement = None;
                let mut deadtime = None;
                for r in q.into_inner() {
                    match r.as_rule() {
                        Rule::value => freq = Some(lower_value(file, r, base, errors)),
                        Rule::duty_opt => {
                            duty = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::value)
                                .map(|x| lower_value(file, x, base, errors))
                        }
                        Rule::complement_opt => {
                            complement = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::pin_ref)
                                .and_then(|x| lower_pin_ref(x, base))
                        }
                        Rule::deadtime_opt => {
                            deadtime = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::value)
                                .map(|x| lower_value(file, x, base, errors))
                        }
                        _ => {}
                    }
                }
                mode = Some(DriveMode::Pwm {
                    freq: freq?,
                    duty,
                    complement,
                    deadtime,
                });
            }
            _ => {}
        }
    }
    Some(StatementKind::Drive {
        pin: pin?,
        mode: mode?,
    })
}

fn lower_part_stmt(
    file: &Arc<SourceFile>,
    p: Pair<Rule>,
    base: usize,
    errors: &mut Vec<Finding>,
) -> Option<StatementKind> {
    let mut idents = Vec::new();
    let mut pins = Vec::new();
    let mut pins_span = Span::default();
    let mut value = None;
    let mut params = Vec::new();
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::ident => idents.push(lower_ident(&q, base)),
            Rule::pin_list => {
                pins_span = span_of(&q, base);
                for e in q.into_inner() {
                    match e.as_rule() {
                        Rule::named_pin => {
                            let mut it = e.into_inner().filter(|x| x.as_rule() != Rule::colon);
                            if let (Some(pin), Some(net)) = (it.next(), it.next()) {
                                pins.push(PinEntry {
                                    pin: Some(lower_ident(&pin, base)),
                                    net: lower_ident(&net, base),
                                });
                            }
                        }
                        Rule::bare_net => pins.push(PinEntry {
                            pin: None,
                            net: lower_ident(&e, base),
                        }),
                        _ => {}
                    }
                }
            }
            Rule::primary => {
                if let Some(v) = q.into_inner().next() {
                    value = Some(lower_value(file, v, base, errors));
                }
            }
            Rule::param => {
                let mut it = q.into_inner().filter(|x| x.as_rule() != Rule::equals);
                if let (Some(k), Some(v)) = (it.next(), it.next()) {
                    params.push(Param {
                        key: lower_ident(&k, base),
                        value: lower_value(file, v, base, errors),
                    });
                }
            }
            _ => {}
        }
    }
    let mut it = idents.into_iter();
    let kind = it.next()?;
    let reference = it.next()?;
    Some(StatementKind::Part(PartStmt {
        kind,
        reference,
        pins,
        pins_span,
        value,
        params,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_ok(text: &str) -> Netlist {
        let f = SourceFile::from_str("t.drive", text);
        let (n, e) = parse(&f);
        assert!(
            e.is_empty(),
            "{:?}",
            e.iter().map(|e| &e.message).collect::<Vec<_>>()
        );
        n
    }

    #[test]
    fn continuation_keeps_offsets() {
        let t = "motor M1 (+: VBAT, \\\n   -: SW) r=1ohm\n";
        let j = join_continuations(t);
        assert_eq!(j.len(), t.len());
        let n = parse_ok(t);
        assert_eq!(n.statements.len(), 1);
    }

    #[test]
    fn one_error_per_bad_line_and_the_rest_parsed() {
        let f = SourceFile::from_str("t.drive", "rail V 12V\nmotor M1 (+ V\nground GND\n");
        let (n, e) = parse(&f);
        assert_eq!(n.statements.len(), 2);
        assert_eq!(e.len(), 1);
        assert_eq!(f.line_col(e[0].span.start).0, 2);
    }
}

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
use std::borrow::Cow;
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
        Rule::net_name | Rule::bare_name => "a net name",
        Rule::quoted_name | Rule::name_inner => "a quoted name",
        Rule::designator | Rule::bare_designator | Rule::pin_owner => "a designator",
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
        Rule::part_stmt | Rule::part_stmt_known | Rule::part_fields | Rule::part_line => {
            "a part (like `resistor R1 (A, B) 10k`)"
        }
        Rule::drive_line => "a `drive` statement",
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
/// errors of those that did not. The AST borrows the file's text.
pub fn parse(file: &Arc<SourceFile>) -> (Netlist<'_>, Vec<Finding>) {
    let lines = Lines::new(file);
    parse_lines(file, lines.iter().collect())
}

/// The logical lines of a file (continuations joined, blank lines left
/// out), for callers that parse a file a part at a time.
pub struct Lines<'f> {
    joined: std::borrow::Cow<'f, str>,
    /// (byte offset, length) of each non-blank logical line.
    spans: Vec<(usize, usize)>,
}

/// What a logical line starts with, read from its first word only (the
/// grammar decides the rest).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LineClass {
    /// `rail`, `ground` or `library`: needed before any part.
    Header,
    /// `drive`.
    Drive,
    /// Anything else: parts, `design`, `ambient`, comments.
    Body,
}

impl<'f> Lines<'f> {
    pub fn new(file: &'f SourceFile) -> Lines<'f> {
        let joined = join_continuations(&file.text);
        let mut spans = Vec::with_capacity(file.line_count());
        let mut offset = 0usize;
        for raw in joined.split('\n') {
            if !raw.trim().is_empty() {
                spans.push((offset, raw.len()));
            }
            offset += raw.len() + 1;
        }
        Lines { joined, spans }
    }

    /// Every line, as (offset, text).
    pub fn iter(&self) -> impl Iterator<Item = (usize, &str)> {
        self.spans
            .iter()
            .map(|&(o, n)| (o, self.joined.get(o..o + n).unwrap_or("")))
    }

    /// Whether a body line can be a part statement: not a comment and
    /// not `design`, `ambient` or `drive` (the count of such lines bounds the
    /// parts from above, for the part limit).
    pub fn may_be_part(text: &str) -> bool {
        let t = text.trim_start_matches([' ', '\t', '\r', '\u{FEFF}']);
        !(t.is_empty()
            || t.starts_with('#')
            || matches!(Self::first_word(t), "design" | "ambient" | "drive"))
    }

    /// The first word, with the grammar's word boundary.
    fn first_word(t: &str) -> &str {
        let end = t
            .find(|c: char| !(c.is_ascii_alphanumeric() || "_-+/".contains(c)))
            .unwrap_or(t.len());
        t.get(..end).unwrap_or("")
    }

    /// The class of a line's text: its first word, with the grammar's
    /// word boundary (`railing` is a part kind, not `rail`).
    pub fn class(text: &str) -> LineClass {
        let t = text.trim_start_matches([' ', '\t', '\r', '\u{FEFF}']);
        match Self::first_word(t) {
            "rail" | "ground" | "library" => LineClass::Header,
            "drive" => LineClass::Drive,
            _ => LineClass::Body,
        }
    }
}

/// Parse the given logical lines (offset, text) of a file.
pub fn parse_lines<'a>(
    file: &'a Arc<SourceFile>,
    lines: Vec<(usize, &str)>,
) -> (Netlist<'a>, Vec<Finding>) {
    use rayon::prelude::*;
    // Lines parse independently, in parallel. Each line gives at most one
    // statement, collected by index straight into its place (then
    // compacted in place); the rare suppression comments and errors go to
    // a side list, put back in line order.
    let src: &str = &file.text;
    type Side = (usize, Vec<Suppression>, Vec<Finding>);
    let side: std::sync::Mutex<Vec<Side>> = std::sync::Mutex::new(Vec::new());
    let slots: Vec<Option<Statement<'_>>> = lines
        .par_iter()
        .enumerate()
        .with_min_len(1024)
        .map(|(i, &(base, raw))| {
            let mut errors = Vec::new();
            let mut sups = Vec::new();
            let lx = Lower {
                file,
                src,
                base,
                errors: &mut errors,
            };
            let st = parse_line(lx, raw, &mut sups);
            if !errors.is_empty() || !sups.is_empty() {
                side.lock()
                    .unwrap_or_else(|e| e.into_inner())
                    .push((i, sups, errors));
            }
            st
        })
        .collect();
    // `filter_map` (unlike `flatten`) collects in place: the slots'
    // buffer becomes the statements' buffer (measured: 354 MiB less
    // resident at 1.6M parts).
    #[allow(clippy::filter_map_identity)]
    let statements: Vec<Statement<'_>> = slots.into_iter().filter_map(|s| s).collect();
    let mut side = side.into_inner().unwrap_or_else(|e| e.into_inner());
    side.sort_unstable_by_key(|x| x.0);
    let mut out = Netlist {
        statements,
        suppressions: Vec::new(),
    };
    let mut errors = Vec::new();
    for (_, mut sups, mut errs) in side {
        out.suppressions.append(&mut sups);
        errors.append(&mut errs);
    }
    (out, errors)
}

/// What lowering one line needs: the file (for findings), its original
/// text (which names borrow), the line's byte offset and the error list.
struct Lower<'a, 'e> {
    file: &'a Arc<SourceFile>,
    src: &'a str,
    base: usize,
    errors: &'e mut Vec<Finding>,
}

impl<'a> Lower<'a, '_> {
    fn span(&self, p: &Pair<Rule>) -> Span {
        let s = p.as_span();
        Span::new(self.base + s.start(), self.base + s.end())
    }

    /// The original text under a token. Continuation joining only turns
    /// ASCII bytes into spaces, which no name or value contains, so the
    /// bytes are those the parser saw.
    fn text(&self, p: &Pair<Rule>) -> Text<'a> {
        let span = self.span(p);
        Spanned::new(self.src.get(span.start()..span.end()).unwrap_or(""), span)
    }

    /// A net name or designator: a quoted one without its quotes.
    fn name(&self, p: &Pair<Rule>) -> Text<'a> {
        let inner = p
            .clone()
            .into_inner()
            .next()
            .and_then(|q| match q.as_rule() {
                Rule::quoted_name => q.into_inner().next(),
                _ => None,
            });
        match inner {
            Some(q) => self.text(&q),
            None => self.text(p),
        }
    }
}

fn parse_line<'a>(
    mut lx: Lower<'a, '_>,
    raw: &str,
    sups: &mut Vec<Suppression>,
) -> Option<Statement<'a>> {
    let (file, base) = (lx.file, lx.base);
    if raw.len() > MAX_LINE_BYTES {
        lx.errors.push(
            Finding::input(
                "parse-error",
                file,
                Span::new(base, base + 1),
                format!("line is {} bytes long; the limit is {} bytes", raw.len(), MAX_LINE_BYTES),
            )
            .label("this line")
            .help("split the statement over several lines with `\\`, or check that the file is a netlist"),
        );
        return None;
    }
    let line_no = file.line_index(base);
    // the entry rule by the first word; on an error the general rule
    // again, for the message that names every alternative
    let t = raw.trim_start_matches([' ', '\t', '\r', '\u{FEFF}']);
    let entry = match Lines::first_word(t) {
        "drive" => Rule::drive_line,
        "" | "design" | "library" | "ambient" | "rail" | "ground" => Rule::line,
        _ => Rule::part_line,
    };
    let parsed = match NetlistParser::parse(entry, raw) {
        Err(_) if entry != Rule::line => NetlistParser::parse(Rule::line, raw),
        r => r,
    };
    match parsed {
        Ok(mut pairs) => {
            let line = pairs.next()?;
            lower_line(&mut lx, line, line_no, sups)
        }
        Err(e) => {
            lx.errors.push(pest_error(file, &e, raw, base));
            None
        }
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

fn lower_line<'a>(
    lx: &mut Lower<'a, '_>,
    line: Pair<Rule>,
    line_no: usize,
    sups: &mut Vec<Suppression>,
) -> Option<Statement<'a>> {
    let mut statement = None;
    for p in line.into_inner() {
        match p.as_rule() {
            Rule::suppression => {
                sups.push(lower_suppression(lx, p, line_no, statement.is_none()));
            }
            Rule::comment => {
                let text = p.as_str().trim_start_matches('#').trim_start();
                if text.starts_with("armature:") {
                    let span = lx.span(&p);
                    lx.errors.push(
                        Finding::new(
                            "suppression-malformed",
                            crate::finding::Severity::Warning,
                            lx.file,
                            span,
                            "malformed suppression comment",
                        )
                        .label("not understood")
                        .help("write `# armature: allow RULE -- reason`"),
                    );
                }
            }
            Rule::EOI => {}
            _ => {
                let span = lx.span(&p);
                if let Some(kind) = lower_statement(lx, p) {
                    statement = Some(Statement {
                        kind,
                        span,
                        line: line_no,
                    });
                }
            }
        }
    }
    statement
}

fn lower_suppression(
    lx: &Lower<'_, '_>,
    p: Pair<Rule>,
    line: usize,
    own_line: bool,
) -> Suppression {
    let span = lx.span(&p);
    let mut rules = Vec::new();
    let mut reason = None;
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::rule_ids => {
                for r in q.into_inner() {
                    rules.push(Spanned::new(r.as_str().to_string(), lx.span(&r)));
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

fn lower_statement<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    match p.as_rule() {
        Rule::design_stmt => lower_design_stmt(lx, p),
        Rule::library_stmt => lower_library_stmt(lx, p),
        Rule::ambient_stmt => lower_ambient_stmt(lx, p),
        Rule::rail_stmt => lower_rail_stmt(lx, p),
        Rule::ground_stmt => lower_ground_stmt(lx, p),
        Rule::drive_stmt => lower_drive_stmt(lx, p),
        Rule::part_stmt | Rule::part_stmt_known => lower_part_stmt(lx, p),
        _ => None,
    }
}

/// A quoted string, escapes resolved. Borrowed from the file when it has
/// no escape and does not span a line continuation.
fn lower_string<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Spanned<Cow<'a, str>> {
    let span = lx.span(&p);
    let inner_pair = p.into_inner().next();
    let inner = inner_pair.as_ref().map(|i| i.as_str()).unwrap_or("");
    if !inner.contains('\\')
        && let Some(i) = &inner_pair
    {
        let t = lx.text(i);
        if t.node == inner {
            return Spanned::new(Cow::Borrowed(t.node), span);
        }
    }
    let mut s = String::with_capacity(inner.len());
    let mut chars = inner.chars();
    while let Some(c) = chars.next() {
        if c == '\\' {
            match chars.next() {
                Some('"') => s.push('"'),
                Some('\\') => s.push('\\'),
                other => {
                    let shown = other.map(|c| c.to_string()).unwrap_or_default();
                    lx.errors.push(
                        Finding::input(
                            "parse-error",
                            lx.file,
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
    Spanned::new(Cow::Owned(s), span)
}

fn lower_value<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Spanned<Value<'a>> {
    let span = lx.span(&p);
    let inner = p.into_inner().next();
    let v = match inner {
        Some(i) => match i.as_rule() {
            Rule::range => {
                let mut ends = i.into_inner();
                let lo = ends.next().map(|e| lx.text(&e));
                let hi = ends.next().map(|e| lx.text(&e));
                match (lo, hi) {
                    (Some(lo), Some(hi)) => Value::Range(lo, hi),
                    _ => Value::Atom(""),
                }
            }
            Rule::string => Value::Str(lower_string(lx, i).node),
            _ => Value::Atom(lx.text(&i).node),
        },
        None => Value::Atom(""),
    };
    Spanned::new(v, span)
}

fn lower_design_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let mut strings = p.into_inner().filter(|q| q.as_rule() == Rule::string);
    let name = lower_string(lx, strings.next()?);
    let rev = strings.next().map(|s| lower_string(lx, s));
    Some(StatementKind::Design { name, rev })
}

fn lower_library_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let s = p.into_inner().find(|q| q.as_rule() == Rule::string)?;
    Some(StatementKind::Library(lower_string(lx, s)))
}

fn lower_ambient_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let v = p.into_inner().find(|q| q.as_rule() == Rule::value)?;
    Some(StatementKind::Ambient(lower_value(lx, v)))
}

fn lower_rail_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let mut name = None;
    let mut nominal = None;
    let mut opts = Vec::new();
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::net_name => name = Some(lx.name(&q)),
            Rule::value => nominal = Some(lower_value(lx, q)),
            Rule::rail_opt => {
                let mut kind = RailOptKind::Max;
                let mut value = None;
                for r in q.into_inner() {
                    match r.as_rule() {
                        Rule::kw_max => kind = RailOptKind::Max,
                        Rule::kw_min => kind = RailOptKind::Min,
                        Rule::kw_tol => kind = RailOptKind::Tol,
                        Rule::value => value = Some(lower_value(lx, r)),
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
    Some(StatementKind::Rail(Box::new(RailStmt {
        name: name?,
        nominal: nominal?,
        opts,
    })))
}

fn lower_ground_stmt<'a>(lx: &Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let id = p.into_inner().find(|q| q.as_rule() == Rule::net_name)?;
    Some(StatementKind::Ground(lx.name(&id)))
}

fn lower_pin_ref<'a>(lx: &Lower<'a, '_>, p: Pair<Rule>) -> Option<PinRef<'a>> {
    let mut it = p.into_inner();
    let part = lx.text(&it.next()?);
    let pin = lx.text(&it.next()?);
    Some(PinRef { part, pin })
}

fn lower_drive_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let mut pin = None;
    let mut mode = None;
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::pin_ref => pin = lower_pin_ref(lx, q),
            Rule::drive_static => mode = Some(DriveMode::Static),
            Rule::drive_pwm => {
                let mut freq = None;
                let mut duty = None;
                let mut complement = None;
                let mut deadtime = None;
                for r in q.into_inner() {
                    match r.as_rule() {
                        Rule::value => freq = Some(lower_value(lx, r)),
                        Rule::duty_opt => {
                            duty = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::value)
                                .map(|x| lower_value(lx, x))
                        }
                        Rule::complement_opt => {
                            complement = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::pin_ref)
                                .and_then(|x| lower_pin_ref(lx, x))
                        }
                        Rule::deadtime_opt => {
                            deadtime = r
                                .into_inner()
                                .find(|x| x.as_rule() == Rule::value)
                                .map(|x| lower_value(lx, x))
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
    Some(StatementKind::Drive(Box::new(DriveStmt {
        pin: pin?,
        mode: mode?,
    })))
}

fn lower_part_stmt<'a>(lx: &mut Lower<'a, '_>, p: Pair<Rule>) -> Option<StatementKind<'a>> {
    let mut kind = None;
    let mut reference = None;
    let mut pins = Vec::new();
    let mut pins_span = Span::default();
    let mut value = None;
    let mut params = Vec::new();
    let n_params = p
        .clone()
        .into_inner()
        .filter(|q| q.as_rule() == Rule::param)
        .count();
    for q in p.into_inner() {
        match q.as_rule() {
            Rule::ident => kind = Some(lx.text(&q)),
            Rule::designator => reference = Some(lx.name(&q)),
            Rule::pin_list => {
                pins_span = lx.span(&q);
                // exact capacity: millions of part lines, a few pins each
                let n = q
                    .clone()
                    .into_inner()
                    .filter(|e| matches!(e.as_rule(), Rule::named_pin | Rule::bare_net))
                    .count();
                pins.reserve_exact(n);
                for e in q.into_inner() {
                    match e.as_rule() {
                        Rule::named_pin => {
                            let mut it = e.into_inner().filter(|x| x.as_rule() != Rule::colon);
                            if let (Some(pin), Some(net)) = (it.next(), it.next()) {
                                pins.push(PinEntry {
                                    pin: Some(lx.text(&pin)),
                                    net: lx.name(&net),
                                });
                            }
                        }
                        Rule::bare_net => {
                            let net = match e.clone().into_inner().next() {
                                Some(n) => lx.name(&n),
                                None => lx.text(&e),
                            };
                            pins.push(PinEntry { pin: None, net })
                        }
                        _ => {}
                    }
                }
            }
            Rule::primary => {
                if let Some(v) = q.into_inner().next() {
                    value = Some(lower_value(lx, v));
                }
            }
            Rule::param => {
                let mut it = q.into_inner().filter(|x| x.as_rule() != Rule::equals);
                if let (Some(k), Some(v)) = (it.next(), it.next()) {
                    if params.is_empty() {
                        params.reserve_exact(n_params);
                    }
                    params.push(Param {
                        key: lx.text(&k),
                        value: lower_value(lx, v),
                    });
                }
            }
            _ => {}
        }
    }
    Some(StatementKind::Part(PartStmt {
        kind: kind?,
        reference: reference?,
        pins,
        pins_span,
        value,
        params,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_ok(f: &Arc<SourceFile>) -> Netlist<'_> {
        let (n, e) = parse(f);
        assert!(
            e.is_empty(),
            "{:?}",
            e.iter().map(|e| &e.message).collect::<Vec<_>>()
        );
        n
    }

    #[test]
    fn statement_slots_compact_in_place() {
        // `parse` collects one `Option<Statement>` per line and flattens
        // the vector; equal sizes let that reuse the buffer.
        assert_eq!(
            std::mem::size_of::<Option<Statement<'_>>>(),
            std::mem::size_of::<Statement<'_>>()
        );
    }

    #[test]
    fn continuation_keeps_offsets() {
        let t = "motor M1 (+: VBAT, \\\n   -: SW) r=1ohm\n";
        let j = join_continuations(t);
        assert_eq!(j.len(), t.len());
        let f = SourceFile::from_str("t.drive", t);
        let n = parse_ok(&f);
        assert_eq!(n.statements.len(), 1);
        let StatementKind::Part(p) = &n.statements[0].kind else {
            panic!("not a part")
        };
        // names borrowed from the original text, at their own spans
        assert_eq!(p.pins[1].net.node, "SW");
        assert_eq!(
            &t[p.pins[1].net.span.start()..p.pins[1].net.span.end()],
            "SW"
        );
    }

    #[test]
    fn strings_borrow_unless_escaped_or_continued() {
        let t = "design \"plain\" rev \"a \\\"q\\\"\"\nlibrary \"one \\\n two\"\n";
        let f = SourceFile::from_str("t.drive", t);
        let n = parse_ok(&f);
        let StatementKind::Design { name, rev } = &n.statements[0].kind else {
            panic!("not a design")
        };
        assert!(matches!(name.node, Cow::Borrowed("plain")));
        let rev = rev.as_ref().map(|r| r.node.as_ref());
        assert_eq!(rev, Some("a \"q\""));
        let StatementKind::Library(lib) = &n.statements[1].kind else {
            panic!("not a library")
        };
        // the continuation is part of the string: its text is the joined one
        assert!(matches!(lib.node, Cow::Owned(_)));
        assert_eq!(lib.node, "one    two");
    }

    #[test]
    fn one_error_per_bad_line_and_the_rest_parsed() {
        let f = SourceFile::from_str("t.drive", "rail V 12V\nmotor M1 (+ V\nground GND\n");
        let (n, e) = parse(&f);
        assert_eq!(n.statements.len(), 2);
        assert_eq!(e.len(), 1);
        assert_eq!(f.line_col(e[0].span.start()).0, 2);
    }
}

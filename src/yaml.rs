//! The one place where YAML is read.
//!
//! serde_yaml parses the text (with its limits on nesting and alias
//! expansion); a small locator maps a key path such as
//! `parts/DEMO-N60-3A/vds_max` back to the line and column where it is
//! written, so that every error about a YAML value points at it.

use crate::finding::Finding;
use crate::source::{SourceFile, Span};
use serde_yaml::Value;
use std::collections::HashMap;
use std::sync::Arc;

/// Largest YAML file accepted.
pub const MAX_YAML_BYTES: usize = 64 << 20;

pub struct YamlDoc {
    pub file: Arc<SourceFile>,
    pub root: Value,
    /// path → (span of the key, span of the value on the key's line)
    positions: HashMap<String, (Span, Span)>,
}

impl YamlDoc {
    /// The span of a key, or of its nearest located ancestor.
    pub fn key_span(&self, path: &str) -> Span {
        self.lookup(path).0
    }

    /// The span of a value (the key's span when the value is not on the
    /// key's line).
    pub fn value_span(&self, path: &str) -> Span {
        self.lookup(path).1
    }

    fn lookup(&self, path: &str) -> (Span, Span) {
        let mut p = path;
        loop {
            if let Some(s) = self.positions.get(p) {
                return *s;
            }
            match p.rfind('/') {
                Some(i) => p = &p[..i],
                None => return (Span::new(0, 0), Span::new(0, 0)),
            }
        }
    }
}

/// Join a path segment (keys containing `/` are escaped as `\/`).
pub fn child(path: &str, key: &str) -> String {
    let key = key.replace('/', "\\/");
    if path.is_empty() {
        key
    } else {
        format!("{path}/{key}")
    }
}

/// The file without its text: an error about a file that may not be what
/// it claims (a path in a netlist can name anything in the project) never
/// quotes its lines.
pub fn unquoted(file: &Arc<SourceFile>) -> Arc<SourceFile> {
    SourceFile::new(file.name.clone(), &file.path, String::new())
}

/// The first YAML anchor (`&name`) or alias (`*name`) outside quotes and
/// comments: (offset, length). Libraries, configurations and rule files
/// have no use for them, and an alias can expand a small file into a huge
/// document, so they are refused before the file is parsed.
pub fn first_anchor(text: &str) -> Option<(usize, usize)> {
    let mut off = 0;
    for line in text.split_inclusive('\n') {
        let b = line.as_bytes();
        let (mut sq, mut dq) = (false, false);
        let mut prev = b' ';
        for (i, &c) in b.iter().enumerate() {
            match c {
                b'\'' if !dq => sq = !sq,
                b'"' if !sq => dq = !dq,
                b'#' if !sq && !dq && (prev == b' ' || prev == b'\t' || i == 0) => break,
                b'&' | b'*' if !sq && !dq => {
                    let start =
                        matches!(prev, b' ' | b'\t' | b'[' | b'{' | b',' | b':' | b'-') || i == 0;
                    let next = b.get(i + 1).copied().unwrap_or(b' ');
                    if start && (next.is_ascii_alphanumeric() || next == b'_') {
                        let len = b[i + 1..]
                            .iter()
                            .take_while(|c| c.is_ascii_alphanumeric() || **c == b'_' || **c == b'-')
                            .count();
                        return Some((off + i, len + 1));
                    }
                }
                _ => {}
            }
            prev = c;
        }
        off += line.len();
    }
    None
}

/// Parse a YAML file. A syntax error is a located input finding.
pub fn parse(file: &Arc<SourceFile>, code: &str) -> Result<YamlDoc, Finding> {
    if let Some((at, len)) = first_anchor(&file.text) {
        return Err(Finding::input(
            code,
            file,
            Span::new(at, at + len),
            "YAML anchors and aliases are not accepted here".to_string(),
        )
        .label("anchor or alias")
        .help("write the values out: a parts library, a configuration or a rule file has no use for them"));
    }
    if file.text.len() > MAX_YAML_BYTES {
        return Err(Finding::input(
            code,
            file,
            Span::new(0, 0),
            format!(
                "file is {} bytes; the limit for YAML files is {} bytes",
                file.text.len(),
                MAX_YAML_BYTES
            ),
        ));
    }
    if let Some((at, depth)) = too_deep(&file.text) {
        return Err(Finding::input(
            code,
            file,
            Span::new(at, at + 1),
            format!("YAML nests deeper than {MAX_DEPTH} levels (at level {depth})"),
        )
        .label("here"));
    }
    let root: Value = match serde_yaml::from_str(&file.text) {
        Ok(v) => v,
        Err(e) => {
            let span = match e.location() {
                Some(loc) => {
                    let off = loc.index().min(file.text.len());
                    Span::new(off, (off + 1).min(file.text.len()).max(off))
                }
                None => Span::new(0, 0),
            };
            let msg = e.to_string();
            // serde_yaml appends " at line N column M"; we print our own.
            let msg = match msg.find(" at line ") {
                Some(i) => msg[..i].to_string(),
                None => msg,
            };
            // not YAML at all: say where, without quoting what it holds
            let _ = span;
            return Err(Finding::input(
                code,
                &unquoted(file),
                Span::new(0, 0),
                format!(
                    "`{}` is not valid YAML ({msg}, at line {})",
                    file.name,
                    e.location().map_or(0, |l| l.line())
                ),
            ));
        }
    };
    let positions = locate(&file.text);
    Ok(YamlDoc {
        file: file.clone(),
        root,
        positions,
    })
}

/// Deepest flow nesting (`[`, `{`) accepted, checked before parsing:
/// the YAML parser slows down badly on very deep flow collections.
pub const MAX_DEPTH: usize = 64;

fn too_deep(text: &str) -> Option<(usize, usize)> {
    let mut depth = 0usize;
    let mut quote: Option<u8> = None;
    let mut comment = false;
    for (i, b) in text.bytes().enumerate() {
        if comment {
            if b == b'\n' {
                comment = false;
            }
            continue;
        }
        match quote {
            Some(q) => {
                if b == q {
                    quote = None;
                }
            }
            None => match b {
                b'"' | b'\'' => quote = Some(b),
                b'#' => comment = true,
                b'[' | b'{' => {
                    depth += 1;
                    if depth > MAX_DEPTH {
                        return Some((i, depth));
                    }
                }
                b']' | b'}' => depth = depth.saturating_sub(1),
                b'\n' => {}
                _ => {}
            },
        }
    }
    None
}

/// A scalar's text as the user wrote it (numbers as their decimal text).
pub fn scalar_text(v: &Value) -> Option<String> {
    match v {
        Value::String(s) => Some(s.clone()),
        Value::Number(n) => Some(n.to_string()),
        Value::Bool(b) => Some(b.to_string()),
        _ => None,
    }
}

/// The text of a scalar that holds a quantity. YAML reads `0x14`, `0o24`,
/// `0b10100` and `.inf` as numbers; a rating written so is almost always a
/// mistake (or a disguise), so only decimal numbers are accepted: the
/// number's text as written at `path` must be decimal. `Err` carries the
/// message; `Ok(None)` means the value is not a scalar.
pub fn quantity_text(doc: &YamlDoc, path: &str, v: &Value) -> Result<Option<String>, String> {
    if let Value::Number(_) = v {
        let raw = doc.file.slice(doc.value_span(path)).trim();
        // digits, a point, an exponent and signs only: hex, octal and
        // binary prefixes, `.inf`, `.nan` and `_` separators all fail
        let decimal = raw.bytes().any(|b| b.is_ascii_digit())
            && raw
                .bytes()
                .all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'e' | b'E' | b'+' | b'-'));
        if !decimal {
            return Err(format!(
                "write the number in decimal: YAML reads `{raw}` as {}, which is rarely what a quantity means",
                scalar_text(v).unwrap_or_default()
            ));
        }
    }
    Ok(scalar_text(v))
}

/// An unknown key: located, with the closest known key or the list.
pub fn unknown_key(
    code: &str,
    file: &Arc<SourceFile>,
    span: Span,
    key: &str,
    place: &str,
    keys: &[&str],
) -> Finding {
    let hint = crate::suggest::did_you_mean(key, keys.iter().copied());
    Finding::input(code, file, span, format!("unknown key `{key}` in {place}"))
        .label("unknown key")
        .help(if hint.is_empty() {
            format!("keys: {}", keys.join(", "))
        } else {
            hint
        })
}

/// What a YAML value is, for messages.
pub fn describe(v: &Value) -> &'static str {
    match v {
        Value::Null => "nothing",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Sequence(_) => "a list",
        Value::Mapping(_) => "a mapping",
        Value::Tagged(_) => "a tagged value",
    }
}

fn parse_key(rest: &str) -> Option<(String, usize)> {
    // returns key text and the byte length up to and including ':'
    let bytes = rest.as_bytes();
    if let Some(q) = rest.chars().next().filter(|c| *c == '"' || *c == '\'') {
        let end = rest[1..].find(q)? + 1;
        let after = rest.get(end + 1..)?;
        if after.starts_with(':') {
            return Some((rest[1..end].to_string(), end + 2));
        }
        return None;
    }
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b':'
            && (i + 1 == bytes.len() || bytes[i + 1] == b' ' || bytes[i + 1] == b'\t')
        {
            let key = rest[..i].trim_end();
            if key.is_empty()
                || key.starts_with('#')
                || key.starts_with('{')
                || key.starts_with('[')
            {
                return None;
            }
            return Some((key.to_string(), i + 1));
        }
        if bytes[i] == b'#' && i > 0 && bytes[i - 1] == b' ' {
            return None;
        }
        i += 1;
    }
    None
}

fn locate(text: &str) -> HashMap<String, (Span, Span)> {
    struct Entry {
        indent: usize,
        path: String,
        is_item: bool,
        next_index: usize,
    }
    let mut positions = HashMap::new();
    let mut stack: Vec<Entry> = Vec::new();
    let mut offset = 0usize;
    let mut block_scalar_indent: Option<usize> = None;
    for raw in text.split('\n') {
        let line_start = offset;
        offset += raw.len() + 1;
        let line = raw.trim_end_matches('\r');
        let content = line.trim_start_matches(' ');
        let indent = line.len() - content.len();
        if content.is_empty() || content.starts_with('#') || content.starts_with("---") {
            continue;
        }
        if let Some(bi) = block_scalar_indent {
            if indent > bi {
                continue;
            }
            block_scalar_indent = None;
        }
        let mut col = indent;
        let mut rest = content;
        loop {
            if rest == "-" || rest.starts_with("- ") {
                while let Some(top) = stack.last() {
                    if top.indent > col || (top.indent == col && top.is_item) {
                        stack.pop();
                    } else {
                        break;
                    }
                }
                let (parent, idx) = match stack.last_mut() {
                    Some(top) => {
                        let i = top.next_index;
                        top.next_index += 1;
                        (top.path.clone(), i)
                    }
                    None => (String::new(), 0),
                };
                let path = child(&parent, &idx.to_string());
                let s = Span::new(line_start + col, line_start + col + 1);
                positions.entry(path.clone()).or_insert((s, s));
                stack.push(Entry {
                    indent: col,
                    path,
                    is_item: true,
                    next_index: 0,
                });
                let after = &rest[1..];
                let trimmed = after.trim_start_matches(' ');
                col += 1 + (after.len() - trimmed.len());
                rest = trimmed;
                if rest.is_empty() {
                    break;
                }
                continue;
            }
            if let Some((key, consumed)) = parse_key(rest) {
                while let Some(top) = stack.last() {
                    if top.indent >= col {
                        stack.pop();
                    } else {
                        break;
                    }
                }
                let parent = stack.last().map(|e| e.path.clone()).unwrap_or_default();
                let path = child(&parent, &key);
                let key_span = Span::new(line_start + col, line_start + col + consumed - 1);
                let after = &rest[consumed..];
                let val = after.trim_start();
                let vstart = line_start + col + consumed + (after.len() - val.len());
                let vtext = match val.find(" #") {
                    Some(i) => val[..i].trim_end(),
                    None => val.trim_end(),
                };
                let value_span = if vtext.is_empty() {
                    key_span
                } else {
                    Span::new(vstart, vstart + vtext.len())
                };
                if vtext.starts_with('|') || vtext.starts_with('>') {
                    block_scalar_indent = Some(col);
                }
                positions
                    .entry(path.clone())
                    .or_insert((key_span, value_span));
                stack.push(Entry {
                    indent: col,
                    path,
                    is_item: false,
                    next_index: 0,
                });
            }
            break;
        }
    }
    positions
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn locates_nested_keys_and_items() {
        let t = "parts:\n  A:\n    kind: nmos\n    vds_max: 60V\nrules:\n  - id: x/y\n    when: \"a\"\n  - id: z/w\n";
        let f = SourceFile::from_str("l.yaml", t);
        let d = match parse(&f, "library-error") {
            Ok(d) => d,
            Err(e) => panic!("{}", e.message),
        };
        let s = d.value_span("parts/A/vds_max");
        assert_eq!(f.slice(s), "60V");
        assert_eq!(f.line_col(s.start()), (4, 14));
        assert_eq!(f.line_col(d.key_span("rules/1/id").start()), (8, 5));
        assert_eq!(f.line_col(d.key_span("rules/0/when").start()), (7, 5));
        // unknown path falls back to the nearest ancestor
        assert_eq!(d.key_span("parts/A/nope"), d.key_span("parts/A"));
    }

    #[test]
    fn syntax_errors_are_located() {
        let f = SourceFile::from_str("l.yaml", "parts:\n  A: [1, 2\n");
        assert!(parse(&f, "library-error").is_err());
    }
}

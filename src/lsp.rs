//! `armature lsp`: a language server over stdio (the Language Server
//! Protocol, JSON-RPC 2.0 with `Content-Length` framing), written out by
//! hand: the protocol subset is small, and owning the reader means a
//! malformed message is answered with a protocol error instead of ending
//! the session.
//!
//! What it serves for `.drive` (and SPICE) files: diagnostics on open,
//! change and save (every finding, its rule id as the code, related
//! locations); hover on a part (kind, library part, computed facts) and on
//! a net (the parts on it, its worst-case voltage); go to definition and
//! find references for nets and parts; completion of kinds, pin names,
//! keys, library parts, nets and rule ids; a code action that inserts a
//! suppression. Positions are in UTF-16 code units, as the protocol's
//! default encoding asks.

use crate::Options;
use crate::finding::{Finding, Severity};
use crate::model::kinds::{Kind, PinSpec};
use crate::model::library::LibraryCache;
use crate::source::SourceFile;
use serde_json::{Value, json};
use std::collections::HashMap;
use std::io::{BufRead, Write};
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// The largest message accepted (a whole netlist travels in one).
pub const MAX_MESSAGE_BYTES: usize = 256 << 20;

/// One message read: a JSON value, or why it could not be read.
enum Incoming {
    Message(Value),
    /// The body was not JSON (the session goes on).
    Malformed(String),
    /// End of input or a broken frame.
    End,
}

fn read_message(r: &mut impl BufRead) -> Incoming {
    let mut length: Option<usize> = None;
    loop {
        let mut line = String::new();
        match r.read_line(&mut line) {
            Ok(0) | Err(_) => return Incoming::End,
            Ok(_) => {}
        }
        let l = line.trim_end();
        if l.is_empty() {
            if length.is_some() {
                break;
            }
            continue;
        }
        if let Some((k, v)) = l.split_once(':')
            && k.trim().eq_ignore_ascii_case("content-length")
        {
            length = v.trim().parse().ok();
        }
    }
    let Some(n) = length.filter(|n| *n <= MAX_MESSAGE_BYTES) else {
        return Incoming::End;
    };
    let mut body = vec![0u8; n];
    if r.read_exact(&mut body).is_err() {
        return Incoming::End;
    }
    match serde_json::from_slice(&body) {
        Ok(v) => Incoming::Message(v),
        Err(e) => Incoming::Malformed(e.to_string()),
    }
}

fn send(w: &mut impl Write, v: &Value) {
    let body = v.to_string();
    let _ = write!(w, "Content-Length: {}\r\n\r\n{body}", body.len());
    let _ = w.flush();
}

/// `file:///a%20b/c.drive` → `/a b/c.drive`.
pub fn uri_to_path(uri: &str) -> Option<PathBuf> {
    let rest = uri.strip_prefix("file://")?;
    let bytes = rest.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        match bytes.get(i) {
            Some(b'%') => {
                let hex = rest.get(i + 1..i + 3)?;
                out.push(u8::from_str_radix(hex, 16).ok()?);
                i += 3;
            }
            Some(&b) => {
                out.push(b);
                i += 1;
            }
            None => break,
        }
    }
    Some(PathBuf::from(String::from_utf8(out).ok()?))
}

fn path_to_uri(p: &Path) -> String {
    let abs = if p.is_absolute() {
        p.to_path_buf()
    } else {
        std::env::current_dir().unwrap_or_default().join(p)
    };
    let mut s = String::from("file://");
    for b in abs.to_string_lossy().bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'/' | b'-' | b'_' | b'.' | b'~') {
            s.push(b as char);
        } else {
            s.push_str(&format!("%{b:02X}"));
        }
    }
    s
}

/// A byte offset as an LSP position (line, UTF-16 column).
fn position(file: &SourceFile, offset: usize) -> Value {
    let line = file.line_index(offset.min(file.text.len()));
    let start = file.line_start(line);
    let col: usize = file
        .text
        .get(start..offset.min(file.text.len()))
        .map_or(0, |t| t.chars().map(char::len_utf16).sum());
    json!({"line": line, "character": col})
}

/// An LSP position as a byte offset.
fn offset_of(text: &str, line: usize, character: usize) -> usize {
    let mut start = 0;
    for _ in 0..line {
        match text.get(start..).and_then(|t| t.find('\n')) {
            Some(i) => start += i + 1,
            None => return text.len(),
        }
    }
    let mut units = 0;
    for (i, c) in text.get(start..).unwrap_or("").char_indices() {
        if units >= character || c == '\n' {
            return start + i;
        }
        units += c.len_utf16();
    }
    text.len()
}

fn range(file: &SourceFile, span: crate::source::Span) -> Value {
    json!({"start": position(file, span.start()), "end": position(file, span.end().max(span.start()))})
}

/// A document text and what was built from it (`None`: it does not build).
type Built = (Arc<SourceFile>, Option<std::rc::Rc<crate::Built>>);

struct Server {
    docs: HashMap<String, Arc<SourceFile>>,
    /// The last build of each document text (hover, definitions,
    /// completion and fixes ask for it one after another), with the text
    /// it was built from: a new text is a new `SourceFile`.
    builds: std::cell::RefCell<HashMap<String, Built>>,
    cache: LibraryCache,
    shutdown: bool,
}

fn options_for(path: &Path) -> Options {
    crate::cli::options_for(path).unwrap_or_default()
}

/// The word (name characters, dots) around a byte offset, with its start.
fn word_at(text: &str, at: usize) -> Option<(usize, &str)> {
    let is = |c: char| c.is_alphanumeric() || matches!(c, '_' | '-' | '+' | '/' | '.');
    let at = at.min(text.len());
    let start = text
        .get(..at)?
        .char_indices()
        .rev()
        .take_while(|(_, c)| is(*c))
        .last()
        .map_or(at, |(i, _)| i);
    let end = at
        + text
            .get(at..)?
            .chars()
            .take_while(|c| is(*c))
            .map(char::len_utf8)
            .sum::<usize>();
    let w = text.get(start..end)?;
    (!w.is_empty()).then_some((start, w))
}

impl Server {
    fn file(&self, uri: &str) -> Option<Arc<SourceFile>> {
        self.docs.get(uri).cloned()
    }

    fn diagnostics(&self, uri: &str) -> Value {
        let Some(file) = self.file(uri) else {
            return json!({"uri": uri, "diagnostics": []});
        };
        let opts = options_for(&file.path);
        let r = if crate::spice::reads_as_spice(&file.path, &opts) {
            crate::spice::check_source(file.clone(), &opts, &self.cache)
        } else {
            crate::check_source(file.clone(), &opts, &self.cache)
        };
        let list: Vec<Value> = r.findings.iter().map(|f| diagnostic(f, &file)).collect();
        json!({"uri": uri, "diagnostics": list})
    }

    fn built(&self, file: &Arc<SourceFile>) -> Option<std::rc::Rc<crate::Built>> {
        let key = file.path.to_string_lossy().into_owned();
        if let Some((f, b)) = self.builds.borrow().get(&key)
            && Arc::ptr_eq(f, file)
        {
            return b.clone();
        }
        let opts = options_for(&file.path);
        let b = crate::build(file, &opts, &self.cache)
            .ok()
            .map(std::rc::Rc::new);
        self.builds
            .borrow_mut()
            .insert(key, (file.clone(), b.clone()));
        b
    }

    fn hover(&self, uri: &str, line: usize, ch: usize) -> Value {
        let Some(file) = self.file(uri) else {
            return Value::Null;
        };
        let at = offset_of(&file.text, line, ch);
        let Some((_, word)) = word_at(&file.text, at) else {
            return Value::Null;
        };
        // a rule id in a suppression
        let line_text = file.line_text(file.line_index(at));
        if line_text.contains("armature:")
            && let Some(r) = crate::checks::find(word)
        {
            return json!({"contents": {"kind": "markdown", "value": format!("**{}** ({})\n\n{}", r.meta.id, r.meta.severity, r.meta.summary)}});
        }
        let Some(b) = self.built(&file) else {
            return Value::Null;
        };
        let c = &b.circuit;
        if let Some(pid) = c.part_id(word) {
            let p = c.part(pid);
            let mut md = format!("**{}** — {}", p.reference, p.kind.name());
            if let Some(n) = &p.part_name {
                md.push_str(&format!(", part `{n}`"));
            }
            md.push('\n');
            let keys: Vec<String> = p
                .kind
                .keys()
                .iter()
                .filter_map(|k| {
                    let v = p.num(k.name)?;
                    match k.ty {
                        crate::model::kinds::KeyType::Q(d) => {
                            Some(format!("- {} = {}", k.name, crate::units::format_si(v, d)))
                        }
                        _ => None,
                    }
                })
                .collect();
            if !keys.is_empty() {
                md.push_str("\nRatings and values:\n");
                md.push_str(&keys.join("\n"));
                md.push('\n');
            }
            if let Some(pf) = b.analysis.facts.parts.get(pid)
                && !pf.facts.is_empty()
            {
                md.push_str("\nComputed:\n");
                for f in &pf.facts {
                    md.push_str(&format!(
                        "- {} = {}\n",
                        f.name,
                        crate::units::format_si(f.value, f.dim)
                    ));
                }
            }
            return json!({"contents": {"kind": "markdown", "value": md}});
        }
        if let Some(&nid) = c.net_by_name.get(word) {
            let n = c.net(nid);
            let mut parts: Vec<String> = n
                .conns
                .iter()
                .map(|&(p, i)| {
                    let part = c.part(p);
                    let pin = part.pins.get(i).map_or("?", |x| x.name.as_ref());
                    format!("{}.{pin}", part.reference)
                })
                .collect();
            parts.sort();
            parts.dedup();
            let mut md = format!("net **{}**: {}", n.name, parts.join(", "));
            if let Some(v) = b.analysis.net_vmax.get(nid).copied().flatten() {
                md.push_str(&format!(
                    "\n\nhighest voltage (worst case): {}",
                    crate::units::format_si(v, crate::units::Dimension::Voltage)
                ));
            }
            return json!({"contents": {"kind": "markdown", "value": md}});
        }
        Value::Null
    }

    /// Definition (`refs` false) or references (`refs` true) of the name
    /// under the cursor.
    fn locations(&self, uri: &str, line: usize, ch: usize, refs: bool) -> Value {
        let Some(file) = self.file(uri) else {
            return Value::Null;
        };
        let at = offset_of(&file.text, line, ch);
        let Some((_, word)) = word_at(&file.text, at) else {
            return Value::Null;
        };
        // a `library "path"` line: the file
        let lt = file.line_text(file.line_index(at)).trim_start();
        if !refs
            && lt.starts_with("library")
            && let Some(p) = lt.split('"').nth(1)
        {
            let target = file
                .path
                .parent()
                .map_or_else(|| PathBuf::from(p), |d| d.join(p));
            return json!({"uri": path_to_uri(&target), "range": {"start": {"line": 0, "character": 0}, "end": {"line": 0, "character": 0}}});
        }
        let Some(b) = self.built(&file) else {
            return Value::Null;
        };
        let c = &b.circuit;
        let loc = |f: &SourceFile, s: crate::source::Span| json!({"uri": path_to_uri(&f.path), "range": range(f, s)});
        let here = |s| json!({"uri": uri, "range": range(&file, s)});
        if let Some(pid) = c.part_id(word) {
            let p = c.part(pid);
            if !refs {
                return here(p.ref_span);
            }
            let mut v = vec![here(p.ref_span)];
            for d in c.drives.iter().filter(|d| d.part == pid) {
                v.push(here(d.span));
            }
            return Value::Array(v);
        }
        if let Some(&nid) = c.net_by_name.get(word) {
            let n = c.net(nid);
            if !refs {
                return here(n.span);
            }
            let v: Vec<Value> = n
                .conns
                .iter()
                .filter_map(|&(p, i)| c.parts.get(p)?.pins.get(i).map(|pin| here(pin.span)))
                .collect();
            return Value::Array(v);
        }
        // a library part
        if let Some(lp) = c
            .parts
            .iter()
            .find_map(|p| p.lib.as_ref().filter(|l| l.name == word))
        {
            return loc(&lp.file, lp.span);
        }
        Value::Null
    }

    fn completion(&self, uri: &str, line: usize, ch: usize) -> Value {
        let Some(file) = self.file(uri) else {
            return json!([]);
        };
        let at = offset_of(&file.text, line, ch);
        let ls = file.line_start(file.line_index(at));
        let before = file.text.get(ls..at).unwrap_or("");
        let item = |label: &str, kind: u32, detail: &str| json!({"label": label, "kind": kind, "detail": detail});
        let mut items: Vec<Value> = Vec::new();
        let words: Vec<&str> = before.split_whitespace().collect();
        let typing_word =
            !before.ends_with(|c: char| c.is_whitespace() || matches!(c, '(' | ',' | ':' | '='));
        let first_word = words.is_empty() || (words.len() == 1 && typing_word);
        if before.contains("armature:") && before.contains("allow") {
            for r in crate::checks::registry() {
                items.push(item(r.meta.id, 12, r.meta.summary));
            }
            return Value::Array(items);
        }
        if first_word {
            for k in Kind::ALL {
                items.push(item(k.name(), 14, "part kind"));
            }
            for kw in ["design", "library", "ambient", "rail", "ground", "drive"] {
                items.push(item(kw, 14, "statement"));
            }
            return Value::Array(items);
        }
        let kind = words.first().and_then(|w| Kind::from_name(w));
        let open = before.rfind('(');
        let closed = before.rfind(')');
        let in_pins = open.is_some_and(|o| closed.is_none_or(|c| c < o));
        let b = self.built(&file);
        if before.ends_with("part=") || words.last().is_some_and(|w| w.starts_with("part=")) {
            if let Some(b) = &b {
                for n in &b.settings.known_part_names {
                    items.push(item(n, 7, "library part"));
                }
            }
            return Value::Array(items);
        }
        if in_pins {
            let after_open = open.and_then(|o| before.get(o..)).unwrap_or("");
            let entry = after_open.rsplit([',', '(']).next().unwrap_or("");
            if entry.contains(':') {
                // a net after `pin:`
                if let Some(b) = &b {
                    for n in &b.circuit.nets {
                        items.push(item(&n.name, 6, "net"));
                    }
                }
            } else if let Some(PinSpec::Fixed(pins)) = kind.map(Kind::pins) {
                for (p, required) in pins {
                    items.push(item(p, 5, if *required { "pin" } else { "optional pin" }));
                }
            }
            return Value::Array(items);
        }
        if let Some(k) = kind {
            for key in k.keys() {
                items.push(json!({"label": key.name, "kind": 10, "detail": key.doc, "insertText": format!("{}=", key.name)}));
            }
            items.push(json!({"label": "part", "kind": 10, "detail": "a library part", "insertText": "part="}));
        }
        Value::Array(items)
    }

    /// A finding's fix, where it is mechanical: a reversed diode's pins
    /// swapped; a pull-down (pull-up for a p-channel or pnp) on a floating
    /// gate or base.
    fn fix(&self, file: &Arc<SourceFile>, uri: &str, rule: &str, d: &Value) -> Option<Value> {
        let b = self.built(file)?;
        let c = &b.circuit;
        let parts: Vec<&str> = d["data"]["parts"]
            .as_array()?
            .iter()
            .filter_map(Value::as_str)
            .collect();
        let edit = |title: String, edits: Vec<Value>| json!({"title": title, "kind": "quickfix", "isPreferred": true, "diagnostics": [d], "edit": {"changes": {uri: edits}}});
        match rule {
            "freewheel-reversed" => {
                let p = parts
                    .iter()
                    .filter_map(|n| c.part_id(n))
                    .map(|i| c.part(i))
                    .find(|p| p.kind.is_diode())?;
                let pin = |name: &str| p.pins.iter().find(|x| x.name == name);
                let (a, k) = (pin("a")?, pin("k")?);
                let net = |x: &crate::model::Pin| c.nets.get(x.net).map(|n| n.name.clone());
                let (na, nk) = (net(a)?, net(k)?);
                Some(edit(
                    format!(
                        "Turn `{}` round (anode on `{nk}`, cathode on `{na}`)",
                        p.reference
                    ),
                    vec![
                        json!({"range": range(file, a.span), "newText": format!("a: {nk}")}),
                        json!({"range": range(file, k.span), "newText": format!("k: {na}")}),
                    ],
                ))
            }
            "gate-floating" => {
                let p = parts
                    .first()
                    .and_then(|n| c.part_id(n))
                    .map(|i| c.part(i))?;
                let (_, ctl, rpin) = p.kind.switch_pins()?;
                let net = |pin: &str| {
                    p.pins
                        .iter()
                        .find(|x| x.name == pin)
                        .and_then(|x| c.nets.get(x.net))
                        .map(|n| n.name.clone())
                };
                let (g, s) = (net(ctl)?, net(rpin)?);
                // the value: 47 kΩ (common practice for 10 kΩ–100 kΩ), or
                // at least 100 × the series resistor between pin and gate,
                // rounded up to an E12 value, so that it does not divide
                // the drive (the bound `gate-pulldown-strong` holds)
                let gate = p.pins.iter().find(|x| x.name == ctl).map(|x| x.net);
                let series = c
                    .parts
                    .iter()
                    .filter(|q| {
                        q.kind == Kind::Resistor && q.pins.iter().any(|x| Some(x.net) == gate)
                    })
                    .filter(|q| {
                        q.pins.iter().all(|x| {
                            c.nets
                                .get(x.net)
                                .is_some_and(|n| matches!(n.kind, crate::model::NetKind::Signal))
                        })
                    })
                    .filter_map(|q| q.num("value"))
                    .fold(0.0f64, f64::max);
                let ohms = e12_at_least((100.0 * series).max(47e3));
                let value = crate::units::format_si(ohms, crate::units::Dimension::Resistance)
                    .replace([' ', 'Ω'], "");
                let mut name = format!("R{}_OFF", p.reference);
                while c.part_id(&name).is_some() {
                    name.push('X');
                }
                let line = file.line_index(p.span.start());
                let (what, dir) = if p.kind.is_p_type() {
                    ("pull-up", "off")
                } else {
                    ("pull-down", "off")
                };
                let text = format!(
                    "resistor {name} ({g}, {s}) {value}  # {what}: holds `{}` {dir} while the controller is in reset\n",
                    p.reference
                );
                let at = json!({"line": line, "character": 0});
                Some(edit(
                    format!(
                        "Add a {} {what} from `{g}` to `{s}`",
                        crate::units::format_si(ohms, crate::units::Dimension::Resistance)
                    ),
                    vec![json!({"range": {"start": at, "end": at}, "newText": text})],
                ))
            }
            _ => None,
        }
    }

    fn code_actions(&self, uri: &str, params: &Value) -> Value {
        let Some(file) = self.file(uri) else {
            return json!([]);
        };
        let mut actions = Vec::new();
        for d in params["context"]["diagnostics"]
            .as_array()
            .into_iter()
            .flatten()
        {
            let Some(rule) = d["code"].as_str() else {
                continue;
            };
            let line = d["range"]["start"]["line"].as_u64().unwrap_or(0) as usize;
            let text = file.line_text(line);
            let indent: String = text.chars().take_while(|c| c.is_whitespace()).collect();
            let comment = if crate::spice::is_spice(&file.path) {
                "*"
            } else {
                "#"
            };
            let new = format!(
                "{indent}{comment} armature: allow {rule} -- <why the finding does not apply>\n"
            );
            if let Some(a) = self.fix(&file, uri, rule, d) {
                actions.push(a);
            }
            actions.push(json!({
                "title": format!("Allow `{rule}` on this line (with a reason)"),
                "kind": "quickfix",
                "diagnostics": [d],
                "edit": {"changes": {uri: [{"range": {"start": {"line": line, "character": 0}, "end": {"line": line, "character": 0}}, "newText": new}]}}
            }));
        }
        Value::Array(actions)
    }
}

fn diagnostic(f: &Finding, doc: &Arc<SourceFile>) -> Value {
    let same = |x: &Arc<SourceFile>| Arc::ptr_eq(x, doc) || x.path == doc.path;
    let severity = match f.severity {
        Severity::Error => 1,
        Severity::Warning => 2,
        Severity::Info => 3,
    };
    let mut message = f.message.clone();
    if let Some(h) = &f.help {
        message.push_str("\nhelp: ");
        message.push_str(h);
    }
    let rng = if same(&f.file) {
        range(doc, f.span)
    } else {
        // a finding in a library or configuration: shown on the first
        // line, with where it is
        let (l, c) = f.file.line_col(f.span.start());
        message = format!("{}:{l}:{c}: {message}", f.file.name);
        json!({"start": {"line": 0, "character": 0}, "end": {"line": 0, "character": 0}})
    };
    let related: Vec<Value> = f
        .related
        .iter()
        .map(|r| {
            let file = r.file.as_ref().unwrap_or(&f.file);
            json!({"location": {"uri": path_to_uri(&file.path), "range": range(file, r.span)}, "message": r.label})
        })
        .collect();
    let mut d = json!({
        "range": rng,
        "severity": severity,
        "code": f.rule,
        "source": "armature",
        "message": message,
        "relatedInformation": related,
        "data": {"parts": f.parts},
    });
    if let Some(href) = explain_uri(&f.rule) {
        d["codeDescription"] = json!({"href": href});
    }
    d
}

/// The rule's `explain` page, written once to a folder of the system's
/// temporary files, as a `file:` URI the editor can open.
fn explain_uri(id: &str) -> Option<String> {
    let page = crate::checks::explain_page(id)?;
    let dir = std::env::temp_dir().join(format!("armature-explain-{}", env!("CARGO_PKG_VERSION")));
    let path = dir.join(format!("{id}.md"));
    if !path.is_file() {
        std::fs::create_dir_all(&dir).ok()?;
        std::fs::write(&path, page).ok()?;
    }
    Some(path_to_uri(&path))
}

/// The errors of a YAML file armature reads: a configuration, a SPICE
/// mapping, a rule file or a parts library (told apart by name and by
/// their top-level keys).
fn yaml_findings(f: &Arc<SourceFile>) -> Vec<Finding> {
    let name = f
        .path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let root = crate::trust::Root::find(f.path.parent().unwrap_or(Path::new(".")));
    let top = |k: &str| f.text.lines().any(|l| l.starts_with(&format!("{k}:")));
    let errs = if name == crate::config::FILE_NAME {
        crate::config::parse(f, Some(&root)).err()
    } else if name.ends_with(".map.yaml") {
        crate::spice::mapping::parse(f, "", Some(&root)).err()
    } else if top("rules") {
        crate::team::load(f).err()
    } else if top("parts") {
        crate::model::library::load_library(f).err()
    } else {
        None
    };
    errs.unwrap_or_default()
        .into_iter()
        .filter(|e| e.file.path == f.path)
        .collect()
}

/// The smallest E12 value (IEC 60063) at or above `x`.
fn e12_at_least(x: f64) -> f64 {
    const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
    if !(x.is_finite() && x > 0.0) {
        return 47e3;
    }
    let decade = 10f64.powf(x.log10().floor());
    for m in [1.0, 10.0] {
        for v in E12 {
            let r = v * decade * m;
            if r >= x * (1.0 - 1e-9) {
                return r;
            }
        }
    }
    x
}

fn error(id: &Value, code: i64, message: &str) -> Value {
    json!({"jsonrpc": "2.0", "id": id, "error": {"code": code, "message": message}})
}

/// Serve until `exit` or the end of input; the process's exit code.
pub fn serve(input: impl BufRead + Send + 'static, output: impl Write) -> i32 {
    let mut w = output;
    // messages are read on a thread of their own, so that a burst of
    // edits is seen whole: only the last edit of a file is checked
    let (tx, rx) = std::sync::mpsc::channel::<Incoming>();
    std::thread::spawn(move || {
        let mut r = input;
        loop {
            let m = read_message(&mut r);
            let end = matches!(m, Incoming::End);
            if tx.send(m).is_err() || end {
                return;
            }
        }
    });
    let mut queue: std::collections::VecDeque<Incoming> = std::collections::VecDeque::new();
    // an edit changes a few groups: the others keep their solutions
    crate::analysis::remember_solutions(true);
    let mut s = Server {
        docs: HashMap::new(),
        builds: Default::default(),
        cache: LibraryCache::default(),
        shutdown: false,
    };
    loop {
        let next = match queue.pop_front() {
            Some(m) => m,
            None => rx.recv().unwrap_or(Incoming::End),
        };
        let msg = match next {
            Incoming::End => return i32::from(!s.shutdown),
            Incoming::Malformed(why) => {
                send(
                    &mut w,
                    &error(
                        &Value::Null,
                        -32700,
                        &format!("the message is not JSON: {why}"),
                    ),
                );
                continue;
            }
            Incoming::Message(m) => m,
        };
        let id = msg.get("id").cloned();
        let Some(method) = msg.get("method").and_then(Value::as_str) else {
            if let Some(id) = &id {
                if msg.get("result").is_none() && msg.get("error").is_none() {
                    send(&mut w, &error(id, -32600, "a request needs a `method`"));
                }
            } else {
                send(
                    &mut w,
                    &error(&Value::Null, -32600, "not a JSON-RPC message"),
                );
            }
            continue;
        };
        let p = &msg["params"];
        let uri = p["textDocument"]["uri"].as_str().unwrap_or("").to_string();
        let pos = (
            p["position"]["line"].as_u64().unwrap_or(0) as usize,
            p["position"]["character"].as_u64().unwrap_or(0) as usize,
        );
        let reply = |w: &mut _, result: Value| {
            if let Some(id) = &id {
                send(w, &json!({"jsonrpc": "2.0", "id": id, "result": result}));
            }
        };
        if s.shutdown && method != "exit" {
            if let Some(id) = &id {
                send(&mut w, &error(id, -32600, "the server is shutting down"));
            }
            continue;
        }
        match method {
            "initialize" => reply(
                &mut w,
                json!({
                    "capabilities": {
                        "positionEncoding": "utf-16",
                        "textDocumentSync": {"openClose": true, "change": 1, "save": {"includeText": true}},
                        "hoverProvider": true,
                        "definitionProvider": true,
                        "referencesProvider": true,
                        "completionProvider": {"triggerCharacters": ["(", ",", ":", "=", " "]},
                        "codeActionProvider": true
                    },
                    "serverInfo": {"name": "armature", "version": env!("CARGO_PKG_VERSION")}
                }),
            ),
            "initialized"
            | "$/cancelRequest"
            | "$/setTrace"
            | "workspace/didChangeConfiguration" => {}
            "textDocument/didOpen" | "textDocument/didChange" | "textDocument/didSave" => {
                let text = match method {
                    "textDocument/didOpen" => {
                        p["textDocument"]["text"].as_str().map(str::to_string)
                    }
                    "textDocument/didChange" => p["contentChanges"]
                        .as_array()
                        .and_then(|c| c.last())
                        .and_then(|c| c["text"].as_str())
                        .map(str::to_string),
                    _ => p["text"].as_str().map(str::to_string),
                };
                let Some(path) = uri_to_path(&uri) else {
                    continue;
                };
                if let Some(t) = text {
                    let shown = crate::shown_path(&path);
                    s.docs.insert(uri.clone(), SourceFile::new(shown, &path, t));
                }
                // a library or configuration changed: re-check every open netlist
                let yaml = path.extension().is_some_and(|e| e == "yaml" || e == "yml");
                if yaml {
                    // the file's own errors, as the loader of what it is reads it
                    if let Some(f) = s.docs.remove(&uri) {
                        let own = yaml_findings(&f);
                        let list: Vec<Value> = own.iter().map(|x| diagnostic(x, &f)).collect();
                        send(
                            &mut w,
                            &json!({"jsonrpc": "2.0", "method": "textDocument/publishDiagnostics", "params": {"uri": uri, "diagnostics": list}}),
                        );
                    }
                    s.cache = LibraryCache::default();
                    s.builds.borrow_mut().clear();
                    let uris: Vec<String> = s.docs.keys().cloned().collect();
                    for u in uris {
                        let d = s.diagnostics(&u);
                        send(
                            &mut w,
                            &json!({"jsonrpc": "2.0", "method": "textDocument/publishDiagnostics", "params": d}),
                        );
                    }
                } else if s.docs.contains_key(&uri) {
                    // debounce: a later change of the same file, already
                    // waiting, makes this check moot
                    while let Ok(m) = rx.try_recv() {
                        queue.push_back(m);
                    }
                    let superseded = queue.iter().any(|m| match m {
                        Incoming::Message(v) => {
                            matches!(
                                v["method"].as_str(),
                                Some("textDocument/didChange" | "textDocument/didClose")
                            ) && v["params"]["textDocument"]["uri"] == uri.as_str()
                        }
                        _ => false,
                    });
                    if superseded {
                        continue;
                    }
                    let d = s.diagnostics(&uri);
                    send(
                        &mut w,
                        &json!({"jsonrpc": "2.0", "method": "textDocument/publishDiagnostics", "params": d}),
                    );
                }
            }
            "textDocument/didClose" => {
                s.docs.remove(&uri);
                send(
                    &mut w,
                    &json!({"jsonrpc": "2.0", "method": "textDocument/publishDiagnostics", "params": {"uri": uri, "diagnostics": []}}),
                );
            }
            "textDocument/hover" => {
                let v = s.hover(&uri, pos.0, pos.1);
                reply(&mut w, v);
            }
            "textDocument/definition" => {
                let v = s.locations(&uri, pos.0, pos.1, false);
                reply(&mut w, v);
            }
            "textDocument/references" => {
                let v = s.locations(&uri, pos.0, pos.1, true);
                reply(&mut w, v);
            }
            "textDocument/completion" => {
                let v = s.completion(&uri, pos.0, pos.1);
                reply(&mut w, v);
            }
            "textDocument/codeAction" => {
                let v = s.code_actions(&uri, p);
                reply(&mut w, v);
            }
            "shutdown" => {
                s.shutdown = true;
                reply(&mut w, Value::Null);
            }
            "exit" => return i32::from(!s.shutdown),
            other => {
                if let Some(id) = &id {
                    send(
                        &mut w,
                        &error(
                            id,
                            -32601,
                            &format!("`{other}` is not a method armature serves"),
                        ),
                    );
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn e12_rounds_up() {
        let close = |a: f64, b: f64| (a - b).abs() < 1e-6 * b;
        assert!(close(super::e12_at_least(47e3), 47e3));
        assert!(close(super::e12_at_least(48e3), 56e3));
        assert!(close(super::e12_at_least(100e3), 100e3));
        assert!(close(super::e12_at_least(83e3), 100e3));
        assert!(close(super::e12_at_least(1.0), 1.0));
    }
}

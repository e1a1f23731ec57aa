//! SARIF 2.1.0 output: one run, the built-in and team rules as
//! `tool.driver.rules`, each finding a result with its primary location,
//! its related locations and a fingerprint that does not change when
//! unrelated lines move.

use crate::checks;
use crate::finding::{Finding, Severity};
use crate::team::TeamRule;
use serde_json::{Value, json};
use std::sync::Arc;

fn level(s: Severity) -> &'static str {
    match s {
        Severity::Error => "error",
        Severity::Warning => "warning",
        Severity::Info => "note",
    }
}

/// FNV-1a, 64 bits: stable across runs and platforms.
fn fnv(s: &str) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in s.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// A fingerprint from what identifies the fault, not where it is: the
/// rule, the file, the parts involved and the text of the offending line.
pub fn fingerprint(f: &Finding) -> String {
    let line = f.file.line_text(f.file.line_index(f.span.start()));
    let squeezed: String = line.split_whitespace().collect::<Vec<_>>().join(" ");
    fnv(&format!(
        "{}\u{1f}{}\u{1f}{}\u{1f}{}",
        f.rule,
        f.file.name,
        f.parts.join(","),
        squeezed
    ))
}

/// A relative URI reference for a file name: backslashes become `/`, and
/// every byte outside RFC 3986's unreserved set and `/` is percent-encoded
/// (UTF-8), so `#`, `%`, `?`, spaces and control characters cannot change
/// what the reference means.
pub fn uri(name: &str) -> String {
    percent_encode(&name.replace('\\', "/"), false)
}

/// `colon` keeps `:` (a drive letter in an absolute `file:` URI); in a
/// relative reference a colon could read as a scheme, so it is encoded.
fn percent_encode(path: &str, colon: bool) -> String {
    let mut out = String::with_capacity(path.len());
    for &b in path.as_bytes() {
        if b.is_ascii_alphanumeric()
            || matches!(b, b'-' | b'.' | b'_' | b'~' | b'/')
            || (colon && b == b':')
        {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

fn region(file: &crate::source::SourceFile, span: crate::source::Span) -> Value {
    let (sl, sc) = file.line_col(span.start());
    let (el, ec) = file.line_col(span.end().max(span.start()));
    json!({"startLine": sl, "startColumn": sc, "endLine": el, "endColumn": ec.max(if el == sl { sc } else { 1 })})
}

fn input_rule(id: &str) -> Value {
    json!({
        "id": id,
        "shortDescription": {"text": "the input could not be checked"},
        "fullDescription": {"text": "A netlist, parts library, configuration or rule file that could not be read or understood; nothing in it was checked."},
        "help": {"text": "Fix the input at the location given.", "markdown": "Fix the input at the location given."},
        "defaultConfiguration": {"level": "error"},
    })
}

pub fn document(findings: &[Finding], team: &[Arc<TeamRule>]) -> Value {
    let mut rules: Vec<Value> = Vec::new();
    let mut ids: Vec<String> = Vec::new();
    for r in checks::registry() {
        let m = r.meta;
        let mut md = m.docs.to_string();
        if m.hazard {
            md.push_str("\n\n**Caution.** armature supports a design review; it does not replace one. Motor drives can burn and hurt: verify on the bench and defer to local codes and licensed practice.");
        }
        rules.push(json!({
            "id": m.id,
            "name": m.id,
            "shortDescription": {"text": m.summary},
            "fullDescription": {"text": first_section(m.docs)},
            "help": {"text": m.docs, "markdown": md},
            "defaultConfiguration": {"level": level(m.severity)},
            "properties": {"family": m.family, "tags": [m.family]},
        }));
        ids.push(m.id.to_string());
    }
    for t in team {
        if ids.contains(&t.id) {
            continue;
        }
        let text = format!("Requires `{}`.", t.require.1);
        rules.push(json!({
            "id": t.id,
            "shortDescription": {"text": t.summary()},
            "fullDescription": {"text": format!("Team rule from {}. {text}", t.file.name)},
            "help": {"text": text, "markdown": text},
            "defaultConfiguration": {"level": level(t.severity)},
            "properties": {"family": "team", "tags": ["team"]},
        }));
        ids.push(t.id.clone());
    }
    for f in findings {
        if !ids.contains(&f.rule) {
            rules.push(input_rule(&f.rule));
            ids.push(f.rule.clone());
        }
    }
    let results: Vec<Value> = findings
        .iter()
        .map(|f| {
            let related: Vec<Value> = f
                .related
                .iter()
                .enumerate()
                .map(|(i, r)| {
                    let file = r.file.as_ref().unwrap_or(&f.file);
                    json!({
                        "id": i + 1,
                        "message": {"text": r.label},
                        "physicalLocation": {
                            "artifactLocation": {"uri": uri(&file.name), "uriBaseId": "%SRCROOT%"},
                            "region": region(file, r.span),
                        }
                    })
                })
                .collect();
            let mut text = f.message.clone();
            if let Some(h) = &f.help {
                text.push_str(&format!(" (help: {h})"));
            }
            let mut res = json!({
                "ruleId": f.rule,
                "ruleIndex": ids.iter().position(|x| *x == f.rule).unwrap_or(0),
                "level": level(f.severity),
                "message": {"text": text},
                "locations": [{
                    "physicalLocation": {
                        "artifactLocation": {"uri": uri(&f.file.name), "uriBaseId": "%SRCROOT%"},
                        "region": region(&f.file, f.span),
                    }
                }],
                "partialFingerprints": {"armature/v1": fingerprint(f)},
                "properties": {"parts": f.parts},
            });
            if !related.is_empty() {
                res["relatedLocations"] = Value::Array(related);
            }
            res
        })
        .collect();
    let root = std::env::current_dir()
        .ok()
        .map(|p| {
            let s = p.to_string_lossy().replace('\\', "/");
            format!(
                "file://{}{}/",
                if s.starts_with('/') { "" } else { "/" },
                percent_encode(&s, true)
            )
        })
        .unwrap_or_else(|| "file:///".to_string());
    json!({
        "version": "2.1.0",
        "runs": [{
            "tool": {"driver": {
                "name": "armature",
                "version": env!("CARGO_PKG_VERSION"),
                "semanticVersion": env!("CARGO_PKG_VERSION"),
                "informationUri": "urn:armature:docs",
                "rules": rules,
            }},
            "originalUriBaseIds": {"%SRCROOT%": {"uri": root}},
            "columnKind": "unicodeCodePoints",
            "results": results,
        }]
    })
}

fn first_section(docs: &str) -> String {
    docs.split("## ")
        .find(|s| s.starts_with("What it checks"))
        .map(|s| {
            s.trim_start_matches("What it checks")
                .trim()
                .replace('\n', " ")
        })
        .unwrap_or_default()
}

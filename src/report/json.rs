//! `--format json` as the contract says, with a few extra fields.

use crate::finding::{Finding, Severity};
use crate::settings::Derating;
use serde_json::{Value, json};

pub fn finding(f: &Finding) -> Value {
    let (line, column) = f.line_col();
    let (end_line, end_column) = f.file.line_col(f.span.end());
    let related: Vec<Value> = f
        .related
        .iter()
        .map(|r| {
            let file = r.file.as_ref().unwrap_or(&f.file);
            let (l, c) = file.line_col(r.span.start());
            json!({"file": file.name, "line": l, "column": c, "label": r.label})
        })
        .collect();
    json!({
        "rule": f.rule,
        "severity": f.severity.as_str(),
        "file": f.file.name,
        "line": line,
        "column": column,
        "end_line": end_line,
        "end_column": end_column,
        "parts": f.parts,
        "message": f.message,
        "help": f.help,
        "related": related,
    })
}

pub fn derating(d: &Derating) -> Value {
    json!({
        "voltage": d.voltage,
        "current": d.current,
        "gate_voltage": d.gate_voltage,
        "power": d.power,
        "tj_margin": d.tj_margin,
    })
}

pub fn document(
    findings: &[Finding],
    files: usize,
    suppressed: usize,
    derating_v: &Derating,
) -> Value {
    let errors = findings
        .iter()
        .filter(|f| f.severity == Severity::Error)
        .count();
    let warnings = findings
        .iter()
        .filter(|f| f.severity == Severity::Warning)
        .count();
    let infos = findings
        .iter()
        .filter(|f| f.severity == Severity::Info)
        .count();
    json!({
        "findings": findings.iter().map(finding).collect::<Vec<_>>(),
        "summary": {
            "errors": errors,
            "warnings": warnings,
            "infos": infos,
            "files": files,
            "suppressed": suppressed,
        },
        "derating": derating(derating_v),
    })
}

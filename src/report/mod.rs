//! Rendering findings: human (miette), compact, JSON and SARIF.

pub mod human;
pub mod json;
pub mod sarif;

use crate::finding::Finding;

/// Output formats of `check`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Human,
    Compact,
    Json,
    Sarif,
}

/// `file:line:col: severity[rule]: message`
pub fn compact(f: &Finding) -> String {
    let (l, c) = f.line_col();
    format!(
        "{}:{}:{}: {}[{}]: {}",
        f.file.name,
        l,
        c,
        f.severity.as_str(),
        f.rule,
        f.message
    )
}

/// Sort key that makes the output stable: file, line, column, rule.
pub fn sort_findings(v: &mut [Finding]) {
    v.sort_by(|a, b| {
        (
            a.file.name.as_str(),
            a.span.start(),
            a.rule.as_str(),
            a.message.as_str(),
        )
            .cmp(&(
                b.file.name.as_str(),
                b.span.start(),
                b.rule.as_str(),
                b.message.as_str(),
            ))
    });
}

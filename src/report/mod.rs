//! Rendering findings: human (miette), compact, JSON and SARIF.

pub mod html;
pub mod human;
pub mod json;
pub mod sarif;

use crate::finding::Finding;
use crate::trust::escape;
use std::borrow::Cow;

/// Output formats of `check`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Human,
    Compact,
    Json,
    Sarif,
    Html,
}

/// `file:line:col: severity[rule]: message`, safe for a terminal.
pub fn compact(f: &Finding) -> String {
    let (l, c) = f.line_col();
    format!(
        "{}:{}:{}: {}[{}]: {}",
        escape(&f.file.name),
        l,
        c,
        f.severity.as_str(),
        escape(&f.rule),
        escape(&f.message)
    )
}

/// The help of a finding as the line after its compact line, in the same
/// form with severity `note` (as compilers write their notes), so that an
/// editor's quick-fix list shows it under the finding. One line: line
/// breaks in the help become spaces. `None` for a finding without help.
pub fn compact_help(f: &Finding) -> Option<String> {
    let help = f.help.as_deref()?.trim();
    if help.is_empty() {
        return None;
    }
    let (l, c) = f.line_col();
    let one_line: String = help.split_whitespace().collect::<Vec<_>>().join(" ");
    Some(format!(
        "{}:{}:{}: note[{}]: {}",
        escape(&f.file.name),
        l,
        c,
        escape(&f.rule),
        escape(&one_line)
    ))
}

fn needs_escape(s: &str) -> bool {
    matches!(escape(s), Cow::Owned(_))
}

/// The finding as a terminal may show it: controls and bidirectional
/// overrides in its file (name and quoted lines), rule id, message,
/// labels and help written as `\u{…}`, spans moved to match. Borrowed
/// unchanged when nothing needs it (the usual case).
pub fn for_terminal(f: &Finding) -> Cow<'_, Finding> {
    let own = f.file.for_terminal();
    let others = f
        .related
        .iter()
        .any(|r| r.file.as_ref().is_some_and(|x| x.for_terminal().is_some()));
    let texts = needs_escape(&f.rule)
        || needs_escape(&f.message)
        || needs_escape(&f.label)
        || f.help.as_deref().is_some_and(needs_escape)
        || f.related.iter().any(|r| needs_escape(&r.label));
    if own.is_none() && !others && !texts {
        return Cow::Borrowed(f);
    }
    let mut g = f.clone();
    g.rule = escape(&f.rule).into_owned();
    g.message = escape(&f.message).into_owned();
    g.label = escape(&f.label).into_owned();
    g.help = f.help.as_deref().map(|h| escape(h).into_owned());
    if let Some(e) = own {
        g.file = e.file.clone();
        g.span = e.span(f.span);
    }
    for r in &mut g.related {
        r.label = escape(&r.label).into_owned();
        match &r.file {
            None => {
                if let Some(e) = own {
                    r.span = e.span(r.span);
                }
            }
            Some(x) => {
                if let Some(e) = x.for_terminal() {
                    r.span = e.span(r.span);
                    r.file = Some(e.file.clone());
                }
            }
        }
    }
    Cow::Owned(g)
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

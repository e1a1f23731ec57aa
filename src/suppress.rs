//! Suppression comments: `# armature: allow RULE -- reason` on a part's
//! line or on the line directly above it.

use crate::finding::{Class, Finding, Severity};
use crate::model::Circuit;

/// Ids that a suppression may name besides the built-in ones: team rules
/// (with a `/`) are checked against the loaded rule files by the caller.
fn known_id(id: &str) -> bool {
    id.contains('/')
        || crate::checks::registry().iter().any(|r| r.meta.id == id)
        || id == crate::spice::M_SUFFIX
}

/// Remove suppressed findings; report suppressions that are malformed or
/// unused. Returns the findings kept and the number suppressed.
pub fn apply(c: &Circuit, findings: Vec<Finding>) -> (Vec<Finding>, usize) {
    let sups = &c.suppressions;
    let mut used = vec![false; sups.len()];
    let mut kept = Vec::with_capacity(findings.len());
    let mut suppressed = 0;
    // the suppressions that cover each line: their own, and the next one
    // for a comment on a line of its own
    let mut by_line: std::collections::HashMap<usize, Vec<usize>> =
        std::collections::HashMap::new();
    for (i, s) in sups.iter().enumerate() {
        if s.reason.is_none() {
            continue;
        }
        by_line.entry(s.line).or_default().push(i);
        if s.own_line {
            by_line.entry(s.line + 1).or_default().push(i);
        }
    }
    for f in findings {
        if f.class == Class::Input {
            kept.push(f);
            continue;
        }
        let line = c.file.line_index(f.span.start());
        let stmt_line = f
            .parts
            .first()
            .and_then(|r| c.part_id(r))
            .map(|p| c.part(p).line);
        let mut lines = [Some(line), stmt_line];
        if stmt_line == Some(line) {
            lines[1] = None;
        }
        let hit = lines
            .iter()
            .flatten()
            .filter_map(|l| by_line.get(l))
            .flatten()
            .copied()
            .filter(|&i| {
                sups.get(i)
                    .is_some_and(|s| s.rules.iter().any(|r| r.node == f.rule))
            })
            .min();
        match hit {
            Some(i) => {
                used[i] = true;
                suppressed += 1;
            }
            None => kept.push(f),
        }
    }
    for (i, s) in sups.iter().enumerate() {
        if s.reason.is_none() {
            kept.push(
                Finding::new(
                    "suppression-no-reason",
                    Severity::Warning,
                    &c.file,
                    s.span,
                    "suppression without a reason",
                )
                .label("no `-- reason`")
                .help("say why the finding is accepted: `# armature: allow RULE -- why it is safe here`"),
            );
            continue;
        }
        let mut all_known = true;
        for r in &s.rules {
            if !known_id(&r.node) {
                all_known = false;
                let hint = crate::checks::suggest_rule(&r.node);
                kept.push(
                    Finding::new(
                        "suppression-unknown-rule",
                        Severity::Warning,
                        &c.file,
                        r.span,
                        format!("suppression names unknown rule `{}`", r.node),
                    )
                    .label("unknown rule")
                    .help(if hint.is_empty() {
                        "`armature rules` lists the rule ids".to_string()
                    } else {
                        hint
                    }),
                );
            }
        }
        if all_known && !used[i] {
            let ids = s
                .rules
                .iter()
                .map(|r| format!("`{}`", r.node))
                .collect::<Vec<_>>()
                .join(", ");
            kept.push(
                Finding::new(
                    "suppression-unused",
                    Severity::Warning,
                    &c.file,
                    s.span,
                    format!("suppression of {ids} suppresses nothing"),
                )
                .label("nothing to suppress")
                .help("remove the comment, or move it onto the line of the part it is meant for (or the line above)"),
            );
        }
    }
    (kept, suppressed)
}

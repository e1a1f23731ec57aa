//! Built-in rules, one file each, grouped by family.
//!
//! Each rule file holds its metadata (`META`), its documentation with the
//! fixed headings (*What it checks*, *Why it matters*, *How it is
//! computed*, *Example*, *Fix*), a detector that returns data and a thin
//! `check` that turns the data into findings.

pub mod bridge;
pub mod common;
pub mod freewheel;
pub mod gate;
pub mod rating;
pub mod structure;
pub mod supply;
pub mod switch;

use crate::analysis::Analysis;
use crate::finding::{Finding, Severity};
use crate::graph::CircuitGraph;
use crate::model::Circuit;
use crate::settings::Settings;

pub struct RuleMeta {
    pub id: &'static str,
    pub family: &'static str,
    pub severity: Severity,
    /// One line, for `armature rules`.
    pub summary: &'static str,
    /// Markdown with the fixed headings.
    pub docs: &'static str,
    /// Whether the fault can burn or hurt (explain adds the caution).
    pub hazard: bool,
}

pub struct Ctx<'a> {
    pub circuit: &'a Circuit,
    pub graph: &'a CircuitGraph,
    pub analysis: &'a Analysis,
    pub settings: &'a Settings,
}

pub struct Rule {
    pub meta: &'static RuleMeta,
    pub check: fn(&Ctx) -> Vec<Finding>,
}

/// Every built-in rule, in a stable order.
pub fn registry() -> Vec<Rule> {
    let mut v = structure::rules();
    v.extend(freewheel::rules());
    v.extend(gate::rules());
    v.extend(switch::rules());
    v.extend(bridge::rules());
    v.extend(supply::rules());
    v.extend(rating::rules());
    v
}

/// Rules that were renamed: the old id, the id now. The old ids are
/// unknown rules (no aliases); they only steer the suggestion.
pub const RENAMED: &[(&str, &str)] = &[
    ("single-pin-net", "net-touches-one-pin"),
    ("unconnected-pin", "pin-not-listed"),
    ("duplicate-ref", "designator-reused"),
    ("unknown-part", "part-not-in-library"),
];

/// "did you mean …" for an unknown rule id: the new name of a renamed
/// rule, else the closest built-in id.
pub fn suggest_rule(id: &str) -> String {
    if let Some((_, new)) = RENAMED.iter().find(|(old, _)| *old == id) {
        return format!("did you mean `{new}`? (`{id}` was renamed)");
    }
    let ids: Vec<&'static str> = registry().iter().map(|r| r.meta.id).collect();
    crate::suggest::did_you_mean(id, ids.iter().copied())
}

pub fn find(id: &str) -> Option<Rule> {
    registry().into_iter().find(|r| r.meta.id == id)
}

/// The headings every rule's documentation must have.
pub const DOC_HEADINGS: &[&str] = &[
    "## What it checks",
    "## Why it matters",
    "## How it is computed",
    "## Example",
    "## Fix",
];

/// A new finding for a rule, at its default severity.
pub fn finding(meta: &RuleMeta, ctx: &Ctx, span: crate::source::Span, message: String) -> Finding {
    Finding::new(meta.id, meta.severity, &ctx.circuit.file, span, message)
}

/// Run every built-in rule.
pub fn run_all(ctx: &Ctx) -> Vec<Finding> {
    use rayon::prelude::*;
    // Rules only read the circuit and the analysis: run them side by side,
    // their findings kept in registry order.
    let enabled: Vec<Rule> = registry()
        .into_iter()
        .filter(|r| {
            ctx.settings
                .severity_of(r.meta.id, r.meta.severity)
                .is_some()
        })
        .collect();
    let per_rule: Vec<Vec<Finding>> = enabled.par_iter().map(|r| (r.check)(ctx)).collect();
    let mut all: Vec<Finding> = per_rule.into_iter().flatten().collect();
    link_causes(&mut all);
    all
}

/// Faults that cause others, with how the consequence names them.
const CAUSES: &[(&str, &str)] = &[
    ("freewheel-reversed", "a freewheel diode fitted backwards"),
    ("shoot-through", "the leg's shoot-through"),
    ("gate-pulldown-strong", "the too-strong gate pull-down"),
    ("freewheel-missing", "the missing freewheel path"),
];

/// Findings that follow from another fault on the same parts.
const CONSEQUENCES: &[&str] = &[
    "switch-overcurrent",
    "switch-overheat",
    "gate-drive-low",
    "freewheel-diode-underrated",
    "clamp-overvoltage",
];

/// When one fault causes another (a diode fitted backwards → a switch
/// far over its current, a strong pull-down → a switch in its linear
/// region), the consequence's message names the cause and its help gives
/// the cause's fix.
fn link_causes(all: &mut [Finding]) {
    // in the order of CAUSES: the first cause that applies is named
    let causes: Vec<(usize, &'static str)> = CAUSES
        .iter()
        .flat_map(|(r, d)| {
            all.iter()
                .enumerate()
                .filter(move |(_, f)| f.rule == *r)
                .map(move |(i, _)| (i, *d))
        })
        .collect();
    if causes.is_empty() {
        return;
    }
    for k in 0..all.len() {
        if !CONSEQUENCES.contains(&all[k].rule.as_str()) {
            continue;
        }
        let Some(primary) = all[k].parts.first().cloned() else {
            continue;
        };
        let Some(&(ci, desc)) = causes.iter().find(|(ci, _)| {
            let c = &all[*ci];
            c.file.name == all[k].file.name && c.parts.contains(&primary)
        }) else {
            continue;
        };
        let (rule, help, file) = (
            all[ci].rule.clone(),
            all[ci].help.clone(),
            all[ci].file.name.clone(),
        );
        let f = &mut all[k];
        if f.message.contains(&rule) || f.file.name != file {
            continue;
        }
        f.message
            .push_str(&format!("; a consequence of {desc} (`{rule}`)"));
        if let Some(h) = help {
            f.help = Some(format!("fix the cause first: {h}"));
        }
    }
}

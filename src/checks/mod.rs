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

/// Ids that appear in output but are not rules: input errors (exit 2;
/// nothing in the file was checked), suppression notes and analysis
/// notes. `explain` knows each. (id, what it is, what to do.)
pub const OTHER_IDS: &[(&str, &str, &str)] = &[
    (
        "parse-error",
        "input error: a line that is not a statement of the `.drive` language (a misspelt keyword, a missing parenthesis, a stray character).",
        "Fix the line at the position shown; every bad line is reported, not only the first.",
    ),
    (
        "invalid-value",
        "input error: a value that cannot mean what its key asks for: the wrong dimension (`60A` for a voltage), a rating of zero or below, a temperature below absolute zero, a negative tolerance, a number out of range.",
        "Write the quantity with its unit and a sensible size; ratings are magnitudes (`30V` for a p-channel part too).",
    ),
    (
        "unknown-key",
        "input error: a key that the part's kind does not have (in a netlist or a library).",
        "Use one of the kind's keys (the message lists them or suggests the closest); `armature explain KIND` lists them all.",
    ),
    (
        "duplicate-key",
        "input error: a key given twice on one line (a bare value and `value=` count as the same key); which one was meant cannot be known.",
        "Keep one of the two.",
    ),
    (
        "unknown-kind",
        "input error: a part line whose first word is no kind of the language.",
        "Use one of the kinds (`nmos`, `solenoid`, …); the message suggests the closest. `armature explain KIND` describes each.",
    ),
    (
        "unknown-ref",
        "input error: a `drive` line (or other reference) names a designator that no part has.",
        "Name an existing controller or driver, as `U1.PA3`.",
    ),
    (
        "kind-mismatch",
        "input error: `part=` names a library part of another kind than the line's.",
        "Use a part of the line's kind, or change the line's kind.",
    ),
    (
        "library-error",
        "input error: a parts library that cannot be used: unreadable, not YAML, anchors or aliases, a part without `kind`, a bad key or value, or a part that two loaded libraries define.",
        "Fix the library at the location given; `docs/library.md` describes the format.",
    ),
    (
        "config-error",
        "input error: an `armature.yaml` that cannot be used: an unknown key, a bad severity or derating, a path outside the project root.",
        "Fix the configuration at the location given.",
    ),
    (
        "rules-error",
        "input error: a team-rule file that cannot be used: an unknown field, a bad expression, a duplicate id.",
        "Fix the rule file at the location given; `docs/team-rules.md` describes the format.",
    ),
    (
        "file-error",
        "input error: a file that cannot be read: missing, a folder, not a regular file, too large, outside the project root, empty, or a folder with no netlist.",
        "Name a netlist inside the project; `docs/security.md` lists the limits.",
    ),
    (
        "ground-missing",
        "input error: a netlist with parts but no `ground` statement; without a reference no voltage can be solved.",
        "Add `ground GND` (or the name the board uses).",
    ),
    (
        "limit-exceeded",
        "input error: a netlist with more parts than the limit (2,000,000).",
        "Split the design into several netlists.",
    ),
    (
        "suppression-malformed",
        "note: an `# armature: allow …` comment that cannot be read.",
        "Write `# armature: allow RULE -- reason`.",
    ),
    (
        "suppression-no-reason",
        "note: a suppression without a reason after `--`; it suppresses nothing.",
        "Say why the finding does not apply: `-- duty never above 20 %`.",
    ),
    (
        "suppression-unknown-rule",
        "note: a suppression naming a rule that does not exist.",
        "Use a rule id from `armature rules`.",
    ),
    (
        "suppression-unused",
        "note: a suppression on a line where its rule finds nothing: stale, or on the wrong line.",
        "Remove it, or move it to the line the finding is on.",
    ),
    (
        "spice-error",
        "input error: a SPICE netlist line that cannot be checked: an element letter armature does not model (J, E, F, G, H, B, S, W, T…) and the mapping does not name, a `.subckt` without `.ends`, a subcircuit that contains itself, an instance whose node count differs from its subcircuit's ports, an `.include` that cannot be read (or loops), an expression that does not evaluate, a V source that is not a rail (from a net to ground).",
        "Fix the line shown, or say in the mapping what the element is (`instances:`); `docs/spice-import.md` describes both.",
    ),
    (
        "mapping-error",
        "input error: a SPICE mapping that cannot be used: an unknown key, a kind that does not exist, a load whose elements are missing or not one series chain, a rail with no voltage.",
        "Fix the mapping at the location given; `docs/spice-import.md` lists its keys.",
    ),
    (
        "spice-m-suffix",
        "warning: a resistor or capacitor value in a SPICE netlist written with an upper-case `M` (`1M`). SPICE reads `M` as milli in any case, so `1M` is 1 mΩ; most people who write it mean 1 MΩ (`1Meg`). The check uses SPICE's reading, as the simulator does.",
        "Write `1Meg` for mega; write the milli value with a lower-case `m` (`10m`) to say milli was meant.",
    ),
    (
        "spice-ignored",
        "note: a SPICE card or element that is read but not checked: simulator commands (`.tran`, `.op`, `.options`, a `.control` block…) and inductor coupling (`K`). Noted once per kind of card.",
        "Nothing to fix; the note says what the check left out.",
    ),
    (
        "analysis-nonconvergent",
        "warning: an operating point or a switching edge of a group that the solver could not converge, even with gmin and source stepping; the results for its parts are incomplete.",
        "Look for a value far out of range or a loop of switches that drive each other; `armature export spice` writes the group for a simulator.",
    ),
];

/// "did you mean …" for an unknown rule id: the new name of a renamed
/// rule, else the closest built-in id.
pub fn suggest_rule(id: &str) -> String {
    if let Some((_, new)) = RENAMED.iter().find(|(old, _)| *old == id) {
        return format!("did you mean `{new}`? (`{id}` was renamed)");
    }
    let ids: Vec<&'static str> = registry()
        .iter()
        .map(|r| r.meta.id)
        .chain(OTHER_IDS.iter().map(|(i, _, _)| *i))
        .chain(crate::model::kinds::Kind::ALL.iter().map(|k| k.name()))
        .collect();
    let hint = crate::suggest::did_you_mean(id, ids.iter().copied());
    if !hint.is_empty() {
        return hint;
    }
    // a family word (`freewheel`, `gate`): the ids that contain it
    let lower = id.to_ascii_lowercase();
    let family: Vec<String> = ids
        .iter()
        .filter(|i| lower.len() >= 3 && i.split('-').any(|w| w == lower))
        .map(|i| format!("`{i}`"))
        .collect();
    if family.is_empty() {
        String::new()
    } else {
        format!("did you mean one of {}?", family.join(", "))
    }
}

/// The page `armature explain ID` prints for a built-in rule, an input
/// error or note, or a part kind.
pub fn explain_page(id: &str) -> Option<String> {
    if let Some(kind) = crate::model::kinds::Kind::from_name(id) {
        return Some(crate::model::reference::kind_page(kind));
    }
    if let Some((other, what, fix)) = OTHER_IDS.iter().find(|(i, _, _)| *i == id) {
        return Some(format!("{other}\n\n{what}\n\n{fix}\n"));
    }
    let m = find(id)?.meta;
    let mut s = format!(
        "{} ({}, default {})\n\n{}\n\n{}\n",
        m.id,
        m.family,
        m.severity,
        m.summary,
        m.docs.trim_end()
    );
    if m.hazard {
        s.push_str(&format!("\n{}\n", crate::cli::CAUTION));
    }
    Some(s)
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

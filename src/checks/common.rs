//! Helpers shared by the physics rules.

use super::{Ctx, RuleMeta};
use crate::finding::Finding;
use crate::model::{Part, PartId};
use crate::source::Span;
use crate::units::{Dimension, format_si, percent};

pub fn v(x: f64) -> String {
    format_si(x, Dimension::Voltage)
}
pub fn a(x: f64) -> String {
    format_si(x, Dimension::Current)
}
pub fn ohm(x: f64) -> String {
    format_si(x, Dimension::Resistance)
}
pub fn t(x: f64) -> String {
    format_si(x, Dimension::Time)
}
pub fn hz(x: f64) -> String {
    format_si(x, Dimension::Frequency)
}
pub fn w(x: f64) -> String {
    format_si(x, Dimension::Power)
}
pub fn degc(x: f64) -> String {
    format_si(x, Dimension::Temperature)
}
pub fn pct(x: f64) -> String {
    percent(x)
}

/// The span of a part's statement, limited to its first line.
pub fn line_span(ctx: &Ctx, p: &Part) -> Span {
    line_span_of(ctx.circuit, p)
}

/// The span of one pin (`g: FAN_G`), or the part's line.
pub fn pin_span(ctx: &Ctx, p: &Part, pin: &str) -> Span {
    p.pin(pin)
        .map(|x| x.span)
        .unwrap_or_else(|| line_span(ctx, p))
}

/// A finding whose primary label is on a part's line.
pub fn on_part(meta: &RuleMeta, ctx: &Ctx, pid: PartId, label: &str, message: String) -> Finding {
    let p = ctx.circuit.part(pid);
    super::finding(meta, ctx, line_span(ctx, p), message)
        .label(label)
        .parts([p.reference.clone()])
}

/// Add a related part (secondary label) and its designator.
pub fn with_part(mut f: Finding, ctx: &Ctx, pid: PartId, label: String) -> Finding {
    let p = ctx.circuit.part(pid);
    f = f.related(line_span(ctx, p), label);
    if !f.parts.contains(&p.reference) {
        f.parts.push(p.reference.clone());
    }
    f
}

/// How many parts a message names before it counts the rest, and how
/// many related locations a finding shows: a path of a thousand parts
/// is a sentence, not a page (JSON's `parts` still lists every one).
pub const MAX_LISTED: usize = 6;

/// "`D1`, `D2` and `D3`" style lists: the first `MAX_LISTED` references
/// quoted, then "and N more".
pub fn listed(ctx: &Ctx, ids: &[PartId]) -> String {
    let mut s = ids
        .iter()
        .take(MAX_LISTED)
        .map(|&q| format!("`{}`", ctx.circuit.part(q).reference))
        .collect::<Vec<_>>()
        .join(", ");
    if ids.len() > MAX_LISTED {
        s.push_str(&format!(" and {} more", ids.len() - MAX_LISTED));
    }
    s
}

/// `with_part` for many parts at once: each named once in `parts`, the
/// first `MAX_LISTED` also shown as related locations.
pub fn with_parts(mut f: Finding, ctx: &Ctx, ids: &[PartId], label: &str) -> Finding {
    let mut named: std::collections::HashSet<String> = f.parts.iter().cloned().collect();
    for (i, &q) in ids.iter().enumerate() {
        let p = ctx.circuit.part(q);
        if i < MAX_LISTED {
            f = f.related(line_span(ctx, p), label.to_string());
        }
        if named.insert(p.reference.clone()) {
            f.parts.push(p.reference.clone());
        }
    }
    f
}

pub fn net_name(ctx: &Ctx, pid: PartId, pin: &str) -> String {
    ctx.circuit
        .pin_net_name(pid, pin)
        .unwrap_or("?")
        .to_string()
}

/// The ground-like net a pull-down should go to: the switch's reference
/// pin (source or emitter).
pub fn reference_net(ctx: &Ctx, pid: PartId) -> String {
    let p = ctx.circuit.part(pid);
    p.kind
        .switch_pins()
        .map(|(_, _, r)| net_name(ctx, pid, r))
        .unwrap_or_else(|| "GND".to_string())
}

pub fn ref_of<'a>(ctx: &Ctx<'a>, pid: PartId) -> &'a str {
    &ctx.circuit.part(pid).reference
}

/// The first line of a part's statement, from the circuit alone.
pub fn line_span_of(c: &crate::model::Circuit, p: &Part) -> Span {
    let f = &c.file;
    let line = f.line_index(p.span.start());
    Span::new(
        p.span.start(),
        p.span.end().min(f.line_end(line)).max(p.span.start()),
    )
}

//! Gate and base drive rules.

pub mod base_unlimited;
pub mod gate_drive_low;
pub mod gate_floating;
pub mod gate_overvoltage;
pub mod gate_pulldown_strong;
pub mod gate_stuck_on;

use super::Ctx;
use super::Rule;
use crate::model::{Kind, PartId};

pub fn rules() -> Vec<Rule> {
    vec![
        gate_floating::RULE,
        gate_pulldown_strong::RULE,
        gate_drive_low::RULE,
        gate_overvoltage::RULE,
        gate_stuck_on::RULE,
        base_unlimited::RULE,
    ]
}

/// The highest output level of the controller pins that control a switch.
pub fn pin_level(ctx: &Ctx, info: &crate::analysis::SwitchInfo) -> f64 {
    info.controls
        .iter()
        .map(|((m, _), _)| crate::analysis::io_v(ctx.circuit, *m))
        .fold(0.0f64, f64::max)
}

/// Resistors in a switch's gate network that go to its reference net or
/// to a fixed net (pull-downs and pull-ups).
pub fn pull_resistors(ctx: &Ctx, sw: PartId) -> Vec<PartId> {
    let c = ctx.circuit;
    let p = c.part(sw);
    let Some((_, ctl, r)) = p.kind.switch_pins() else {
        return Vec::new();
    };
    let (Some(g), Some(rn)) = (p.net_of(ctl), p.net_of(r)) else {
        return Vec::new();
    };
    let Some(gi) = ctx.graph.island_of.get(g).copied().flatten() else {
        return Vec::new();
    };
    let island = &ctx.graph.islands[gi];
    let mut out: Vec<PartId> = island
        .iter()
        .flat_map(|&n| ctx.graph.parts_on(n))
        .filter(|&q| {
            let qp = c.part(q);
            qp.kind == Kind::Resistor
                && qp
                    .pins
                    .iter()
                    .any(|x| x.net == rn || c.net(x.net).is_fixed())
        })
        .collect();
    out.sort_unstable();
    out.dedup();
    out
}

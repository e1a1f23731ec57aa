use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::DriveKind;

pub static META: RuleMeta = RuleMeta {
    id: "dead-time-short",
    family: "bridge",
    severity: Severity::Warning,
    summary: "a complementary pair's dead time is shorter than the switches' turn-off time",
    hazard: true,
    docs: r#"## What it checks
The dead time of a `complement` pair that drives a bridge leg is longer
than the turn-off time of the slower switch of the leg.

## Why it matters
During the dead time both switches must be off. If one is still turning
off when the other turns on, the leg conducts rail to ground for a moment
at every edge: current spikes, heat, noise — and, with enough of them, a
failed leg.

## How it is computed
Each switch's turn-off is simulated on its control group (trapezoidal
integration with the operating point's Newton loop at every step, the
method of SPICE — Nagel 1975): the controller pin or driver output
resistance, the gate resistors, pull-ups and pull-downs, level-shifter
transistors and the switch's gate capacitances (fitted from `qg` and
`qgd`) are all in the circuit, so a p-channel gate released through a
pull-up turns off at the RC rate it really has. The turn-off time is from
the pin's edge to the channel current falling below 10 % of its start,
with the partner's rising edge delayed by the dead time, as a timer
inserts it. Only a switch with no simulated edge falls back to
`td_off + tf` from the library. A pair with no `deadtime` has none.

## Example
```
drive U1.PA0 pwm 20kHz complement U1.PA1 deadtime 20ns
```
Fixed:
```
drive U1.PA0 pwm 20kHz complement U1.PA1 deadtime 500ns
```

## Fix
Raise the dead time above the turn-off time in the help line (with
margin), or speed up turn-off (a lower gate resistance, a turn-off diode).
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// The turn-off time of a switch: simulated (`t_off`), else the
/// library's `td_off + tf`.
fn t_off(ctx: &Ctx, sw: usize) -> Option<f64> {
    if let Some(t) = ctx.analysis.facts.value(sw, "t_off") {
        return Some(t);
    }
    let p = ctx.circuit.part(sw);
    p.num("tf").map(|tf| tf + p.num("td_off").unwrap_or(0.0))
}

/// A complementary pair driving a leg with too little dead time.
pub struct Short<'a> {
    pub drive: &'a crate::model::Drive,
    pub leg: &'a crate::analysis::Leg,
    pub slow: usize,
    pub t_off: f64,
    pub deadtime: f64,
}

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<Short<'a>> {
    use std::collections::HashMap;
    // legs by the controller pins of their switches, indexed once
    let mut by_pin: HashMap<&crate::analysis::CtlPin, Vec<&crate::analysis::Leg>> = HashMap::new();
    let pins_of = |sw: usize| -> Vec<&crate::analysis::CtlPin> {
        ctx.analysis
            .switches
            .get(&sw)
            .map(|i| i.controls.iter().map(|(p, _)| p).collect())
            .unwrap_or_default()
    };
    for leg in &ctx.analysis.legs {
        for p in pins_of(leg.high) {
            by_pin.entry(p).or_default().push(leg);
        }
    }
    let mut out = Vec::new();
    for d in &ctx.circuit.drives {
        let DriveKind::Pwm {
            complement: Some((cp, cpin)),
            deadtime,
            ..
        } = &d.kind
        else {
            continue;
        };
        let pins = [(d.part, d.pin.clone()), (*cp, cpin.clone())];
        let mut legs: Vec<&crate::analysis::Leg> = pins
            .iter()
            .flat_map(|p| by_pin.get(p).cloned().unwrap_or_default())
            .collect();
        legs.sort_by_key(|l| (l.high, l.low));
        legs.dedup_by_key(|l| (l.high, l.low));
        for leg in legs {
            let low_controlled = pins_of(leg.low).iter().any(|p| pins.contains(p));
            if !low_controlled {
                continue;
            }
            let (Some(th), Some(tl)) = (t_off(ctx, leg.high), t_off(ctx, leg.low)) else {
                continue;
            };
            let (slow, ts) = if th >= tl {
                (leg.high, th)
            } else {
                (leg.low, tl)
            };
            let dt = deadtime.unwrap_or(0.0);
            if dt < ts {
                out.push(Short {
                    drive: d,
                    leg,
                    slow,
                    t_off: ts,
                    deadtime: dt,
                });
            }
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|s| {
            let f = crate::checks::finding(
                &META,
                ctx,
                s.drive.span,
                format!(
                    "dead time {} is shorter than the {} turn-off time of `{}`{}",
                    t(s.deadtime),
                    t(s.t_off),
                    ref_of(ctx, s.slow),
                    if ctx.analysis.facts.value(s.slow, "t_off").is_some() {
                        " (simulated with its gate network)"
                    } else {
                        " (`td_off + tf` from the library)"
                    }
                ),
            )
            .label("dead time")
            .parts([c.part(s.drive.part).reference.clone()]);
            let f = with_part(f, ctx, s.leg.high, "high side".into());
            with_part(f, ctx, s.leg.low, "low side".into()).help(format!(
                "set `deadtime` to at least {} (2× the slower turn-off)",
                t(2.0 * s.t_off)
            ))
        })
        .collect()
}

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
Turn-off time = `td_off + tf` when given; otherwise the gate's RC
discharge through the series resistance, `R·C·ln(V_drive / V_th)` with
`C ≈ Qg / V_drive`. A pair with no `deadtime` has none.

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

fn t_off(ctx: &Ctx, sw: usize) -> Option<f64> {
    let p = ctx.circuit.part(sw);
    if let Some(tf) = p.num("tf") {
        return Some(tf + p.num("td_off").unwrap_or(0.0));
    }
    let qg = p.num("qg")?;
    let info = ctx.analysis.switches.get(&sw)?;
    let vd = info.v_gs_on?;
    let vth = p.num("vgs_th").unwrap_or(2.0);
    if vd <= vth {
        return None;
    }
    let r = crate::analysis::states::MCU_R_OUT + 100.0;
    Some(r * (qg / vd) * (vd / vth).ln())
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
        for leg in &ctx.analysis.legs {
            let controlled = |sw: usize| {
                ctx.analysis
                    .switches
                    .get(&sw)
                    .is_some_and(|i| i.controls.iter().any(|(p, _)| pins.contains(p)))
            };
            if !(controlled(leg.high) && controlled(leg.low)) {
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
                    "dead time {} is shorter than the {} turn-off time of `{}`",
                    t(s.deadtime),
                    t(s.t_off),
                    ref_of(ctx, s.slow)
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

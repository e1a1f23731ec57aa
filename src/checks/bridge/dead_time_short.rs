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

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for d in &c.drives {
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
            if dt >= ts {
                continue;
            }
            let f = crate::checks::finding(
                &META,
                ctx,
                d.span,
                format!(
                    "dead time {} is shorter than the {} turn-off time of `{}`",
                    t(dt),
                    t(ts),
                    ref_of(ctx, slow)
                ),
            )
            .label("dead time")
            .parts([c.part(d.part).reference.clone()]);
            let f = with_part(f, ctx, leg.high, "high side".into());
            out.push(with_part(f, ctx, leg.low, "low side".into()).help(format!(
                "set `deadtime` to at least {} (2× the slower turn-off)",
                t(2.0 * ts)
            )));
        }
    }
    out
}

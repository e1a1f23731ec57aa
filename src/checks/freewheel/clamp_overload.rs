use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;
use crate::units::{Dimension, format_si};

pub static META: RuleMeta = RuleMeta {
    id: "clamp-overload",
    family: "freewheel",
    severity: Severity::Error,
    summary: "a Zener or TVS clamp absorbs more power (or one-time energy) than its derated rating",
    hazard: true,
    docs: r#"## What it checks
A Zener diode or TVS that clamps a switch's turn-off takes the energy
the load's current carries into it. Switched at a PWM frequency, its
average power `P = e_clamp·f_pwm` stays within its `p_max` at the power
derating in force (default 50 %); switched once (a static drive), the
energy of one turn-off stays within its `e_max` where the library gives
one.

## Why it matters
A clamp is rated for occasional surges, not for taking `½·L·I²` at every
edge: a 1.3 W Zener that absorbs 6 W overheats within seconds, fails
short, and takes the switch's drive with it — or fails open, and the
next turn-off avalanches the switch.

## How it is computed
The turn-off is simulated on the switch's control group (the load
stalled for the single event, running for the average), and the clamp's
energy is the integral of `V·I` over its terminals through the edge:
`e_clamp ≈ ½·L·I²·V_cl/(V_cl − V_rail)` for a clamp across the switch and
a small winding resistance (the closed form the simulation is checked
against). `P = e_clamp·f_pwm` is compared with `p_max × power derating`;
a single event with `e_max × power derating`.

## Example
```
drive U1.PA0 pwm 200Hz duty 10%..90%
solenoid L1 (+: V24, -: SW) r=20ohm l=100mH
tvs TV1 (a: GND, k: SW) v_clamp=43V p_max=1.3W
```
Fixed:
```
diode D1 (a: SW, k: V24) part=DEMO-SK40-1A   # freewheel the coil instead
```

## Fix
Let a diode across the load carry the current (and a clamp only where a
fast release is needed, sized for `e_clamp·f`), choose a clamp rated for
the power in the message, or lower the PWM frequency.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A clamp over its derated rating.
pub struct Overload {
    pub part: usize,
    /// Average power (PWM) or one-event energy (static).
    pub value: f64,
    pub dim: Dimension,
    pub rating: f64,
    pub limit: f64,
    pub e_clamp: f64,
    pub f_pwm: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<Overload> {
    let d = ctx.settings.derating.power;
    let f = &ctx.analysis.facts;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(&[Kind::Zener, Kind::Tvs]) {
        let e_clamp = f.value(i, "e_clamp").unwrap_or(0.0);
        match f.value(i, "p_clamp") {
            Some(pw) => {
                if let Some(r) = p.num("p_max")
                    && pw > r * d
                {
                    out.push(Overload {
                        part: i,
                        value: pw,
                        dim: Dimension::Power,
                        rating: r,
                        limit: r * d,
                        e_clamp,
                        f_pwm: f.value(i, "f_pwm").unwrap_or(0.0),
                    });
                }
            }
            None => {
                if let Some(r) = p.num("e_max")
                    && e_clamp > r * d
                {
                    out.push(Overload {
                        part: i,
                        value: e_clamp,
                        dim: Dimension::Energy,
                        rating: r,
                        limit: r * d,
                        e_clamp,
                        f_pwm: 0.0,
                    });
                }
            }
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = ctx.settings.derating.power;
    detect(ctx)
        .into_iter()
        .map(|o| {
            let p = ctx.circuit.part(o.part);
            let e = format_si(o.e_clamp, Dimension::Energy);
            let msg = if o.dim == Dimension::Power {
                format!(
                    "`{}` absorbs {} at every turn-off: {} at {}, above {} of its {} rating ({})",
                    p.reference,
                    e,
                    w(o.value),
                    hz(o.f_pwm),
                    pct(d),
                    w(o.rating),
                    w(o.limit)
                )
            } else {
                format!(
                    "`{}` absorbs {} in one turn-off, above {} of its {} single-pulse rating ({})",
                    p.reference,
                    e,
                    pct(d),
                    format_si(o.rating, Dimension::Energy),
                    format_si(o.limit, Dimension::Energy)
                )
            };
            on_part(&META, ctx, o.part, "clamps more than it is rated for", msg).help(format!(
                "freewheel the load through a diode across it (the clamp then takes nothing), or use a clamp rated at least {}",
                format_si(o.value / d, o.dim)
            ))
        })
        .collect()
}

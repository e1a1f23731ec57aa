use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "freewheel-diode-slow",
    family: "freewheel",
    severity: Severity::Warning,
    summary: "the freewheel diode recovers too slowly for the PWM frequency",
    hazard: false,
    docs: r#"## What it checks
A diode that freewheels a PWM-driven load recovers well within the PWM
period: its reverse recovery time `trr` is at most 1 % of the period.
Schottky diodes have no minority-carrier recovery and always pass.

## Why it matters
At each turn-on the switch must sweep out the diode's stored charge: a
slow rectifier turns every edge into a brief short of the supply, with a
current spike, switching loss in the switch and radiated noise.

## How it is computed
`trr ≤ 0.01 / f_pwm` [memory: rule of thumb], with `f_pwm` the frequency
of the pin that drives the load's switch. The cost is computed too: the
diode is modelled with its stored charge (the charge-control model,
`Q = TT·I` with `TT = qrr/if_avg`, else `trr/2` [memory]), and the
switch's turn-on is simulated from the freewheeling state, so the
recovered charge flows through the switch; the message gives the
recovery energy in the switch, `e_rr = ∫V_DS·(I_D − I_load) dt`, and its
power `e_rr·f_pwm`.

## Example
```
drive U3.PD5 pwm 20kHz
diode D6 (a: HEAT_SW, k: VBAT) part=DEMO-RECT-1A    # trr 2 µs
```
Fixed:
```
diode D6 (a: HEAT_SW, k: VBAT) part=DEMO-SK40-1A    # Schottky
```

## Fix
Use a Schottky or an ultrafast diode whose `trr` is below the limit in the
help line.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A PWM freewheel diode whose recovery is too slow.
pub struct Slow {
    pub diode: usize,
    pub trr: f64,
    pub f_pwm: f64,
    pub limit: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<Slow> {
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(&[crate::model::Kind::Diode]) {
        if p.word("type") == Some("schottky") {
            continue;
        }
        let Some(f) = ctx.analysis.facts.value(i, "f_pwm").filter(|f| *f > 0.0) else {
            continue;
        };
        let Some(trr) = p.num("trr") else { continue };
        // 1 % of the period [memory: rule of thumb]
        let limit = ctx.analysis.facts.value(i, "trr_limit").unwrap_or(0.01 / f);
        if trr > limit {
            out.push(Slow {
                diode: i,
                trr,
                f_pwm: f,
                limit,
            });
        }
    }
    out
}

/// The switch whose turn-off the diode freewheels, and the recovery
/// power at its turn-on (`e_rr·f_pwm`).
pub fn recovery_cost(ctx: &Ctx, diode: usize) -> Option<(usize, f64)> {
    let t = ctx.analysis.turnoffs_through(diode).next()?;
    Some((t.switch, ctx.analysis.facts.value(t.switch, "p_rr")?))
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|s| {
            let p = ctx.circuit.part(s.diode);
            let rc = recovery_cost(ctx, s.diode).filter(|(_, pw)| *pw > 0.0);
            let cost = rc
                .map(|(q, pw)| {
                    format!(
                        ": its stored charge puts {} into `{}` at the turn-ons",
                        w(pw),
                        ref_of(ctx, q)
                    )
                })
                .unwrap_or_default();
            let f = on_part(
                &META,
                ctx,
                s.diode,
                "slow recovery",
                format!(
                    "`{}` recovers in {}, longer than {} (1 % of the PWM period at {}){cost}",
                    p.reference,
                    t(s.trr),
                    t(s.limit),
                    hz(s.f_pwm)
                ),
            );
            let f = match rc {
                Some((q, _)) => {
                    with_part(f, ctx, q, "sweeps out its charge at every turn-on".into())
                }
                None => f,
            };
            f.help(format!(
                "use a Schottky diode, or a fast diode with trr ≤ {}",
                t(s.limit)
            ))
        })
        .collect()
}

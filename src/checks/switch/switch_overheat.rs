use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "switch-overheat",
    family: "switch",
    severity: Severity::Error,
    summary: "the switch's computed junction temperature exceeds its limit",
    hazard: true,
    docs: r#"## What it checks
The junction temperature of each switch at the worst-case ambient, with
its load's continuous current, stays at least `tj_margin` (default 25 °C)
below its `tj_max`.

## Why it matters
A switch that runs hot ages fast, and R_DS(on) rises with temperature, so
a hot MOSFET dissipates more: past a point the loop has no stable
temperature (thermal runaway) and the part fails.

## How it is computed
Conduction `P = I²·D·R_DS(on)(Tj)` with `R(Tj) = R25·(1.006)^(Tj-25)`
[memory], switching `½·V·I·(tr+tf)·f` (edge times from `Qgd / I_gate`
when `tr`/`tf` are absent), bipolar `V_CE(sat)·I_C·D`; then
`Tj = Ta + P·Rth(ja)` iterated to a fixed point (Erickson & Maksimović,
*Fundamentals of Power Electronics*, ch. 4, for the loss terms).

## Example
```
ambient 50degC
motor M8 (+: VBAT, -: BLOWER_SW) r=1.5ohm l=1mH i_rated=3A
nmos  Q8 (d: BLOWER_SW, g: BLOWER_G, s: GND) part=DEMO-N60-3A   # 0.12 Ω, 90 K/W
```
Fixed:
```
nmos  Q8 (d: BLOWER_SW, g: BLOWER_G, s: GND) part=DEMO-N40-12A  # 18 mΩ, 50 K/W
```

## Fix
Use a switch with a lower R_DS(on) or a better thermal path (lower
`rth_ja`: copper area, a heatsink), or lower the current or the PWM
frequency.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch whose junction runs above its limit less the margin.
pub struct Overheat {
    pub switch: usize,
    pub tj: f64,
    pub p_loss: f64,
    pub tj_max: f64,
    pub limit: f64,
    pub runaway: bool,
}

pub fn detect(ctx: &Ctx) -> Vec<Overheat> {
    let d = &ctx.settings.derating;
    let f_ = &ctx.analysis.facts;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts.iter().enumerate() {
        if !p.kind.is_switch() {
            continue;
        }
        let (Some(tj), Some(p_loss)) = (f_.value(i, "tj"), f_.value(i, "p_loss")) else {
            continue;
        };
        let tj_max = p.num("tj_max").unwrap_or(150.0);
        let limit = tj_max - d.tj_margin;
        if tj > limit {
            let runaway = f_
                .get(i, "tj")
                .and_then(|x| x.note.as_deref())
                .is_some_and(|n| n.contains("runaway"));
            out.push(Overheat {
                switch: i,
                tj,
                p_loss,
                tj_max,
                limit,
                runaway,
            });
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = &ctx.settings.derating;
    detect(ctx)
        .into_iter()
        .map(|o| {
            let p = ctx.circuit.part(o.switch);
            let rth = p.num("rth_ja").unwrap_or(0.0);
            let msg = if o.runaway {
                format!(
                    "`{}` has no stable junction temperature: its loss grows faster than {} K/W removes it (thermal runaway, {} at the limit)",
                    p.reference,
                    crate::units::sig3(rth),
                    w(o.p_loss)
                )
            } else {
                format!(
                    "`{}` reaches {} junction ({} at {} ambient), above {} = {} - {} margin",
                    p.reference,
                    degc(o.tj),
                    w(o.p_loss),
                    degc(ctx.settings.ambient),
                    degc(o.limit),
                    degc(o.tj_max),
                    crate::units::sig3(d.tj_margin)
                )
            };
            let help = if rth > 0.0 && !o.runaway && o.p_loss > 0.0 {
                format!(
                    "keep P·Rth below {}: a switch with lower R_DS(on), or a thermal path under {} K/W",
                    degc(o.limit - ctx.settings.ambient),
                    crate::units::sig3((o.limit - ctx.settings.ambient) / o.p_loss)
                )
            } else {
                "use a switch with lower R_DS(on) or a better thermal path, or lower the current".to_string()
            };
            on_part(&META, ctx, o.switch, "runs too hot", msg).help(help)
        })
        .collect()
}

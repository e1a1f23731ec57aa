use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::kinds::SWITCHES;

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
`P = P_cond(Tj) + (e_on + e_off + e_rr + e_aval)·f_pwm` (Erickson &
Maksimović, *Fundamentals of Power Electronics*, ch. 4, for the split
into conduction and switching loss). Conduction is `V_DS·I_D·D` at the
operating point with the motors running (back-EMF from `i_rated`), rails
at their maximum, scaled by `R(Tj)/R(25 °C) = 1.006^(Tj−25)` [memory]
when the switch is fully on; a switch in its linear region dissipates
`V_DS·I_D` whatever its temperature. The edge energies come from the
simulated turn-off and turn-on with the circuit's own gate network (the
recovered charge of the freewheel diode in `e_rr`, the switch's own
avalanche in `e_aval`); the library's `tr`/`tf` stand in only when the
switch has no gate charge given. `Tj = Ta + P·Rth(ja)`, iterated to a
fixed point; none below the limit is thermal runaway. The message names
the term that dominates, and when that is avalanche (no freewheel path)
or the linear region (too little gate drive), the fix is the cause's.

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

/// What makes most of a switch's loss.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Cause {
    Conduction,
    Switching,
    /// The load's energy into the switch's own breakdown at every edge.
    Avalanche,
    /// It conducts in its linear region.
    Linear,
}

/// A switch whose junction runs above its limit less the margin.
pub struct Overheat {
    pub switch: usize,
    pub tj: f64,
    pub p_loss: f64,
    pub tj_max: f64,
    pub limit: f64,
    pub runaway: bool,
    pub cause: Cause,
    /// The dominant term's power.
    pub p_cause: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<Overheat> {
    let d = &ctx.settings.derating;
    let f_ = &ctx.analysis.facts;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(SWITCHES) {
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
            let p_aval = f_.value(i, "p_aval").unwrap_or(0.0);
            let p_sw = (f_.value(i, "p_sw").unwrap_or(0.0) - p_aval).max(0.0);
            let linear = ctx
                .analysis
                .switches
                .get(&i)
                .is_some_and(|s| s.linear.is_some());
            let (cause, p_cause) = if p_aval >= 0.5 * p_loss {
                (Cause::Avalanche, p_aval)
            } else if linear {
                (Cause::Linear, (p_loss - p_sw - p_aval).max(0.0))
            } else if p_sw >= 0.5 * p_loss {
                (Cause::Switching, p_sw)
            } else {
                (Cause::Conduction, (p_loss - p_sw - p_aval).max(0.0))
            };
            out.push(Overheat {
                switch: i,
                tj,
                p_loss,
                tj_max,
                limit,
                runaway,
                cause,
                p_cause,
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
            let head = if o.runaway {
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
            let load = ctx
                .analysis
                .turnoffs_of(o.switch)
                .next()
                .and_then(|t| t.load);
            let (why, help) = match o.cause {
                Cause::Avalanche => (
                    format!(
                        "; {} of it is the load's energy driven into its avalanche at every turn-off: there is no freewheel path",
                        w(o.p_cause)
                    ),
                    match load {
                        Some(l) => format!(
                            "give `{}` a freewheel path (a diode across it, see freewheel-missing): the switch then no longer absorbs the coil's energy",
                            ref_of(ctx, l)
                        ),
                        None => "give the load a freewheel path: the switch then no longer absorbs its energy".to_string(),
                    },
                ),
                Cause::Linear => (
                    format!("; {} of it is conduction in its linear region", w(o.p_cause)),
                    "drive it fully on (see gate-drive-low): a switch short of gate drive drops volts instead of millivolts".to_string(),
                ),
                Cause::Switching => (
                    format!("; {} of it is switching loss (e_on + e_off + e_rr at f_pwm)", w(o.p_cause)),
                    "make the edges faster (a lower gate resistance, a gate driver), use a Schottky or fast freewheel diode, or lower the PWM frequency".to_string(),
                ),
                Cause::Conduction => (
                    String::new(),
                    if rth > 0.0 && !o.runaway && o.p_loss > 0.0 {
                        format!(
                            "keep P·Rth below {}: a switch with lower R_DS(on), or a thermal path under {} K/W",
                            degc(o.limit - ctx.settings.ambient),
                            crate::units::sig3((o.limit - ctx.settings.ambient) / o.p_loss)
                        )
                    } else {
                        "use a switch with lower R_DS(on) or a better thermal path, or lower the current".to_string()
                    },
                ),
            };
            let mut f = on_part(&META, ctx, o.switch, "runs too hot", format!("{head}{why}"));
            if o.cause == Cause::Avalanche
                && let Some(l) = load
            {
                f = with_part(f, ctx, l, "its energy has nowhere else to go".into());
            }
            f.help(help)
        })
        .collect()
}

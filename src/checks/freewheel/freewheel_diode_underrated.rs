use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::kinds::DIODES;

pub static META: RuleMeta = RuleMeta {
    id: "freewheel-diode-underrated",
    family: "freewheel",
    severity: Severity::Error,
    summary: "the freewheel diode's current or reverse-voltage rating is below what the load puts through it",
    hazard: true,
    docs: r#"## What it checks
A diode on a freewheel path is rated for what it carries: its average
current `if_avg` for the load's continuous current, its surge current
`ifsm` for the stall current at turn-off, and its `vrrm` for the worst
reverse voltage it blocks while the load is driven — each with the
derating in force (default 80 %).

## Why it matters
The freewheel diode carries the load current for up to the whole off-time
of each PWM period, and the whole stall current at the first turn-off.
An undersized diode overheats and fails short, shorting the supply
through the switch at the next turn-on.

## How it is computed
`i_fw` is the continuous current of the load (`i_rated`, else the stall
current); the surge is the stall current `V_rail,max / (R·(1 - r_tol) +
R_on)`; `v_rev` is the largest DC reverse voltage over every pin state.
Limits: `if_avg·derating.current`, `ifsm`, `vrrm·derating.voltage`.

## Example
```
motor M4 (+: VBAT, -: PUMP_SW) r=2ohm l=2mH i_rated=3A
diode D4 (a: PUMP_SW, k: VBAT) part=DEMO-SK40-1A     # 1 A rated
```
Fixed:
```
diode D4 (a: PUMP_SW, k: VBAT) part=DEMO-SK40-3A     # still check 3 A / 0.8
```

## Fix
Choose a diode rated at least the numbers in the help line.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub struct Short {
    pub diode: usize,
    pub what: &'static str,
    pub need: f64,
    pub limit: f64,
    pub rating: f64,
    pub dim: crate::units::Dimension,
}

pub fn detect(ctx: &Ctx) -> Vec<Short> {
    use crate::units::Dimension::*;
    let d = &ctx.settings.derating;
    let f = &ctx.analysis.facts;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(DIODES) {
        let Some(ifw) = f.value(i, "i_fw") else {
            continue;
        };
        if let Some(r) = p.num("if_avg")
            && ifw > r * d.current
        {
            out.push(Short {
                diode: i,
                what: "average current",
                need: ifw,
                limit: r * d.current,
                rating: r,
                dim: Current,
            });
        }
        if let (Some(r), Some(pk)) = (p.num("ifsm"), f.value(i, "i_fw_peak"))
            && pk > r
        {
            out.push(Short {
                diode: i,
                what: "surge current",
                need: pk,
                limit: r,
                rating: r,
                dim: Current,
            });
        }
        if let (Some(r), Some(vr)) = (p.num("vrrm"), f.value(i, "v_rev"))
            && vr > r * d.voltage
        {
            out.push(Short {
                diode: i,
                what: "reverse voltage",
                need: vr,
                limit: r * d.voltage,
                rating: r,
                dim: Voltage,
            });
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    use crate::units::format_si;
    detect(ctx)
        .into_iter()
        .map(|s| {
            let p = ctx.circuit.part(s.diode);
            let frac = if s.limit < s.rating {
                format!("{} of ", pct(s.limit / s.rating))
            } else {
                String::new()
            };
            on_part(
                &META,
                ctx,
                s.diode,
                "underrated",
                format!(
                    "`{}` must carry {} {}, above {frac}its {} rating ({})",
                    p.reference,
                    format_si(s.need, s.dim),
                    s.what,
                    format_si(s.rating, s.dim),
                    format_si(s.limit, s.dim)
                ),
            )
            .help(format!(
                "use a diode rated at least {} {}",
                format_si(s.need * s.rating / s.limit, s.dim),
                s.what
            ))
        })
        .collect()
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::kinds::SWITCHES;

pub static META: RuleMeta = RuleMeta {
    id: "switch-overcurrent",
    family: "switch",
    severity: Severity::Error,
    summary: "the load's worst-case (stall) current exceeds the switch's current rating",
    hazard: true,
    docs: r#"## What it checks
The current a switch carries with its load stalled stays within its
current rating (`id_max`, `ic_max`) times the current derating (default
80 %).

## Why it matters
Every start of a motor passes through stall, and a jammed actuator stays
there: the winding is then only its resistance, and the current is many
times the running current. A switch sized for the running current fails
on the first jam.

## How it is computed
The pin state that drives the load is solved with the load at stall (its
back-EMF zero, its winding at `r·(1 - r_tol)`) and the rail at its
maximum: `I_stall = V_rail / (R_winding + R_on)`. A load whose `i_stall`
is given uses it.

## Example
```
motor M3 (+: VBAT, -: PUMP_SW) r=3ohm l=1mH i_rated=1A   # stall 4.8 A at 14.4 V
nmos  Q3 (d: PUMP_SW, g: PUMP_G, s: GND) part=DEMO-N60-3A  # 3 A
```
Fixed:
```
nmos  Q3 (d: PUMP_SW, g: PUMP_G, s: GND) part=DEMO-N40-12A
```

## Fix
Choose a switch rated at least the current in the help line, or limit the
stall current (a current-sense cut-off, a series resistance).
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch whose stall current exceeds its derated rating.
pub struct Overcurrent {
    pub switch: usize,
    pub load: Option<usize>,
    pub i_on: f64,
    pub rating: f64,
    pub limit: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<Overcurrent> {
    let d = &ctx.settings.derating;
    let mut load_of = std::collections::HashMap::new();
    for t in &ctx.analysis.turnoffs {
        if let Some(l) = t.load {
            load_of.entry(t.switch).or_insert(l);
        }
    }
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(SWITCHES) {
        let Some(i_on) = ctx.analysis.facts.value(i, "i_on") else {
            continue;
        };
        let Some(rating) = p.num("id_max").or(p.num("ic_max")) else {
            continue;
        };
        let limit = rating * d.current;
        if i_on > limit {
            out.push(Overcurrent {
                switch: i,
                load: load_of.get(&i).copied(),
                i_on,
                rating,
                limit,
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
            let key = if p.kind.is_mos() { "id_max" } else { "ic_max" };
            let over = crate::checks::rating::Over {
                part: o.switch,
                key,
                rating: o.rating,
                derate: d.current,
                limit: o.limit,
                value: o.i_on,
                dim: crate::units::Dimension::Current,
                assumed: false,
            };
            let load = o
                .load
                .map(|l| format!(" (`{}` stalled, rails at their maximum)", ref_of(ctx, l)))
                .unwrap_or_else(|| " (rails at their maximum)".to_string());
            let msg = crate::checks::rating::message_in(p, &over, "carries up to", &load);
            let mut f = on_part(&META, ctx, o.switch, "current rating too low", msg);
            if let Some(l) = o.load {
                f = with_part(f, ctx, l, "the load at stall".into());
            }
            f.help(format!(
                "use a switch rated at least {} continuous ({} derating), or limit the stall current",
                a(o.i_on / d.current),
                pct(d.current)
            ))
        })
        .collect()
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::kinds::SWITCHES;

pub static META: RuleMeta = RuleMeta {
    id: "switch-overvoltage",
    family: "switch",
    severity: Severity::Error,
    summary: "the rail's maximum exceeds the switch's blocking rating",
    hazard: true,
    docs: r#"## What it checks
The DC voltage a switch blocks when off, with the rails at their maximum,
stays within its `vds_max` (`vce_max`) times the voltage derating (default
80 %).

## Why it matters
A 12 V battery system reaches 14.4 V while charging, and more during load
dump: a 20 V switch on it has little margin, a 12 V one none.

## How it is computed
The largest DC difference between the switch's main terminals over every
pin state, rails at their `max` (the turn-off peak is checked by
`clamp-overvoltage`).

## Example
```
rail VBAT 24V max 28.8V
nmos Q1 (d: FAN_SW, g: FAN_G, s: GND) vds_max=30V
```
Fixed:
```
nmos Q1 (d: FAN_SW, g: FAN_G, s: GND) part=DEMO-N60-3A
```

## Fix
Choose a switch rated at least the voltage in the help line.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch that blocks more than its derated rating.
pub struct Overvoltage {
    pub switch: usize,
    pub blocked: f64,
    pub rating: f64,
    pub limit: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<Overvoltage> {
    let d = &ctx.settings.derating;
    let a_ = ctx.analysis;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(SWITCHES) {
        let Some((m, _, r)) = p.kind.switch_pins() else {
            continue;
        };
        let Some(rating) = p.num("vds_max").or(p.num("vce_max")) else {
            continue;
        };
        let (Some(mn), Some(rn)) = (p.net_of(m), p.net_of(r)) else {
            continue;
        };
        let blocked = (a_.net_vmax[mn].unwrap_or(0.0) - a_.net_vmin[rn].unwrap_or(0.0))
            .abs()
            .max((a_.net_vmax[rn].unwrap_or(0.0) - a_.net_vmin[mn].unwrap_or(0.0)).abs());
        let limit = rating * d.voltage;
        if blocked > limit {
            out.push(Overvoltage {
                switch: i,
                blocked,
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
            on_part(
                &META,
                ctx,
                o.switch,
                "blocking rating too low",
                format!(
                    "`{}` blocks up to {} with the rails at their maximum, above {} of its {} rating ({})",
                    p.reference,
                    v(o.blocked),
                    pct(d.voltage),
                    v(o.rating),
                    v(o.limit)
                ),
            )
            .help(format!("use a switch rated at least {}", v(o.blocked / d.voltage)))
        })
        .collect()
}

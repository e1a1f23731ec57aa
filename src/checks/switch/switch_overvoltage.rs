use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

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

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = &ctx.settings.derating;
    let a_ = ctx.analysis;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts.iter().enumerate() {
        let Some((m, _, r)) = p.kind.switch_pins() else {
            continue;
        };
        let Some(rating) = p.num("vds_max").or(p.num("vce_max")) else {
            continue;
        };
        let (Some(mn), Some(rn)) = (p.net_of(m), p.net_of(r)) else {
            continue;
        };
        let vm = (a_.net_vmax[mn].unwrap_or(0.0) - a_.net_vmin[rn].unwrap_or(0.0))
            .abs()
            .max((a_.net_vmax[rn].unwrap_or(0.0) - a_.net_vmin[mn].unwrap_or(0.0)).abs());
        let limit = rating * d.voltage;
        if vm <= limit {
            continue;
        }
        out.push(
            on_part(
                &META,
                ctx,
                i,
                "blocking rating too low",
                format!(
                    "`{}` blocks up to {} with the rails at their maximum, above {} of its {} rating ({})",
                    p.reference,
                    v(vm),
                    pct(d.voltage),
                    v(rating),
                    v(limit)
                ),
            )
            .help(format!("use a switch rated at least {}", v(vm / d.voltage))),
        );
    }
    out
}

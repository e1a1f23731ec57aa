use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "rail-short",
    family: "supply",
    severity: Severity::Error,
    summary: "a part conducts directly between two rails (or a rail and ground) in normal operation",
    hazard: true,
    docs: r#"## What it checks
No part sits between two fixed nets (rails or ground) in a way that
conducts in normal operation: a diode forward-biased by them, a Zener or
TVS driven into breakdown by the rail itself, a near-zero resistance.

## Why it matters
Such a part carries whatever the supply can deliver. A TVS whose
clamping voltage is below the rail's maximum, or a diode fitted backwards
across the supply, burns at power-up.

## How it is computed
Each part whose pins are all on fixed nets is evaluated at the rails'
maximum: diodes against `vf`, Zener and TVS diodes against `vz` and
`v_clamp`, resistors below 0.1 Ω.

## Example
```
rail VBAT 12V max 14.4V
tvs TV1 (a: GND, k: VBAT) v_clamp=13V
```
Fixed:
```
tvs TV1 (a: GND, k: VBAT) part=DEMO-TVS33
```

## Fix
Turn the diode round, or choose a clamp whose standoff voltage is above
the rail's maximum.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Parts between fixed nets that conduct, with how.
pub fn detect<'a>(ctx: &'a Ctx) -> &'a [(usize, String)] {
    &ctx.analysis.rail_shorts
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .iter()
        .map(|(pid, how)| {
            let p = ctx.circuit.part(*pid);
            let nets = p.pins.iter().map(|x| format!("`{}`", ctx.circuit.net(x.net).name)).collect::<Vec<_>>().join(" and ");
            on_part(
                &META,
                ctx,
                *pid,
                "conducts between fixed nets",
                format!("`{}` conducts between {nets}: {how}", p.reference),
            )
            .help(if p.kind.is_diode() {
                "turn the diode round, or use one whose breakdown voltage is above the rail's maximum".to_string()
            } else {
                "remove the short between the rails".to_string()
            })
        })
        .collect()
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "gate-overvoltage",
    family: "gate",
    severity: Severity::Error,
    summary: "the gate drive can exceed the switch's gate-source rating",
    hazard: true,
    docs: r#"## What it checks
In every pin state, the magnitude of a MOSFET's gate-source voltage stays
within its `vgs_max` times the gate-voltage derating (default 70 %, cf.
MIL-DTL-917 Table XIX).

## Why it matters
The gate oxide is thin: past its rating it punctures, and the switch fails
short — the load runs and cannot be stopped. A p-channel high side whose
gate is pulled to ground from a 24 V rail sees the whole rail.

## How it is computed
`|V_GS|` is read from the nodal solve of every pin state, with the rails
at their maximum.

## Example
```
rail VBAT 24V max 28.8V
resistor R13 (VBAT, PG_A) 10k
npn Q11 (c: PG_A, b: B11, e: GND) part=DEMO-NPN-SIG   # pulls PG_A to 0 V
pmos P1 (d: MID_A, g: PG_A, s: VBAT) part=DEMO-P30-4A  # 20 V gate
```
Fixed:
```
resistor R16 (PG_A, PG_AL) 10k      # Q11 pulls through R16: a 2:1 divider
npn Q11 (c: PG_AL, b: B11, e: GND) part=DEMO-NPN-SIG
```

## Fix
Limit the gate swing with a divider or a Zener from gate to source, or use
a switch with a higher `vgs_max`.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch whose |V_GS| can exceed its derated gate rating.
pub struct GateOver {
    pub switch: usize,
    pub vgs: f64,
    pub rating: f64,
    pub limit: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<GateOver> {
    let d = &ctx.settings.derating;
    let mut ids: Vec<_> = ctx.analysis.switches.keys().copied().collect();
    ids.sort_unstable();
    ids.into_iter()
        .filter_map(|sw| {
            let info = ctx.analysis.switches.get(&sw)?;
            let p = ctx.circuit.part(sw);
            let (rating, vgs) = (p.num("vgs_max")?, info.v_gs_abs_max?);
            let limit = rating * d.gate_voltage;
            (vgs > limit).then_some(GateOver {
                switch: sw,
                vgs,
                rating,
                limit,
            })
        })
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = &ctx.settings.derating;
    detect(ctx)
        .into_iter()
        .map(|o| {
            let p = ctx.circuit.part(o.switch);
            let g = net_name(ctx, o.switch, "g");
            crate::checks::finding(
                &META,
                ctx,
                pin_span(ctx, p, "g"),
                format!(
                    "`{}` can see {} gate-source, above {} of its ±{} rating ({})",
                    p.reference,
                    v(o.vgs),
                    pct(d.gate_voltage),
                    v(o.rating),
                    v(o.limit)
                ),
            )
            .label(format!("|V_GS| up to {}", v(o.vgs)))
            .parts([p.reference.clone()])
            .help(format!(
                "limit the swing of `{g}` to ≤ {} with a divider or a Zener from gate to source, or use a switch rated ≥ {}",
                v(o.limit),
                v(o.vgs / d.gate_voltage)
            ))
        })
        .collect()
}

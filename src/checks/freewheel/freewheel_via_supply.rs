use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;

pub static META: RuleMeta = RuleMeta {
    id: "freewheel-via-supply",
    family: "freewheel",
    severity: Severity::Warning,
    summary: "the only freewheel path returns the energy into a supply rail that has no capacitor to absorb it",
    hazard: true,
    docs: r#"## What it checks
When the freewheel path passes through the supply (the load's current is
pushed back into a rail, as through the body diodes of a bridge), that
rail has a capacitor to ground to take the energy.

## Why it matters
A supply is built to deliver current, not to take it back. Without a
capacitor the returned energy pumps the rail up: other parts on it see
the overvoltage, and a battery charger or a regulator can latch up.

## How it is computed
The turn-off is simulated (and, for a bridge, the reset of the controller
while the load runs); the energy each rail takes back is
`−∫V_rail·I_rail dt` over the edge. A rail that takes more than 5 % of the
energy stored in the load (`½·L·I²`) must have a capacitor with one pin
on it and the other on ground or another rail.

## Example
```
rail VBAT 12V max 14.4V
# full bridge, no capacitor on VBAT
```
Fixed:
```
capacitor C1 (VBAT, GND) 1000uF v_max=25V
```

## Fix
Add a bulk capacitor on the rail, close to the bridge, sized so that ½·L·I²
raises it by only a small fraction of its voltage.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

fn has_cap(ctx: &Ctx, net: usize) -> bool {
    let c = ctx.circuit;
    ctx.graph.parts_on(net).map(|q| c.part(q)).any(|p| {
        p.kind == Kind::Capacitor
            && p.pins.iter().any(|x| x.net == net)
            && p.pins
                .iter()
                .any(|x| x.net != net && c.net(x.net).is_fixed())
    })
}

/// A turn-off whose freewheel path pushes energy into an uncapacitated
/// rail: (turn-off, rail, energy returned).
pub fn detect<'a>(ctx: &'a Ctx) -> Vec<(&'a crate::analysis::TurnOff, usize, f64)> {
    let mut out = Vec::new();
    let mut seen = std::collections::HashSet::new();
    let mut capped: std::collections::HashMap<usize, bool> = std::collections::HashMap::new();
    for tt in &ctx.analysis.turnoffs {
        let Some(load) = tt.load else { continue };
        for &(x, e) in &tt.rails {
            if *capped.entry(x).or_insert_with(|| has_cap(ctx, x)) || !seen.insert((load, x)) {
                continue;
            }
            out.push((tt, x, e));
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .filter_map(|(tt, x, e)| {
            let load = tt.load?;
            let e = ctx.analysis.facts.value(load, "e_returned").unwrap_or(e);
            let ids: Vec<_> = tt.path.iter().map(|(q, _)| *q).collect();
            let through = crate::checks::common::listed(ctx, &ids);
            let mut f = on_part(
                &META,
                ctx,
                load,
                "returns its energy into the supply",
                format!(
                    "when `{}` turns off, `{}` returns {} into `{}`{}, and `{}` has no capacitor",
                    ref_of(ctx, tt.switch),
                    ref_of(ctx, load),
                    crate::units::format_si(e, crate::units::Dimension::Energy),
                    c.net(x).name,
                    if through.is_empty() {
                        String::new()
                    } else {
                        format!(" through {through}")
                    },
                    c.net(x).name
                ),
            );
            f = crate::checks::common::with_parts(f, ctx, &ids, "on the freewheel path");
            f = f.related(c.net(x).span, "this rail");
            Some(f.help(format!(
                "add a bulk capacitor from `{}` to ground near the switches",
                c.net(x).name
            )))
        })
        .collect()
}

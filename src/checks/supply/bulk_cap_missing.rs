use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::{Kind, NetKind};

pub static META: RuleMeta = RuleMeta {
    id: "bulk-cap-missing",
    family: "supply",
    severity: Severity::Warning,
    summary: "a rail that feeds an inductive load has no capacitor to ground",
    hazard: false,
    docs: r#"## What it checks
Every rail that feeds a motor, solenoid or relay coil (directly or
through its switches) has a capacitor from it to ground or another rail.

## Why it matters
A switched coil draws its current in pulses and, with its freewheel path
through the supply, pushes energy back: without a local reservoir the
rail dips and rings at every edge, resetting the controller or pumping
the rail above its rating.

## How it is computed
The rails on the load's pins and on its switches' main terminals are
collected; each must have a capacitor with one pin on it and the other on
another fixed net.

## Example
```
rail VBAT 12V max 14.4V
motor M1 (+: VBAT, -: FAN_SW) part=DEMO-FAN-12V
```
Fixed:
```
capacitor C1 (VBAT, GND) 470uF v_max=25V
```

## Fix
Add a bulk capacitor (electrolytic or polymer, rated above the rail's
maximum) from the rail to ground near the load's switches.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Rails that feed an inductive load and have no capacitor: (rail, load).
pub fn detect(ctx: &Ctx) -> Vec<(usize, usize)> {
    let c = ctx.circuit;
    let mut rails: Vec<(usize, usize)> = Vec::new();
    for l in &ctx.analysis.loads {
        let mut parts = vec![l.part];
        parts.extend(l.switches.iter().copied());
        for q in parts {
            for pin in &c.part(q).pins {
                if matches!(c.net(pin.net).kind, NetKind::Rail(_))
                    && !rails.iter().any(|(r, _)| *r == pin.net)
                {
                    rails.push((pin.net, l.part));
                }
            }
        }
    }
    rails.sort_unstable();
    rails.retain(|&(net, _)| {
        !ctx.graph.parts_on(net).map(|q| c.part(q)).any(|p| {
            p.kind == Kind::Capacitor
                && p.pins.iter().any(|x| x.net == net)
                && p.pins
                    .iter()
                    .any(|x| x.net != net && c.net(x.net).is_fixed())
        })
    });
    rails
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (net, load) in detect(ctx) {
        let n = c.net(net);
        let f = crate::checks::finding(
            &META,
            ctx,
            n.span,
            format!(
                "rail `{}` feeds `{}` but has no capacitor to ground",
                n.name,
                ref_of(ctx, load)
            ),
        )
        .label("no bulk capacitor")
        .parts([ref_of(ctx, load).to_string()]);
        out.push(with_part(f, ctx, load, "inductive load on this rail".into()).help(format!(
            "add a capacitor from `{}` to ground near the switches, rated above the rail's maximum",
            n.name
        )));
    }
    out
}

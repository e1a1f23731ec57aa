use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "shorted-part",
    family: "structure",
    severity: Severity::Error,
    summary: "all pins of a two-terminal part are on the same net",
    hazard: false,
    docs: r#"## What it checks
A two-terminal part (load, diode, resistor, capacitor, inductor) has its
two pins on different nets.

## Why it matters
A part with both ends on one net does nothing: a freewheel diode that is
shorted protects nothing, a gate resistor that is shorted is not there.
It is almost always a copy-paste slip in a net name.

## How it is computed
The nets of the part's two pins are compared.

## Example
```
diode D1 (a: FAN_SW, k: FAN_SW) part=DEMO-SK40-1A
```
Fixed:
```
diode D1 (a: FAN_SW, k: VBAT) part=DEMO-SK40-1A
```

## Fix
Connect the second pin to the net it should reach.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Two-terminal parts with both pins on one net: (part, net).
pub fn detect(ctx: &Ctx) -> Vec<(usize, usize)> {
    ctx.circuit
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| {
            (p.kind.is_inductive_load()
                || p.kind.is_diode()
                || matches!(
                    p.kind,
                    crate::model::Kind::Resistor | crate::model::Kind::Capacitor
                ))
                && p.pins.len() == 2
                && p.pins[0].net == p.pins[1].net
        })
        .map(|(i, p)| (i, p.pins[0].net))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|(i, net)| {
            let p = c.part(i);
            finding(
                &META,
                ctx,
                p.pins_span,
                format!(
                    "both pins of `{}` are on net `{}`",
                    p.reference,
                    c.net(net).name
                ),
            )
            .label("shorted")
            .help(format!(
                "connect one pin of `{}` to the net it should reach",
                p.reference
            ))
            .parts([p.reference.clone()])
        })
        .collect()
}

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

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for p in &c.parts {
        let two = p.kind.is_inductive_load()
            || p.kind.is_diode()
            || matches!(
                p.kind,
                crate::model::Kind::Resistor | crate::model::Kind::Capacitor
            );
        if !two || p.pins.len() != 2 {
            continue;
        }
        if p.pins[0].net == p.pins[1].net {
            let net = &c.net(p.pins[0].net).name;
            out.push(
                finding(
                    &META,
                    ctx,
                    p.pins_span,
                    format!("both pins of `{}` are on net `{net}`", p.reference),
                )
                .label("shorted")
                .help(format!(
                    "connect one pin of `{}` to the net it should reach",
                    p.reference
                ))
                .parts([p.reference.clone()]),
            );
        }
    }
    out
}

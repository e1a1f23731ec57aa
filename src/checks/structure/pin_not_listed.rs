use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "pin-not-listed",
    family: "structure",
    severity: Severity::Error,
    summary: "a required pin of a part is not listed",
    hazard: false,
    docs: r#"## What it checks
Every required pin of a part is connected: both ends of a load or a
passive, drain, gate and source of a MOSFET, collector, base and emitter
of a bipolar transistor, anode and cathode of a diode, and `in`, `out`,
`vdd`, `gnd` of a gate driver.

## Why it matters
An unlisted pin is an open circuit. An open gate floats; an open source
leaves the switch doing nothing; the analysis cannot solve a part with a
terminal missing.

## How it is computed
The listed pins are compared with the kind's required pins.

## Example
```
nmos Q1 (d: SW, s: GND) part=DEMO-N60-3A
```
Fixed:
```
nmos Q1 (d: SW, g: FAN_G, s: GND) part=DEMO-N60-3A
```

## Fix
List the missing pin with the net it connects to.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Parts with required pins not listed: (part, missing pins).
pub fn detect<'a>(ctx: &'a Ctx) -> Vec<(usize, &'a [&'static str])> {
    ctx.circuit
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| !p.missing_pins.is_empty())
        .map(|(i, p)| (i, p.missing_pins.as_slice()))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|(i, missing)| {
            let p = ctx.circuit.part(i);
            let list = missing
                .iter()
                .map(|n| format!("`{n}`"))
                .collect::<Vec<_>>()
                .join(", ");
            let plural = if missing.len() > 1 { "pins" } else { "pin" };
            finding(
                &META,
                ctx,
                p.pins_span,
                format!("`{}` has no connection for {plural} {list}", p.reference),
            )
            .label(format!("{list} missing"))
            .help(format!(
                "add {} to the pin list",
                missing
                    .iter()
                    .map(|n| format!("`{n}: NET`"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
            .parts([p.reference.clone()])
        })
        .collect()
}

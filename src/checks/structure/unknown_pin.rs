use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};
use crate::model::kinds::PinSpec;
use crate::suggest;

pub static META: RuleMeta = RuleMeta {
    id: "unknown-pin",
    family: "structure",
    severity: Severity::Error,
    summary: "a pin name that the kind does not have",
    hazard: false,
    docs: r#"## What it checks
Every `pin: NET` pair on a part line names a pin of the part's kind: `+ -`
for motors, solenoids and relays; `d g s` for MOSFETs; `c b e` for bipolar
transistors; `a k` for diodes; `1 2` for resistors, capacitors and
inductors; `in out vdd gnd inb outb` for gate drivers.

## Why it matters
A misspelt pin leaves the real pin unconnected, so the circuit that is
analysed is not the one that was meant.

## How it is computed
The pin names are compared with the kind's pin list; the closest one is
suggested.

## Example
```
nmos Q1 (drain: SW, g: G, s: GND) part=DEMO-N60-3A
```
Fixed:
```
nmos Q1 (d: SW, g: G, s: GND) part=DEMO-N60-3A
```

## Fix
Use the kind's pin names.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Pins listed that the part's kind does not have: (part, pin, span).
pub fn detect<'a>(ctx: &'a Ctx) -> Vec<(usize, &'a str, crate::source::Span)> {
    ctx.circuit
        .parts
        .iter()
        .enumerate()
        .flat_map(|(i, p)| p.unknown_pins.iter().map(move |(n, s)| (i, n.as_str(), *s)))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let mut out = Vec::new();
    for (i, name, span) in detect(ctx) {
        let p = ctx.circuit.part(i);
        let PinSpec::Fixed(list) = p.kind.pins() else {
            continue;
        };
        let names: Vec<&str> = list.iter().map(|(n, _)| *n).collect();
        let hint = suggest::closest(name, names.iter().copied());
        let all = names
            .iter()
            .map(|n| format!("`{n}`"))
            .collect::<Vec<_>>()
            .join(", ");
        out.push(
            finding(
                &META,
                ctx,
                span,
                format!("a {} has no pin `{name}`", p.kind.name()),
            )
            .label("unknown pin")
            .related(
                p.ref_span,
                format!("`{}` is a {}", p.reference, p.kind.name()),
            )
            .help(match hint {
                Some(h) => format!("did you mean `{h}`? a {} has pins {all}", p.kind.name()),
                None => format!("a {} has pins {all}", p.kind.name()),
            })
            .parts([p.reference.clone()]),
        );
    }
    out
}

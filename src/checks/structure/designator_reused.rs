use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "designator-reused",
    family: "structure",
    severity: Severity::Error,
    summary: "two parts share a designator",
    hazard: false,
    docs: r#"## What it checks
Every designator (`Q1`, `R7`) is used by one part only.

## Why it matters
Two parts with one designator cannot both be placed, ordered or named in a
finding; it usually means a copied block whose designators were not
renumbered.

## How it is computed
Designators are compared as written (case-sensitive).

## Example
```
resistor R1 (FAN_G, GND) 100k
resistor R1 (VALVE_G, GND) 100k
```
Fixed:
```
resistor R1 (FAN_G, GND) 100k
resistor R2 (VALVE_G, GND) 100k
```

## Fix
Renumber the second part.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// (first part, part that reuses its designator)
pub fn detect<'a>(ctx: &'a Ctx) -> &'a [(usize, usize)] {
    &ctx.circuit.duplicates
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .iter()
        .map(|&(first, dup)| {
            let a = c.part(first);
            let b = c.part(dup);
            finding(
                &META,
                ctx,
                b.ref_span,
                format!("designator `{}` is already used", b.reference),
            )
            .label("used again here")
            .related(a.ref_span, "first used here")
            .help("give this part a designator of its own")
            .parts([b.reference.clone()])
        })
        .collect()
}

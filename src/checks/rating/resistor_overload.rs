use super::{Over, help, message, over};
use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;
use crate::units::Dimension;

/// The power rating taken for a resistor that gives none: 0.25 W, a
/// common 1206 / through-hole rating [memory].
pub const P_ASSUMED: f64 = 0.25;

pub static META: RuleMeta = RuleMeta {
    id: "resistor-overload",
    family: "rating",
    severity: Severity::Error,
    summary: "a resistor dissipates more than its derated `p_max`",
    hazard: true,
    docs: r#"## What it checks
Every resistor's dissipation in its worst continuous state — motors
running, rails at their maximum, over every pin state — stays within the
power derating in force (default 50 %) of its `p_max`. A resistor with no
`p_max` is judged against 0.25 W [memory] at warning level, and the
finding says the rating was assumed.

## Why it matters
A resistor run near its rating runs hot enough to discolour the board and
drift; past it, it opens — a gate pull-down that opens leaves the gate
floating, a bleeder that opens leaves a capacitor charged. A power
resistor in a heater or a current limit is the usual case.

## How it is computed
`P = V·I` across the resistor at each solved operating point (the
resistor's own current from the solution; a resistor between two rails
`ΔV²/R` with the rails at their maximum); the largest is compared with
`p_max × derating`.

## Example
```
rail V24 24V max 26.4V
resistor RH (V24, HEAT_SW) 18 p_max=10W      # about 38 W with the switch on
```
Fixed:
```
resistor RH (V24, HEAT_SW) 18 p_max=100W
```

## Fix
Use a resistor rated at least the power in the help line, or a larger
value.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub fn detect(ctx: &Ctx) -> Vec<Over> {
    let d = ctx.settings.derating.power;
    let mut out = Vec::new();
    for (i, p) in ctx.circuit.parts_of(&[Kind::Resistor]) {
        let Some(pw) = ctx.analysis.facts.value(i, "p_loss") else {
            continue;
        };
        match over(p, i, "p_max", pw, Dimension::Power, d) {
            Some(o) => out.push(o),
            None if p.num("p_max").is_none() && pw > P_ASSUMED * d => out.push(Over {
                part: i,
                key: "p_max",
                rating: P_ASSUMED,
                derate: d,
                limit: P_ASSUMED * d,
                value: pw,
                dim: Dimension::Power,
                assumed: true,
            }),
            None => {}
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|o| {
            let p = ctx.circuit.part(o.part);
            let mut f = on_part(
                &META,
                ctx,
                o.part,
                "dissipates too much",
                message(p, &o, "dissipates"),
            );
            if o.assumed {
                f.severity = Severity::Warning;
            }
            f.help(if o.assumed {
                format!(
                    "give `{}` its `p_max`; {}",
                    p.reference,
                    help(&o, "resistor")
                )
            } else {
                help(&o, "resistor")
            })
        })
        .collect()
}

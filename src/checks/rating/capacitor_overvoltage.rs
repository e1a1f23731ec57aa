use super::{Over, help, message, over};
use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;
use crate::units::Dimension;

pub static META: RuleMeta = RuleMeta {
    id: "capacitor-overvoltage",
    family: "rating",
    severity: Severity::Error,
    summary: "a capacitor sees more voltage than its derated `v_max`",
    hazard: true,
    docs: r#"## What it checks
The highest voltage across every capacitor with a `v_max`, over every pin
state and both rail corners, stays within the voltage derating in force
(default 80 %) of its rating — including the rise of a supply rail when a
freewheel path returns a load's energy into it.

## Why it matters
An electrolytic capacitor above its rated voltage heats, vents and can
burst; a ceramic one loses most of its capacitance and cracks. A bulk
capacitor rated for the nominal rail is the classic mistake — the rail's
maximum (a charging battery, a load dump) is what it must survive, and a
bridge that returns a motor's energy into the rail pumps it higher still.

## How it is computed
The voltage across the capacitor is the difference of its nets' extremes
over every solved operating point (rails at their maximum). When a
simulated turn-off returns an energy `E` into a rail, the rail's
capacitors rise from `V` to `sqrt(V² + 2E/C)` (the energy balance of the
rail's total capacitance `C`). Checked: `V_max ≤ derating × v_max`.

## Example
```
rail VBAT 24V max 26.4V
capacitor C1 (VBAT, GND) 470uF v_max=16V
```
Fixed:
```
capacitor C1 (VBAT, GND) 470uF v_max=35V
```

## Fix
Use a capacitor rated at least the voltage in the help line.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A capacitor over its derated rating, and the rail rise part of it.
pub struct CapOver {
    pub over: Over,
    pub rise: f64,
}

pub fn detect(ctx: &Ctx) -> Vec<CapOver> {
    let d = ctx.settings.derating.voltage;
    let f = &ctx.analysis.facts;
    ctx.circuit
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| p.kind == Kind::Capacitor)
        .filter_map(|(i, p)| {
            let v = f.value(i, "v_across")?;
            let o = over(p, i, "v_max", v, Dimension::Voltage, d)?;
            Some(CapOver {
                over: o,
                rise: f.value(i, "v_rise").unwrap_or(0.0),
            })
        })
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|co| {
            let p = ctx.circuit.part(co.over.part);
            let mut msg = message(p, &co.over, "sees up to");
            if co.rise > 0.0 {
                msg.push_str(&format!(
                    "; {} of it is the rail's rise when a turn-off returns a load's energy into it",
                    v(co.rise)
                ));
            }
            on_part(&META, ctx, co.over.part, "voltage rating too low", msg)
                .help(help(&co.over, "capacitor"))
        })
        .collect()
}

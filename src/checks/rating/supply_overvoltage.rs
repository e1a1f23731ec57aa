use super::{Over, message, over};
use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;
use crate::units::Dimension;

pub static META: RuleMeta = RuleMeta {
    id: "supply-overvoltage",
    family: "rating",
    severity: Severity::Error,
    summary: "a controller's or gate driver's supply rail exceeds its `vdd_max`",
    hazard: true,
    docs: r#"## What it checks
The rail on a controller's supply pin (`VDD`, `VCC`, `VIO`…) or a gate
driver's `vdd` stays at or below the part's `vdd_max` at the rail's
maximum. No derating: `vdd_max` is an absolute maximum rating, and a
5.5 V part on a 5 V ± 5 % rail is normal practice.

## Why it matters
Above its absolute maximum a logic part's gate oxide and protection
structures break down: it latches up or dies at power-up. A 3.3 V
controller wired to the 5 V rail, or a driver on the motor supply, is the
usual case.

## How it is computed
The supply net's maximum (`max`, else nominal + `tol`) against `vdd_max`.

## Example
```
rail V5 5V tol 5%
mcu U1 (PA3: FAN_PWM, VDD: V5, VSS: GND) part=DEMO-MCU-3V3   # vdd_max 3.6 V
```
Fixed:
```
mcu U1 (PA3: FAN_PWM, VDD: V3, VSS: GND) part=DEMO-MCU-3V3
```

## Fix
Supply the part from a rail within its rating, or use a part rated for
the rail.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// (part, supply pin, the rating exceeded)
pub fn detect(ctx: &Ctx) -> Vec<(Over, String)> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (i, p) in c.parts.iter().enumerate() {
        let pins: Vec<&crate::model::Pin> = match p.kind {
            Kind::Mcu => p
                .pins
                .iter()
                .filter(|x| {
                    let n = x.name.to_ascii_uppercase();
                    n.starts_with("VDD") || n.starts_with("VCC") || n.starts_with("VIO")
                })
                .collect(),
            Kind::Driver => p.pin("vdd").into_iter().collect(),
            _ => continue,
        };
        for pin in pins {
            let Some(v) = c.net(pin.net).fixed_max() else {
                continue;
            };
            if let Some(o) = over(p, i, "vdd_max", v, Dimension::Voltage, 1.0) {
                out.push((o, pin.name.to_string()));
                break;
            }
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|(o, pin)| {
            let p = c.part(o.part);
            let net = p
                .net_of(&pin)
                .map(|n| c.net(n).name.clone())
                .unwrap_or_default();
            let f = crate::checks::finding(
                &META,
                ctx,
                pin_span(ctx, p, &pin),
                message(
                    p,
                    &o,
                    &format!("is supplied from `{net}` on `{pin}` at up to"),
                ),
            )
            .label(format!("`{net}` reaches {}", v(o.value)))
            .parts([p.reference.clone()]);
            f.help(format!(
                "supply `{}` from a rail that stays at or below {}, or use a part rated for {}",
                p.reference,
                v(o.rating),
                v(o.value)
            ))
        })
        .collect()
}

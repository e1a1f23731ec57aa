use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;

pub static META: RuleMeta = RuleMeta {
    id: "base-unlimited",
    family: "gate",
    severity: Severity::Error,
    summary: "a bipolar base is driven with no series resistance",
    hazard: true,
    docs: r#"## What it checks
A bipolar transistor's base is not connected straight to a controller or
driver output: there is a resistor in series to set the base current.

## Why it matters
The base-emitter junction is a diode: on a pin it draws whatever the pin
can deliver, overloading the pin (and its supply), heating the
transistor's base and, on a driver output, destroying the junction.

## How it is computed
A base net that a controller pin or a driver output is on directly is
unlimited; the current is estimated from the pin's output resistance
(25 Ω when `r_out` is not given [memory]).

## Example
```
npn Q5 (c: RLY_SW, b: ALARM, e: GND) part=DEMO-NPN-1A
```
Fixed:
```
resistor R5 (ALARM, RLY_B) 1k
npn Q5 (c: RLY_SW, b: RLY_B, e: GND) part=DEMO-NPN-1A
```

## Fix
Put a base resistor between the pin and the base, sized for a base current
of about I_C / hfe_min × 2.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Bipolar switches whose base is on a pin or driver output directly:
/// (transistor, driving part, index of the driving pin).
pub fn detect(ctx: &Ctx) -> Vec<(usize, usize, usize)> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (i, p) in c.parts_of(&[Kind::Npn, Kind::Pnp]) {
        let Some(b) = p.net_of("b") else { continue };
        let driver = c.net(b).conns.iter().find(|(q, pin)| {
            let qp = c.part(*q);
            let name = qp.pins.get(*pin).map(|x| &*x.name).unwrap_or("");
            (qp.kind == Kind::Mcu && !crate::analysis::groups::is_supply_pin(name))
                || (qp.kind == Kind::Driver && (name == "out" || name == "outb"))
        });
        if let Some(&(q, pin)) = driver {
            out.push((i, q, pin));
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (i, q, pin) in detect(ctx) {
        let p = c.part(i);
        let Some(b) = p.net_of("b") else { continue };
        let qp = c.part(q);
        let pin_name = qp.pins.get(pin).map(|x| x.name.clone()).unwrap_or_default();
        let ic = ctx.analysis.facts.value(i, "i_on");
        let ib_est = ctx.analysis.facts.value(i, "i_b_max");
        let mut msg = format!(
            "the base of `{}` is driven straight from `{}.{pin_name}` with no series resistor",
            p.reference, qp.reference
        );
        if let Some(ib) = ib_est {
            msg.push_str(&format!(": it draws about {}", a(ib)));
            if let Some(imax) = qp.num("io_i_max") {
                msg.push_str(&format!(" from a pin rated {}", a(imax)));
            }
        }
        let need = match (ic, p.num("hfe_min")) {
            (Some(ic), Some(h)) if h > 0.0 => Some(2.0 * ic / h),
            _ => None,
        };
        let level = if qp.kind == Kind::Mcu {
            crate::analysis::io_v(c, q)
        } else {
            5.0
        };
        let help = match need {
            Some(ib) if ib > 0.0 => {
                let r = (level - p.num("vbe_on").unwrap_or(0.7)) / ib;
                format!(
                    "add a base resistor of about {} between `{}` and the base (for {} = 2 × I_C / hfe_min)",
                    ohm(r),
                    c.net(b).name,
                    a(ib)
                )
            }
            _ => format!(
                "add a base resistor between `{}` and the base",
                c.net(b).name
            ),
        };
        let f = crate::checks::finding(&META, ctx, pin_span(ctx, p, "b"), msg)
            .label("no base resistor")
            .parts([p.reference.clone()]);
        out.push(
            with_part(
                f,
                ctx,
                q,
                format!("`{}.{pin_name}` drives the base directly", qp.reference),
            )
            .help(help),
        );
    }
    out
}

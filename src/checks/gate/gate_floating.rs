use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::PartId;

pub static META: RuleMeta = RuleMeta {
    id: "gate-floating",
    family: "gate",
    severity: Severity::Error,
    summary: "a MOSFET gate (or transistor base) has no resistive path to its off level when the controller pin is high-impedance",
    hazard: true,
    docs: r#"## What it checks
With every controller pin high-impedance — as they are during reset,
power-up, brown-out and programming — each switch's gate (or base) still
has a resistive path to a defined voltage.

## Why it matters
A floating gate charges from leakage and from the drain through the
Miller capacitance; the switch half-turns-on, with the load running
unasked and the switch dissipating in its linear region. It happens every
time the controller resets, which is when nobody is watching.

A gate driver's input is held to the same standard: when it floats in
reset, the driver's output — and the switch behind it — is undefined.

## How it is computed
The control network is solved with every controller pin open; a gate net
with no conducting path to a rail, ground or a driven output is floating.
A pull-down on the controller side of a gate resistor counts: it still
reaches the gate through the resistor.

## Example
```
resistor R7 (HEAT_PWM, HEAT_G) 100
nmos Q6 (d: HEAT_SW, g: HEAT_G, s: GND) part=DEMO-N60-3A
```
Fixed:
```
resistor R8 (HEAT_G, GND) 100k
```

## Fix
Add a pull-down (10 kΩ–100 kΩ) from the gate to the source for an
n-channel switch, or a pull-up from gate to source for a p-channel one.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub fn detect(ctx: &Ctx) -> Vec<PartId> {
    let mut v: Vec<PartId> = ctx
        .analysis
        .switches
        .iter()
        .filter(|(_, i)| i.reset_floating)
        .map(|(p, _)| *p)
        .collect();
    v.sort_unstable();
    v
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let mut out = driver_inputs(ctx);
    out.extend(switch_gates(ctx));
    out
}

/// A gate driver's input that floats in reset: its output, and the gates
/// behind it, are undefined.
fn driver_inputs(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    ctx.analysis
        .floating_inputs
        .iter()
        .map(|fi| {
            let p = c.part(fi.driver);
            let net = net_name(ctx, fi.driver, fi.pin);
            let behind = crate::checks::common::listed(ctx, &fi.switches);
            let mut f = crate::checks::finding(
                &META,
                ctx,
                pin_span(ctx, p, fi.pin),
                format!(
                    "the input `{}` of driver `{}` floats while its controller pin is high-impedance (reset, programming): its output{} is undefined",
                    fi.pin,
                    p.reference,
                    if behind.is_empty() { String::new() } else { format!(", and so {behind},") }
                ),
            )
            .label(format!("`{net}` has no path to a defined level"))
            .parts([p.reference.clone()]);
            f = crate::checks::common::with_parts(f, ctx, &fi.switches, "driven by it");
            let pull = if matches!(p.word("invert"), Some("true" | "yes" | "1")) { "pull-up" } else { "pull-down" };
            let gnd = net_name(ctx, fi.driver, "gnd");
            f.help(format!("add a {pull} of 10 kΩ–100 kΩ on `{net}` (to `{gnd}` for a pull-down), so the driver holds its switches off in reset"))
        })
        .collect()
}

fn switch_gates(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|sw| {
            let p = ctx.circuit.part(sw);
            let (_, ctl, rpin) = p.kind.switch_pins().unwrap_or(("d", "g", "s"));
            let g = net_name(ctx, sw, ctl);
            let s = net_name(ctx, sw, rpin);
            let what = if p.kind.is_mos() { "gate" } else { "base" };
            let mut f = crate::checks::finding(
                &META,
                ctx,
                pin_span(ctx, p, ctl),
                format!(
                    "the {what} of `{}` floats while its controller pin is high-impedance (reset, programming)",
                    p.reference
                ),
            )
            .label(format!("`{g}` has no path to a defined level"))
            .parts([p.reference.clone()]);
            if let Some(info) = ctx.analysis.switches.get(&sw) {
                for ((mcu, pin), _) in &info.controls {
                    f = with_part(f, ctx, *mcu, format!("`{}.{pin}` is high-impedance in reset", ref_of(ctx, *mcu)));
                }
            }
            let help = if p.kind.is_p_type() {
                format!("add a pull-up of 10 kΩ–100 kΩ from `{g}` to `{s}`")
            } else {
                format!("add a pull-down of 10 kΩ–100 kΩ from `{g}` to `{s}`")
            };
            f.help(help)
        })
        .collect()
}

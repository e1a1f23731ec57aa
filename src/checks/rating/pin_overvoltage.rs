use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "pin-overvoltage",
    family: "rating",
    severity: Severity::Error,
    summary: "a controller pin is pulled above its supply or below ground, into its protection diodes",
    hazard: false,
    docs: r#"## What it checks
No pin state — reset included, when the pin is high-impedance — pulls a
controller pin more than a diode drop above its own supply or below its
ground, through a resistor or a part.

## Why it matters
A pin beyond its rails conducts through its protection diodes into the
supply: the injected current can power the controller through its pin,
upset its analog parts, latch it up or burn the diode. A 12 V pull-up on
a 3.3 V pin, a level shifter fitted the wrong way round, a gate network
whose pull-up goes to the motor rail are the usual cases.

## How it is computed
Each controller pin carries its protection diodes to its supply and its
ground in the circuit (0.7 V at 10 mA with 10 Ω in series [memory]); the
current through them is read from every solved operating point, both
corners. More than 10 µA is a finding, with the worst current, the pin's
voltage and the state.

## Example
```
rail V12 12V
mcu U1 (PA0: CTL, VDD: V3, VSS: GND) part=DEMO-MCU-3V3
resistor R1 (V12, CTL) 10k
```
Fixed:
```
resistor R1 (V3, CTL) 10k
```

## Fix
Pull the pin up to its own supply, or put a level shifter (a transistor,
an open-drain stage) between the pin and the higher rail.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<&'a (usize, crate::analysis::PinInjection)> {
    ctx.analysis.injections.iter().collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|(gi, x)| {
            let (m, pin) = &x.pin;
            let p = c.part(*m);
            let state = ctx
                .analysis
                .groups
                .get(*gi)
                .zip(ctx.analysis.solutions.get(*gi))
                .and_then(|(g, s)| s.states.get(x.state).map(|st| crate::analysis::describe_state(c, g, st)))
                .unwrap_or_default();
            let msg = if x.above {
                format!(
                    "`{}.{pin}` is pulled to {}, above its supply's {}: {} flows into the pin's protection diode (with {state})",
                    p.reference,
                    v(x.v_pin),
                    v(x.v_rail),
                    a(x.current)
                )
            } else {
                format!(
                    "`{}.{pin}` is pulled to {}, below its ground: {} flows out of the pin's protection diode (with {state})",
                    p.reference,
                    v(x.v_pin),
                    a(x.current)
                )
            };
            crate::checks::finding(&META, ctx, pin_span(ctx, p, pin), msg)
                .label(format!("{} injected", a(x.current)))
                .parts([p.reference.clone()])
                .help(format!(
                    "keep `{}.{pin}` between its ground and its supply: pull it up to its own supply, or drive the higher rail through a level shifter",
                    p.reference
                ))
        })
        .collect()
}

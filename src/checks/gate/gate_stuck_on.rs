use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "gate-stuck-on",
    family: "gate",
    severity: Severity::Error,
    summary: "the driving pin cannot reach the switch's off level (for example a high-side p-channel gate driven from a lower-voltage controller)",
    hazard: true,
    docs: r#"## What it checks
Some pin state turns each switch off: the switch is not on in every
high/low combination of the controller pins.

## Why it matters
A p-channel high side on a 12 V rail is off only when its gate is near
12 V. A 5 V pin on the gate gives V_GS = −7 V at best: the switch is on
whatever the firmware does, and the load cannot be stopped.

## How it is computed
Every high/low assignment of the controller pins is solved; a switch that
conducts in all of them is stuck on. The gate-source voltages of the
best "off" attempt are reported.

## Example
```
rail VBAT 12V
mcu U1 (PA3: PUMP_CTL, VDD: V5, VSS: GND) part=DEMO-MCU-5V
pmos P3 (d: PUMP_HS, g: PUMP_CTL, s: VBAT) part=DEMO-P30-4A
```
Fixed:
```
resistor R31 (PUMP_CTL, PUMP_B) 4k7
npn      Q31 (c: PUMP_PG, b: PUMP_B, e: GND) part=DEMO-NPN-SIG
resistor R32 (VBAT, PUMP_PG) 10k
pmos     P3 (d: PUMP_HS, g: PUMP_PG, s: VBAT) part=DEMO-P30-4A
```

## Fix
Drive the gate through an inverting level shifter (an n-channel or npn
transistor pulling the gate down, with a pull-up to the rail), or use a
high-side driver.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch that conducts in every high/low pin state.
pub struct StuckOn {
    pub switch: usize,
    /// Its source potential when fixed (a high side on a rail).
    pub source_v: Option<f64>,
    pub group: usize,
}

pub fn detect(ctx: &Ctx) -> Vec<StuckOn> {
    let c = ctx.circuit;
    let mut ids: Vec<_> = ctx.analysis.switches.keys().copied().collect();
    ids.sort_unstable();
    ids.into_iter()
        .filter_map(|sw| {
            let info = ctx.analysis.switches.get(&sw)?;
            let grp = ctx.analysis.groups.get(info.group)?;
            if grp.pins.is_empty() || info.hl_states == 0 || info.on_states < info.hl_states {
                return None;
            }
            let p = c.part(sw);
            let (_, _, rpin) = p.kind.switch_pins()?;
            let source_v = p.net_of(rpin).and_then(|n| c.net(n).fixed_max());
            Some(StuckOn {
                switch: sw,
                source_v,
                group: info.group,
            })
        })
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|s| {
            let p = c.part(s.switch);
            let (_, ctl, rpin) = p.kind.switch_pins().unwrap_or(("d", "g", "s"));
            let s_net = net_name(ctx, s.switch, rpin);
            let mut f = crate::checks::finding(
                &META,
                ctx,
                pin_span(ctx, p, ctl),
                format!(
                    "`{}` is on in every controller pin state{}: nothing turns it off",
                    p.reference,
                    s.source_v.map(|x| format!(" (its source sits at {} on `{s_net}`)", v(x))).unwrap_or_default()
                ),
            )
            .label("cannot reach the off level")
            .parts([p.reference.clone()]);
            if let Some(g) = ctx.analysis.groups.get(s.group) {
                for (m, pin) in g.pins.iter().take(4) {
                    f = with_part(
                        f,
                        ctx,
                        *m,
                        format!("`{}.{pin}` swings only 0–{}", ref_of(ctx, *m), v(crate::analysis::io_v(c, *m))),
                    );
                }
            }
            let help = if p.kind.is_p_type() {
                format!(
                    "drive the gate through an inverting level shifter: an npn or n-channel pulling the gate low, with a pull-up of 10 kΩ from the gate to `{s_net}`"
                )
            } else {
                "drive the gate from a gate driver referenced to the switch's source".to_string()
            };
            f.help(help)
        })
        .collect()
}

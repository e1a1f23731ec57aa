use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "gate-pulldown-strong",
    family: "gate",
    severity: Severity::Warning,
    summary: "the pull-down draws more than the driving pin may source, or divides the drive below what the switch needs",
    hazard: false,
    docs: r#"## What it checks
The gate network's pull-down does not load the controller pin beyond its
current rating `io_i_max` (an error when the sagging pin then never
turns the switch on), and does not divide the pin's level below the
gate voltage at which the switch's `R_DS(on)` is specified when the pin
itself would reach it.

## Why it matters
A pull-down that is too strong wastes the pin's current, drags the output
level down (the pin's own resistance is in series) and, with a series
gate resistor, forms a divider that leaves the switch half-enhanced and
hot.

## How it is computed
The control network is solved with the pin high (pin output resistance
25 Ω when `r_out` is not given [memory]); the pin's current and the
switch's gate-source voltage are read from the solution.

## Example
```
resistor R1 (FAN_PWM, FAN_G) 1k
resistor R2 (FAN_G, GND) 1k        # halves the 5 V drive
```
Fixed:
```
resistor R1 (FAN_PWM, FAN_G) 100
resistor R2 (FAN_G, GND) 100k
```

## Fix
Use a pull-down of 10 kΩ–100 kΩ, at least a hundred times the series gate
resistor.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// What is too strong about a gate network.
pub enum Strong {
    /// The controller pin sources more than its rating.
    PinOverload {
        switch: usize,
        mcu: usize,
        pin: String,
        current: f64,
        rating: f64,
    },
    /// The network divides a sufficient pin level below `rds_on_vgs`.
    Divider {
        switch: usize,
        level: f64,
        vgs: f64,
        vneed: f64,
    },
}

pub fn detect(ctx: &Ctx) -> Vec<Strong> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    let mut ids: Vec<_> = ctx.analysis.switches.keys().copied().collect();
    ids.sort_unstable();
    for sw in ids {
        let Some(info) = ctx.analysis.switches.get(&sw) else {
            continue;
        };
        let p = c.part(sw);
        // a base straight on the pin is `base-unlimited`'s finding
        let base_on_pin = p.kind.is_bipolar()
            && info
                .pin_current
                .as_ref()
                .is_some_and(|((m, pin), _)| c.part(*m).net_of(pin) == p.net_of("b"));
        if base_on_pin {
            continue;
        }
        if let Some(((mcu, pin), i)) = &info.pin_current
            && let Some(rating) = c.part(*mcu).num("io_i_max").filter(|r| i > r)
        {
            out.push(Strong::PinOverload {
                switch: sw,
                mcu: *mcu,
                pin: pin.clone(),
                current: *i,
                rating,
            });
            continue;
        }
        if !p.kind.is_mos() || info.controls.is_empty() {
            continue;
        }
        let (Some(vneed), Some(vgs)) = (p.num("rds_on_vgs"), info.v_gs_on) else {
            continue;
        };
        let level = super::pin_level(ctx, info);
        // only a direct drive from the pin, where the pin level is enough
        let gate_island = p
            .net_of("g")
            .and_then(|g| ctx.graph.island_of.get(g).copied().flatten());
        let direct = c
            .part(info.controls[0].0.0)
            .pins
            .iter()
            .any(|x| ctx.graph.island_of.get(x.net).copied().flatten() == gate_island);
        if direct
            && !p.kind.is_p_type()
            && level >= vneed
            && vgs < vneed
            && !super::pull_resistors(ctx, sw).is_empty()
        {
            out.push(Strong::Divider {
                switch: sw,
                level,
                vgs,
                vneed,
            });
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|s| {
            let sw = match &s {
                Strong::PinOverload { switch, .. } | Strong::Divider { switch, .. } => *switch,
            };
            let p = c.part(sw);
            let pulls = super::pull_resistors(ctx, sw);
            let anchor = |f: Finding| -> Finding {
                let mut f = with_part(f, ctx, sw, "the switch it drives".into());
                for &r in &pulls {
                    f = with_part(f, ctx, r, "pull resistor".into());
                }
                f
            };
            match s {
                Strong::PinOverload { mcu, pin, current, rating, .. } => {
                    // the overloaded pin sags so far that the switch never
                    // conducts: the load is dead, not merely wasteful
                    let dead = ctx
                        .analysis
                        .switches
                        .get(&sw)
                        .is_some_and(|i| !i.ever_on && i.on_states == 0 && !i.drivers.is_empty());
                    let never = if dead {
                        format!("; `{}` then never turns on", p.reference)
                    } else {
                        String::new()
                    };
                    let mut f = on_part(
                        &META,
                        ctx,
                        mcu,
                        "overloaded pin",
                        format!(
                            "`{}.{pin}` sources {} into the gate network of `{}`, above its {} rating{never}",
                            ref_of(ctx, mcu),
                            a(current),
                            p.reference,
                            a(rating)
                        ),
                    );
                    if dead {
                        f.severity = Severity::Error;
                    }
                    anchor(f).help(format!("raise the pull-down to 10 kΩ–100 kΩ so that the pin sources well under {}", a(rating)))
                }
                Strong::Divider { level, vgs, vneed, .. } => {
                    let at = pulls.first().copied().unwrap_or(sw);
                    let f = on_part(
                        &META,
                        ctx,
                        at,
                        "divides the gate drive",
                        format!(
                            "the gate network leaves `{}` with {} of V_GS from a {} pin, below the {} at which its R_DS(on) is specified",
                            p.reference,
                            v(vgs),
                            v(level),
                            v(vneed)
                        ),
                    );
                    anchor(f).help("use a pull-down of 10 kΩ–100 kΩ, at least 100× the series gate resistor")
                }
            }
        })
        .collect()
}

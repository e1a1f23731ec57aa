use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;

pub static META: RuleMeta = RuleMeta {
    id: "gate-drive-low",
    family: "gate",
    severity: Severity::Error,
    summary: "a switch is never fully on, conducts in its linear region, or is driven below the gate voltage its on-resistance is specified at",
    hazard: true,
    docs: r#"## What it checks
Every switch that a controller pin drives turns fully on: in each pin
state where it conducts, it sits in its on region (it drops no more than
twice its rated on-state voltage), not in its linear region, and a MOSFET's
gate-source voltage reaches `rds_on_vgs`, the voltage at which its
`R_DS(on)` is specified. A switch that the pins can never turn on at all is
reported too. A bipolar switch gets at least `I_C / hfe_min` of base
current.

## Why it matters
Below that drive the on-resistance is unspecified and often many times
higher; in its linear region the switch drops volts instead of millivolts
and burns `V_DS·I`: it fails on the first stall. A standard-level MOSFET
(specified at 10 V) behind a 3.3 V pin, an n-channel high side driven
from a logic pin (it can only follow its gate as a source follower, volts
below the rail), a gate divided down by a strong pull-down are the
classic cases.

## How it is computed
Every pin state is solved as an operating point from the device models
(square-law MOSFET fitted so that it has `rds_on` at `rds_on_vgs`,
Ebers–Moll bipolar), with the rails at their minimum — the worst case for
drive — and nothing assumed about where a source sits. Each switch's
region is read from the solution: off (current below 1 % of its largest,
or 10 µA), on (`V_DS ≤ 2·I·rds_on`, or `V_CE ≤ 2·vce_sat`), linear
otherwise. The message gives the region, `V_GS` and `V_DS`. Transistors
that are stages of another switch's gate network (level shifters, the
emitter followers of a gate totem pole) are not judged here — the switch
they drive is — and a switch that carries less than 10 mA is held only to
turning on.

## Example
```
rail V3 3.3V
nmos Q6 (d: HEAT_SW, g: HEAT_G, s: GND) part=DEMO-N60-STD   # R_DS(on) at 10 V
```
Fixed:
```
nmos Q6 (d: HEAT_SW, g: HEAT_G, s: GND) part=DEMO-N60-3A    # R_DS(on) at 4.5 V
```
(with a 5 V pin, or a gate driver from 10 V or more)

## Fix
Use a logic-level switch whose `R_DS(on)` is specified at or below the
available drive, a gate driver supplied from at least `rds_on_vgs`, and for
an n-channel high side a bootstrapped or isolated driver referenced to its
source.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch driven below what it needs.
pub enum Low {
    /// No pin state turns it on: its best drive (min corner).
    Never { switch: usize, vgs: f64 },
    /// It conducts in its linear region.
    Linear {
        switch: usize,
        point: crate::analysis::Point,
    },
    /// MOSFET: on, but V_GS below `rds_on_vgs`.
    Gate { switch: usize, vgs: f64, vneed: f64 },
    /// Bipolar: base current below I_C / hfe_min.
    Base {
        switch: usize,
        ib: f64,
        ic: f64,
        hfe: f64,
    },
}

impl Low {
    pub fn switch(&self) -> usize {
        match self {
            Low::Never { switch, .. }
            | Low::Linear { switch, .. }
            | Low::Gate { switch, .. }
            | Low::Base { switch, .. } => *switch,
        }
    }
}

pub fn detect(ctx: &Ctx) -> Vec<Low> {
    let c = ctx.circuit;
    let a_ = ctx.analysis;
    let mut out = Vec::new();
    let mut ids: Vec<_> = a_.switches.keys().copied().collect();
    ids.sort_unstable();
    for sw in ids {
        let Some(info) = a_.switches.get(&sw) else {
            continue;
        };
        // only switches a controller pin drives
        if info.drivers.is_empty() && info.controls.is_empty() {
            continue;
        }
        let p = c.part(sw);
        let i_on = a_.facts.value(sw, "i_on").unwrap_or(0.0);
        let carries_load = i_on >= crate::analysis::solve::I_LOAD_MIN;
        // a stage of a gate network may conduct only while the gate it
        // drives moves (an emitter follower): its power switch is judged
        if info.gate_stage {
            continue;
        }
        if info.on_states == 0 && !info.ever_on && !info.reset_on {
            out.push(Low::Never {
                switch: sw,
                vgs: info.v_gs_best.unwrap_or(0.0),
            });
            continue;
        }
        if !carries_load {
            continue;
        }
        if let Some(pt) = info.linear {
            out.push(Low::Linear {
                switch: sw,
                point: pt,
            });
            continue;
        }
        if p.kind.is_mos() {
            let (Some(vneed), Some(vgs)) = (p.num("rds_on_vgs"), info.v_gs_on) else {
                continue;
            };
            if vgs + 1e-9 >= vneed {
                continue;
            }
            // a divider that the pin could overcome is the pull-down's fault
            let level = super::pin_level(ctx, info);
            if !p.kind.is_p_type() && level >= vneed && !super::pull_resistors(ctx, sw).is_empty() {
                continue;
            }
            out.push(Low::Gate {
                switch: sw,
                vgs,
                vneed,
            });
        } else if matches!(p.kind, Kind::Npn | Kind::Pnp) {
            let (Some(hfe), Some(ib)) = (p.num("hfe_min"), a_.facts.value(sw, "i_b")) else {
                continue;
            };
            if ib + 1e-12 < i_on / hfe {
                out.push(Low::Base {
                    switch: sw,
                    ib,
                    ic: i_on,
                    hfe,
                });
            }
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    detect(ctx)
        .into_iter()
        .map(|low| {
            let switch = low.switch();
            let p = c.part(switch);
            let bip = p.kind.is_bipolar();
            let (ctl, vname, dname) = if bip { ("b", "V_BE", "V_CE") } else { ("g", "V_GS", "V_DS") };
            let (msg, label, help) = match low {
                Low::Never { vgs, .. } => {
                    let vth = if bip {
                        format!("{} `vbe_on`", v(p.num("vbe_on").unwrap_or(crate::analysis::devices::bjt::VBE_DEFAULT)))
                    } else {
                        format!("{} threshold", v(p.num("vgs_th").unwrap_or(crate::analysis::devices::mosfet::VTH_DEFAULT)))
                    };
                    (
                        format!("`{}` never turns on: its best drive over every pin state is {vname} {}, below its {vth}", p.reference, v(vgs)),
                        format!("{vname} at most {}", v(vgs)),
                        if p.kind == Kind::Nmos && ctx.analysis.facts.value(switch, "i_on").is_none() {
                            "drive the gate above its threshold relative to its source: a logic-level part, a gate driver, or for a high side a driver referenced to the source".to_string()
                        } else {
                            format!("use a switch that turns on at {} or a driver that gives it more", v(vgs.max(0.0)))
                        },
                    )
                }
                Low::Linear { point, .. } => {
                    let i = point.i_d.abs();
                    (
                        format!(
                            "`{}` conducts in its linear region: {vname} {}, {dname} {} at {} (rails at their minimum), dissipating about {}",
                            p.reference,
                            v(point.v_gs),
                            v(point.v_ds),
                            a(i),
                            w((point.v_ds * point.i_d).abs())
                        ),
                        format!("linear: {dname} {}", v(point.v_ds)),
                        if bip {
                            format!("saturate it: base current of at least {} (2 × I_C / hfe_min)", a(2.0 * i / p.num("hfe_min").unwrap_or(100.0)))
                        } else if p.kind == Kind::Nmos && p.pin("d").is_some_and(|d| c.net(d.net).is_fixed()) {
                            "an n-channel high side follows its gate: drive it from a bootstrapped or isolated driver referenced to its source, or use a p-channel".to_string()
                        } else {
                            format!("drive the gate to at least {} from its source, or use a switch specified at the available drive", v(p.num("rds_on_vgs").unwrap_or(10.0)))
                        },
                    )
                }
                Low::Gate { vgs, vneed, .. } => {
                    let rds = p.num("rds_on").map(|r| format!(" {}", ohm(r))).unwrap_or_default();
                    (
                        format!("`{}` gets {} of gate drive, below the {} at which its{rds} R_DS(on) is specified", p.reference, v(vgs), v(vneed)),
                        format!("V_GS {} in the on state", v(vgs)),
                        format!("use a logic-level switch whose R_DS(on) is specified at ≤ {}, or a gate driver supplied from ≥ {}", v(vgs.max(0.0)), v(vneed)),
                    )
                }
                Low::Base { ib, ic, hfe, .. } => {
                    let need = ic / hfe;
                    (
                        format!("`{}` gets {} of base current, below I_C / hfe_min = {} / {} = {}", p.reference, a(ib), a(ic), crate::units::sig3(hfe), a(need)),
                        "base current too low to saturate".to_string(),
                        format!("lower the base resistor so that the base gets at least {} (2× for margin)", a(2.0 * need)),
                    )
                }
            };
            let mut f = crate::checks::finding(&META, ctx, pin_span(ctx, p, ctl), msg)
                .label(label)
                .parts([p.reference.clone()]);
            if let Some(info) = ctx.analysis.switches.get(&switch) {
                let mut pins: Vec<&crate::analysis::CtlPin> = info.controls.iter().map(|(x, _)| x).collect();
                pins.extend(info.drivers.iter());
                pins.sort();
                pins.dedup();
                for (m, pin) in pins {
                    f = with_part(f, ctx, *m, format!("`{}.{pin}` drives it", ref_of(ctx, *m)));
                }
            }
            f.help(help)
        })
        .collect()
}

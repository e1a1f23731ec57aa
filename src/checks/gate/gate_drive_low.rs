use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::Kind;

pub static META: RuleMeta = RuleMeta {
    id: "gate-drive-low",
    family: "gate",
    severity: Severity::Error,
    summary: "the on-state gate drive is below the gate voltage at which the switch's on-resistance is specified",
    hazard: true,
    docs: r#"## What it checks
In every pin state that turns a MOSFET on, its gate-source voltage reaches
`rds_on_vgs`, the voltage at which its `R_DS(on)` is specified. For a
bipolar switch, the base current reaches `I_C / hfe_min`.

## Why it matters
Below that voltage the on-resistance is unspecified and often many times
higher: the switch runs in or near its linear region, dissipates far more
than computed and can fail on the first stall. A standard-level MOSFET
(specified at 10 V) behind a 3.3 V pin is the classic case.

## How it is computed
Each pin state is solved; `V_GS` is the gate voltage less the source
voltage in the state where the switch conducts (a high-side n-channel
source sits near the rail). For a bipolar switch, the base current comes
from the same solve and is compared with `i_on / hfe_min`.

## Example
```
rail V3 3.3V
nmos Q6 (d: HEAT_SW, g: HEAT_G, s: GND) part=DEMO-N60-STD   # R_DS(on) at 10 V
```
Fixed:
```
nmos Q6 (d: HEAT_SW, g: HEAT_G, s: GND) part=DEMO-N60-3A    # R_DS(on) at 4.5 V... 
```
(with a 5 V pin, or a gate driver from 10 V or more)

## Fix
Use a logic-level switch whose `R_DS(on)` is specified at or below the
available drive, or a gate driver supplied from at least `rds_on_vgs`.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A switch driven below what its ratings are specified at.
pub enum Low {
    /// MOSFET: V_GS in the on state (or the best attempt when it never
    /// turns on) below `rds_on_vgs`.
    Gate {
        switch: usize,
        vgs: f64,
        vneed: f64,
        never: bool,
    },
    /// Bipolar: base current below I_C / hfe_min.
    Base {
        switch: usize,
        ib: f64,
        ic: f64,
        hfe: f64,
    },
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
        if info.controls.is_empty() && info.on_states == 0 {
            continue;
        }
        let p = c.part(sw);
        if p.kind.is_mos() {
            let (Some(vneed), Some(vgs)) = (p.num("rds_on_vgs"), info.v_gs_on.or(info.v_gs_best))
            else {
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
                never: info.v_gs_on.is_none(),
            });
        } else if matches!(p.kind, Kind::Npn | Kind::Pnp) {
            let (Some(hfe), Some(ic), Some(ib)) = (
                p.num("hfe_min"),
                a_.facts.value(sw, "i_on"),
                a_.facts.value(sw, "i_b"),
            ) else {
                continue;
            };
            if ib + 1e-12 < ic / hfe {
                out.push(Low::Base {
                    switch: sw,
                    ib,
                    ic,
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
        .map(|low| match low {
            Low::Gate { switch, vgs, vneed, never } => {
                let p = c.part(switch);
                let rds = p.num("rds_on").map(|r| format!(" {}", ohm(r))).unwrap_or_default();
                let msg = if never {
                    format!(
                        "`{}` never turns on: its best gate drive is {}, below its {} threshold",
                        p.reference,
                        v(vgs),
                        v(p.num("vgs_th").unwrap_or(vneed))
                    )
                } else {
                    format!(
                        "`{}` gets {} of gate drive, below the {} at which its{rds} R_DS(on) is specified",
                        p.reference,
                        v(vgs),
                        v(vneed)
                    )
                };
                let mut f = crate::checks::finding(&META, ctx, pin_span(ctx, p, "g"), msg)
                    .label(format!("V_GS {} in the on state", v(vgs)))
                    .parts([p.reference.clone()]);
                if let Some(info) = ctx.analysis.switches.get(&switch) {
                    for ((m, pin), _) in &info.controls {
                        f = with_part(f, ctx, *m, format!("`{}.{pin}` drives it", ref_of(ctx, *m)));
                    }
                }
                f.help(format!(
                    "use a logic-level switch whose R_DS(on) is specified at ≤ {}, or a gate driver supplied from ≥ {}",
                    v(vgs.max(0.0)),
                    v(vneed)
                ))
            }
            Low::Base { switch, ib, ic, hfe } => {
                let p = c.part(switch);
                let need = ic / hfe;
                crate::checks::finding(
                    &META,
                    ctx,
                    pin_span(ctx, p, "b"),
                    format!(
                        "`{}` gets {} of base current, below I_C / hfe_min = {} / {} = {}",
                        p.reference,
                        a(ib),
                        a(ic),
                        crate::units::sig3(hfe),
                        a(need)
                    ),
                )
                .label("base current too low to saturate")
                .parts([p.reference.clone()])
                .help(format!("lower the base resistor so that the base gets at least {} (2× for margin)", a(need)))
            }
        })
        .collect()
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "clamp-overvoltage",
    family: "freewheel",
    severity: Severity::Error,
    summary: "the switch's peak voltage at turn-off (rail + clamp) exceeds its rating",
    hazard: true,
    docs: r#"## What it checks
The voltage a switch blocks at turn-off — the rail plus the clamp voltage
of the freewheel path across the load, or the clamp voltage itself for a
clamp across the switch — stays within its `vds_max` (`vce_max`) with the
voltage derating in force (default 80 %).

## Why it matters
A Zener or TVS in the freewheel path makes a coil release faster, but the
switch sees the rail plus the clamp. Past its rating the switch avalanches
at every turn-off and fails.

## How it is computed
The turn-off is simulated on the switch's control group, from the
operating point with the load stalled and the rails at their maximum:
the load current commutates into whatever the circuit offers (diodes
with their forward drop and series resistance, Zener and TVS breakdown,
body diodes, the supply) and `V_peak` is the largest blocking voltage the
waveform shows. Where the clamp would rise above the switch's own
breakdown, the switch avalanches first, at 1.3 × its rating [memory].
Closed-form check (a path across the load): `V_peak ≈ V_rail,max +
V_clamp`; 12 V, 10 mH, 10 Ω with a diode and a 24 V Zener: 37.8 V
simulated with ngspice 39.3.

## Example
```
diode D2 (a: VALVE_SW, k: VALVE_Z) part=DEMO-SK40-1A
zener Z1 (a: VBAT, k: VALVE_Z) vz=47V
nmos  Q2 (d: VALVE_SW, g: VALVE_G, s: GND) part=DEMO-N60-3A   # 60 V
```
Fixed:
```
zener Z1 (a: VBAT, k: VALVE_Z) part=DEMO-Z24
```

## Fix
Lower the clamp voltage or choose a switch rated at least the voltage in
the help line.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// A turn-off whose peak exceeds the switch's derated rating.
pub struct Clamp<'a> {
    pub turnoff: &'a crate::analysis::TurnOff,
    pub rating: f64,
    pub limit: f64,
}

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<Clamp<'a>> {
    let d = &ctx.settings.derating;
    let mut out: Vec<Clamp<'a>> = Vec::new();
    for tt in &ctx.analysis.turnoffs {
        // with no path at all, `freewheel-missing` reports it
        if tt.path.is_empty() || tt.t_off.is_none() {
            continue;
        }
        let p = ctx.circuit.part(tt.switch);
        let Some(rating) = p.num("vds_max").or(p.num("vce_max")) else {
            continue;
        };
        let limit = rating * d.voltage;
        if tt.v_peak > limit {
            match out.iter_mut().find(|c| c.turnoff.switch == tt.switch) {
                Some(c) if tt.v_peak > c.turnoff.v_peak => c.turnoff = tt,
                Some(_) => {}
                None => out.push(Clamp {
                    turnoff: tt,
                    rating,
                    limit,
                }),
            }
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = &ctx.settings.derating;
    detect(ctx)
        .into_iter()
        .map(|k| {
            let tt = k.turnoff;
            let p = ctx.circuit.part(tt.switch);
            let ids: Vec<_> = tt.path.iter().map(|(q, _)| *q).collect();
            let through = crate::checks::common::listed(ctx, &ids);
            let aval = if tt.avalanche {
                format!(": it breaks down before the clamp takes the current ({} in its own avalanche per turn-off)", crate::units::format_si(tt.e_aval, crate::units::Dimension::Energy))
            } else {
                String::new()
            };
            let mut f = on_part(
                &META,
                ctx,
                tt.switch,
                "blocks the clamp voltage",
                format!(
                    "`{}` sees {} at turn-off (freewheel path through {through}), above {} of its {} rating ({}){aval}",
                    p.reference,
                    v(tt.v_peak),
                    pct(d.voltage),
                    v(k.rating),
                    v(k.limit)
                ),
            );
            f = crate::checks::common::with_parts(f, ctx, &ids, "on the freewheel path");
            f.help(format!(
                "use a switch rated at least {}, or lower the clamp so that the peak stays below {}",
                v(tt.v_peak / d.voltage),
                v(k.limit)
            ))
        })
        .collect()
}

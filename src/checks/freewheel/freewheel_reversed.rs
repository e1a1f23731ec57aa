use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "freewheel-reversed",
    family: "freewheel",
    severity: Severity::Error,
    summary: "a diode across an inductive load conducts while the switch is on",
    hazard: true,
    docs: r#"## What it checks
A diode fitted across a motor or coil is reverse-biased while the load is
driven, and so conducts only when the switch opens.

## Why it matters
A freewheel diode fitted backwards is forward-biased by the supply as soon
as the switch turns on: it shorts the rail through the switch. The diode,
the switch or a trace burns, and the load never gets its current.

## How it is computed
Every pin state that drives the load is solved (nodal analysis with
piecewise diodes); a diode across the load that carries forward current
in such a state is reversed. The current it would carry is reported.

## Example
```
motor M1 (+: VBAT, -: FAN_SW) part=DEMO-FAN-12V
diode D1 (a: VBAT, k: FAN_SW) part=DEMO-SK40-1A
```
Fixed:
```
diode D1 (a: FAN_SW, k: VBAT) part=DEMO-SK40-1A
```

## Fix
Swap the diode's anode and cathode: anode on the switched end of the load,
cathode on the supply end.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// (load info, diode, forward current while the load is driven)
pub fn detect<'a>(ctx: &'a Ctx) -> Vec<(&'a crate::analysis::LoadInfo, usize, f64)> {
    ctx.analysis
        .loads
        .iter()
        .flat_map(|l| l.reversed.iter().map(move |&(d, i)| (l, d, i)))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let mut out = Vec::new();
    {
        for (l, d, i) in detect(ctx) {
            let i = ctx.analysis.facts.value(d, "i_on").unwrap_or(i);
            let dp = ctx.circuit.part(d);
            let (an, kn) = (net_name(ctx, d, "a"), net_name(ctx, d, "k"));
            let sw = l.switches.first().copied();
            let lp = ctx.circuit.part(l.part);
            let across = [lp.net_of("+"), lp.net_of("-")].contains(&dp.net_of("a"))
                && [lp.net_of("+"), lp.net_of("-")].contains(&dp.net_of("k"));
            let msg = if across {
                let through = sw
                    .map(|s| format!(" through `{}`", ref_of(ctx, s)))
                    .unwrap_or_default();
                format!(
                    "`{}` is forward-biased while `{}` is driven: it would carry {}{through}, shorting the supply",
                    dp.reference,
                    lp.reference,
                    a(i)
                )
            } else {
                format!(
                    "`{}` is forward-biased by the supply and carries {} in the circuit of `{}`: fitted this way it bypasses the switch",
                    dp.reference,
                    a(i),
                    lp.reference
                )
            };
            let mut f = on_part(&META, ctx, d, "conducts while it should block", msg);
            f = with_part(f, ctx, l.part, "the load".into());
            if let Some(s) = sw {
                f = with_part(f, ctx, s, "conducts the short".into());
            }
            out.push(f.help(format!("swap the pins: `a: {kn}, k: {an}`")));
        }
    }
    out
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::PartId;

pub static META: RuleMeta = RuleMeta {
    id: "freewheel-missing",
    family: "freewheel",
    severity: Severity::Error,
    summary: "a switched inductive load has no path for its current when its switch opens",
    hazard: true,
    docs: r#"## What it checks
For every switch that carries the current of a motor, solenoid or relay
coil, the circuit offers the coil's current a path when the switch opens:
a loop from the coil terminal the current leaves back to the terminal it
enters, through parts that conduct that way with the switch off.

## Why it matters
A coil's current cannot stop at once: the energy ½·L·I² must go somewhere.
With no path the switch node flies up until something breaks down —
usually the switch itself, in avalanche, at every turn-off. The board may
work for a while and then fail short, leaving the load on.

## How it is computed
The turn-off is simulated on the switch's control group from the
operating point with the load stalled, rails at their maximum (and, for
a bridge, the controller's reset while the load runs). Every part's share
of the load's charge after the command is integrated from the waveforms:
a part that carries at least a fifth of it is on the freewheel path.
With none, the current has nowhere to go but the switch's own
capacitance and then its breakdown: a MOSFET avalanches at 1.3 ×
`vds_max` [memory], a bipolar switch breaks down at 1.3 × `vce_max`
[memory], and the message gives that voltage and the energy the switch
absorbs at each turn-off. (A switch without a blocking rating rings up to
about `I·sqrt(L/C_oss)`.) A diode across the switch does not count: it
cannot oppose the current.

## Example
```
relay K1 (+: VBAT, -: RLY_SW) part=DEMO-RLY-12V
npn   Q5 (c: RLY_SW, b: RLY_B, e: GND) part=DEMO-NPN-1A
```
Fixed:
```
diode D5 (a: RLY_SW, k: VBAT) part=DEMO-SK40-1A
```

## Fix
Fit a freewheel diode across the coil (anode on the switched end, cathode
on the supply end), rated for the rail and the coil current; add a Zener
in series with it where the coil must release fast.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub struct Missing<'a> {
    pub turnoff: &'a crate::analysis::TurnOff,
    pub load: PartId,
}

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<Missing<'a>> {
    let a = ctx.analysis;
    let mut out: Vec<Missing<'a>> = Vec::new();
    let mut seen = std::collections::HashSet::new();
    // a reversed diode is reported by its own rule
    let reversed: std::collections::HashSet<usize> = a
        .loads
        .iter()
        .filter(|l| !l.reversed.is_empty())
        .map(|l| l.part)
        .collect();
    for t in &a.turnoffs {
        let Some(load) = t.load else { continue };
        let inductive = ctx.circuit.part(load).kind.is_inductive_load();
        if !inductive
            || !t.path.is_empty()
            || t.t_off.is_none()
            || reversed.contains(&load)
            || t.failed
            || !seen.insert(load)
        {
            continue;
        }
        out.push(Missing { turnoff: t, load });
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    use crate::units::{Dimension, format_si};
    let d = &ctx.settings.derating;
    detect(ctx)
        .into_iter()
        .map(|m| {
            let c = ctx.circuit;
            let t = m.turnoff;
            let lp = c.part(m.load);
            let sp = c.part(t.switch);
            let sw = &sp.reference;
            // the current flows + to − in a low-side circuit
            let (leave, enter) = if t.il0 >= 0.0 {
                (net_name(ctx, m.load, "-"), net_name(ctx, m.load, "+"))
            } else {
                (net_name(ctx, m.load, "+"), net_name(ctx, m.load, "-"))
            };
            let rail = [lp.net_of("+"), lp.net_of("-")]
                .into_iter()
                .flatten()
                .chain(sp.pins.iter().map(|p| p.net))
                .filter_map(|n| c.net(n).fixed_max())
                .fold(0.0f64, |x, y| x.max(y.abs()));
            let i_cont = ctx.analysis.facts.value(m.load, "i_cont").unwrap_or(t.il0);
            let rating = sp.num("vds_max").or(sp.num("vce_max"));
            let what = match rating {
                Some(r) if t.avalanche => format!(
                    "drives `{sw}` into avalanche at {} (1.3 × its {} rating), {} into the switch at every turn-off",
                    v(t.v_peak),
                    v(r),
                    format_si(t.e_aval, Dimension::Energy)
                ),
                _ => format!("rings to about {} across `{sw}`", v(t.v_peak)),
            };
            let f = on_part(
                &META,
                ctx,
                m.load,
                "no freewheel path",
                format!(
                    "`{}` has no freewheel path when `{sw}` turns off: its {} {what}",
                    lp.reference,
                    a(t.il0.abs())
                ),
            );
            with_part(f, ctx, t.switch, format!("`{sw}` opens here"))
                .help(format!(
                    "fit a diode with anode on `{leave}` and cathode on `{enter}`, rated at least {} reverse and {} average ({} and {} derating)",
                    v(rail / d.voltage),
                    a(i_cont / d.current),
                    pct(d.voltage),
                    pct(d.current)
                ))
        })
        .collect()
}

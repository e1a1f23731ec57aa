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
The off-state conduction graph is searched for the loop of least opposing
voltage (diodes forward, Zener and TVS diodes in breakdown, resistors,
body diodes of other switches, and at most one pass through the supply).
A loop whose voltage would not oppose the current (a diode across the
switch) is no path. With no path, the peak is estimated as `I·sqrt(L/C)`
with the switch's `coss` (100 pF when not given [memory]).

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

pub struct Missing {
    pub load: PartId,
    pub switch: PartId,
    pub i0: f64,
    pub v_est: f64,
    pub note: String,
}

pub fn detect(ctx: &Ctx) -> Vec<Missing> {
    let a = ctx.analysis;
    let mut out: Vec<Missing> = Vec::new();
    let mut seen = std::collections::HashSet::new();
    // a reversed diode is reported by its own rule
    let reversed: std::collections::HashSet<usize> = a
        .loads
        .iter()
        .filter(|l| !l.reversed.is_empty())
        .map(|l| l.part)
        .collect();
    for t in &a.turnoffs {
        if t.path.is_some() || reversed.contains(&t.load) || !seen.insert(t.load) {
            continue;
        }
        out.push(Missing {
            load: t.load,
            switch: t.switch,
            i0: t.i0,
            v_est: t.v_peak,
            note: t.v_peak_note.clone(),
        });
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let d = &ctx.settings.derating;
    detect(ctx)
        .into_iter()
        .map(|m| {
            let c = ctx.circuit;
            let lp = c.part(m.load);
            let sw = ref_of(ctx, m.switch);
            let (leave, enter) = (net_name(ctx, m.load, "-"), net_name(ctx, m.load, "+"));
            let rail = [lp.net_of("+"), lp.net_of("-")]
                .into_iter()
                .flatten()
                .filter_map(|n| c.net(n).fixed_max())
                .fold(0.0f64, |x, y| x.max(y.abs()));
            let i_cont = ctx.analysis.facts.value(m.load, "i_cont").unwrap_or(m.i0);
            let f = on_part(
                &META,
                ctx,
                m.load,
                "no freewheel path",
                format!(
                    "`{}` has no freewheel path when `{sw}` turns off: {} in the winding would ring to about {} ({})",
                    lp.reference,
                    a(m.i0),
                    v(m.v_est),
                    m.note
                ),
            );
            with_part(f, ctx, m.switch, format!("`{sw}` opens here"))
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

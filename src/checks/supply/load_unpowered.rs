use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::{Kind, NetKind};

pub static META: RuleMeta = RuleMeta {
    id: "load-unpowered",
    family: "supply",
    severity: Severity::Error,
    summary: "a load has no conducting path to any rail, so nothing in the board can power it",
    hazard: false,
    docs: r#"## What it checks
Every motor, solenoid, relay coil and inductor reaches a declared rail
through parts that can conduct (windings, resistors, switches, diodes),
or a controller, driver or connector pin: otherwise nothing can drive a
current through it.

## Why it matters
A load with no supply is a netlist error — usually a rail's name spelt
one way in its `rail` statement and another way on the parts. Left
alone, every rule that judges the load's current, its switch and its
freewheel path has nothing to judge, and the board passes clean.

## How it is computed
From the load's nets, the conducting parts are followed across signal
nets; reaching a net declared with `rail` is a supply. A ground alone is
not one.

## Example
```
rail VBATT 12V
motor M1 (+: VBAT, -: SW) part=DEMO-FAN-12V
```
Fixed:
```
rail VBAT 12V
```

## Fix
Connect the load to its rail, or declare the net it is on as a rail.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Loads with no path to a source. One flood from every rail and every
/// controller, driver or connector pin across conducting parts marks the
/// nets a current can come from: linear in the board.
pub fn detect(ctx: &Ctx) -> Vec<usize> {
    let c = ctx.circuit;
    let mut fed = vec![false; c.nets.len()];
    let mut stack: Vec<usize> = Vec::new();
    for (i, n) in c.nets.iter().enumerate() {
        if matches!(n.kind, NetKind::Rail(_)) {
            stack.push(i);
        }
    }
    for p in &c.parts {
        // a controller or driver pin is a source of its own, and a
        // connector brings in whatever is off the board
        if matches!(p.kind, Kind::Mcu | Kind::Driver | Kind::Connector) {
            stack.extend(p.pins.iter().map(|x| x.net));
        }
    }
    while let Some(n) = stack.pop() {
        // a ground returns current; it feeds nothing
        if matches!(c.net(n).kind, NetKind::Ground) {
            continue;
        }
        let Some(slot) = fed.get_mut(n) else { continue };
        if *slot {
            continue;
        }
        *slot = true;
        for q in ctx.graph.parts_on(n) {
            let qp = c.part(q);
            // a capacitor passes no steady current
            if qp.kind == Kind::Capacitor {
                continue;
            }
            for (a, b) in crate::graph::conducting_pairs(qp.kind) {
                if let (Some(na), Some(nb)) = (qp.net_of(a), qp.net_of(b)) {
                    if na == n {
                        stack.push(nb);
                    } else if nb == n {
                        stack.push(na);
                    }
                }
            }
        }
    }
    c.parts
        .iter()
        .enumerate()
        .filter(|(_, p)| p.kind.is_inductive_load())
        .filter(|(_, p)| {
            !p.pins
                .iter()
                .any(|x| fed.get(x.net).copied().unwrap_or(true))
        })
        .map(|(i, _)| i)
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let found = detect(ctx);
    if found.is_empty() {
        return Vec::new();
    }
    let rails = crate::suggest::Index::new(
        c.nets
            .iter()
            .filter(|n| matches!(n.kind, NetKind::Rail(_)))
            .map(|n| n.name.as_str()),
    );
    found
        .into_iter()
        .map(|i| {
            let p = c.part(i);
            let hint = p
                .pins
                .iter()
                .map(|x| {
                    (
                        c.net(x.net).name.as_str(),
                        crate::suggest::did_you_mean_in(&c.net(x.net).name, &rails),
                    )
                })
                .find(|(_, h)| !h.is_empty());
            let f = on_part(
                &META,
                ctx,
                i,
                "no supply reaches it",
                format!(
                    "`{}` has no path to any rail: nothing can drive a current through it",
                    p.reference
                ),
            );
            match hint {
                Some((net, h)) => f.help(format!("`{net}` is not a declared rail: {h}")),
                None => {
                    f.help("connect the load to its supply rail, or declare that net with `rail`")
                }
            }
        })
        .collect()
}

use crate::checks::common::*;
use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};

pub static META: RuleMeta = RuleMeta {
    id: "shoot-through",
    family: "bridge",
    severity: Severity::Error,
    summary: "both switches of a bridge leg can be on at once",
    hazard: true,
    docs: r#"## What it checks
No combination of controller pin levels allowed by the `drive`
statements turns on both switches of a bridge leg (two switches in series
from a rail to ground sharing a midpoint). A `complement` pair is always
taken as opposite.

## Why it matters
Both switches on short the rail to ground through two on-resistances: tens
or hundreds of amperes, limited only by the supply. The switches fail
within microseconds, often short, and a firmware bug or a reset glitch is
enough to get there.

## How it is computed
Every high/low assignment of the pins of the leg's control group is
solved as an operating point from the device models (rails at their
maximum): gate networks, level shifters, drivers and each switch's
polarity are in the solve, and nothing is assumed about where a source
sits. A leg is reported when, in some assignment, more than 1 mA flows
from the upper rail down through both switches to the lower one — with
that assignment and the current. Two switches on one gate net, or a
high-side n-channel that conducts as a source follower while its low
side is on, are found this way.

## Example
```
drive U1.PA0 pwm 20kHz complement U1.PA1 deadtime 500ns
pmos P1 (d: MID, g: PA0_NET, s: VBAT) ...   # on when PA0 is low
nmos N1 (d: MID, g: PA1_NET, s: GND) ...    # on when PA1 is high = PA0 low
```
Fixed: drive both gates with the same polarity (an inverting level shifter
for the p-channel), or declare the pins without `complement` and gate them
in a driver with interlock.

## Fix
Make the two on-conditions exclusive in hardware: a half-bridge driver
with shoot-through protection, or gate logic that cannot turn both on.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

/// Legs with a pin assignment that turns both switches on.
/// A leg, the pin assignment that makes current flow through both of its
/// switches, and that current.
pub type Through<'a> = (
    &'a crate::analysis::Leg,
    &'a [(crate::analysis::CtlPin, crate::analysis::PinState)],
    f64,
);

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<Through<'a>> {
    ctx.analysis
        .legs
        .iter()
        .filter_map(|l| l.both_on.as_ref().map(|(a, i)| (l, a.as_slice(), *i)))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (leg, assign, through) in detect(ctx) {
        let states = assign
            .iter()
            .map(|((m, pin), s)| {
                format!(
                    "`{}.{pin}` {}",
                    ref_of(ctx, *m),
                    match s {
                        crate::analysis::PinState::High => "high",
                        crate::analysis::PinState::Low => "low",
                        crate::analysis::PinState::HiZ => "open",
                    }
                )
            })
            .collect::<Vec<_>>()
            .join(", ");
        let hp = c.part(leg.high);
        let lp = c.part(leg.low);
        let hi_net = hp.kind.switch_pins().and_then(|(m, _, r)| {
            [m, r]
                .into_iter()
                .filter_map(|x| hp.net_of(x))
                .find(|&n| c.net(n).is_fixed())
        });
        let lo_net = lp.kind.switch_pins().and_then(|(m, _, r)| {
            [m, r]
                .into_iter()
                .filter_map(|x| lp.net_of(x))
                .find(|&n| c.net(n).is_fixed())
        });
        let names = |n: Option<usize>| n.map(|n| c.net(n).name.clone()).unwrap_or_default();
        let f = on_part(
            &META,
            ctx,
            leg.high,
            "on together with the low side",
            format!(
                "`{}` and `{}` both conduct with {states}: {} flows from `{}` to `{}` through the leg at `{}`",
                hp.reference,
                lp.reference,
                a(through),
                names(hi_net),
                names(lo_net),
                c.net(leg.mid).name
            ),
        );
        out.push(with_part(f, ctx, leg.low, "the other switch of the leg".into()).help(
            "make the two on-conditions exclusive: same-polarity drive (an inverting level shifter for a p-channel high side), or a half-bridge driver with interlock",
        ));
    }
    out
}

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
Each switch's on-condition is solved over every high/low assignment of
the pins of its control group, through level shifters, drivers and the
switch's polarity (a p-channel high side is on when its gate is low).
A leg where one assignment turns both on is reported with that
assignment.

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
pub fn detect<'a>(
    ctx: &'a Ctx,
) -> Vec<(
    &'a crate::analysis::Leg,
    &'a [(
        crate::analysis::states::CtlPin,
        crate::analysis::states::PinState,
    )],
)> {
    ctx.analysis
        .legs
        .iter()
        .filter_map(|l| l.both_on.as_deref().map(|a| (l, a)))
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    for (leg, assign) in detect(ctx) {
        let states = assign
            .iter()
            .map(|((m, pin), s)| {
                format!(
                    "`{}.{pin}` {}",
                    ref_of(ctx, *m),
                    match s {
                        crate::analysis::states::PinState::High => "high",
                        crate::analysis::states::PinState::Low => "low",
                        crate::analysis::states::PinState::HiZ => "open",
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
                "`{}` and `{}` both conduct with {states}: `{}` shorts to `{}` through the leg at `{}`",
                hp.reference,
                lp.reference,
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

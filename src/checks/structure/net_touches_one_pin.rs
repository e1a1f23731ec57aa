use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};
use crate::model::NetKind;
use crate::suggest;

pub static META: RuleMeta = RuleMeta {
    id: "net-touches-one-pin",
    family: "structure",
    severity: Severity::Warning,
    summary: "a net touches only one pin (often a typo of another net's name)",
    hazard: false,
    docs: r#"## What it checks
Every signal net connects at least two pins. Rails and grounds are exempt
(a rail may feed a single part); so are controller and connector pins,
which may be spare.

## Why it matters
A net with one pin is almost always a misspelt name (`FAN_GATE` on one line,
`FAN_G` on the other): the connection that was meant does not exist, and a
gate or a load end is left open.

## How it is computed
The pins on each net are counted; the closest existing net name is
suggested.

## Example
```
resistor R1 (FAN_PWM, FAN_GATE) 100
nmos Q1 (d: FAN_SW, g: FAN_G, s: GND) part=DEMO-N60-3A
```
Fixed:
```
resistor R1 (FAN_PWM, FAN_G) 100
```

## Fix
Use the same net name on both lines, or connect the pin that was meant.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub struct Lonely {
    pub net: usize,
    pub part: usize,
    pub suggestion: Option<String>,
}

pub fn detect(ctx: &Ctx) -> Vec<Lonely> {
    let c = ctx.circuit;
    let lonely: Vec<(usize, usize)> = c
        .nets
        .iter()
        .enumerate()
        .filter(|(_, n)| n.kind == NetKind::Signal && n.conns.len() == 1)
        .filter_map(|(i, n)| {
            let (pid, _) = n.conns[0];
            let p = c.part(pid);
            (!matches!(
                p.kind,
                crate::model::Kind::Mcu | crate::model::Kind::Connector
            ))
            .then_some((i, pid))
        })
        .collect();
    if lonely.is_empty() {
        return Vec::new();
    }
    // candidates for a suggestion: the nets that are connected
    let index = suggest::Index::new(
        c.nets
            .iter()
            .filter(|m| m.conns.len() > 1 || m.kind != NetKind::Signal)
            .map(|m| m.name.as_str()),
    );
    lonely
        .into_iter()
        .map(|(i, pid)| {
            let n = c.net(i);
            let suggestion = index.closest(&n.name).map(str::to_string);
            Lonely {
                net: i,
                part: pid,
                suggestion,
            }
        })
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|l| {
            let c = ctx.circuit;
            let n = c.net(l.net);
            let p = c.part(l.part);
            let pin_span = p
                .pins
                .iter()
                .find(|x| x.net == l.net)
                .map(|x| x.span)
                .unwrap_or(n.span);
            finding(
                &META,
                ctx,
                pin_span,
                format!("net `{}` connects only to `{}`", n.name, p.reference),
            )
            .label("the only pin on this net")
            .help(match &l.suggestion {
                Some(s) => format!("did you mean `{s}`?"),
                None => "connect the net to the part it should reach".to_string(),
            })
            .parts([p.reference.clone()])
        })
        .collect()
}

use crate::checks::{Ctx, Rule, RuleMeta};
use crate::finding::{Finding, Severity};
use crate::model::NetKind;

pub static META: RuleMeta = RuleMeta {
    id: "rail-unused",
    family: "supply",
    severity: Severity::Warning,
    summary: "a declared rail is used by no part (often the other half of a misspelt name)",
    hazard: false,
    docs: r#"## What it checks
Every `rail` statement's net is on at least one part's pin.

## Why it matters
A rail nobody uses is almost always a misspelling: `rail VBATT …` while
the parts say `VBAT`. The parts' net is then no rail at all — nothing
powers the loads on it, and every check of them passes for want of a
current. (`load-unpowered` reports the loads.)

## How it is computed
The pins on each rail net are counted; the closest net name that parts
do use is suggested.

## Example
```
rail VBATT 12V max 14.4V
motor M1 (+: VBAT, -: SW) part=DEMO-FAN-12V
```
Fixed:
```
rail VBAT 12V max 14.4V
```

## Fix
Use one spelling for the rail in its `rail` statement and on the parts.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub fn detect(ctx: &Ctx) -> Vec<usize> {
    ctx.circuit
        .nets
        .iter()
        .enumerate()
        .filter(|(_, n)| matches!(n.kind, NetKind::Rail(_)) && n.conns.is_empty())
        .map(|(i, _)| i)
        .collect()
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    let c = ctx.circuit;
    let found = detect(ctx);
    if found.is_empty() {
        return Vec::new();
    }
    let used = crate::suggest::Index::new(
        c.nets
            .iter()
            .filter(|n| !n.conns.is_empty())
            .map(|n| n.name.as_str()),
    );
    found
        .into_iter()
        .map(|i| {
            let n = c.net(i);
            let hint = crate::suggest::did_you_mean_in(&n.name, &used);
            let f = crate::checks::finding(
                &META,
                ctx,
                n.span,
                format!("rail `{}` is declared but no part is on it", n.name),
            )
            .label("no part uses this rail");
            if hint.is_empty() {
                f.help("connect the parts it should feed, or remove the rail")
            } else {
                f.help(format!(
                    "{hint} — the parts' net of that name is then no rail"
                ))
            }
        })
        .collect()
}

use crate::checks::{Ctx, Rule, RuleMeta, finding};
use crate::finding::{Finding, Severity};
use crate::suggest;

pub static META: RuleMeta = RuleMeta {
    id: "part-not-in-library",
    family: "structure",
    severity: Severity::Error,
    summary: "`part=` names no part in the loaded libraries",
    hazard: false,
    docs: r#"## What it checks
Every `part=NAME` on a netlist line names a part of one of the loaded parts
libraries (the netlist's `library` lines, `--library` files and the
project configuration's `libraries`).

## Why it matters
A part without ratings cannot be checked: its switch current, blocking
voltage and thermal limits are unknown, so every physics rule that needs
them stays silent about it. A typo in a part name hides real faults.

## How it is computed
The name is looked up, as written (case-sensitive), in every loaded
library in order. The closest known name is suggested.

## Example
```
library "parts/demo.yaml"
nmos Q1 (d: SW, g: G, s: GND) part=DEMO-N60-3B   # the library has DEMO-N60-3A
```
Fixed:
```
nmos Q1 (d: SW, g: G, s: GND) part=DEMO-N60-3A
```

## Fix
Correct the name, add the part to a library, or load the library that has
it with a `library` line or `--library`.
"#,
};

pub const RULE: Rule = Rule { meta: &META, check };

pub struct Unknown<'a> {
    pub part: usize,
    pub name: &'a str,
    pub span: crate::source::Span,
    pub suggestion: Option<String>,
}

pub fn detect<'a>(ctx: &'a Ctx) -> Vec<Unknown<'a>> {
    let c = ctx.circuit;
    let mut out = Vec::new();
    let mut index: Option<suggest::Index> = None;
    for (i, p) in c.parts.iter().enumerate() {
        if let Some((name, span)) = p.part_not_in_library.as_deref() {
            let index = index.get_or_insert_with(|| {
                suggest::Index::new(ctx.settings.known_part_names.iter().map(|s| s.as_str()))
            });
            let suggestion = index.closest(name).map(str::to_string);
            out.push(Unknown {
                part: i,
                name,
                span: *span,
                suggestion,
            });
        }
    }
    out
}

fn check(ctx: &Ctx) -> Vec<Finding> {
    detect(ctx)
        .into_iter()
        .map(|u| {
            let p = ctx.circuit.part(u.part);
            let help = match u.suggestion.as_deref() {
                Some(s) => format!("did you mean `{s}`?"),
                None if ctx.settings.known_part_names.is_empty() => {
                    "no library is loaded: add `library \"parts.yaml\"` or pass `--library FILE`"
                        .to_string()
                }
                None => "add the part to a library, or load the library that has it".to_string(),
            };
            finding(
                &META,
                ctx,
                u.span,
                format!(
                    "`{}` names part `{}`, which no loaded library has",
                    p.reference, u.name
                ),
            )
            .label("unknown part")
            .help(help)
            .parts([p.reference.clone()])
        })
        .collect()
}

//! Team rules in YAML: loading (all errors of a file at once, located in
//! the YAML), type and unit checking, and evaluation over the facts of
//! the analysis and the parts' ratings.

pub mod expr;
pub mod glob;

use crate::analysis::Analysis;
use crate::finding::{Finding, Severity};
use crate::model::{Circuit, Kind, ParamValue, Part};
use crate::settings::Settings;
use crate::source::{SourceFile, Span};
use crate::units::Dimension;
use crate::yaml;
use expr::{Dim, Env, EvalError, Expr, Scope, Ty, Val};
use serde_yaml::Value;
use std::sync::Arc;

/// The computed quantities team rules may name, with their dimensions.
pub const FACTS: &[(&str, Dimension, &str)] = &[
    (
        "i_on",
        Dimension::Current,
        "switches: worst-case current while on (stall of its load)",
    ),
    (
        "i_cont",
        Dimension::Current,
        "switches and loads: continuous current (i_rated, else stall)",
    ),
    ("i_stall", Dimension::Current, "loads: stall current"),
    (
        "i_ripple",
        Dimension::Current,
        "loads: peak-to-peak PWM ripple",
    ),
    (
        "i_fw",
        Dimension::Current,
        "diodes: freewheel current they carry",
    ),
    (
        "i_fw_peak",
        Dimension::Current,
        "diodes: freewheel current at the first turn-off (stall)",
    ),
    (
        "i_mean",
        Dimension::Current,
        "loads: mean current at the largest duty, stalled",
    ),
    (
        "i_avg",
        Dimension::Current,
        "diodes: average freewheel current over the off-time",
    ),
    (
        "i_b",
        Dimension::Current,
        "bipolar switches: lowest base current while on",
    ),
    (
        "v_peak",
        Dimension::Voltage,
        "switches: peak blocking voltage at turn-off, clamp included",
    ),
    (
        "v_clamp",
        Dimension::Voltage,
        "switches: voltage of the freewheel loop at turn-off",
    ),
    (
        "v_gs_on",
        Dimension::Voltage,
        "switches: gate-source (base-emitter) drive in the on state",
    ),
    (
        "v_rev",
        Dimension::Voltage,
        "diodes: worst DC reverse voltage",
    ),
    (
        "p_loss",
        Dimension::Power,
        "switches: dissipation at the junction temperature",
    ),
    (
        "tj",
        Dimension::Temperature,
        "switches: junction temperature",
    ),
    (
        "f_pwm",
        Dimension::Frequency,
        "switches, loads, diodes: PWM frequency (0 Hz if static)",
    ),
    ("duty_max", Dimension::Number, "switches: largest on-duty"),
    (
        "t_decay",
        Dimension::Time,
        "switches: time for the load current to fall to zero at turn-off",
    ),
    (
        "e_clamp",
        Dimension::Energy,
        "switches: energy into the clamp at turn-off",
    ),
    (
        "ambient",
        Dimension::Temperature,
        "the design's ambient temperature",
    ),
];

#[derive(Clone, Debug)]
pub enum Piece {
    Lit(String),
    Expr(Expr, String),
}

#[derive(Clone, Debug)]
pub struct TeamRule {
    pub id: String,
    pub severity: Severity,
    pub kinds: Vec<Kind>,
    /// The `parts:` pattern, compiled.
    pub parts: Option<glob::Glob>,
    pub when: Option<(Expr, String)>,
    pub require: (Expr, String),
    pub message: Vec<Piece>,
    pub help: Option<Vec<Piece>>,
    pub file: Arc<SourceFile>,
    /// The `id:` line of the rule.
    pub span: Span,
}

impl TeamRule {
    pub fn summary(&self) -> String {
        format!("requires `{}`", self.require.1)
    }
}

struct RuleScope<'a> {
    kinds: &'a [Kind],
}

impl Scope for RuleScope<'_> {
    fn name(&self, n: &str) -> Result<Ty, String> {
        match n {
            "ref" | "kind" | "part" => return Ok(Ty::Str),
            _ => {}
        }
        for k in self.kinds {
            if let Some(def) = k.key(n) {
                return Ok(match def.ty {
                    crate::model::KeyType::Q(d) => Ty::Q(Dim::of(d)),
                    crate::model::KeyType::DeltaT => Ty::Q(Dim::of(Dimension::Temperature)),
                    crate::model::KeyType::Word => Ty::Str,
                });
            }
        }
        if let Some((_, d, _)) = FACTS.iter().find(|(f, _, _)| *f == n) {
            return Ok(Ty::Q(Dim::of(*d)));
        }
        let mut known: Vec<&str> = self
            .kinds
            .iter()
            .flat_map(|k| k.keys().iter().map(|d| d.name))
            .collect();
        known.extend(FACTS.iter().map(|f| f.0));
        known.extend(["ref", "kind", "part"]);
        let hint = crate::suggest::did_you_mean(n, known.iter().copied());
        Err(format!(
            "unknown name `{n}` for {}{}",
            self.kinds
                .iter()
                .map(|k| k.name())
                .collect::<Vec<_>>()
                .join("/"),
            if hint.is_empty() {
                String::new()
            } else {
                format!("; {hint}")
            }
        ))
    }
    fn pin(&self, p: &str) -> bool {
        self.kinds.iter().any(|k| match k.pins() {
            crate::model::kinds::PinSpec::Fixed(l) => l.iter().any(|(n, _)| *n == p),
            crate::model::kinds::PinSpec::Any => true,
        })
    }
    fn key(&self, k: &str) -> bool {
        self.kinds.iter().any(|x| x.key(k).is_some()) || FACTS.iter().any(|f| f.0 == k)
    }
}

const CODE: &str = "rules-error";

/// Load and check a rule file: every error of the file, or the rules.
pub fn load(file: &Arc<SourceFile>) -> Result<Vec<TeamRule>, Vec<Finding>> {
    let doc = yaml::parse(file, CODE).map_err(|e| vec![e])?;
    let mut errors = Vec::new();
    let mut out = Vec::new();
    let e = |span: Span, msg: String| Finding::input(CODE, file, span, msg);
    let Value::Mapping(root) = &doc.root else {
        return Err(vec![Finding::input(
            CODE,
            &yaml::unquoted(file),
            Span::new(0, 0),
            format!(
                "`{}` is not a rule file (a mapping with a `rules` list)",
                file.name
            ),
        )]);
    };
    // some other file: not quoted
    if !root.contains_key("rules") {
        return Err(vec![Finding::input(
            CODE,
            &yaml::unquoted(file),
            Span::new(0, 0),
            format!("`{}` is not a rule file: it has no `rules` list", file.name),
        )]);
    }
    for (k, _) in root {
        let k = yaml::scalar_text(k).unwrap_or_default();
        if k != "rules" {
            errors.push(e(
                doc.key_span(&yaml::child("", &k)),
                format!("unknown key `{k}` in a rule file (the only key is `rules`)"),
            ));
        }
    }
    let Some(Value::Sequence(list)) = root.get("rules") else {
        errors.push(e(
            doc.key_span("rules"),
            "`rules` must be a list of rules".into(),
        ));
        return Err(errors);
    };
    let mut ids: Vec<String> = Vec::new();
    for (i, item) in list.iter().enumerate() {
        let path = yaml::child("rules", &i.to_string());
        let Value::Mapping(m) = item else {
            errors.push(e(
                doc.key_span(&path),
                format!("rule {} must be a mapping", i + 1),
            ));
            continue;
        };
        let field = |key: &str| m.get(key).and_then(yaml::scalar_text);
        let kspan = |key: &str| doc.key_span(&yaml::child(&path, key));
        let vspan = |key: &str| doc.value_span(&yaml::child(&path, key));
        for (k, _) in m {
            let k = yaml::scalar_text(k).unwrap_or_default();
            const KEYS: &[&str] = &[
                "id", "severity", "kinds", "parts", "when", "require", "message", "help",
            ];
            if !KEYS.contains(&k.as_str()) {
                let hint = crate::suggest::did_you_mean(&k, KEYS.iter().copied());
                errors.push(e(
                    kspan(&k),
                    format!(
                        "unknown key `{k}` in a rule{}",
                        if hint.is_empty() {
                            String::new()
                        } else {
                            format!("; {hint}")
                        }
                    ),
                ));
            }
        }
        let id = field("id").unwrap_or_default();
        if id.is_empty() {
            errors.push(e(doc.key_span(&path), "a rule needs an `id`".into()));
        } else if !id.contains('/') {
            errors.push(e(
                vspan("id"),
                format!("team rule id `{id}` must contain a `/` (like `team/{id}`)"),
            ));
        } else if ids.contains(&id) {
            errors.push(e(vspan("id"), format!("rule id `{id}` is used twice")));
        }
        ids.push(id.clone());
        let severity = match field("severity") {
            None => Severity::Error,
            Some(s) => match Severity::parse(&s) {
                Some(s) => s,
                None => {
                    errors.push(e(
                        vspan("severity"),
                        format!("severity `{s}` is not error, warning or info"),
                    ));
                    Severity::Error
                }
            },
        };
        let mut kinds = Vec::new();
        match m.get("kinds") {
            Some(Value::Sequence(ks)) => {
                for k in ks {
                    let name = yaml::scalar_text(k).unwrap_or_default();
                    match Kind::from_name(&name) {
                        Some(k) => kinds.push(k),
                        None => errors.push(e(vspan("kinds"), format!("unknown kind `{name}`"))),
                    }
                }
            }
            Some(Value::String(s)) => match Kind::from_name(s) {
                Some(k) => kinds.push(k),
                None => errors.push(e(vspan("kinds"), format!("unknown kind `{s}`"))),
            },
            _ => errors.push(e(
                doc.key_span(&path),
                "a rule needs `kinds`, a list of part kinds".into(),
            )),
        }
        let scope = RuleScope { kinds: &kinds };
        let mut expr_of = |key: &str, want_bool: bool| -> Option<(Expr, String)> {
            let text = field(key)?;
            let base = value_offset(file, vspan(key));
            match expr::parse(&text).and_then(|x| expr::check(&x, &scope).map(|t| (x, t))) {
                Ok((x, t)) => {
                    if want_bool && t != Ty::Bool {
                        errors.push(e(
                            vspan(key),
                            format!("`{key}` must be a condition (true or false), found {t}"),
                        ));
                        return None;
                    }
                    Some((x, text))
                }
                Err(er) => {
                    let span = Span::new(
                        base + er.span.start(),
                        base + er.span.end().max(er.span.start() + 1),
                    );
                    let span = if span.end() <= file.text.len() {
                        span
                    } else {
                        vspan(key)
                    };
                    errors.push(e(span, format!("in `{key}`: {}", er.message)).label("here"));
                    None
                }
            }
        };
        let when = expr_of("when", true);
        let require = expr_of("require", true);
        if field("require").is_none() {
            errors.push(e(
                doc.key_span(&path),
                "a rule needs a `require` condition".into(),
            ));
        }
        let mut template = |key: &str| -> Option<Vec<Piece>> {
            let text = field(key)?;
            match parse_template(&text, &scope) {
                Ok(p) => Some(p),
                Err(m) => {
                    errors.push(e(vspan(key), format!("in `{key}`: {m}")));
                    None
                }
            }
        };
        let message = template("message");
        let help = template("help");
        if field("message").is_none() {
            errors.push(e(doc.key_span(&path), "a rule needs a `message`".into()));
        }
        if let (Some(require), Some(message)) = (require, message) {
            out.push(TeamRule {
                id,
                severity,
                kinds,
                parts: field("parts").map(|g| glob::Glob::new(&g)),
                when,
                require,
                message,
                help,
                file: file.clone(),
                span: kspan("id"),
            });
        }
    }
    if errors.is_empty() {
        Ok(out)
    } else {
        Err(errors)
    }
}

/// Where the text of a scalar starts: after its opening quote.
fn value_offset(file: &SourceFile, span: Span) -> usize {
    let s = file.slice(span);
    if s.starts_with('"') || s.starts_with('\'') {
        span.start() + 1
    } else {
        span.start()
    }
}

fn parse_template(text: &str, scope: &dyn Scope) -> Result<Vec<Piece>, String> {
    let mut out = Vec::new();
    let mut rest = text;
    while let Some(i) = rest.find('{') {
        if i > 0 {
            out.push(Piece::Lit(rest[..i].to_string()));
        }
        let after = &rest[i + 1..];
        let Some(j) = after.find('}') else {
            return Err("unclosed `{`".into());
        };
        let src = &after[..j];
        let x = expr::parse(src).map_err(|e| format!("`{{{src}}}`: {}", e.message))?;
        expr::check(&x, scope).map_err(|e| format!("`{{{src}}}`: {}", e.message))?;
        out.push(Piece::Expr(x, src.to_string()));
        rest = &after[j + 1..];
    }
    if !rest.is_empty() {
        out.push(Piece::Lit(rest.to_string()));
    }
    Ok(out)
}

struct PartEnv<'a> {
    a: &'a Analysis,
    s: &'a Settings,
    pid: usize,
    p: &'a Part,
}

impl Env for PartEnv<'_> {
    fn name(&self, n: &str) -> Result<Val, EvalError> {
        match n {
            "ref" => return Ok(Val::Str(self.p.reference.clone())),
            "kind" => return Ok(Val::Str(self.p.kind.name().into())),
            "part" => {
                return Ok(Val::Str(
                    self.p.part_name.as_deref().unwrap_or_default().to_string(),
                ));
            }
            "ambient" => return Ok(Val::Q(self.s.ambient, Dim::of(Dimension::Temperature))),
            _ => {}
        }
        if let Some(def) = self.p.kind.key(n) {
            return match self.p.get(n).map(|x| &x.value) {
                Some(ParamValue::Num(v)) => Ok(Val::Q(
                    *v,
                    Dim::of(match def.ty {
                        crate::model::KeyType::Q(d) => d,
                        _ => Dimension::Temperature,
                    }),
                )),
                Some(ParamValue::Word(w)) => Ok(Val::Str(w.clone())),
                None => Err(EvalError::Missing(n.into())),
            };
        }
        if let Some((_, d, _)) = FACTS.iter().find(|f| f.0 == n) {
            return match self.a.facts.value(self.pid, n) {
                Some(v) => Ok(Val::Q(v, Dim::of(*d))),
                None => Err(EvalError::Missing(n.into())),
            };
        }
        Err(EvalError::Missing(n.into()))
    }
    fn v_pin(&self, pin: &str, max: bool) -> Result<f64, EvalError> {
        let what = || EvalError::Missing(format!("v_{}({pin})", if max { "max" } else { "min" }));
        let net = self.p.net_of(pin).ok_or_else(what)?;
        let v = if max {
            self.a.net_vmax.get(net)
        } else {
            self.a.net_vmin.get(net)
        };
        v.copied().flatten().ok_or_else(what)
    }
    fn has(&self, key: &str) -> bool {
        self.p.get(key).is_some() || self.a.facts.value(self.pid, key).is_some()
    }
}

fn render(pieces: &[Piece], env: &dyn Env) -> String {
    pieces
        .iter()
        .map(|p| match p {
            Piece::Lit(s) => s.clone(),
            Piece::Expr(x, src) => match expr::eval(x, env).and_then(expr::finite) {
                Ok(v) => v.show(),
                Err(_) => format!("{{{src}: n/a}}"),
            },
        })
        .collect()
}

/// Evaluate team rules over a circuit.
pub fn run(rules: &[Arc<TeamRule>], c: &Circuit, a: &Analysis, s: &Settings) -> Vec<Finding> {
    use rayon::prelude::*;
    // Rules are independent: evaluate them side by side, findings kept in
    // the rules' order.
    let per_rule: Vec<Vec<Finding>> = rules.par_iter().map(|r| run_rule(r, c, a, s)).collect();
    per_rule.into_iter().flatten().collect()
}

fn run_rule(r: &TeamRule, c: &Circuit, a: &Analysis, s: &Settings) -> Vec<Finding> {
    let mut out = Vec::new();
    let Some(sev) = s.severity_of(&r.id, r.severity) else {
        return out;
    };
    let mut matched: std::collections::HashMap<&str, bool> = std::collections::HashMap::new();
    for (pid, p) in c.parts.iter().enumerate() {
        if !r.kinds.contains(&p.kind) {
            continue;
        }
        if let Some(g) = &r.parts {
            // boards repeat part names: each distinct name is matched once
            let name = p.part_name.as_deref().unwrap_or("");
            let hit = *matched.entry(name).or_insert_with(|| g.matches(name));
            if !hit {
                continue;
            }
        }
        let env = PartEnv { a, s, pid, p };
        let line = crate::checks::common::line_span_of(c, p);
        let cannot = |why: String| -> Finding {
            Finding::new(
                r.id.clone(),
                Severity::Warning,
                &c.file,
                line,
                format!("`{}` {why}: {} cannot be checked", p.reference, r.id),
            )
            .label("not checked")
            .related_in(&r.file, r.span, "rule defined here")
            .parts([p.reference.clone()])
            .help("add the missing value to the part's line or to its library entry")
        };
        let describe = |e: EvalError| match e {
            EvalError::Missing(n) => {
                let why = c.circuit_missing_reason(a, pid, &n);
                format!("has no `{n}`{why}")
            }
            EvalError::Math(m) => format!("gives {m}"),
        };
        if let Some((w, _)) = &r.when {
            match expr::eval(w, &env).and_then(expr::finite) {
                Ok(Val::Bool(true)) => {}
                Ok(_) => continue,
                Err(e) => {
                    out.push(cannot(describe(e)));
                    continue;
                }
            }
        }
        match expr::eval(&r.require.0, &env).and_then(expr::finite) {
            Ok(Val::Bool(true)) => {}
            Ok(_) => {
                let mut f =
                    Finding::new(r.id.clone(), sev, &c.file, line, render(&r.message, &env))
                        .label(format!("fails `{}`", r.require.1))
                        .related_in(&r.file, r.span, "rule defined here")
                        .parts([p.reference.clone()]);
                if let Some(h) = &r.help {
                    f = f.help(render(h, &env));
                }
                out.push(f);
            }
            Err(e) => out.push(cannot(describe(e))),
        }
    }
    out
}

impl Circuit {
    /// Why a fact is absent, for "cannot be checked" messages.
    fn circuit_missing_reason(&self, a: &Analysis, pid: usize, name: &str) -> String {
        match a.facts.why_missing(pid, name) {
            Some(r) => format!(" ({r})"),
            None => String::new(),
        }
    }
}

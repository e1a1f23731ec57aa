//! `armature.yaml`: found by walking up from a checked file's folder (the
//! nearest wins, no merging), or given with `--config`. Paths inside it
//! are relative to it. Unknown keys are errors with line and column.

use crate::finding::{Finding, Severity};
use crate::settings::{Level, Settings};
use crate::source::{SourceFile, Span};
use crate::units;
use crate::yaml;
use serde_yaml::Value;
use std::path::{Path, PathBuf};
use std::sync::Arc;

pub const FILE_NAME: &str = "armature.yaml";
const CODE: &str = "config-error";

#[derive(Clone, Debug)]
pub struct Config {
    pub file: Arc<SourceFile>,
    pub libraries: Vec<PathBuf>,
    pub rules: Vec<PathBuf>,
    pub settings: Settings,
    /// The file has a `spice:` mapping (read when a SPICE netlist is
    /// checked).
    pub spice: bool,
}

/// The nearest `armature.yaml` at or above a folder, no higher than the
/// project root (a configuration above the repository, say in a shared
/// temporary folder, is never picked up).
pub fn discover(start: &Path, root: Option<&crate::trust::Root>) -> Option<PathBuf> {
    let abs = std::fs::canonicalize(start).unwrap_or_else(|_| start.to_path_buf());
    discover_from(&abs, root)
}

/// `discover` from a folder already canonical.
pub fn discover_from(abs: &Path, root: Option<&crate::trust::Root>) -> Option<PathBuf> {
    let mut dir = Some(abs);
    while let Some(d) = dir {
        if root.is_some_and(|r| !d.starts_with(&r.dir)) {
            return None;
        }
        let c = d.join(FILE_NAME);
        if c.is_file() {
            return Some(c);
        }
        dir = d.parent();
    }
    None
}

const KEYS: &[&str] = &[
    "libraries",
    "rules",
    "severity",
    "derating",
    "ambient",
    "fail-on",
    "spice",
];
const DERATING_KEYS: &[&str] = &["voltage", "current", "power", "gate_voltage", "tj_margin"];

pub fn load(path: &Path, root: Option<&crate::trust::Root>) -> Result<Config, Vec<Finding>> {
    let shown = crate::shown_path(path);
    let file = crate::model::library::read_text(path, &shown).map_err(|f| vec![f])?;
    parse(&file, root)
}

pub fn parse(
    file: &Arc<SourceFile>,
    trust: Option<&crate::trust::Root>,
) -> Result<Config, Vec<Finding>> {
    let doc = yaml::parse(file, CODE).map_err(|e| vec![e])?;
    let base = file
        .path
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let mut errors = Vec::new();
    let mut cfg = Config {
        file: file.clone(),
        libraries: Vec::new(),
        rules: Vec::new(),
        settings: Settings::default(),
        spice: false,
    };
    let e = |span, msg: String| Finding::input(CODE, file, span, msg);
    let root = match &doc.root {
        Value::Mapping(m) => m.clone(),
        Value::Null => return Ok(cfg),
        other => {
            return Err(vec![Finding::input(
                CODE,
                &yaml::unquoted(file),
                Span::new(0, 0),
                format!(
                    "`{}` is not a configuration (a mapping): found {}",
                    file.name,
                    yaml::describe(other)
                ),
            )]);
        }
    };
    // a mapping with none of the keys is some other file: not quoted
    if !root
        .keys()
        .any(|k| yaml::scalar_text(k).is_some_and(|k| KEYS.contains(&k.as_str())))
    {
        return Err(vec![Finding::input(
            CODE,
            &yaml::unquoted(file),
            Span::new(0, 0),
            format!(
                "`{}` is not an armature configuration: none of its keys is one",
                file.name
            ),
        )]);
    }
    let paths = |key: &str, v: &Value, errors: &mut Vec<Finding>| -> Vec<PathBuf> {
        match v {
            Value::Sequence(s) => s
                .iter()
                .enumerate()
                .filter_map(|(i, x)| match yaml::scalar_text(x) {
                    Some(t) => {
                        let p = base.join(&t);
                        match trust.map(|r| r.check(&p)) {
                            Some(Err(why)) => {
                                errors.push(
                                    e(doc.value_span(&yaml::child(key, &i.to_string())), format!("`{t}` is not read: {why}"))
                                        .help("keep the project's files inside it, or pass `--allow-outside-root` to trust this one"),
                                );
                                None
                            }
                            _ => Some(p),
                        }
                    }
                    None => {
                        errors.push(e(doc.value_span(key), format!("`{key}` lists file paths")));
                        None
                    }
                })
                .collect(),
            Value::String(s) => {
                let p = base.join(s);
                match trust.map(|r| r.check(&p)) {
                    Some(Err(why)) => {
                        errors.push(e(doc.value_span(key), format!("`{s}` is not read: {why}")));
                        Vec::new()
                    }
                    _ => vec![p],
                }
            }
            _ => {
                errors.push(e(
                    doc.value_span(key),
                    format!("`{key}` must be a list of file paths"),
                ));
                Vec::new()
            }
        }
    };
    for (k, v) in &root {
        let key = yaml::scalar_text(k).unwrap_or_default();
        match key.as_str() {
            "spice" => cfg.spice = true,
            "libraries" => cfg.libraries = paths("libraries", v, &mut errors),
            "rules" => cfg.rules = paths("rules", v, &mut errors),
            "severity" => {
                let Value::Mapping(m) = v else {
                    errors.push(e(
                        doc.value_span("severity"),
                        "`severity` maps rule ids to error, warning, info or off".into(),
                    ));
                    continue;
                };
                for (rk, rv) in m {
                    let id = yaml::scalar_text(rk).unwrap_or_default();
                    let p = yaml::child("severity", &id);
                    if !id.contains('/') && crate::checks::find(&id).is_none() {
                        let hint = crate::checks::suggest_rule(&id);
                        errors.push(e(
                            doc.key_span(&p),
                            format!(
                                "unknown rule `{id}`{}",
                                if hint.is_empty() {
                                    String::new()
                                } else {
                                    format!("; {hint}")
                                }
                            ),
                        ));
                        continue;
                    }
                    let level = yaml::scalar_text(rv).unwrap_or_default();
                    let l = match level.as_str() {
                        "off" => Level::Off,
                        s => match Severity::parse(s) {
                            Some(s) => Level::On(s),
                            None => {
                                errors.push(e(
                                    doc.value_span(&p),
                                    format!("`{level}` is not error, warning, info or off"),
                                ));
                                continue;
                            }
                        },
                    };
                    cfg.settings.overrides.insert(id, l);
                }
            }
            "derating" => {
                let Value::Mapping(m) = v else {
                    errors.push(e(
                        doc.value_span("derating"),
                        "`derating` is a mapping".into(),
                    ));
                    continue;
                };
                for (dk, dv) in m {
                    let name = yaml::scalar_text(dk).unwrap_or_default();
                    let p = yaml::child("derating", &name);
                    let text = match yaml::quantity_text(&doc, &p, dv) {
                        Ok(t) => t.unwrap_or_default(),
                        Err(msg) => {
                            errors.push(e(doc.value_span(&p), format!("`{name}`: {msg}")));
                            continue;
                        }
                    };
                    if !DERATING_KEYS.contains(&name.as_str()) {
                        let hint =
                            crate::suggest::did_you_mean(&name, DERATING_KEYS.iter().copied());
                        errors.push(e(
                            doc.key_span(&p),
                            format!(
                                "unknown derating key `{name}`{}",
                                if hint.is_empty() {
                                    String::new()
                                } else {
                                    format!("; {hint}")
                                }
                            ),
                        ));
                        continue;
                    }
                    if name == "tj_margin" {
                        match units::parse_delta_temperature(&text) {
                            Ok(q) if q.value >= 0.0 => cfg.settings.derating.tj_margin = q.value,
                            Ok(_) => errors.push(e(
                                doc.value_span(&p),
                                "`tj_margin` must not be negative".into(),
                            )),
                            Err(er) => {
                                errors.push(e(doc.value_span(&p), format!("`tj_margin`: {er}")))
                            }
                        }
                        continue;
                    }
                    match units::parse_as(&text, units::Dimension::Number) {
                        Ok(q) if q.value > 0.0 && q.value <= 1.0 => {
                            let d = &mut cfg.settings.derating;
                            match name.as_str() {
                                "voltage" => d.voltage = q.value,
                                "current" => d.current = q.value,
                                "power" => d.power = q.value,
                                _ => d.gate_voltage = q.value,
                            }
                        }
                        Ok(_) => errors.push(e(
                            doc.value_span(&p),
                            format!("`{name}` is a fraction of a rating, above 0 and at most 1"),
                        )),
                        Err(er) => errors.push(e(doc.value_span(&p), format!("`{name}`: {er}"))),
                    }
                }
            }
            "ambient" => match yaml::quantity_text(&doc, "ambient", v).and_then(|t| {
                units::parse_as(&t.unwrap_or_default(), units::Dimension::Temperature)
                    .map_err(|er| er.to_string())
            }) {
                Ok(q) => cfg.settings.ambient = q.value,
                Err(er) => errors.push(e(doc.value_span("ambient"), format!("`ambient`: {er}"))),
            },
            "fail-on" => match yaml::scalar_text(v).as_deref() {
                Some("error") => cfg.settings.fail_on = Severity::Error,
                Some("warning") => cfg.settings.fail_on = Severity::Warning,
                _ => errors.push(e(
                    doc.value_span("fail-on"),
                    "`fail-on` is error or warning".into(),
                )),
            },
            _ => errors.push(yaml::unknown_key(
                CODE,
                file,
                doc.key_span(&yaml::child("", &key)),
                &key,
                FILE_NAME,
                KEYS,
            )),
        }
    }
    if errors.is_empty() {
        Ok(cfg)
    } else {
        Err(errors)
    }
}

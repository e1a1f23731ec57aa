//! The mapping: what a SPICE netlist does not say (which model is which
//! rated part, which nets are rails, which elements form a motor, how the
//! controller drives its pins), read from YAML — `spice:` in
//! `armature.yaml`, or a file of its own given with `--map`.

use super::MAPPING_ERROR as CODE;
use crate::fasthash::FastMap as HashMap;
use crate::finding::Finding;
use crate::model::kinds::Kind;
use crate::source::{SourceFile, Span};
use crate::yaml;
use serde_yaml::Value;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Where a mapping is: a YAML file and the key under which it sits
/// (`spice` in a configuration, the top level in a `--map` file).
#[derive(Clone, Debug)]
pub struct MapSource {
    pub path: PathBuf,
    pub prefix: String,
}

/// A value as written in the YAML, with where.
#[derive(Clone, Debug)]
pub struct Val {
    pub text: String,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct RailMap {
    pub net: String,
    pub nominal: Option<Val>,
    pub max: Option<Val>,
    pub min: Option<Val>,
    pub tol: Option<Val>,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct InstanceMap {
    pub name: String,
    pub kind: Kind,
    pub part: Option<Val>,
    pub pins: Vec<String>,
    /// Other keys: parameters of the part (`io_v`, `v_max`, …).
    pub params: Vec<(String, Val)>,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct LoadMap {
    pub name: String,
    pub kind: Kind,
    pub elements: Vec<String>,
    pub part: Option<Val>,
    pub params: Vec<(String, Val)>,
    pub span: Span,
}

#[derive(Clone, Debug, Default)]
pub struct Mapping {
    /// The YAML file (none: the defaults).
    pub file: Option<Arc<SourceFile>>,
    pub libraries: Vec<(PathBuf, Span)>,
    /// Ground net names (lower case).
    pub ground: Vec<String>,
    pub rails: Vec<RailMap>,
    /// lower-case model or subcircuit name → library part
    pub models: HashMap<String, Val>,
    /// lower-case designator → instance
    pub instances: HashMap<String, InstanceMap>,
    pub loads: Vec<LoadMap>,
    pub drive: Vec<Val>,
    /// The exporter put the SPICE letter before references that did not
    /// start with it (`MQ1` for `Q1`): report `Q1`.
    pub strip_letter: bool,
    /// The ambient temperature of the board (`ambient` of `.drive`).
    pub ambient: Option<Val>,
    /// Part names of the loaded libraries (for did-you-mean).
    pub known_parts: Vec<String>,
}

const KEYS: &[&str] = &[
    "libraries",
    "ground",
    "rails",
    "models",
    "instances",
    "loads",
    "drive",
    "strip_letter",
    "ambient",
];
const RAIL_KEYS: &[&str] = &["nominal", "max", "min", "tol"];

impl Mapping {
    /// The defaults: grounds `0` and `GND`, nothing else.
    pub fn defaults() -> Mapping {
        Mapping {
            ground: vec!["0".into(), "gnd".into()],
            ..Mapping::default()
        }
    }

    pub fn is_ground(&self, net: &str) -> bool {
        self.ground.iter().any(|g| g.eq_ignore_ascii_case(net))
    }

    pub fn instance(&self, name: &str) -> Option<&InstanceMap> {
        if self.instances.is_empty() {
            return None;
        }
        self.instances.get(&name.to_ascii_lowercase()).or_else(|| {
            if !self.strip_letter {
                return None;
            }
            self.instances.get(&self.shown(name).to_ascii_lowercase())
        })
    }

    pub fn model(&self, name: &str) -> Option<&Val> {
        self.models.get(&name.to_ascii_lowercase())
    }

    pub fn rail(&self, net: &str) -> Option<&RailMap> {
        self.rails.iter().find(|r| r.net.eq_ignore_ascii_case(net))
    }

    /// The designator shown for a SPICE element name: each dotted segment
    /// without the letter the exporter added, with `strip_letter`.
    pub fn shown(&self, name: &str) -> String {
        if !self.strip_letter {
            return name.to_string();
        }
        name.split('.').map(strip).collect::<Vec<_>>().join(".")
    }
}

/// `MQ1` → `Q1`, `XU1` → `U1`: a letter before a reference designator
/// (one to four capitals, then a digit) whose own first letter differs.
/// `Rload1`, `RSENSE1`, `R1`, `M1` stay.
fn strip(seg: &str) -> &str {
    let b = seg.as_bytes();
    let (Some(&l), Some(&next)) = (b.first(), b.get(1)) else {
        return seg;
    };
    if !l.is_ascii() {
        return seg;
    }
    let Some(rest) = seg.get(1..) else {
        return seg;
    };
    let letters = rest.bytes().take_while(u8::is_ascii_uppercase).count();
    let digit_follows = rest.as_bytes().get(letters).is_some_and(u8::is_ascii_digit);
    if next.is_ascii_alphabetic()
        && !next.eq_ignore_ascii_case(&l)
        && (1..=4).contains(&letters)
        && digit_follows
    {
        rest
    } else {
        seg
    }
}

/// Read the mapping at `src`.
pub fn load(src: &MapSource, root: Option<&crate::trust::Root>) -> Result<Mapping, Vec<Finding>> {
    let shown = crate::shown_path(&src.path);
    if let Some(Err(why)) = root.map(|r| r.check(&src.path)) {
        let f = SourceFile::new(shown.clone(), &src.path, String::new());
        return Err(vec![
            Finding::input(
                CODE,
                &f,
                Span::new(0, 0),
                format!("the mapping `{shown}` is not read: {why}"),
            )
            .help(
                "keep the mapping inside the project, or pass `--allow-outside-root` to trust it",
            ),
        ]);
    }
    let file = crate::model::library::read_text(&src.path, &shown).map_err(|f| vec![f])?;
    parse(&file, &src.prefix, root)
}

pub fn parse(
    file: &Arc<SourceFile>,
    prefix: &str,
    root: Option<&crate::trust::Root>,
) -> Result<Mapping, Vec<Finding>> {
    let doc = yaml::parse(file, CODE).map_err(|e| vec![e])?;
    // a key's path in the YAML: under `spice/` in a configuration
    let fp = |rest: &str| -> String {
        if prefix.is_empty() {
            rest.to_string()
        } else {
            format!("{prefix}/{rest}")
        }
    };
    let mut m = Mapping::defaults();
    m.file = Some(file.clone());
    let mut errors = Vec::new();
    let top = if prefix.is_empty() {
        Some(&doc.root)
    } else {
        match &doc.root {
            Value::Mapping(t) => t.get(Value::String(prefix.into())),
            _ => None,
        }
    };
    let map = match top {
        Some(Value::Mapping(t)) => t.clone(),
        Some(Value::Null) | None => return Ok(m),
        Some(other) => {
            return Err(vec![Finding::input(
                CODE,
                file,
                doc.key_span(&fp("")),
                format!(
                    "the SPICE mapping is a mapping of keys; found {}",
                    yaml::describe(other)
                ),
            )]);
        }
    };
    let base = file
        .path
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let err = |errors: &mut Vec<Finding>, span: Span, msg: String| {
        errors.push(Finding::input(CODE, file, span, msg));
    };
    let val = |path: &str, v: &Value, errors: &mut Vec<Finding>| -> Option<Val> {
        let full = fp(path);
        match yaml::quantity_text(&doc, &full, v) {
            Ok(Some(text)) => Some(Val {
                text,
                span: doc.value_span(&full),
            }),
            Ok(None) => {
                errors.push(Finding::input(
                    CODE,
                    file,
                    doc.value_span(&full),
                    format!(
                        "`{}` must be a single value, not {}",
                        path.rsplit('/').next().unwrap_or(path),
                        yaml::describe(v)
                    ),
                ));
                None
            }
            Err(msg) => {
                errors.push(Finding::input(CODE, file, doc.value_span(&full), msg));
                None
            }
        }
    };
    let names = |path: &str, v: &Value, errors: &mut Vec<Finding>| -> Vec<String> {
        match v {
            Value::Sequence(s) => s
                .iter()
                .filter_map(|x| {
                    let t = yaml::scalar_text(x);
                    if t.is_none() {
                        errors.push(Finding::input(
                            CODE,
                            file,
                            doc.value_span(&fp(path)),
                            format!("`{path}` lists names"),
                        ));
                    }
                    t
                })
                .collect(),
            other => match yaml::scalar_text(other) {
                Some(t) => vec![t],
                None => {
                    errors.push(Finding::input(
                        CODE,
                        file,
                        doc.value_span(&fp(path)),
                        format!("`{path}` is a list of names"),
                    ));
                    Vec::new()
                }
            },
        }
    };
    for (k, v) in &map {
        let key = yaml::scalar_text(k).unwrap_or_default();
        let kspan = doc.key_span(&fp(&yaml::child("", &key)));
        match key.as_str() {
            "libraries" => {
                for (i, p) in names("libraries", v, &mut errors).into_iter().enumerate() {
                    let span = doc.value_span(&fp(&yaml::child("libraries", &i.to_string())));
                    let path = base.join(&p);
                    if let Some(Err(why)) = root.map(|r| r.check(&path)) {
                        err(&mut errors, span, format!("`{p}` is not read: {why}"));
                        continue;
                    }
                    m.libraries.push((path, span));
                }
            }
            "ground" => {
                m.ground = names("ground", v, &mut errors)
                    .into_iter()
                    .map(|g| g.to_ascii_lowercase())
                    .collect();
            }
            "ambient" => m.ambient = val("ambient", v, &mut errors),
            "strip_letter" => match v {
                Value::Bool(b) => m.strip_letter = *b,
                _ => err(
                    &mut errors,
                    doc.value_span(&fp("strip_letter")),
                    "`strip_letter` is true or false".into(),
                ),
            },
            "rails" => {
                let Value::Mapping(rails) = v else {
                    err(
                        &mut errors,
                        kspan,
                        "`rails` maps net names to their limits (`VBAT: {max: 14.4V}`)".into(),
                    );
                    continue;
                };
                for (rk, rv) in rails {
                    let net = yaml::scalar_text(rk).unwrap_or_default();
                    let p = yaml::child("rails", &net);
                    let mut r = RailMap {
                        net: net.clone(),
                        nominal: None,
                        max: None,
                        min: None,
                        tol: None,
                        span: doc.key_span(&fp(&p)),
                    };
                    match rv {
                        Value::Mapping(opts) => {
                            for (ok, ov) in opts {
                                let o = yaml::scalar_text(ok).unwrap_or_default();
                                let op = yaml::child(&p, &o);
                                let x = val(&op, ov, &mut errors);
                                match o.as_str() {
                                    "nominal" => r.nominal = x,
                                    "max" => r.max = x,
                                    "min" => r.min = x,
                                    "tol" => r.tol = x,
                                    _ => {
                                        let hint = crate::suggest::did_you_mean(
                                            &o,
                                            RAIL_KEYS.iter().copied(),
                                        );
                                        err(
                                            &mut errors,
                                            doc.key_span(&fp(&op)),
                                            format!(
                                                "unknown rail key `{o}` (keys: {}){}",
                                                RAIL_KEYS.join(", "),
                                                if hint.is_empty() {
                                                    String::new()
                                                } else {
                                                    format!("; {hint}")
                                                }
                                            ),
                                        );
                                    }
                                }
                            }
                        }
                        Value::Null => {}
                        _ => {
                            // `V5: 5V` is the nominal voltage
                            r.nominal = val(&p, rv, &mut errors);
                        }
                    }
                    m.rails.push(r);
                }
            }
            "models" => {
                let Value::Mapping(models) = v else {
                    err(&mut errors, kspan, "`models` maps model or subcircuit names to library parts (`NCH60: DEMO-N60-3A`)".into());
                    continue;
                };
                for (mk, mv) in models {
                    let name = yaml::scalar_text(mk).unwrap_or_default();
                    if let Some(x) = val(&yaml::child("models", &name), mv, &mut errors) {
                        m.models.insert(name.to_ascii_lowercase(), x);
                    }
                }
            }
            "instances" | "loads" => {
                let Value::Mapping(entries) = v else {
                    err(
                        &mut errors,
                        kspan,
                        format!(
                            "`{key}` maps designators to parts (`XU1: {{kind: mcu, pins: [PA3, VDD, VSS]}}`)"
                        ),
                    );
                    continue;
                };
                for (ek, ev) in entries {
                    let name = yaml::scalar_text(ek).unwrap_or_default();
                    let p = yaml::child(&key, &name);
                    let span = doc.key_span(&fp(&p));
                    let Value::Mapping(fields) = ev else {
                        err(
                            &mut errors,
                            span,
                            format!("`{name}` needs `kind:` and its fields, as a mapping"),
                        );
                        continue;
                    };
                    let mut kind = None;
                    let mut kind_given = false;
                    let mut part = None;
                    let mut pins = Vec::new();
                    let mut elements = Vec::new();
                    let mut params = Vec::new();
                    for (fk, fv) in fields {
                        let f = yaml::scalar_text(fk).unwrap_or_default();
                        let fpath = yaml::child(&p, &f);
                        match f.as_str() {
                            "kind" => {
                                kind_given = true;
                                let k = yaml::scalar_text(fv).unwrap_or_default();
                                match Kind::from_name(&k) {
                                    Some(x) => kind = Some(x),
                                    None => {
                                        let hint = crate::suggest::did_you_mean(
                                            &k,
                                            Kind::ALL.iter().map(|k| k.name()),
                                        );
                                        err(
                                            &mut errors,
                                            doc.value_span(&fp(&fpath)),
                                            format!(
                                                "`{k}` is no kind{}",
                                                if hint.is_empty() {
                                                    String::new()
                                                } else {
                                                    format!("; {hint}")
                                                }
                                            ),
                                        );
                                    }
                                }
                            }
                            "part" => part = val(&fpath, fv, &mut errors),
                            "pins" if key == "instances" => pins = names(&fpath, fv, &mut errors),
                            "elements" if key == "loads" => {
                                elements = names(&fpath, fv, &mut errors)
                            }
                            _ => {
                                if let Some(x) = val(&fpath, fv, &mut errors) {
                                    params.push((f, x));
                                }
                            }
                        }
                    }
                    let Some(kind) = kind else {
                        if !kind_given {
                            err(&mut errors, span, format!("`{name}` has no `kind:`"));
                        }
                        continue;
                    };
                    if key == "instances" {
                        if pins.is_empty() {
                            if let Some(p) = kind.positional_pins() {
                                pins = p.iter().map(|s| s.to_string()).collect();
                            } else if let crate::model::kinds::PinSpec::Fixed(fixed) = kind.pins() {
                                pins = fixed
                                    .iter()
                                    .filter(|(_, req)| *req)
                                    .map(|(n, _)| n.to_string())
                                    .collect();
                            } else {
                                err(
                                    &mut errors,
                                    span,
                                    format!(
                                        "`{name}` is a {}: list its pins in node order (`pins: [PA3, VDD, VSS]`)",
                                        kind.name()
                                    ),
                                );
                                continue;
                            }
                        }
                        m.instances.insert(
                            name.to_ascii_lowercase(),
                            InstanceMap {
                                name,
                                kind,
                                part,
                                pins,
                                params,
                                span,
                            },
                        );
                    } else {
                        if !kind.is_inductive_load() && kind != Kind::Resistor {
                            err(
                                &mut errors,
                                span,
                                format!(
                                    "a load is a motor, solenoid, relay or inductor, not a {}",
                                    kind.name()
                                ),
                            );
                            continue;
                        }
                        if elements.is_empty() {
                            err(
                                &mut errors,
                                span,
                                format!("`{name}` lists no `elements:` (the L and R that form it)"),
                            );
                            continue;
                        }
                        m.loads.push(LoadMap {
                            name,
                            kind,
                            elements,
                            part,
                            params,
                            span,
                        });
                    }
                }
            }
            "drive" => {
                let Value::Sequence(lines) = v else {
                    err(
                        &mut errors,
                        kspan,
                        "`drive` is a list of drive statements (`- \"XU1.PA3 pwm 25kHz\"`)".into(),
                    );
                    continue;
                };
                for (i, l) in lines.iter().enumerate() {
                    if let Some(x) = val(&yaml::child("drive", &i.to_string()), l, &mut errors) {
                        m.drive.push(x);
                    }
                }
            }
            _ => {
                errors.push(yaml::unknown_key(
                    CODE,
                    file,
                    kspan,
                    &key,
                    "the SPICE mapping",
                    KEYS,
                ));
            }
        }
    }
    if errors.is_empty() {
        Ok(m)
    } else {
        Err(errors)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn letters_added_by_exporters_are_stripped() {
        assert_eq!(strip("MQ1"), "Q1");
        assert_eq!(strip("XU1"), "U1");
        assert_eq!(strip("MN5"), "N5");
        assert_eq!(strip("DD1"), "DD1");
        assert_eq!(strip("R1"), "R1");
        assert_eq!(strip("Rload"), "Rload");
        assert_eq!(strip("Rload1"), "Rload1");
        assert_eq!(strip("RSENSE1"), "RSENSE1");
        assert_eq!(strip("M1"), "M1");
        assert_eq!(strip("XCONN1"), "CONN1");
        // a first character of several bytes (found by fuzzing)
        assert_eq!(strip("ÉQ1"), "ÉQ1");
        assert_eq!(strip("\u{feff}Q1"), "\u{feff}Q1");
    }
}

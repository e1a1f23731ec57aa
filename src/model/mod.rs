//! The elaborated circuit: parts with kinds, pins on nets, ratings.
//!
//! Elaboration reads the AST and the loaded parts libraries. Input errors
//! (unknown kinds and keys, values of the wrong dimension, contradictory
//! declarations) are findings of class `Input`; facts that the structure
//! rules report (unknown parts and pins, missing pins, duplicate
//! designators) are recorded on the circuit for the checks stage.

pub mod kinds;
pub mod library;
pub mod reference;

use crate::finding::Finding;
use crate::source::{SourceFile, Span};
use crate::suggest;
use crate::syntax::ast::{self, DriveMode, RailOptKind, StatementKind, Value};
use crate::units::{self, Dimension};
pub use kinds::{KeyType, Kind};
pub use library::{LibPart, Library};
use std::borrow::Cow;
use std::collections::HashMap;
use std::sync::Arc;

#[derive(Clone, Debug, PartialEq)]
pub enum ParamValue {
    Num(f64),
    Word(String),
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Origin {
    Instance,
    Library,
}

#[derive(Clone, Debug)]
pub struct Param {
    pub key: &'static str,
    pub value: ParamValue,
    pub origin: Origin,
    /// In the netlist (instance) or in the library file.
    pub span: Span,
}

/// Keys whose value must be above zero besides the ratings.
const POSITIVE: &[&str] = &[
    "r", "l", "rds_on", "rth_ja", "hfe_min", "io_v", "r_out", "vz", "v_clamp",
];

/// Ratings: limits a part is rated for, written as magnitudes (a p-channel
/// part's `vds_max` is `30V`, not `-30V`); zero or below is never a rating.
/// Every `*_max` key except the junction temperature (a temperature, held
/// above absolute zero instead), and the ratings named otherwise.
pub fn is_rating(key: &str) -> bool {
    (key.ends_with("_max") && key != "tj_max")
        || matches!(
            key,
            "vrrm" | "if_avg" | "ifsm" | "i_sat" | "i_stall" | "i_rated" | "v_rated"
        )
}

/// Read a value's text for a key of a given type.
pub fn interpret(ty: KeyType, text: &str) -> Result<ParamValue, String> {
    interpret_key("", ty, text)
}

/// Read a value for a named key, with the key's sign constraints.
pub fn interpret_key(key: &str, ty: KeyType, text: &str) -> Result<ParamValue, String> {
    match ty {
        KeyType::Word => Ok(ParamValue::Word(text.to_string())),
        KeyType::Q(d) => {
            let q = units::parse_as(text, d).map_err(|e| e.to_string())?;
            let signed = matches!(
                d,
                Dimension::Voltage | Dimension::Current | Dimension::Temperature
            );
            if !signed && q.value < 0.0 {
                return Err(format!("{} must not be negative", d.article_name()));
            }
            if is_rating(key) && q.value <= 0.0 {
                return Err(format!(
                    "a rating must be above zero (a magnitude, whatever the polarity), found {}",
                    units::format_si(q.value, d)
                ));
            }
            if POSITIVE.contains(&key) && q.value <= 0.0 {
                return Err(format!("`{key}` must be above zero"));
            }
            Ok(ParamValue::Num(q.value))
        }
        KeyType::DeltaT => units::parse_delta_temperature(text)
            .map(|q| ParamValue::Num(q.value))
            .map_err(|e| e.to_string()),
    }
}

pub type NetId = usize;
pub type PartId = usize;

#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rail {
    pub nominal: f64,
    pub max: f64,
    pub min: f64,
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum NetKind {
    Signal,
    Rail(Rail),
    Ground,
}

#[derive(Clone, Debug)]
pub struct Net {
    pub name: String,
    pub kind: NetKind,
    /// (part, index into the part's pins)
    pub conns: Vec<(PartId, usize)>,
    /// Where the net is declared (rail/ground) or first named.
    pub span: Span,
}

impl Net {
    /// Fixed potential at worst case (rail max), if the net is a rail or ground.
    pub fn fixed_max(&self) -> Option<f64> {
        match self.kind {
            NetKind::Rail(r) => Some(r.max),
            NetKind::Ground => Some(0.0),
            NetKind::Signal => None,
        }
    }
    pub fn fixed_nominal(&self) -> Option<f64> {
        match self.kind {
            NetKind::Rail(r) => Some(r.nominal),
            NetKind::Ground => Some(0.0),
            NetKind::Signal => None,
        }
    }
    pub fn fixed_min(&self) -> Option<f64> {
        match self.kind {
            NetKind::Rail(r) => Some(r.min),
            NetKind::Ground => Some(0.0),
            NetKind::Signal => None,
        }
    }
    pub fn is_fixed(&self) -> bool {
        !matches!(self.kind, NetKind::Signal)
    }
}

#[derive(Clone, Debug)]
pub struct Pin {
    /// The kind's own pin name where it has one (no allocation per pin),
    /// else the name as written (controller pins).
    pub name: Cow<'static, str>,
    pub net: NetId,
    /// The `pin: NET` text.
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct Part {
    pub reference: String,
    pub kind: Kind,
    pub pins: Vec<Pin>,
    /// `part=NAME`, shared between the parts that name the same part.
    pub part_name: Option<Arc<str>>,
    pub lib: Option<Arc<LibPart>>,
    pub inst: Vec<Param>,
    /// The statement.
    pub span: Span,
    pub ref_span: Span,
    pub line: usize,
    /// `part=NAME` that no library has: (name, span of the value).
    pub part_not_in_library: Option<Box<(String, Span)>>,
    /// Pins listed that the kind does not have: (name, span).
    pub unknown_pins: Vec<(String, Span)>,
    /// Required pins not listed.
    pub missing_pins: Vec<&'static str>,
    pub pins_span: Span,
}

impl Part {
    pub fn get(&self, key: &str) -> Option<&Param> {
        self.inst
            .iter()
            .rev()
            .find(|p| p.key == key)
            .or_else(|| self.lib.as_ref().and_then(|l| l.get(key)))
    }
    pub fn num(&self, key: &str) -> Option<f64> {
        match self.get(key)?.value {
            ParamValue::Num(v) => Some(v),
            ParamValue::Word(_) => None,
        }
    }
    pub fn word(&self, key: &str) -> Option<&str> {
        match &self.get(key)?.value {
            ParamValue::Word(w) => Some(w),
            ParamValue::Num(_) => None,
        }
    }
    pub fn pin(&self, name: &str) -> Option<&Pin> {
        self.pins.iter().find(|p| p.name == name)
    }
    pub fn net_of(&self, name: &str) -> Option<NetId> {
        self.pin(name).map(|p| p.net)
    }
    /// Display name of the part as fitted: `part=` or the kind.
    pub fn part_label(&self) -> String {
        match &self.part_name {
            Some(n) => n.to_string(),
            None => self.kind.name().to_string(),
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub enum DriveKind {
    Static,
    Pwm {
        freq: f64,
        duty_min: f64,
        duty_max: f64,
        complement: Option<(PartId, String)>,
        deadtime: Option<f64>,
    },
}

#[derive(Clone, Debug)]
pub struct Drive {
    pub part: PartId,
    pub pin: String,
    pub kind: DriveKind,
    pub span: Span,
    pub line: usize,
}

#[derive(Debug)]
pub struct Circuit {
    pub file: Arc<SourceFile>,
    pub design: Option<String>,
    pub revision: Option<String>,
    pub nets: Vec<Net>,
    pub net_by_name: HashMap<String, NetId>,
    pub parts: Vec<Part>,
    pub part_by_ref: HashMap<String, PartId>,
    pub drives: Vec<Drive>,
    pub ambient: Option<(f64, Span)>,
    pub suppressions: Vec<ast::Suppression>,
    /// (first, duplicate)
    pub duplicates: Vec<(PartId, PartId)>,
    /// `library` lines: (path text, span)
    pub library_lines: Vec<(String, Span)>,
    /// (controller part, pin) → index into `drives`.
    /// (controller part, index of the pin in its `pins`) → index into
    /// `drives`. Keyed by index so that a lookup allocates nothing.
    pub drive_index: HashMap<(PartId, usize), usize>,
    /// A `complement` pin's partner, both ways (keyed as `drive_index`).
    pub complement: HashMap<(PartId, usize), (PartId, String)>,
    /// Rails and grounds with their worst-case (maximum) potential.
    pub fixed_nets: Vec<(NetId, f64)>,
    /// The parts of each kind, in order (built on first use by
    /// [`Circuit::parts_of`]; the parts do not change after elaboration).
    kind_index: std::sync::OnceLock<Vec<Vec<PartId>>>,
}

impl Circuit {
    /// The parts of the given kinds, in order: a rule that reads a few
    /// kinds walks a dense list of them instead of every part.
    pub fn parts_of<'s>(&'s self, kinds: &[Kind]) -> impl Iterator<Item = (PartId, &'s Part)> + 's {
        let index = self.kind_index.get_or_init(|| {
            let mut v: Vec<Vec<PartId>> = vec![Vec::new(); Kind::ALL.len()];
            for (i, p) in self.parts.iter().enumerate() {
                if let Some(l) = v.get_mut(p.kind as usize) {
                    l.push(i);
                }
            }
            v
        });
        let mut ids: Vec<PartId> = kinds
            .iter()
            .filter_map(|k| index.get(*k as usize))
            .flatten()
            .copied()
            .collect();
        if kinds.len() > 1 {
            ids.sort_unstable();
        }
        ids.into_iter()
            .filter_map(move |i| self.parts.get(i).map(|p| (i, p)))
    }
    pub fn net(&self, id: NetId) -> &Net {
        &self.nets[id]
    }
    pub fn part(&self, id: PartId) -> &Part {
        &self.parts[id]
    }
    pub fn part_id(&self, reference: &str) -> Option<PartId> {
        self.part_by_ref.get(reference).copied()
    }
    /// Net name of a part's pin, for messages.
    pub fn pin_net_name(&self, part: PartId, pin: &str) -> Option<&str> {
        let n = self.parts.get(part)?.net_of(pin)?;
        self.nets.get(n).map(|n| n.name.as_str())
    }
    /// The drive statement of a controller pin.
    pub fn drive_of(&self, part: PartId, pin: &str) -> Option<&Drive> {
        let k = self.pin_index(part, pin)?;
        self.drive_index
            .get(&(part, k))
            .and_then(|&i| self.drives.get(i))
    }

    /// The pin declared as the complement of this one (either way).
    pub fn complement_of(&self, part: PartId, pin: &str) -> Option<&(PartId, String)> {
        let k = self.pin_index(part, pin)?;
        self.complement.get(&(part, k))
    }

    /// Where a named pin sits in its part's `pins`.
    pub fn pin_index(&self, part: PartId, pin: &str) -> Option<usize> {
        self.parts
            .get(part)?
            .pins
            .iter()
            .position(|p| p.name == pin)
    }
}

/// The `library` lines of a netlist, before elaboration (so that the
/// caller can load them).
pub fn library_lines(statements: &[ast::Statement<'_>]) -> Vec<(String, Span)> {
    statements
        .iter()
        .filter_map(|s| match &s.kind {
            StatementKind::Library(p) => Some((p.node.to_string(), p.span)),
            _ => None,
        })
        .collect()
}

/// The per-line half of elaboration: reads one part line and the
/// libraries, nothing else, so part lines are drafted in parallel.
struct Drafter<'a> {
    file: &'a Arc<SourceFile>,
    libs: &'a [Arc<Library>],
    errors: Vec<Finding>,
}

impl Drafter<'_> {
    fn err(&mut self, code: &str, span: Span, msg: String, label: &str, help: Option<String>) {
        push_input(&mut self.errors, self.file, code, span, msg, label, help);
    }

    fn find_lib_part(&self, name: &str) -> Option<Arc<LibPart>> {
        self.libs.iter().find_map(|l| l.parts.get(name).cloned())
    }

    /// The first two libraries' definitions of `name` when more than one
    /// loaded library defines it: which one was meant cannot be known.
    fn lib_part_twice(&self, name: &str) -> Option<(Arc<LibPart>, Arc<LibPart>)> {
        let mut found = self.libs.iter().filter_map(|l| l.parts.get(name));
        let first = found.next()?;
        // the same library loaded twice (a `library` line and the
        // configuration) defines it once
        let second = found.find(|p| !Arc::ptr_eq(p, first))?;
        Some((first.clone(), second.clone()))
    }

    /// Everything about a part line that needs no other line: kind,
    /// pins, values, library part. Pins come back with `net` holding the
    /// index of their entry in `st.pins`; `Elab::commit` turns it into the
    /// net. Also returns the `part=` name, for sharing.
    fn draft(
        &mut self,
        st: &ast::PartStmt,
        span: Span,
        line: usize,
    ) -> Option<(Part, Option<String>)> {
        let Some(kind) = Kind::from_name(st.kind.node) else {
            let alias = match st.kind.node.to_ascii_lowercase().as_str() {
                "mosfet" | "fet" | "nfet" | "nch" => Some("nmos"),
                "pfet" | "pch" => Some("pmos"),
                "bjt" | "transistor" => Some("npn"),
                "coil" | "valve" => Some("solenoid"),
                "cap" => Some("capacitor"),
                "res" => Some("resistor"),
                "ic" | "gatedriver" => Some("driver"),
                "controller" | "micro" => Some("mcu"),
                _ => None,
            };
            let hint = match alias {
                Some(a) => format!("did you mean `{a}`?"),
                None => suggest::did_you_mean(st.kind.node, Kind::ALL.iter().map(|k| k.name())),
            };
            self.err(
                "unknown-kind",
                st.kind.span,
                format!("unknown part kind `{}`", st.kind.node),
                "unknown kind",
                Some(if hint.is_empty() {
                    format!(
                        "known kinds: {}",
                        Kind::ALL
                            .iter()
                            .map(|k| k.name())
                            .collect::<Vec<_>>()
                            .join(", ")
                    )
                } else {
                    hint
                }),
            );
            return None;
        };
        let mut part_name = None;
        let mut part = Part {
            reference: st.reference.node.to_string(),
            kind,
            pins: Vec::with_capacity(st.pins.len()),
            part_name: None,
            lib: None,
            inst: Vec::with_capacity(st.params.len() + usize::from(st.value.is_some())),
            span,
            ref_span: st.reference.span,
            line,
            part_not_in_library: None,
            unknown_pins: Vec::new(),
            missing_pins: Vec::new(),
            pins_span: st.pins_span,
        };
        // pins
        let positional = kind.positional_pins();
        let mut bare_index = 0;
        for (entry_index, entry) in st.pins.iter().enumerate() {
            let pin_name: Cow<'static, str> = match &entry.pin {
                Some(p) => match kind.pins() {
                    kinds::PinSpec::Fixed(list) => match list.iter().find(|(n, _)| *n == p.node) {
                        Some((n, _)) => Cow::Borrowed(*n),
                        None => Cow::Owned(p.node.to_string()),
                    },
                    _ => Cow::Owned(p.node.to_string()),
                },
                None => match positional.and_then(|p| p.get(bare_index)) {
                    Some(n) => {
                        bare_index += 1;
                        Cow::Borrowed(*n)
                    }
                    None => {
                        let msg = if positional.is_some() {
                            format!("a {} has two pins; this is a third net", kind.name())
                        } else {
                            format!("a {} needs named pins (`pin: NET`)", kind.name())
                        };
                        self.err(
                            "parse-error",
                            entry.net.span,
                            msg,
                            "bare net",
                            Some(pin_help(kind)),
                        );
                        continue;
                    }
                },
            };
            let pin_span = match &entry.pin {
                Some(p) => p.span.join(entry.net.span),
                None => entry.net.span,
            };
            if let kinds::PinSpec::Fixed(list) = kind.pins()
                && !list.iter().any(|(n, _)| *n == pin_name)
            {
                part.unknown_pins.push((
                    pin_name.into_owned(),
                    entry.pin.as_ref().map_or(pin_span, |p| p.span),
                ));
                continue;
            }
            if part.pins.iter().any(|p| p.name == pin_name) {
                self.err(
                    "parse-error",
                    pin_span,
                    format!("pin `{pin_name}` of `{}` is listed twice", part.reference),
                    "listed again",
                    None,
                );
                continue;
            }
            part.pins.push(Pin {
                name: pin_name,
                net: entry_index,
                span: pin_span,
            });
        }
        if let kinds::PinSpec::Fixed(list) = kind.pins() {
            for (n, required) in list {
                if *required && part.pin(n).is_none() {
                    part.missing_pins.push(n);
                }
            }
        }
        // primary value
        if let Some(v) = &st.value {
            match kind.primary_key() {
                Some(key) => {
                    if let Some(p) = self.param_value(kind, key, v) {
                        part.inst.push(p);
                    }
                }
                None => self.err(
                    "parse-error",
                    v.span,
                    format!("a {} takes no bare value after its pins", kind.name()),
                    "bare value",
                    Some(format!(
                        "write it as `key=value`; keys of a {}: {}",
                        kind.name(),
                        kind.keys()
                            .iter()
                            .map(|k| k.name)
                            .collect::<Vec<_>>()
                            .join(" ")
                    )),
                ),
            }
        }
        // parameters; a key given twice is an error (which one was meant
        // cannot be known), the primary value counting as its key
        let mut seen: Vec<(&str, Span)> = Vec::new();
        if let (Some(v), Some(key)) = (&st.value, kind.primary_key()) {
            seen.push((key, v.span));
        }
        for p in &st.params {
            let key_text: &str = p.key.node;
            if let Some(&(_, first)) = seen.iter().find(|(k, _)| *k == key_text) {
                let f = Finding::input(
                    DUPLICATE_KEY,
                    self.file,
                    p.key.span,
                    format!("`{key_text}` is given twice for `{}`", part.reference),
                )
                .label("given again here")
                .related_in(self.file, first, "first given here".to_string())
                .help("keep one of the two values");
                self.errors.push(f);
                continue;
            }
            seen.push((key_text, p.key.span));
            if p.key.node == "part" {
                let name = match &p.value.node {
                    Value::Atom(s) => s.to_string(),
                    Value::Str(s) => s.to_string(),
                    Value::Range(..) => {
                        self.err(
                            INVALID_VALUE,
                            p.value.span,
                            "`part` names a part, not a range".into(),
                            "here",
                            None,
                        );
                        continue;
                    }
                };
                if let Some((a, b)) = self.lib_part_twice(&name) {
                    let line = |lp: &LibPart| {
                        format!(
                            "{}:{}",
                            lp.file.name,
                            lp.file.line_index(lp.span.start()) + 1
                        )
                    };
                    let f = Finding::input(
                        "library-error",
                        self.file,
                        p.value.span,
                        format!(
                            "`{name}` is defined in two libraries ({} and {})",
                            line(&a),
                            line(&b)
                        ),
                    )
                    .label("which definition is meant?")
                    .related_in(&a.file, a.span, format!("`{name}` is defined here"))
                    .related_in(&b.file, b.span, "and again here".to_string())
                    .help("keep one definition, or rename one of the parts");
                    self.errors.push(f);
                    continue;
                }
                match self.find_lib_part(&name) {
                    Some(lp) => {
                        if lp.kind != kind {
                            let f = Finding::input(
                                "kind-mismatch",
                                self.file,
                                p.value.span,
                                format!(
                                    "`{name}` is a {} in the library, but `{}` is a {}",
                                    lp.kind.name(),
                                    part.reference,
                                    kind.name()
                                ),
                            )
                            .label("wrong kind of part")
                            .related_in(&lp.file, lp.span, format!("`{name}` is defined here"))
                            .help(format!(
                                "use a {} part here, or change the line to `{} {} …`",
                                kind.name(),
                                lp.kind.name(),
                                part.reference
                            ));
                            self.errors.push(f);
                        } else {
                            part.lib = Some(lp);
                        }
                    }
                    None => part.part_not_in_library = Some(Box::new((name.clone(), p.value.span))),
                }
                part_name = Some(name);
                continue;
            }
            let Some(def) = kind.key(p.key.node) else {
                let hint = suggest::did_you_mean(
                    p.key.node,
                    kind.keys()
                        .iter()
                        .map(|k| k.name)
                        .chain(std::iter::once("part")),
                );
                self.err(
                    UNKNOWN_KEY,
                    p.key.span,
                    format!("unknown key `{}` for a {}", p.key.node, kind.name()),
                    "unknown key",
                    Some(if hint.is_empty() {
                        format!(
                            "keys of a {}: part {}",
                            kind.name(),
                            kind.keys()
                                .iter()
                                .map(|k| k.name)
                                .collect::<Vec<_>>()
                                .join(" ")
                        )
                    } else {
                        hint
                    }),
                );
                continue;
            };
            if let Some(param) = self.param_value(kind, def.name, &p.value) {
                part.inst.push(param);
            }
        }
        Some((part, part_name))
    }

    fn param_value(&mut self, kind: Kind, key: &str, v: &ast::Spanned<Value>) -> Option<Param> {
        let def = kind.key(key)?;
        let text = match &v.node {
            Value::Atom(s) => s.to_string(),
            Value::Str(s) if def.ty == KeyType::Word => s.to_string(),
            other => {
                self.err(
                    INVALID_VALUE,
                    v.span,
                    format!("`{key}` takes a single value, found {}", other.describe()),
                    "here",
                    None,
                );
                return None;
            }
        };
        match interpret_key(def.name, def.ty, &text) {
            Ok(value) => {
                let value = match value {
                    ParamValue::Word(w) => ParamValue::Word(w.to_lowercase()),
                    n => n,
                };
                Some(Param {
                    key: def.name,
                    value,
                    origin: Origin::Instance,
                    span: v.span,
                })
            }
            Err(msg) => {
                let label = match def.ty {
                    KeyType::Q(d) => format!("expected {}", d.article_name()),
                    _ => "here".to_string(),
                };
                self.err(
                    INVALID_VALUE,
                    v.span,
                    format!("`{key}`: {msg}"),
                    &label,
                    None,
                );
                None
            }
        }
    }
}

fn push_input(
    errors: &mut Vec<Finding>,
    file: &Arc<SourceFile>,
    code: &str,
    span: Span,
    msg: String,
    label: &str,
    help: Option<String>,
) {
    let mut f = Finding::input(code, file, span, msg).label(label);
    if let Some(h) = help.filter(|h| !h.is_empty()) {
        f = f.help(h);
    }
    errors.push(f);
}

struct Elab<'a> {
    file: &'a Arc<SourceFile>,
    errors: Vec<Finding>,
    c: Circuit,
    /// One shared copy of each `part=` name.
    part_names: HashMap<String, Arc<str>>,
    /// Designators for suggestions, built at the first unknown one (drive
    /// lines are resolved once every part is known).
    ref_index: Option<suggest::Index>,
}

const UNKNOWN_KEY: &str = "unknown-key";
const INVALID_VALUE: &str = "invalid-value";
const DUPLICATE_KEY: &str = "duplicate-key";

impl<'a> Elab<'a> {
    /// Size the big tables up front. Growing a vector of a million
    /// entries by doubling copies it into fresh memory again and again,
    /// and fresh memory is the dearest thing a large board costs;
    /// reserved but untouched capacity costs nothing. A board has about
    /// one net per part.
    fn new(file: &'a Arc<SourceFile>, n_parts: usize, n_drives: usize) -> Elab<'a> {
        Elab {
            file,
            errors: Vec::new(),
            part_names: HashMap::new(),
            ref_index: None,
            c: Circuit {
                file: file.clone(),
                design: None,
                revision: None,
                nets: Vec::with_capacity(n_parts + 16),
                net_by_name: HashMap::with_capacity(n_parts + 16),
                parts: Vec::with_capacity(n_parts),
                part_by_ref: HashMap::with_capacity(n_parts),
                drives: Vec::with_capacity(n_drives),
                ambient: None,
                suppressions: Vec::new(),
                duplicates: Vec::new(),
                library_lines: Vec::new(),
                drive_index: HashMap::with_capacity(n_drives),
                complement: HashMap::new(),
                fixed_nets: Vec::new(),
                kind_index: std::sync::OnceLock::new(),
            },
        }
    }
    fn intern(&mut self, name: String) -> Arc<str> {
        if let Some(a) = self.part_names.get(&name) {
            return a.clone();
        }
        let a: Arc<str> = Arc::from(name.as_str());
        self.part_names.insert(name, a.clone());
        a
    }

    fn err(&mut self, code: &str, span: Span, msg: String, label: &str, help: Option<String>) {
        push_input(&mut self.errors, self.file, code, span, msg, label, help);
    }

    /// The shared half of a part line: its nets, its place in the part
    /// list and the reference table.
    fn commit(&mut self, st: &ast::PartStmt, mut part: Part, part_name: Option<String>) {
        let id = self.c.parts.len();
        for k in 0..part.pins.len() {
            let Some(entry) = part.pins.get(k).and_then(|p| st.pins.get(p.net)) else {
                continue;
            };
            let net = self.net(entry.net.node, entry.net.span);
            let conns = &mut self.c.nets[net].conns;
            if conns.capacity() == 0 {
                // most nets join two pins: room for two, not four
                conns.reserve_exact(2);
            }
            conns.push((id, k));
            if let Some(p) = part.pins.get_mut(k) {
                p.net = net;
            }
        }
        if let Some(name) = part_name {
            part.part_name = Some(self.intern(name));
        }
        if let Some(&first) = self.c.part_by_ref.get(&part.reference) {
            self.c.duplicates.push((first, id));
        } else {
            self.c.part_by_ref.insert(part.reference.clone(), id);
        }
        self.c.parts.push(part);
    }

    fn net(&mut self, name: &str, span: Span) -> NetId {
        if let Some(&id) = self.c.net_by_name.get(name) {
            return id;
        }
        let id = self.c.nets.len();
        self.c.nets.push(Net {
            name: name.to_string(),
            kind: NetKind::Signal,
            conns: Vec::new(),
            span,
        });
        self.c.net_by_name.insert(name.to_string(), id);
        id
    }

    fn quantity(&mut self, v: &ast::Spanned<Value>, dim: Dimension, what: &str) -> Option<f64> {
        match &v.node {
            Value::Atom(t) => match units::parse_as(t, dim) {
                Ok(q) => Some(q.value),
                Err(e) => {
                    self.err(
                        INVALID_VALUE,
                        v.span,
                        format!("{what}: {e}"),
                        &format!("expected {}", dim.article_name()),
                        None,
                    );
                    None
                }
            },
            other => {
                self.err(
                    INVALID_VALUE,
                    v.span,
                    format!(
                        "{what}: expected {}, found {}",
                        dim.article_name(),
                        other.describe()
                    ),
                    "here",
                    None,
                );
                None
            }
        }
    }

    fn rail(
        &mut self,
        name: &ast::Text<'_>,
        nominal: Option<&ast::Spanned<Value<'_>>>,
        opts: &[ast::RailOpt],
    ) {
        let id = self.net(name.node, name.span);
        if self.c.nets[id].is_fixed() {
            self.err(
                "invalid-value",
                name.span,
                format!("`{}` is declared twice as a rail or ground", name.node),
                "declared again here",
                Some("declare each rail or ground once".to_string()),
            );
            return;
        }
        self.c.nets[id].span = name.span;
        // no nominal voltage: a ground
        let Some(nominal) = nominal else {
            self.c.nets[id].kind = NetKind::Ground;
            return;
        };
        let Some(nom) = self.quantity(nominal, Dimension::Voltage, "rail voltage") else {
            return;
        };
        let mut r = Rail {
            nominal: nom,
            max: nom,
            min: nom,
        };
        for o in opts {
            match o.kind {
                RailOptKind::Max => {
                    if let Some(v) = self.quantity(&o.value, Dimension::Voltage, "rail maximum") {
                        r.max = v;
                    }
                }
                RailOptKind::Min => {
                    if let Some(v) = self.quantity(&o.value, Dimension::Voltage, "rail minimum") {
                        r.min = v;
                    }
                }
                RailOptKind::Tol => {
                    if let Some(t) = self.quantity(&o.value, Dimension::Number, "rail tolerance") {
                        let t = t.abs();
                        r.max = nom + nom.abs() * t;
                        r.min = nom - nom.abs() * t;
                    }
                }
            }
        }
        if r.max < r.min {
            self.err(
                INVALID_VALUE,
                name.span,
                format!(
                    "rail `{}` has a maximum ({}) below its minimum ({})",
                    name.node,
                    units::format_si(r.max, Dimension::Voltage),
                    units::format_si(r.min, Dimension::Voltage)
                ),
                "this rail",
                None,
            );
        }
        self.c.nets[id].kind = NetKind::Rail(r);
    }

    fn drive(
        &mut self,
        pin: &ast::PinRef,
        mode: &DriveMode,
        span: Span,
        line: usize,
    ) -> Option<()> {
        let part = self.resolve_pin(pin)?;
        let kind = match mode {
            DriveMode::Static => DriveKind::Static,
            DriveMode::Pwm {
                freq,
                duty,
                complement,
                deadtime,
            } => {
                let f = self.quantity(freq, Dimension::Frequency, "PWM frequency")?;
                if f <= 0.0 {
                    self.err(
                        INVALID_VALUE,
                        freq.span,
                        "a PWM frequency must be above 0 Hz".into(),
                        "here",
                        None,
                    );
                    return None;
                }
                let (mut dmin, mut dmax) = (0.0, 1.0);
                if let Some(d) = duty {
                    match &d.node {
                        Value::Range(lo, hi) => {
                            let lo_v = ast::Spanned::new(Value::Atom(lo.node), lo.span);
                            let hi_v = ast::Spanned::new(Value::Atom(hi.node), hi.span);
                            dmin = self.quantity(&lo_v, Dimension::Number, "duty")?;
                            dmax = self.quantity(&hi_v, Dimension::Number, "duty")?;
                        }
                        _ => {
                            let v = self.quantity(d, Dimension::Number, "duty")?;
                            dmin = v;
                            dmax = v;
                        }
                    }
                    if !(0.0..=1.0).contains(&dmin) || !(0.0..=1.0).contains(&dmax) || dmin > dmax {
                        self.err(
                            INVALID_VALUE,
                            d.span,
                            "a duty range must lie within 0 %..100 %, low end first".into(),
                            "here",
                            None,
                        );
                        return None;
                    }
                }
                let comp = match complement {
                    Some(c) => Some((self.resolve_pin(c)?, c.pin.node.to_string())),
                    None => None,
                };
                let dt = match deadtime {
                    Some(d) => Some(self.quantity(d, Dimension::Time, "dead time")?),
                    None => None,
                };
                DriveKind::Pwm {
                    freq: f,
                    duty_min: dmin,
                    duty_max: dmax,
                    complement: comp,
                    deadtime: dt,
                }
            }
        };
        self.c.drives.push(Drive {
            part,
            pin: pin.pin.node.to_string(),
            kind,
            span,
            line,
        });
        Some(())
    }

    fn resolve_pin(&mut self, pin: &ast::PinRef) -> Option<PartId> {
        let Some(id) = self.c.part_by_ref.get(pin.part.node).copied() else {
            let refs = &self.c.part_by_ref;
            let index = self
                .ref_index
                .get_or_insert_with(|| suggest::Index::new(refs.keys().map(|s| s.as_str())));
            let hint = suggest::did_you_mean_in(pin.part.node, index);
            self.err(
                "unknown-ref",
                pin.part.span,
                format!("`{}` is not a part of this netlist", pin.part.node),
                "no such part",
                Some(if hint.is_empty() {
                    "declare the controller before the `drive` line that names it".to_string()
                } else {
                    hint
                }),
            );
            return None;
        };
        let p = &self.c.parts[id];
        if !matches!(p.kind, Kind::Mcu | Kind::Driver) {
            self.err(
                "invalid-value",
                pin.part.span,
                format!(
                    "`{}` is a {}; only a controller (mcu) pin can be driven",
                    p.reference,
                    p.kind.name()
                ),
                "not a controller",
                None,
            );
            return None;
        }
        if p.pin(pin.pin.node).is_none() {
            let hint = suggest::did_you_mean(pin.pin.node, p.pins.iter().map(|x| &*x.name));
            let reference = p.reference.clone();
            self.err(
                "unknown-pin",
                pin.pin.span,
                format!(
                    "`{reference}` has no pin `{}` in its pin list",
                    pin.pin.node
                ),
                "no such pin",
                Some(if hint.is_empty() {
                    format!(
                        "connect the pin on `{reference}`'s line, as `{}: NET`",
                        pin.pin.node
                    )
                } else {
                    hint
                }),
            );
            return None;
        }
        Some(id)
    }
}

fn pin_help(kind: Kind) -> String {
    match kind.pins() {
        kinds::PinSpec::Fixed(list) => format!(
            "a {} has pins {}",
            kind.name(),
            list.iter()
                .map(|(n, _)| format!("`{n}`"))
                .collect::<Vec<_>>()
                .join(", ")
        ),
        kinds::PinSpec::Any => "name each pin: `(PA3: NET, VDD: V5)`".to_string(),
    }
}

/// The most parts a netlist may have. A motor-drive board has hundreds;
/// the limit keeps a runaway generated file from exhausting a CI
/// runner's memory (1.6M parts take about 2.8 GiB).
pub const MAX_PARTS: usize = 2_000_000;

/// Build the circuit from the AST and the loaded libraries.
pub fn elaborate(
    file: &Arc<SourceFile>,
    netlist: &ast::Netlist,
    libs: &[Arc<Library>],
) -> (Circuit, Vec<Finding>) {
    elaborate_limited(file, netlist, libs, MAX_PARTS)
}

/// `2000000` → `2,000,000`.
fn group_digits(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

fn elaborate_limited(
    file: &Arc<SourceFile>,
    netlist: &ast::Netlist,
    libs: &[Arc<Library>],
    max_parts: usize,
) -> (Circuit, Vec<Finding>) {
    let (mut n_parts, mut n_drives) = (0usize, 0usize);
    for st in &netlist.statements {
        match st.kind {
            StatementKind::Part(_) => n_parts += 1,
            StatementKind::Drive(_) => n_drives += 1,
            _ => {}
        }
    }
    if n_parts > max_parts {
        let span = netlist
            .statements
            .iter()
            .filter(|st| matches!(st.kind, StatementKind::Part(_)))
            .nth(max_parts)
            .map_or(Span::default(), |st| st.span);
        return over_limit(file, span, max_parts);
    }
    let mut el = Elaborator::new(file, libs, n_parts, n_drives);
    el.header(&netlist.statements);
    el.body(&netlist.statements);
    el.suppressions(netlist.suppressions.clone());
    el.finish()
}

/// The one error of a netlist with too many parts; nothing is elaborated.
pub fn over_limit(file: &Arc<SourceFile>, span: Span, max_parts: usize) -> (Circuit, Vec<Finding>) {
    let mut e = Elab::new(file, 0, 0);
    e.err(
        "limit-exceeded",
        span,
        format!(
            "the netlist has more than {} parts, the limit",
            group_digits(max_parts)
        ),
        "first part over the limit",
        Some("split the design into several netlists (one per board or sub-assembly)".into()),
    );
    (e.c, e.errors)
}

/// Elaboration fed a piece at a time: the header statements (rails,
/// grounds, libraries) first, then the body in any number of blocks, in
/// file order. `elaborate` feeds a whole syntax tree; `armature::build`
/// feeds blocks of lines as they are parsed, so that the syntax tree of a
/// large board never exists whole.
pub struct Elaborator<'a> {
    e: Elab<'a>,
    libs: &'a [Arc<Library>],
    /// Drive statements wait for every part to be known.
    drives: Vec<ast::DriveStmt<'a>>,
    drive_at: Vec<(Span, usize)>,
    design_seen: bool,
}

impl<'a> Elaborator<'a> {
    /// `parts` and `drives` are size hints (exact or upper bounds).
    pub fn new(
        file: &'a Arc<SourceFile>,
        libs: &'a [Arc<Library>],
        parts: usize,
        drives: usize,
    ) -> Elaborator<'a> {
        Elaborator {
            e: Elab::new(file, parts, drives),
            libs,
            drives: Vec::with_capacity(drives),
            drive_at: Vec::with_capacity(drives),
            design_seen: false,
        }
    }

    /// Rails, grounds and `library` lines (other statements are ignored).
    pub fn header(&mut self, statements: &[ast::Statement<'_>]) {
        self.e.c.library_lines.extend(library_lines(statements));
        for st in statements {
            match &st.kind {
                StatementKind::Rail(r) => self.e.rail(&r.name, Some(&r.nominal), &r.opts),
                StatementKind::Ground(name) => self.e.rail(name, None, &[]),
                _ => {}
            }
        }
    }

    /// Parts, drives, `design` and `ambient` (rails, grounds and
    /// libraries are ignored: they went to `header`).
    pub fn body(&mut self, statements: &[ast::Statement<'a>]) {
        // Part lines are drafted in parallel a block at a time (the
        // drafts of a block are small next to the circuit), then
        // committed in order.
        use rayon::prelude::*;
        type Drafted = Option<(Option<(Part, Option<String>)>, Vec<Finding>)>;
        const BLOCK: usize = 16 * 1024;
        let (file, libs) = (self.e.file, self.libs);
        for block in statements.chunks(BLOCK) {
            let drafts: Vec<Drafted> = block
                .par_iter()
                .with_min_len(256)
                .map(|st| match &st.kind {
                    StatementKind::Part(p) => {
                        let mut d = Drafter {
                            file,
                            libs,
                            errors: Vec::new(),
                        };
                        let r = d.draft(p, st.span, st.line);
                        Some((r, d.errors))
                    }
                    _ => None,
                })
                .collect();
            for (st, drafted) in block.iter().zip(drafts) {
                let e = &mut self.e;
                match &st.kind {
                    StatementKind::Design { name, rev } => {
                        if self.design_seen {
                            e.err(
                                "parse-error",
                                st.span,
                                "`design` may appear only once".into(),
                                "second `design`",
                                None,
                            );
                        }
                        self.design_seen = true;
                        e.c.design = Some(name.node.to_string());
                        e.c.revision = rev.as_ref().map(|r| r.node.to_string());
                    }
                    StatementKind::Ambient(v) => {
                        if let Some(t) = e.quantity(v, Dimension::Temperature, "ambient") {
                            e.c.ambient = Some((t, v.span));
                        }
                    }
                    StatementKind::Part(p) => {
                        if let Some((draft, mut errors)) = drafted {
                            e.errors.append(&mut errors);
                            if let Some((part, name)) = draft {
                                e.commit(p, part, name);
                            }
                        }
                    }
                    StatementKind::Drive(d) => {
                        self.drives.push((**d).clone());
                        self.drive_at.push((st.span, st.line));
                    }
                    _ => {}
                }
            }
        }
    }

    /// Suppression comments, from any block.
    pub fn suppressions(&mut self, mut s: Vec<ast::Suppression>) {
        self.e.c.suppressions.append(&mut s);
    }

    pub fn finish(self) -> (Circuit, Vec<Finding>) {
        let mut e = self.e;
        for (d, (span, line)) in self.drives.iter().zip(self.drive_at) {
            let _ = e.drive(&d.pin, &d.mode, span, line);
        }
        let mut c = e.c;
        c.suppressions.sort_by_key(|s| (s.line, s.span.start()));
        for (i, d) in c.drives.iter().enumerate() {
            // drives name pins that elaboration checked exist
            let Some(k) = c.pin_index(d.part, &d.pin) else {
                continue;
            };
            c.drive_index.insert((d.part, k), i);
            if let DriveKind::Pwm {
                complement: Some(other),
                ..
            } = &d.kind
                && let Some(ko) = c.pin_index(other.0, &other.1)
            {
                c.complement.insert((d.part, k), other.clone());
                c.complement.insert((other.0, ko), (d.part, d.pin.clone()));
            }
        }
        // Every voltage is measured from ground: without one, nothing the
        // analysis reports would mean anything, so say so instead.
        if !c.parts.is_empty() && !c.nets.iter().any(|n| matches!(n.kind, NetKind::Ground)) {
            let span = c.parts.first().map(|p| p.span).unwrap_or_default();
            push_input(
                &mut e.errors,
                e.file,
                "ground-missing",
                span,
                "the netlist declares no `ground`: no voltage can be computed".into(),
                "no ground for this part",
                Some("add `ground GND` (or your ground net's name) before the parts".into()),
            );
        }
        c.fixed_nets = c
            .nets
            .iter()
            .enumerate()
            .filter_map(|(i, n)| n.fixed_max().map(|v| (i, v)))
            .collect();
        (c, e.errors)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn too_many_parts_is_one_located_error_and_nothing_elaborated() {
        let text = "ground GND\nresistor R1 (A, GND) 1k\nresistor R2 (A, GND) 1k\n\
                    resistor R3 (A, GND) 1k\n";
        let f = SourceFile::from_str("t.drive", text);
        let (ast, errs) = crate::syntax::parse(&f);
        assert!(errs.is_empty());
        let (c, errs) = elaborate_limited(&f, &ast, &[], 2);
        assert!(c.parts.is_empty());
        assert_eq!(errs.len(), 1);
        let e = &errs[0];
        assert_eq!(e.rule, "limit-exceeded");
        assert_eq!(e.class, crate::finding::Class::Input);
        assert_eq!(e.line_col(), (4, 1));
        assert_eq!(e.message, "the netlist has more than 2 parts, the limit");
        assert_eq!(group_digits(2_000_000), "2,000,000");
        assert_eq!(group_digits(999), "999");
        let (c, errs) = elaborate_limited(&f, &ast, &[], 3);
        assert_eq!((c.parts.len(), errs.len()), (3, 0));
    }
}

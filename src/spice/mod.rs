//! SPICE netlists, checked directly.
//!
//! The front end of the pipeline for a schematic's SPICE export: the
//! reader (`reader`) flattens the deck into elements, the mapping
//! (`mapping`) says what SPICE does not, and the writer below lowers both
//! to the `.drive` language — one statement per rail, ground, part and
//! drive — recording where every token came from. That netlist is checked
//! like any other, and every location of every finding is mapped back to
//! the SPICE line (or the mapping's line) it came from. `armature import
//! spice` prints the same netlist, so checking the conversion gives the
//! same findings as checking the SPICE file.

pub mod export;
pub mod mapping;
pub mod number;
pub mod reader;

use crate::fasthash::FastMap as HashMap;
use crate::finding::{Finding, Related, Severity};
use crate::model::kinds::{Kind, PinSpec};
use crate::model::library::LibraryCache;
use crate::source::{SourceFile, Span};
use crate::{FileResult, Options};
use mapping::{MapSource, Mapping, Val};
use reader::Element;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Input errors of a SPICE deck.
pub const ERROR: &str = "spice-error";
/// Input errors of a mapping.
pub const MAPPING_ERROR: &str = "mapping-error";
/// A card or element that is read but not checked.
pub const IGNORED: &str = "spice-ignored";
/// A value written with `M` (milli in SPICE) that almost surely meant mega.
pub const M_SUFFIX: &str = "spice-m-suffix";

/// A location in one of the deck's files (by index: the netlist, then its
/// includes, then the mapping).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Loc {
    pub file: usize,
    pub span: Span,
}

/// Whether `ARMATURE_TIMING` asks for the front end's stage times.
fn timing() -> bool {
    static ON: std::sync::OnceLock<bool> = std::sync::OnceLock::new();
    *ON.get_or_init(|| std::env::var_os("ARMATURE_TIMING").is_some())
}

/// The file extensions read as SPICE (any case).
pub const EXTENSIONS: &[&str] = &["cir", "sp", "spi", "net", "cki"];

pub fn is_spice(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| EXTENSIONS.iter().any(|x| x.eq_ignore_ascii_case(e)))
}

/// The two netlist formats.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Input {
    Drive,
    Spice,
}

/// Whether a file is read as SPICE: by `--input`, else by its extension.
pub fn reads_as_spice(path: &Path, opts: &Options) -> bool {
    match opts.input {
        Some(i) => i == Input::Spice,
        None => is_spice(path),
    }
}

/// Where each span of the lowered netlist came from.
pub struct Remap {
    pub drive: Arc<SourceFile>,
    pub files: Vec<Arc<SourceFile>>,
    lines: Vec<LineMap>,
}

struct LineMap {
    start: usize,
    /// (span in the lowered text, origin); the first is the whole line.
    regions: Vec<(Span, Loc)>,
    /// Further places to show (the instance lines around a flattened
    /// part, the mapping entry of a load).
    also: Vec<(String, Loc)>,
}

impl Remap {
    fn file(&self, i: usize) -> Arc<SourceFile> {
        self.files
            .get(i)
            .or_else(|| self.files.first())
            .cloned()
            .unwrap_or_else(|| self.drive.clone())
    }

    /// The origin of a span of the lowered text.
    fn origin(&self, span: Span) -> Option<(Loc, &LineMap)> {
        let i = self
            .lines
            .partition_point(|l| l.start <= span.start())
            .checked_sub(1)?;
        let line = self.lines.get(i)?;
        let best = line
            .regions
            .iter()
            .filter(|(s, _)| s.start() <= span.start() && span.start() < s.end().max(s.start() + 1))
            .min_by_key(|(s, _)| (usize::from(s.end() < span.end()), s.len()))
            .or(line.regions.first())?;
        Some((best.1, line))
    }

    /// Point a finding about the lowered netlist at the SPICE files.
    pub fn apply(&self, f: &mut Finding) {
        if !Arc::ptr_eq(&f.file, &self.drive) {
            for r in &mut f.related {
                if r.file.as_ref().is_some_and(|x| Arc::ptr_eq(x, &self.drive)) {
                    self.related(r);
                }
            }
            return;
        }
        let own = f.file.clone();
        for r in &mut f.related {
            if r.file.is_none() || r.file.as_ref().is_some_and(|x| Arc::ptr_eq(x, &own)) {
                self.related(r);
            }
        }
        match self.origin(f.span) {
            Some((loc, line)) => {
                f.file = self.file(loc.file);
                f.span = loc.span;
                for (label, at) in &line.also {
                    if *at != loc {
                        f.related.push(Related {
                            file: Some(self.file(at.file)),
                            span: at.span,
                            label: label.clone(),
                        });
                    }
                }
            }
            None => {
                f.file = self.file(0);
                f.span = Span::new(0, 0);
            }
        }
    }

    fn related(&self, r: &mut Related) {
        match self.origin(r.span) {
            Some((loc, _)) => {
                r.file = Some(self.file(loc.file));
                r.span = loc.span;
            }
            None => {
                r.file = Some(self.file(0));
                r.span = Span::new(0, 0);
            }
        }
    }
}

/// The `.drive` text being written, with the origin of each token.
struct Writer {
    text: String,
    lines: Vec<LineMap>,
    /// Write `# FILE:LINE` after each part (for `import`).
    comments: bool,
    /// Where each suppression written came from.
    copies: Vec<Loc>,
}

impl Writer {
    fn begin(&mut self, origin: Loc) {
        self.lines.push(LineMap {
            start: self.text.len(),
            regions: vec![(Span::new(self.text.len(), self.text.len()), origin)],
            also: Vec::new(),
        });
    }
    fn also(&mut self, label: String, at: Loc) {
        if let Some(l) = self.lines.last_mut() {
            l.also.push((label, at));
        }
    }
    fn raw(&mut self, s: &str) {
        self.text.push_str(s);
    }
    /// Append a token; returns its span in the lowered text.
    fn tok(&mut self, s: &str, origin: Option<Loc>) -> Span {
        let start = self.text.len();
        self.text.push_str(s);
        let span = Span::new(start, self.text.len());
        if let (Some(o), Some(l)) = (origin, self.lines.last_mut()) {
            l.regions.push((span, o));
        }
        span
    }
    fn end(&mut self) {
        let end = self.text.len();
        if let Some(l) = self.lines.last_mut()
            && let Some(first) = l.regions.first_mut()
        {
            first.0 = Span::new(first.0.start(), end);
        }
        self.text.push('\n');
    }
}

fn name_char(c: u8) -> bool {
    c.is_ascii_alphanumeric() || matches!(c, b'_' | b'-' | b'+' | b'/')
}

/// A net or designator as the `.drive` grammar reads it: bare when it
/// can be, else quoted.
fn name_token(s: &str, designator: bool) -> String {
    let b = s.as_bytes();
    let first_ok = b.first().is_some_and(|&c| {
        if designator {
            c.is_ascii_alphabetic() || c == b'_'
        } else {
            c.is_ascii_alphanumeric() || c == b'_'
        }
    });
    let rest_ok =
        b.iter().enumerate().skip(1).all(|(i, &c)| {
            name_char(c) || (c == b'.' && b.get(i + 1).copied().is_some_and(name_char))
        });
    if first_ok && rest_ok {
        s.to_string()
    } else {
        let clean: String = s
            .chars()
            .map(|c| {
                if matches!(c, '"' | '\\' | '\n') {
                    '_'
                } else {
                    c
                }
            })
            .collect();
        format!("\"{clean}\"")
    }
}

/// A number as the `.drive` language reads it, exactly.
fn num(v: f64) -> String {
    let d = format!("{v}");
    if d.len() <= 12 { d } else { format!("{v:e}") }
}

fn quote(s: &str) -> String {
    let mut o = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => o.push_str("\\\""),
            '\\' => o.push_str("\\\\"),
            c if c.is_control() => o.push(' '),
            c => o.push(c),
        }
    }
    o.push('"');
    o
}

/// `to` relative to the folder `from` (both made absolute first).
pub fn relative(from: &Path, to: &Path) -> PathBuf {
    let cwd = std::env::current_dir().unwrap_or_default();
    let abs = |p: &Path| -> Vec<String> {
        let p = if p.is_absolute() {
            p.to_path_buf()
        } else {
            cwd.join(p)
        };
        let mut out: Vec<String> = Vec::new();
        for c in p.components() {
            match c {
                std::path::Component::CurDir => {}
                std::path::Component::ParentDir => {
                    out.pop();
                }
                std::path::Component::Normal(s) => out.push(s.to_string_lossy().into_owned()),
                _ => {}
            }
        }
        out
    };
    let (a, b) = (abs(from), abs(to));
    let common = a.iter().zip(&b).take_while(|(x, y)| x == y).count();
    let mut r = PathBuf::new();
    for _ in common..a.len() {
        r.push("..");
    }
    for s in b.iter().skip(common) {
        r.push(s);
    }
    r
}

/// A rail to write: its net, where its name is, its nominal voltage (and
/// where), the line it comes from.
type RailLine = (String, Loc, Option<(String, Loc)>, Loc);

/// A SPICE deck lowered to `.drive`.
pub struct Lowered {
    pub remap: Remap,
    /// Warnings about the lowered text (checked with it, so that
    /// suppressions and severities apply).
    pub warnings: Vec<Finding>,
    /// Notes located in the SPICE files.
    pub notes: Vec<Finding>,
    /// How many parts each SPICE suppression comment was copied to, by
    /// (file, offset).
    pub copies: HashMap<(usize, usize), usize>,
}

/// What lowering needs besides the deck.
pub struct LowerOptions<'a> {
    pub opts: &'a Options,
    pub cache: &'a LibraryCache,
    /// The folder library paths are written relative to (default: the
    /// netlist's own).
    pub base: Option<&'a Path>,
    /// Comment each line with the SPICE line it came from.
    pub comments: bool,
}

/// The mapping file beside a netlist: `board.cir` → `board.map.yaml`.
pub fn sibling_map(netlist: &Path) -> PathBuf {
    let stem = netlist
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    netlist.with_file_name(format!("{stem}.map.yaml"))
}

/// Read the mapping in force for a SPICE file: `--map`, else the
/// `NAME.map.yaml` beside it, else the configuration's `spice:`, else
/// the defaults.
pub fn mapping_for(netlist: &Path, opts: &Options) -> Result<Mapping, Vec<Finding>> {
    let given = opts.spice_map.as_ref().filter(|m| m.prefix.is_empty());
    let beside = sibling_map(netlist);
    let src = match given {
        Some(m) => Some(m.clone()),
        None if beside.is_file() => Some(map_source(beside, "")),
        None => opts.spice_map.clone(),
    };
    match src {
        Some(src) => mapping::load(&src, opts.root.as_ref()),
        None => Ok(Mapping::defaults()),
    }
}

/// Read, flatten and lower a SPICE file.
pub fn lower(file: &Arc<SourceFile>, lo: &LowerOptions) -> Result<Lowered, Vec<Finding>> {
    let tm = std::time::Instant::now();
    let mut map = mapping_for(&file.path, lo.opts)?;
    if timing() {
        eprintln!("spice: mapping {:?}", tm.elapsed());
    }
    // the libraries' parts: kinds for the elements, names for hints
    let mut kinds: HashMap<String, Kind> = HashMap::default();
    let mut errors = Vec::new();
    let lib_paths: Vec<(PathBuf, String)> = map
        .libraries
        .iter()
        .map(|(p, _)| (p.clone(), crate::shown_path(p)))
        .chain(lo.opts.libraries.iter().cloned())
        .collect();
    for (p, shown) in &lib_paths {
        // a library that cannot be loaded is reported by the check of
        // the lowered netlist, at its `library` line
        if let Ok(l) = lo.cache.load(p, shown) {
            for (n, part) in &l.parts {
                kinds.insert(n.clone(), part.kind);
            }
        }
    }
    map.known_parts = kinds.keys().cloned().collect();
    map.known_parts.sort();
    let t = std::time::Instant::now();
    let deck =
        reader::Reader::new(&map, lo.opts.root.as_ref(), crate::model::MAX_PARTS).read(file)?;
    if timing() {
        eprintln!(
            "spice: read {:?} ({} elements)",
            t.elapsed(),
            deck.elements.len()
        );
    }
    let mut files = deck.files.clone();
    let map_file = files.len();
    if let Some(f) = &map.file {
        files.push(f.clone());
    }
    let mloc = |span: Span| Loc {
        file: map_file,
        span,
    };
    let mut w = Writer {
        text: String::new(),
        lines: Vec::new(),
        comments: lo.comments,
        copies: Vec::new(),
    };
    let mut warnings = Vec::new();
    let file_of = |i: usize| files.get(i).cloned().unwrap_or_else(|| file.clone());
    let err =
        |errors: &mut Vec<Finding>, loc: Loc, code: &str, msg: String, help: Option<String>| {
            let mut f = Finding::input(code, &file_of(loc.file), loc.span, msg).label("here");
            if let Some(h) = help {
                f = f.help(h);
            }
            errors.push(f);
        };
    let where_ = |loc: Loc| -> String {
        let f = file_of(loc.file);
        let (l, _) = f.line_col(loc.span.start());
        format!("{}:{l}", f.name)
    };
    let top = Loc {
        file: 0,
        span: Span::new(0, file.text.lines().next().map_or(0, str::len)),
    };
    if lo.comments {
        w.raw(&format!(
            "# Converted from the SPICE netlist {} by `armature import spice`;\n# each line names the SPICE line it came from.\n",
            file.name
        ));
    }
    if !deck.title.is_empty() {
        w.begin(top);
        w.tok("design", None);
        w.raw(" ");
        w.tok(&quote(&deck.title), Some(top));
        w.end();
    }
    let base = match lo.base {
        Some(b) => b.to_path_buf(),
        None => file
            .path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default(),
    };
    if let Some(a) = &map.ambient {
        w.begin(mloc(a.span));
        w.tok("ambient", None);
        w.raw(" ");
        w.tok(&a.text, Some(mloc(a.span)));
        w.end();
    }
    for (p, span) in &map.libraries {
        w.begin(mloc(*span));
        w.tok("library", None);
        w.raw(" ");
        let rel = relative(&base, p).to_string_lossy().replace('\\', "/");
        w.tok(&quote(&rel), Some(mloc(*span)));
        w.end();
    }
    // loads: their elements are not parts of their own
    // elements by name as written, then (with `strip_letter`) as shown
    let mut by_name: HashMap<String, usize> = HashMap::default();
    if !map.loads.is_empty() {
        for (i, e) in deck.elements.iter().enumerate() {
            by_name.insert(e.name.to_ascii_lowercase(), i);
        }
        if map.strip_letter {
            for (i, e) in deck.elements.iter().enumerate() {
                by_name
                    .entry(map.shown(&e.name).to_ascii_lowercase())
                    .or_insert(i);
            }
        }
    }
    let find = |n: &str| -> Option<usize> { by_name.get(&n.to_ascii_lowercase()).copied() };
    let mut in_load = vec![false; deck.elements.len()];
    let mut loads = Vec::new();
    for l in &map.loads {
        let mut idx = Vec::new();
        for n in &l.elements {
            match find(n) {
                Some(i) if matches!(deck.elements.get(i).map(|e| e.letter), Some(b'R' | b'L')) => {
                    idx.push(i)
                }
                Some(_) => err(
                    &mut errors,
                    mloc(l.span),
                    MAPPING_ERROR,
                    format!("`{n}` in load `{}` is not an R or an L", l.name),
                    Some(
                        "a load is the inductance and resistance of its winding, in series".into(),
                    ),
                ),
                None => err(
                    &mut errors,
                    mloc(l.span),
                    MAPPING_ERROR,
                    format!(
                        "load `{}` lists `{n}`, which is no element of the netlist",
                        l.name
                    ),
                    None,
                ),
            }
        }
        if idx.len() != l.elements.len() {
            continue;
        }
        for &i in &idx {
            if let Some(f) = in_load.get_mut(i) {
                *f = true;
            }
        }
        loads.push((l, idx));
    }
    // rails: DC sources from a net to ground
    let mut rail_src: Vec<(String, Loc, f64, Option<Loc>, &Element)> = Vec::new();
    let mut consumed = vec![false; deck.elements.len()];
    for (i, e) in deck.elements.iter().enumerate() {
        if e.letter != b'V' || map.instance(&e.name).is_some() {
            continue;
        }
        let (Some((p, pl)), Some((n, nl))) = (e.nodes.first(), e.nodes.get(1)) else {
            continue;
        };
        let v = e.value.map_or(0.0, |x| x.0.value);
        let vloc = e.value.map(|x| x.1);
        let (net, at, volts) = match (map.is_ground(p), map.is_ground(n)) {
            (false, true) => (p.clone(), *pl, v),
            (true, false) => (n.clone(), *nl, -v),
            _ => {
                err(
                    &mut errors,
                    e.name_loc,
                    ERROR,
                    format!(
                        "`{}` is a source between `{p}` and `{n}`: not a rail (a source from a net to ground), so armature cannot tell what it is",
                        e.name
                    ),
                    Some(format!(
                        "map it under `instances:` as a part, or make it a rail: a source from the net to ground (`{}: {{kind: connector, pins: [a, b]}}`)",
                        e.name
                    )),
                );
                continue;
            }
        };
        if let Some(prev) = rail_src.iter().find(|r| r.0.eq_ignore_ascii_case(&net)) {
            err(
                &mut errors,
                e.name_loc,
                ERROR,
                format!(
                    "`{}` is a second source for rail `{net}` (the first is `{}`)",
                    e.name, prev.4.name
                ),
                None,
            );
            continue;
        }
        if let Some(f) = consumed.get_mut(i) {
            *f = true;
        }
        rail_src.push((net, at, volts, vloc, e));
    }
    for r in &map.rails {
        if !rail_src.iter().any(|s| s.0.eq_ignore_ascii_case(&r.net)) && r.nominal.is_none() {
            err(
                &mut errors,
                mloc(r.span),
                MAPPING_ERROR,
                format!(
                    "rail `{}` has no DC source to ground in the netlist and no `nominal:` here",
                    r.net
                ),
                Some("give its voltage: `nominal: 5V`".into()),
            );
        }
    }
    // (net, where its name is, nominal, the line)
    let mut rails: Vec<RailLine> = rail_src
        .iter()
        .map(|(net, at, v, vloc, e)| {
            (
                net.clone(),
                *at,
                Some((format!("{}V", num(*v)), vloc.unwrap_or(e.name_loc))),
                e.line,
            )
        })
        .collect();
    for r in &map.rails {
        if !rails.iter().any(|x| x.0.eq_ignore_ascii_case(&r.net))
            && let Some(nom) = &r.nominal
        {
            rails.push((
                r.net.clone(),
                mloc(r.span),
                Some((nom.text.clone(), mloc(nom.span))),
                mloc(r.span),
            ));
        }
    }
    for (net, name_at, nominal, at) in &rails {
        w.begin(*at);
        w.tok("rail", None);
        w.raw(" ");
        w.tok(&name_token(net, false), Some(*name_at));
        if let Some((v, vloc)) = nominal {
            w.raw(" ");
            w.tok(v, Some(*vloc));
        }
        if let Some(m) = map.rail(net) {
            // the mapping's nominal, when the source gives none
            for (kw, v) in [("max", &m.max), ("min", &m.min), ("tol", &m.tol)] {
                if let Some(v) = v {
                    w.raw(" ");
                    w.tok(kw, Some(mloc(v.span)));
                    w.raw(" ");
                    w.tok(&v.text, Some(mloc(v.span)));
                }
            }
            if at.file != map_file {
                w.also(format!("rail `{net}` in the mapping"), mloc(m.span));
            }
        }
        if w.comments && at.file != map_file {
            w.raw(&format!("  # {}", where_(*at)));
        }
        w.end();
    }
    // grounds, in order of first use
    let mut grounds: Vec<(String, Loc)> = Vec::new();
    for e in &deck.elements {
        for (n, loc) in &e.nodes {
            if map.is_ground(n) && !grounds.iter().any(|g| g.0.eq_ignore_ascii_case(n)) {
                grounds.push((n.clone(), *loc));
            }
        }
    }
    for (g, loc) in &grounds {
        w.begin(*loc);
        w.tok("ground", None);
        w.raw(" ");
        w.tok(&name_token(g, false), Some(*loc));
        w.end();
    }
    // parts
    for (i, e) in deck.elements.iter().enumerate() {
        if in_load.get(i).copied().unwrap_or(false) || consumed.get(i).copied().unwrap_or(false) {
            continue;
        }
        part(
            &mut w,
            e,
            &map,
            &deck,
            &kinds,
            mloc,
            &mut errors,
            &mut warnings,
            &file_of,
            &where_,
        );
    }
    // how many element pins each net has (a load's inner node has two)
    let mut touches: HashMap<String, usize> = HashMap::default();
    if !loads.is_empty() {
        for e in &deck.elements {
            for (n, _) in &e.nodes {
                *touches.entry(n.to_ascii_lowercase()).or_default() += 1;
            }
        }
    }
    for (l, idx) in &loads {
        let els: Vec<&Element> = idx.iter().filter_map(|&i| deck.elements.get(i)).collect();
        let Some(first) = els.first() else { continue };
        // the ends of the series chain: nodes used once
        let mut count: HashMap<String, usize> = HashMap::default();
        for e in &els {
            for (n, _) in e.nodes.iter().take(2) {
                *count.entry(n.to_ascii_lowercase()).or_default() += 1;
            }
        }
        let ends: Vec<&(String, Loc)> = els
            .iter()
            .flat_map(|e| e.nodes.iter().take(2))
            .filter(|(n, _)| count.get(&n.to_ascii_lowercase()) == Some(&1))
            .collect();
        // an inner node of the chain joins its elements only
        let inner_used = count.iter().any(|(n, &c)| {
            c == 2
                && (map.is_ground(n)
                    || rail_src.iter().any(|r| r.0.eq_ignore_ascii_case(n))
                    || touches.get(n.as_str()).copied().unwrap_or(0) > c)
        });
        let chain = ends.len() == 2
            && count.values().all(|&c| c <= 2)
            && count.len() == els.len() + 1
            && !inner_used;
        let (Some(plus), Some(minus), true) = (ends.first(), ends.get(1), chain) else {
            err(
                &mut errors,
                mloc(l.span),
                MAPPING_ERROR,
                format!(
                    "the elements of load `{}` ({}) are not one series chain",
                    l.name,
                    l.elements.join(", ")
                ),
                Some("list the L and the R of the winding, connected end to end".into()),
            );
            continue;
        };
        w.begin(first.line);
        w.also(format!("load `{}` in the mapping", l.name), mloc(l.span));
        for e in &els {
            for (label, at) in &e.via {
                w.also(format!("inside instance `{label}`"), *at);
            }
        }
        w.tok(l.kind.name(), Some(first.name_loc));
        w.raw(" ");
        w.tok(&name_token(&l.name, true), Some(mloc(l.span)));
        w.raw(" (");
        let pins: (&str, &str) = if l.kind == Kind::Inductor {
            ("1", "2")
        } else {
            ("+", "-")
        };
        w.tok(
            &format!("{}: {}", pins.0, name_token(&plus.0, false)),
            Some(plus.1),
        );
        w.raw(", ");
        w.tok(
            &format!("{}: {}", pins.1, name_token(&minus.0, false)),
            Some(minus.1),
        );
        w.raw(")");
        let sum = |letter: u8| -> Option<(f64, Loc)> {
            let v: Vec<&Element> = els.iter().copied().filter(|e| e.letter == letter).collect();
            let first = v.first()?.value?.1;
            Some((
                v.iter().filter_map(|e| e.value.map(|x| x.0.value)).sum(),
                first,
            ))
        };
        if let Some((lh, at)) = sum(b'L') {
            if l.kind == Kind::Inductor {
                w.raw(" ");
                w.tok(&format!("{}H", num(lh)), Some(at));
            } else {
                w.raw(" l=");
                w.tok(&format!("{}H", num(lh)), Some(at));
            }
        }
        if let Some((r, at)) = sum(b'R') {
            w.raw(" r=");
            w.tok(&format!("{}ohm", num(r)), Some(at));
        }
        if let Some(p) = &l.part {
            w.raw(" part=");
            w.tok(&p.text, Some(mloc(p.span)));
        }
        params(&mut w, &l.params, mloc);
        if w.comments {
            let at: Vec<String> = els.iter().map(|e| where_(e.line)).collect();
            w.raw(&format!("  # {}", at.join(", ")));
        }
        w.end();
    }
    for d in &map.drive {
        let at = mloc(d.span);
        w.begin(at);
        let text = d.text.trim();
        let text = text.strip_prefix("drive ").unwrap_or(text).trim_start();
        w.tok("drive", None);
        w.raw(" ");
        // tokens mapped to their place in the YAML when written as is
        let raw = map.file.as_ref().map_or("", |f| f.slice(d.span));
        let inner_at = raw.find(text).map(|o| d.span.start() + o);
        let mut off = 0;
        for (k, part) in text.split(' ').enumerate() {
            if k > 0 {
                w.raw(" ");
            }
            let origin = inner_at.map(|s| mloc(Span::new(s + off, s + off + part.len())));
            w.tok(part, origin.or(Some(at)));
            off += part.len() + 1;
        }
        w.end();
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    let drive = SourceFile::new(file.name.clone(), &file.path, w.text);
    // the warnings were located in a text that now has its file
    for f in &mut warnings {
        f.file = drive.clone();
    }
    let mut copies: HashMap<(usize, usize), usize> = HashMap::default();
    for l in &w.copies {
        if let Some(f) = files.get(l.file) {
            *copies
                .entry((Arc::as_ptr(f) as usize, l.span.start()))
                .or_default() += 1;
        }
    }
    Ok(Lowered {
        copies,
        remap: Remap {
            drive,
            files,
            lines: w.lines,
        },
        warnings,
        notes: deck.notes,
    })
}

fn params(w: &mut Writer, params: &[(String, Val)], mloc: impl Fn(Span) -> Loc) {
    for (k, v) in params {
        w.raw(" ");
        w.tok(k, Some(mloc(v.span)));
        w.raw("=");
        let text = if v.text.contains(char::is_whitespace) {
            quote(&v.text)
        } else {
            v.text.clone()
        };
        w.tok(&text, Some(mloc(v.span)));
    }
}

/// The kind a D, M or Q element has when its model names no library part.
fn kind_of_letter(e: &Element, deck: &reader::Deck) -> Option<Kind> {
    let model = e
        .model
        .as_ref()
        .and_then(|(m, _)| deck.models.get(&m.to_ascii_lowercase()));
    let mtype = model
        .map(|m| m.kind.to_ascii_uppercase())
        .unwrap_or_default();
    match e.letter {
        b'D' => Some(Kind::Diode),
        b'M' => {
            let p = mtype == "PMOS" || model.is_some_and(|m| m.param("pchan").is_some());
            Some(if p { Kind::Pmos } else { Kind::Nmos })
        }
        b'Q' => Some(if mtype == "PNP" { Kind::Pnp } else { Kind::Npn }),
        _ => None,
    }
}

#[allow(clippy::too_many_arguments)]
fn part(
    w: &mut Writer,
    e: &Element,
    map: &Mapping,
    deck: &reader::Deck,
    kinds: &HashMap<String, Kind>,
    mloc: impl Fn(Span) -> Loc + Copy,
    errors: &mut Vec<Finding>,
    warnings: &mut Vec<Finding>,
    file_of: &dyn Fn(usize) -> Arc<SourceFile>,
    where_: &dyn Fn(Loc) -> String,
) {
    let shown = map.shown(&e.name);
    let err = |errors: &mut Vec<Finding>, loc: Loc, msg: String, help: String| {
        errors.push(
            Finding::input(ERROR, &file_of(loc.file), loc.span, msg)
                .label("here")
                .help(help),
        );
    };
    let inst = map.instance(&e.name);
    // kind, part and pin names
    let (kind, part, pins): (Kind, Option<(String, Loc)>, Vec<String>) = if let Some(m) = inst {
        (
            m.kind,
            m.part.as_ref().map(|p| (p.text.clone(), mloc(p.span))),
            m.pins.clone(),
        )
    } else {
        match e.letter {
            b'R' => (Kind::Resistor, None, Vec::new()),
            b'C' => (Kind::Capacitor, None, Vec::new()),
            b'L' => (Kind::Inductor, None, Vec::new()),
            b'D' | b'M' | b'Q' | b'X' => {
                let Some((model, model_loc)) = &e.model else {
                    return;
                };
                let (pname, ploc) = match map.model(model) {
                    Some(v) => (v.text.clone(), mloc(v.span)),
                    None => (model.clone(), *model_loc),
                };
                let lib_kind = kinds.get(&pname).copied();
                let kind = match (lib_kind, kind_of_letter(e, deck)) {
                    (Some(k), Some(_)) => {
                        let fits = match e.letter {
                            b'D' => k.is_diode(),
                            b'M' => k.is_mos(),
                            _ => k.is_bipolar(),
                        };
                        if !fits {
                            err(
                                errors,
                                e.name_loc,
                                format!(
                                    "`{}` is a {} in SPICE, but its part `{pname}` is a {}",
                                    e.name,
                                    letter_name(e.letter),
                                    k.name()
                                ),
                                format!("map model `{model}` to a part of the right kind"),
                            );
                            return;
                        }
                        k
                    }
                    (Some(k), None) => k,
                    (None, Some(k)) => k,
                    (None, None) => {
                        let hint = crate::suggest::did_you_mean(
                            &pname,
                            map.known_parts.iter().map(String::as_str),
                        );
                        // the rule a `.drive` line naming a missing part
                        // breaks; an input error here, as without the
                        // part's kind the instance cannot be lowered
                        errors.push(
                            Finding::input(
                                "part-not-in-library",
                                &file_of(ploc.file),
                                ploc.span,
                                format!(
                                    "`{}` is an instance of `{model}`, mapped to `{pname}`, which no loaded library has",
                                    e.name
                                ),
                            )
                            .label("no such part")
                            .help(if hint.is_empty() {
                                "add the part to a library the mapping lists".to_string()
                            } else {
                                hint
                            })
                            .parts([shown.clone()]),
                        );
                        return;
                    }
                };
                let pins: Vec<String> = match kind.pins() {
                    PinSpec::Fixed(f) => f.iter().map(|(n, _)| n.to_string()).collect(),
                    PinSpec::Any => {
                        err(
                            errors,
                            e.name_loc,
                            format!(
                                "`{}` is a {}: its pin names are not known",
                                e.name,
                                kind.name()
                            ),
                            format!(
                                "map it under `instances:` with its pins in node order: `{}: {{kind: {}, part: {pname}, pins: [...]}}`",
                                e.name,
                                kind.name()
                            ),
                        );
                        return;
                    }
                };
                if e.letter == b'X' && e.nodes.len() > pins.len() {
                    err(
                        errors,
                        e.name_loc,
                        format!(
                            "`{}` connects {} nodes; a {} has {} pins ({})",
                            e.name,
                            e.nodes.len(),
                            kind.name(),
                            pins.len(),
                            pins.join(" ")
                        ),
                        "map it under `instances:` with its pins in node order".into(),
                    );
                    return;
                }
                (kind, Some((pname, ploc)), pins)
            }
            // a V source that is no rail is reported with the rails
            b'V' => return,
            b'I' => {
                err(
                    errors,
                    e.name_loc,
                    format!(
                        "`{}` is a current source: armature cannot tell what it stands for",
                        e.name
                    ),
                    format!(
                        "map it under `instances:` as a part, or remove it (`{}: {{kind: connector, pins: [a, b]}}`)",
                        e.name
                    ),
                );
                return;
            }
            _ => return,
        }
    };
    for a in &e.allow {
        w.copies.push(a.loc);
        w.begin(a.loc);
        w.tok(&format!("# {}", a.text), Some(a.loc));
        w.end();
    }
    w.begin(e.line);
    for (label, at) in &e.via {
        w.also(format!("inside instance `{label}`"), *at);
    }
    if let Some(m) = inst {
        w.also(format!("`{}` in the mapping", m.name), mloc(m.span));
    }
    w.tok(kind.name(), Some(e.name_loc));
    w.raw(" ");
    w.tok(&name_token(&shown, true), Some(e.name_loc));
    w.raw(" (");
    let positional = kind.positional_pins().is_some()
        && inst.is_none_or(|m| {
            Some(m.pins.iter().map(String::as_str).collect::<Vec<_>>())
                == kind.positional_pins().map(|p| p.to_vec())
        });
    for (k, (n, loc)) in e.nodes.iter().enumerate() {
        if k > 0 {
            w.raw(", ");
        }
        let net = name_token(n, false);
        if positional {
            w.tok(&net, Some(*loc));
        } else {
            // `pin: NET` is one place: the node in the SPICE line
            let pin = pins.get(k).map_or("?", String::as_str);
            w.tok(&format!("{pin}: {net}"), Some(*loc));
        }
    }
    w.raw(")");
    if let Some((v, vloc)) = &e.value
        && let Some(unit) = match kind {
            Kind::Resistor => Some("ohm"),
            Kind::Capacitor => Some("F"),
            Kind::Inductor => Some("H"),
            _ => None,
        }
    {
        w.raw(" ");
        let span = w.tok(&format!("{}{unit}", num(v.value)), Some(*vloc));
        if v.upper_m && matches!(e.letter, b'R' | b'C') {
            let written = file_of(vloc.file).slice(vloc.span).to_string();
            let (what, meant) = if e.letter == b'R' {
                ("mΩ", "MΩ")
            } else {
                ("mF", "MF")
            };
            warnings.push(
                Finding::new(
                    M_SUFFIX,
                    Severity::Warning,
                    &file_of(0),
                    span,
                    format!(
                        "`{written}` on `{shown}` is {} {what} in SPICE: `M` is milli, in any case",
                        crate::units::sig3(v.value * 1e3)
                    ),
                )
                .label("milli, not mega")
                .help(format!(
                    "write `{}Meg` for {meant}, or `{}m` to keep milli and silence this",
                    written.trim_end_matches(|c: char| c.is_ascii_alphabetic()),
                    written.trim_end_matches(|c: char| c.is_ascii_alphabetic())
                ))
                .parts([shown.clone()]),
            );
        }
    }
    if let Some((p, ploc)) = &part {
        w.raw(" part=");
        w.tok(name_token(p, true).trim_matches('"'), Some(*ploc));
    }
    if let Some(m) = inst {
        params(w, &m.params, mloc);
    }
    if w.comments {
        let mut at = where_(e.line);
        for (label, l) in &e.via {
            let _ = write!(at, ", in {label} ({})", where_(*l));
        }
        w.raw(&format!("  # {at}"));
    }
    w.end();
}

fn letter_name(l: u8) -> &'static str {
    match l {
        b'D' => "diode",
        b'M' => "MOSFET",
        b'Q' => "bipolar transistor",
        _ => "subcircuit",
    }
}

/// Check a SPICE netlist in memory.
pub fn check_source(file: Arc<SourceFile>, opts: &Options, cache: &LibraryCache) -> FileResult {
    let lo = LowerOptions {
        opts,
        cache,
        base: None,
        comments: false,
    };
    let t0 = std::time::Instant::now();
    let lowered = match lower(&file, &lo) {
        Ok(l) => l,
        Err(e) => return FileResult::failed(file, e, opts),
    };
    let t1 = std::time::Instant::now();
    let mut r =
        crate::check_source_with(lowered.remap.drive.clone(), opts, cache, lowered.warnings);
    for f in &mut r.findings {
        lowered.remap.apply(f);
    }
    r.findings.extend(lowered.notes);
    crate::report::sort_findings(&mut r.findings);
    if timing() {
        eprintln!("spice: lower {:?}, check {:?}", t1 - t0, t1.elapsed());
    }
    r.file = file;
    r
}

/// Build a SPICE netlist for `facts` and `export` (errors located in the
/// SPICE files).
pub fn build(
    file: &Arc<SourceFile>,
    opts: &Options,
    cache: &LibraryCache,
) -> Result<crate::Built, Vec<Finding>> {
    let lo = LowerOptions {
        opts,
        cache,
        base: None,
        comments: false,
    };
    let lowered = lower(file, &lo)?;
    crate::build(&lowered.remap.drive, opts, cache).map_err(|mut errs| {
        for f in &mut errs {
            lowered.remap.apply(f);
        }
        errs
    })
}

/// The `.drive` text of a SPICE file (for `import spice`).
pub fn import(
    path: &Path,
    opts: &Options,
    cache: &LibraryCache,
    base: &Path,
) -> Result<String, Vec<Finding>> {
    let shown = crate::shown_path(path);
    let file = crate::read_netlist(path, &shown).map_err(|f| vec![f])?;
    let lo = LowerOptions {
        opts,
        cache,
        base: Some(base),
        comments: true,
    };
    let l = lower(&file, &lo)?;
    Ok(l.remap.drive.text.clone())
}

/// Keep the source for `MapSource` users outside.
pub fn map_source(path: PathBuf, prefix: &str) -> MapSource {
    MapSource {
        path,
        prefix: prefix.to_string(),
    }
}

//! armature — a design-rule checker for netlist-described motor drives.
//!
//! The pipeline runs one way: `syntax` → `model` → `graph` → `analysis` →
//! `checks` (+ `team`) → `report`. Everything is callable on a string:
//! see [`check_text`].

// A `Finding` is returned by value on the error path of a few readers; it
// is built once per failed file, so boxing it would buy nothing.
#![allow(clippy::result_large_err)]

// The generated parsers name `alloc` (pest is built without its `std`
// feature, which would add a stack-depth probe to every rule call: the
// netlist grammar does not recurse, and expressions are depth-checked
// before they reach their recursive grammar).
extern crate alloc;

pub mod analysis;
pub mod checks;
pub mod cli;
pub mod config;
pub mod fasthash;
pub mod finding;
pub mod graph;
pub mod lsp;
pub mod model;
pub mod progress;
pub mod report;
pub mod settings;
pub mod source;
pub mod spice;
pub mod suggest;
pub mod suppress;
pub mod syntax;
pub mod team;
pub mod trust;
pub mod units;
pub mod yaml;

use finding::{Class, Finding, Severity};
use model::library::LibraryCache;
use model::{Circuit, Library};
use settings::Settings;
use source::{SourceFile, Span};
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// What a run needs beyond the netlist itself.
#[derive(Default)]
pub struct Options {
    /// Parts libraries from the command line and the configuration:
    /// (path to read, name to show).
    pub libraries: Vec<(PathBuf, String)>,
    pub settings: Settings,
    /// Team rules from rule files.
    pub team: Vec<Arc<team::TeamRule>>,
    /// The project root that the netlist's `library` paths must stay in
    /// (`None`: no limit, for embedding and tests on strings).
    pub root: Option<trust::Root>,
    /// The configuration file in force (as shown), if any.
    pub config: Option<String>,
    /// The SPICE mapping in force (`spice:` of the configuration, or
    /// `--map`).
    pub spice_map: Option<spice::mapping::MapSource>,
    /// Read every file as this format (`--input`), whatever its name
    /// (`None`: by extension).
    pub input: Option<spice::Input>,
    /// Keep what the HTML report draws of each finding (`FileResult::scenes`).
    pub scenes: bool,
}

/// The outcome of checking one file.
pub struct FileResult {
    pub file: Arc<SourceFile>,
    pub findings: Vec<Finding>,
    pub suppressed: usize,
    /// Derating in force for the file.
    pub settings: Settings,
    /// The configuration file in force for it, if any.
    pub config: Option<String>,
    /// What the HTML report draws of its findings (with `Options::scenes`).
    pub scenes: Option<Box<report::html::scene::Scenes>>,
}

impl FileResult {
    /// A file that could not be checked: its input errors, sorted.
    pub fn failed(file: Arc<SourceFile>, mut findings: Vec<Finding>, opts: &Options) -> FileResult {
        report::sort_findings(&mut findings);
        FileResult {
            file,
            findings,
            suppressed: 0,
            settings: opts.settings.clone(),
            config: opts.config.clone(),
            scenes: None,
        }
    }

    pub fn input_error(&self) -> bool {
        self.findings.iter().any(|f| f.class == Class::Input)
    }
}

/// Everything built for a file, for `facts` and `export`.
pub struct Built {
    pub circuit: Circuit,
    pub graph: graph::CircuitGraph,
    pub analysis: analysis::Analysis,
    pub settings: Settings,
}

/// Load the netlist's `library` lines (relative to its folder) and the
/// libraries given on the command line or in the configuration.
fn load_libraries(
    file: &Arc<SourceFile>,
    header: &syntax::ast::Netlist<'_>,
    opts: &Options,
    cache: &LibraryCache,
    errors: &mut Vec<Finding>,
) -> Vec<Arc<Library>> {
    let mut libs: Vec<Arc<Library>> = Vec::new();
    let base = file
        .path
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    for (text, span) in model::library_lines(&header.statements) {
        let path = base.join(&text);
        let shown = shown_path(&path);
        if let Some(Err(why)) = opts.root.as_ref().map(|r| r.check(&path)) {
            errors.push(
                Finding::input("library-error", file, span, format!("library `{text}` is not read: {why}"))
                    .label("outside the project")
                    .help("keep parts libraries inside the project, or pass `--allow-outside-root` for a netlist you trust"),
            );
            continue;
        }
        match cache.load(&path, &shown) {
            Ok(l) => libs.push(l),
            Err(errs) => {
                for e in errs {
                    if e.file.text.is_empty() && e.rule == "file-error" {
                        // unreadable: point at the `library` line
                        errors.push(
                            Finding::input("library-error", file, span, e.message.clone())
                                .label("this library")
                                .help(format!(
                                    "the path is relative to this netlist's folder: {}",
                                    shown
                                )),
                        );
                    } else {
                        errors.push(e);
                    }
                }
            }
        }
    }
    for (path, shown) in &opts.libraries {
        match cache.load(path, shown) {
            Ok(l) => libs.push(l),
            Err(errs) => errors.extend(errs),
        }
    }
    libs
}

/// Parse, elaborate and analyse; `Err` with the input errors when the file
/// cannot be checked.
pub fn build(
    file: &Arc<SourceFile>,
    opts: &Options,
    cache: &LibraryCache,
) -> Result<Built, Vec<Finding>> {
    build_limited(file, opts, cache, model::MAX_PARTS)
}

fn build_limited(
    file: &Arc<SourceFile>,
    opts: &Options,
    cache: &LibraryCache,
    max_parts: usize,
) -> Result<Built, Vec<Finding>> {
    progress::announce(&file.name, progress::Stage::Read);
    // The file is read in two passes over its lines: first the lines that
    // every part depends on (rails, grounds, libraries), then the rest in
    // blocks, each parsed and elaborated and then dropped, so that the
    // syntax tree of a large board never exists whole.
    let lines = syntax::Lines::new(file);
    let (mut header_lines, mut body_lines, mut n_drives) = (Vec::new(), Vec::new(), 0usize);
    for (base, text) in lines.iter() {
        match syntax::Lines::class(text) {
            syntax::LineClass::Header => header_lines.push((base, text)),
            syntax::LineClass::Drive => {
                n_drives += 1;
                body_lines.push((base, text));
            }
            syntax::LineClass::Body => body_lines.push((base, text)),
        }
    }
    let (header, mut header_errors) = syntax::parse_lines(file, header_lines);
    let mut errors = Vec::new();
    let libs = load_libraries(file, &header, opts, cache, &mut errors);
    // the part limit is held while reading: the line of the first part
    // beyond it is found from the lines' first words, before anything of
    // the body is parsed or elaborated
    let over = if body_lines.len() - n_drives > max_parts {
        body_lines
            .iter()
            .filter(|(_, t)| syntax::Lines::may_be_part(t))
            .nth(max_parts)
            .map(|&(base, t)| Span::new(base, base + t.len()))
    } else {
        None
    };
    let (circuit, mut elab_errors) = if let Some(span) = over {
        drop(body_lines);
        model::over_limit(file, span, max_parts)
    } else {
        errors.append(&mut header_errors);
        let mut el = model::Elaborator::new(file, &libs, body_lines.len() - n_drives, n_drives);
        el.header(&header.statements);
        el.suppressions(header.suppressions);
        for block in body_lines.chunks(64 * 1024) {
            let (ast, mut e) = syntax::parse_lines(file, block.to_vec());
            errors.append(&mut e);
            el.body(&ast.statements);
            el.suppressions(ast.suppressions);
        }
        el.finish()
    };
    drop(lines);
    errors.append(&mut elab_errors);
    let mut settings = opts.settings.clone();
    settings.known_part_names = libs.iter().flat_map(|l| l.parts.keys().cloned()).collect();
    settings.known_part_names.sort();
    if let Some((t, _)) = circuit.ambient {
        settings.ambient = t;
    }
    if circuit.nets.is_empty()
        && circuit.parts.is_empty()
        && !errors.iter().any(|e| e.class == Class::Input)
    {
        errors.push(
            Finding::input(
                "file-error",
                file,
                Span::new(0, 0),
                format!(
                    "`{}` holds no statements: there is nothing to check",
                    file.name
                ),
            )
            .help("a netlist names at least its rails, its ground and its parts"),
        );
    }
    if errors.iter().any(|e| e.class == Class::Input) {
        return Err(errors);
    }
    let graph = graph::CircuitGraph::build(&circuit);
    progress::announce(&file.name, progress::Stage::Analyse);
    let analysis = analysis::analyze(&circuit, &graph, &settings);
    // warnings found while parsing (malformed suppressions) travel along
    let mut built = Built {
        circuit,
        graph,
        analysis,
        settings,
    };
    built.analysis.early.append(&mut errors);
    Ok(built)
}

/// Check one file already in memory.
pub fn check_source(file: Arc<SourceFile>, opts: &Options, cache: &LibraryCache) -> FileResult {
    check_source_with(file, opts, cache, Vec::new())
}

/// `check_source`, with findings of a front end (about the same file)
/// that go through severities and suppressions with the rest.
pub fn check_source_with(
    file: Arc<SourceFile>,
    opts: &Options,
    cache: &LibraryCache,
    extra: Vec<Finding>,
) -> FileResult {
    let result = match build(&file, opts, cache) {
        Err(findings) => FileResult::failed(file, findings, opts),
        Ok(mut b) => {
            progress::announce(&file.name, progress::Stage::Check);
            let mut findings = std::mem::take(&mut b.analysis.early);
            findings.extend(extra);
            let ctx = checks::Ctx {
                circuit: &b.circuit,
                graph: &b.graph,
                analysis: &b.analysis,
                settings: &b.settings,
            };
            findings.extend(checks::run_all(&ctx));
            findings.extend(team::run(&opts.team, &b.circuit, &b.analysis, &b.settings));
            for f in &mut findings {
                if let Some(s) = b.settings.severity_of(&f.rule, f.severity) {
                    f.severity = s;
                }
            }
            let (mut findings, suppressed) = suppress::apply(&b.circuit, findings);
            report::sort_findings(&mut findings);
            let scenes = opts
                .scenes
                .then(|| Box::new(report::html::scene::collect(&b, &findings)));
            FileResult {
                file,
                findings,
                suppressed,
                settings: b.settings,
                config: opts.config.clone(),
                scenes,
            }
        }
    };
    progress::announce(&result.file.name, progress::Stage::Done);
    result
}

/// Check a netlist given as a string (tests, benches, embedding).
pub fn check_text(name: &str, text: &str, opts: &Options) -> FileResult {
    let cache = LibraryCache::default();
    check_source(SourceFile::from_str(name, text), opts, &cache)
}

/// Read and check a file on disk.
pub fn check_path(path: &Path, opts: &Options, cache: &LibraryCache) -> FileResult {
    let shown = shown_path(path);
    match read_netlist(path, &shown) {
        Ok(file) if spice::reads_as_spice(path, opts) => spice::check_source(file, opts, cache),
        Ok(file) => check_source(file, opts, cache),
        Err(f) => FileResult::failed(f.file.clone(), vec![f], opts),
    }
}

/// The largest netlist accepted.
pub const MAX_FILE_BYTES: u64 = 256 << 20;

pub fn read_netlist(path: &Path, shown: &str) -> Result<Arc<SourceFile>, Finding> {
    model::library::read_text_limited(path, shown, MAX_FILE_BYTES)
}

/// A path as shown to users: relative to the current folder when inside it.
pub fn shown_path(path: &Path) -> String {
    // the process never changes its folder: ask the system once
    static CWD: std::sync::OnceLock<Option<PathBuf>> = std::sync::OnceLock::new();
    let cwd = CWD.get_or_init(|| std::env::current_dir().ok());
    let clean = |p: &Path| -> PathBuf {
        let mut out = PathBuf::new();
        for c in p.components() {
            match c {
                std::path::Component::CurDir => {}
                std::path::Component::ParentDir => {
                    // only a named folder is undone by `..`: a leading
                    // `..` (or a run of them) stays
                    let named = matches!(
                        out.components().next_back(),
                        Some(std::path::Component::Normal(_))
                    );
                    if named {
                        out.pop();
                    } else if !matches!(
                        out.components().next_back(),
                        Some(std::path::Component::RootDir)
                    ) {
                        out.push("..");
                    }
                }
                other => out.push(other.as_os_str()),
            }
        }
        out
    };
    let p = clean(path);
    let shown = match cwd.as_ref().and_then(|cwd| p.strip_prefix(cwd).ok()) {
        Some(rel) => rel.to_string_lossy().replace('\\', "/"),
        None => p.to_string_lossy().replace('\\', "/"),
    };
    if shown.is_empty() {
        ".".to_string()
    } else {
        shown
    }
}

/// Exit code for a set of results: 2 input errors, 1 findings at or above
/// the failing level, 0 otherwise.
pub fn exit_code<'a>(results: impl IntoIterator<Item = &'a FileResult>, fail_on: Severity) -> i32 {
    let mut code = 0;
    for r in results {
        if r.input_error() {
            return 2;
        }
        if r.findings.iter().any(|f| f.severity >= fail_on) {
            code = 1;
        }
    }
    code
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The part limit is found from the lines, without parsing the body:
    /// the error points at the first part beyond it, and comments,
    /// `design` and `drive` lines do not count.
    #[test]
    fn the_part_limit_is_held_while_reading() {
        let text = "design \"limit\"\nground GND\n# a comment\nresistor R1 (A, GND) 1k\n\
                    drive U1.PA0 static\nresistor R2 (A, GND) 1k\n  # another\n\
                    resistor R3 (A, GND) 1k\nresistor R4 (A, GND) 1k\n";
        let f = SourceFile::from_str("t.drive", text);
        let cache = LibraryCache::default();
        let Err(errs) = build_limited(&f, &Options::default(), &cache, 2) else {
            panic!("over the limit, accepted");
        };
        let e = errs.iter().find(|e| e.rule == "limit-exceeded");
        let Some(e) = e else {
            panic!("{:?}", errs.iter().map(|e| &e.message).collect::<Vec<_>>())
        };
        assert_eq!(e.line_col(), (8, 1));
        // at the limit: elaborated (the drive names no controller, which
        // is the only error)
        match build_limited(&f, &Options::default(), &cache, 4) {
            Ok(_) => panic!("the drive of no controller was accepted"),
            Err(errs) => assert!(
                errs.iter().all(|e| e.rule != "limit-exceeded") && !errs.is_empty(),
                "{:?}",
                errs.iter().map(|e| &e.message).collect::<Vec<_>>()
            ),
        }
    }
}

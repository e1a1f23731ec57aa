//! The command line: a thin layer over the library.

use crate::finding::{Finding, Severity};
use crate::model::library::LibraryCache;
use crate::report::{self, Format};
use crate::{FileResult, Options};
use clap::{Args, Parser, Subcommand, ValueEnum};
use rayon::prelude::*;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

#[derive(Parser, Debug)]
#[command(
    name = "armature",
    version,
    about = "Design-rule checker for motor, solenoid and relay drive circuits described in .drive or SPICE netlists"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Check netlists (.drive or SPICE files, or folders: every *.drive below, sorted)
    Check(CheckArgs),
    /// Write an HTML report of a check: every finding with its sub-circuit
    /// drawn, its switches' simulated edges plotted and its parts' facts
    Report(ReportArgs),
    /// Explain a rule: what it checks, why, the formula, a bad and a good example
    Explain {
        /// Rule id, for example `freewheel-missing`
        rule: String,
        #[command(flatten)]
        common: CommonArgs,
    },
    /// List every built-in and loaded rule
    Rules {
        #[command(flatten)]
        common: CommonArgs,
    },
    /// Export a simulator testbench
    Export {
        #[command(subcommand)]
        what: ExportWhat,
    },
    /// Convert a netlist of another format to the `.drive` language
    Import {
        #[command(subcommand)]
        what: ImportWhat,
    },
    /// Serve diagnostics, hover, definitions, completion and fixes to an
    /// editor (the Language Server Protocol over stdio)
    Lsp,
    /// Print the computed quantities of every part of a netlist
    Facts {
        /// A netlist, or a folder (every netlist below it, sorted)
        path: PathBuf,
        #[arg(long, value_enum, default_value_t = FactsFormat::Human)]
        format: FactsFormat,
        /// Print the simulated waveform of this switch's edge instead
        /// (time, V_DS, V_GS, channel current, load current, clamp current)
        #[arg(long, value_name = "REF")]
        wave: Option<String>,
        /// Which edge `--wave` prints
        #[arg(long, value_enum, default_value_t = EdgeArg::Off, requires = "wave")]
        edge: EdgeArg,
        #[command(flatten)]
        input: InputArgs,
        #[command(flatten)]
        common: CommonArgs,
    },
}

#[derive(Subcommand, Debug)]
pub enum ImportWhat {
    /// A SPICE netlist (with its mapping) as the equivalent `.drive`
    /// netlist, each line commented with the SPICE line it came from
    Spice {
        file: PathBuf,
        /// Write the netlist to this file (library paths relative to its
        /// folder) instead of standard output
        #[arg(short = 'o', long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// The SPICE mapping (YAML) to use instead of the `NAME.map.yaml`
        /// beside the netlist or the `spice:` section of the configuration
        #[arg(long, value_name = "FILE")]
        map: Option<PathBuf>,
        #[command(flatten)]
        common: CommonArgs,
    },
}

#[derive(Subcommand, Debug)]
pub enum ExportWhat {
    /// The group of one switch as an ngspice deck, with the engine's device
    /// models: its simulated turn-off (the default), or one operating point
    Spice {
        file: PathBuf,
        /// The switch (default: the first switch of an inductive load)
        #[arg(long)]
        part: Option<String>,
        /// An operating point instead of the turn-off: the pin state's
        /// number, in the order `armature facts` lists them (0 = reset)
        #[arg(long, value_name = "N")]
        state: Option<usize>,
        /// The rails' corner of the operating point
        #[arg(long, value_enum, default_value_t = CornerArg::Max, requires = "state")]
        corner: CornerArg,
        /// The whole board as a plain SPICE netlist (as a schematic tool
        /// would export it), instead of one switch's testbench
        #[arg(long, conflicts_with_all = ["part", "state"])]
        board: bool,
        /// With `--board`: write the mapping that reads the netlist back
        /// to this file
        #[arg(long = "map-out", value_name = "FILE", requires = "board")]
        map_out: Option<PathBuf>,
        #[command(flatten)]
        input: InputArgs,
        #[command(flatten)]
        common: CommonArgs,
    },
}

#[derive(Args, Debug, Default, Clone)]
pub struct CommonArgs {
    /// Team rule file (repeatable), added to those of the configuration
    #[arg(long = "rules", value_name = "FILE")]
    pub rules: Vec<PathBuf>,
    /// Parts library (repeatable), added to the netlist's `library` lines
    #[arg(long = "library", value_name = "FILE")]
    pub library: Vec<PathBuf>,
    /// Use this configuration file instead of discovering armature.yaml
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// Use no configuration file at all (defaults)
    #[arg(long = "no-config", conflicts_with = "config")]
    pub no_config: bool,
    /// The project root: every path a netlist, configuration or rule file
    /// names must stay inside it (default: the nearest folder above with
    /// .git or .hg, else the current folder)
    #[arg(long, value_name = "DIR")]
    pub root: Option<PathBuf>,
    /// Read paths outside the project root too (for trusted input only)
    #[arg(long = "allow-outside-root")]
    pub allow_outside_root: bool,
    /// From `InputArgs`, on the commands that read netlists.
    #[arg(skip)]
    pub map: Option<PathBuf>,
    #[arg(skip)]
    pub input: Option<InputArg>,
    /// The root, found once per run (every folder of a walk asks for it).
    #[arg(skip)]
    root_found: std::sync::OnceLock<crate::trust::Root>,
}

/// How netlists are read (the commands that read them).
#[derive(Args, Debug, Default, Clone)]
pub struct InputArgs {
    /// The SPICE mapping (YAML) to use instead of the `NAME.map.yaml`
    /// beside the netlist or the `spice:` section of the configuration
    #[arg(long, value_name = "FILE")]
    pub map: Option<PathBuf>,
    /// Read the netlists as this format, whatever their extension
    /// (default: `.cir .sp .spi .net .cki` are SPICE, the rest `.drive`)
    #[arg(long, value_enum, value_name = "FORMAT")]
    pub input: Option<InputArg>,
}

impl CommonArgs {
    fn with(mut self, i: InputArgs) -> CommonArgs {
        self.map = i.map;
        self.input = i.input;
        self
    }

    /// The project root in force.
    pub fn root(&self) -> crate::trust::Root {
        self.root_found
            .get_or_init(|| {
                let mut r = match &self.root {
                    Some(d) => crate::trust::Root::at(d),
                    None => crate::trust::Root::find(&std::env::current_dir().unwrap_or_default()),
                };
                r.allow_outside = self.allow_outside_root;
                r
            })
            .clone()
    }
}

#[derive(Args, Debug)]
pub struct CheckArgs {
    /// Files or folders to check (default: the current folder)
    pub paths: Vec<PathBuf>,
    #[arg(long, value_enum, default_value_t = FormatArg::Human)]
    pub format: FormatArg,
    /// The level that makes the exit code 1
    #[arg(long = "fail-on", value_enum)]
    pub fail_on: Option<FailOn>,
    /// Show at most N findings in human output (the summary counts all)
    #[arg(long = "max-findings", value_name = "N")]
    pub max_findings: Option<usize>,
    /// Colour in human output
    #[arg(long, value_enum, default_value_t = ColorArg::Auto)]
    pub color: ColorArg,
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Args, Debug)]
pub struct ReportArgs {
    /// Files or folders to check (default: the current folder)
    pub paths: Vec<PathBuf>,
    /// The page to write (one self-contained HTML file)
    #[arg(short = 'o', long, value_name = "FILE")]
    pub output: PathBuf,
    /// The level that makes the exit code 1
    #[arg(long = "fail-on", value_enum)]
    pub fail_on: Option<FailOn>,
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum FormatArg {
    /// annotated source lines with the numbers and a fix, for a terminal
    Human,
    /// one line per finding and one per help (file:line:col), for editors
    Compact,
    /// the findings, facts and summary as one JSON document
    Json,
    /// SARIF 2.1.0, for code-scanning services
    Sarif,
    /// the page of `armature report`, on standard output
    Html,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum InputArg {
    Drive,
    Spice,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum FactsFormat {
    Human,
    Json,
    /// only with `--wave`
    Csv,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum CornerArg {
    Max,
    Min,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum EdgeArg {
    Off,
    On,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum FailOn {
    Error,
    Warning,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColorArg {
    Auto,
    Always,
    Never,
}

/// Run the command line; returns the exit code.
pub fn run(args: Vec<String>) -> i32 {
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return code;
        }
    };
    match cli.command {
        Command::Check(mut a) => {
            a.common = std::mem::take(&mut a.common).with(std::mem::take(&mut a.input));
            check(a, None)
        }
        Command::Report(r) => {
            let a = CheckArgs {
                paths: r.paths,
                format: FormatArg::Html,
                fail_on: r.fail_on,
                max_findings: None,
                color: ColorArg::Never,
                input: InputArgs::default(),
                common: r.common.with(r.input),
            };
            check(a, Some(&r.output))
        }
        Command::Explain { rule, common } => explain(&rule, &common),
        Command::Lsp => crate::lsp::serve(
            std::io::BufReader::new(std::io::stdin()),
            std::io::stdout().lock(),
        ),
        Command::Rules { common } => rules(&common),
        Command::Facts {
            path,
            format,
            wave,
            edge,
            input,
            common,
        } => facts(&path, format, wave.as_deref(), edge, &common.with(input)),
        Command::Import {
            what:
                ImportWhat::Spice {
                    file,
                    output,
                    map,
                    common,
                },
        } => {
            let input = InputArgs {
                map,
                input: Some(InputArg::Spice),
            };
            import_spice(&file, output.as_deref(), &common.with(input))
        }
        Command::Export {
            what:
                ExportWhat::Spice {
                    file,
                    part,
                    state,
                    corner,
                    board,
                    map_out,
                    input,
                    common,
                },
        } => {
            let common = common.with(input);
            if board {
                export_board(&file, map_out.as_deref(), &common)
            } else {
                export_spice(&file, part.as_deref(), state, corner, &common)
            }
        }
    }
}

/// Whether a file is a netlist armature reads: `.drive`, any case.
pub fn is_netlist(p: &Path) -> bool {
    p.extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("drive"))
}

/// Every netlist below a folder, sorted, into `out`; the ones that are
/// symlinks (which may point anywhere) into `linked` instead, for the
/// root check. Symlinked folders are not followed, and a folder reached
/// twice (bind mounts) is read once: the walk ends on any tree.
fn collect(path: &Path, out: &mut Vec<PathBuf>, linked: &mut Vec<PathBuf>) -> std::io::Result<()> {
    collect_in(path, out, linked, &mut std::collections::HashMap::new())
}

/// `collect`, also noting each folder's canonical path in `canon`: the
/// walk follows no symlinked folder, so below the (canonicalised) start a
/// folder's canonical path is the start's joined with the rest, and no
/// folder needs asking the system again.
fn collect_in(
    path: &Path,
    out: &mut Vec<PathBuf>,
    linked: &mut Vec<PathBuf>,
    canon: &mut std::collections::HashMap<PathBuf, PathBuf>,
) -> std::io::Result<()> {
    let start = std::fs::canonicalize(path).ok();
    let mut seen: std::collections::HashSet<(u64, u64)> = std::collections::HashSet::new();
    let mut stack = vec![path.to_path_buf()];
    let mut first = true;
    while let Some(dir) = stack.pop() {
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            if let Ok(m) = std::fs::metadata(&dir)
                && !seen.insert((m.dev(), m.ino()))
            {
                continue;
            }
        }
        let rd = match std::fs::read_dir(&dir) {
            Ok(rd) => rd,
            Err(e) if first => return Err(e),
            Err(_) => continue,
        };
        first = false;
        if let (Some(st), Ok(rest)) = (&start, dir.strip_prefix(path)) {
            canon.insert(dir.clone(), st.join(rest));
        }
        // the entry's own type (from the folder listing, no stat; a
        // symlinked folder is not a folder here, so it is not followed)
        let mut entries: Vec<(PathBuf, bool, bool)> = rd
            .filter_map(|e| {
                let e = e.ok()?;
                let t = e.file_type().ok()?;
                Some((e.path(), t.is_dir(), t.is_symlink()))
            })
            .collect();
        entries.sort();
        // folders are walked in order: pushed last-first
        let mut dirs = Vec::new();
        for (p, is_dir, is_link) in entries {
            if is_dir {
                dirs.push(p);
            } else if is_netlist(&p) {
                if is_link {
                    linked.push(p);
                } else {
                    out.push(p);
                }
            }
        }
        stack.extend(dirs.into_iter().rev());
    }
    out.sort();
    Ok(())
}

/// The options in force for the files under one configuration (or none),
/// or the input errors that stop them being checked.
struct Profile {
    opts: Options,
    errors: Vec<Finding>,
}

fn load_rule_file(path: &Path) -> Result<Vec<std::sync::Arc<crate::team::TeamRule>>, Vec<Finding>> {
    let shown = crate::shown_path(path);
    let file = crate::model::library::read_text(path, &shown).map_err(|f| vec![f])?;
    crate::team::load(&file).map(|v| v.into_iter().map(std::sync::Arc::new).collect())
}

fn profile(config: Option<&Path>, common: &CommonArgs) -> Profile {
    let mut errors = Vec::new();
    let root = common.root();
    let mut opts = Options {
        root: Some(root.clone()),
        config: config.map(crate::shown_path),
        ..Options::default()
    };
    let mut rule_files: Vec<PathBuf> = Vec::new();
    if let Some(path) = config {
        match crate::config::load(path, Some(&root)) {
            Ok(cfg) => {
                opts.settings = cfg.settings.clone();
                opts.libraries = cfg
                    .libraries
                    .iter()
                    .map(|p| (p.clone(), crate::shown_path(p)))
                    .collect();
                rule_files.extend(cfg.rules.iter().cloned());
                if cfg.spice {
                    opts.spice_map = Some(crate::spice::map_source(path.to_path_buf(), "spice"));
                }
            }
            Err(mut e) => errors.append(&mut e),
        }
    }
    // paths from the command line are held to the root too
    let outside = |p: &Path, what: &str, errors: &mut Vec<Finding>| -> bool {
        match root.check(p) {
            Ok(()) => false,
            Err(why) => {
                errors.push(
                    error_result(
                        p,
                        &format!(
                            "the {what} is not read: {why}; pass `--allow-outside-root` to trust it"
                        ),
                    )
                    .findings
                    .remove(0),
                );
                true
            }
        }
    };
    if let Some(m) = &common.map
        && !outside(m, "mapping", &mut errors)
    {
        opts.spice_map = Some(crate::spice::map_source(m.clone(), ""));
    }
    opts.input = common.input.map(|i| match i {
        InputArg::Spice => crate::spice::Input::Spice,
        InputArg::Drive => crate::spice::Input::Drive,
    });
    for p in &common.library {
        if !outside(p, "library", &mut errors) {
            opts.libraries.push((p.clone(), crate::shown_path(p)));
        }
    }
    for p in &common.rules {
        if !outside(p, "rule file", &mut errors) {
            rule_files.push(p.clone());
        }
    }
    for rf in rule_files {
        match load_rule_file(&rf) {
            Ok(mut r) => opts.team.append(&mut r),
            Err(mut e) => errors.append(&mut e),
        }
    }
    Profile { opts, errors }
}

/// The options in force for a file (its configuration, the project
/// root), as `check` uses them; the configuration's errors otherwise.
pub fn options_for(file: &Path) -> Result<Options, Vec<Finding>> {
    let common = CommonArgs::default();
    let p = profile(config_for(file, &common).as_deref(), &common);
    if p.errors.is_empty() {
        Ok(p.opts)
    } else {
        Err(p.errors)
    }
}

/// The options for one file, or `None` after printing the configuration's
/// or rule files' errors: a command that cannot honour the configuration
/// must not answer as if there were none.
fn profile_or_report(file: &Path, common: &CommonArgs) -> Option<Options> {
    options_or_report(config_for(file, common).as_deref(), common)
}

/// `profile_or_report` for a known configuration (or none).
fn options_or_report(config: Option<&Path>, common: &CommonArgs) -> Option<Options> {
    let p = profile(config, common);
    if p.errors.is_empty() {
        return Some(p.opts);
    }
    let r = report::human::Renderer::new(false);
    for e in &p.errors {
        eprint!("{}", r.render(e));
    }
    None
}

fn is_symlink(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_symlink())
}

/// A netlist named on the command line that is a symlink must resolve
/// inside the root (see `check`).
fn linked_inside_root(path: &Path, common: &CommonArgs) -> Result<(), String> {
    if is_symlink(path) {
        common.root().check(path)
    } else {
        Ok(())
    }
}

/// A file's folder (empty for a bare file name).
fn parent_of(file: &Path) -> &Path {
    file.parent().unwrap_or(Path::new(""))
}

fn config_for(file: &Path, common: &CommonArgs) -> Option<PathBuf> {
    config_in(parent_of(file), None, common)
}

/// The configuration in force for the files of one folder; `canonical`
/// is the folder's canonical path when the caller knows it already.
fn config_in(dir: &Path, canonical: Option<&Path>, common: &CommonArgs) -> Option<PathBuf> {
    if common.no_config {
        return None;
    }
    if let Some(c) = &common.config {
        return Some(c.clone());
    }
    if let Some(c) = canonical {
        return crate::config::discover_from(c, Some(&common.root()));
    }
    let dir = if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    };
    crate::config::discover(dir, Some(&common.root()))
}

/// `check`, or `report` when `to` names the page to write.
fn check(a: CheckArgs, to: Option<&Path>) -> i32 {
    let paths = if a.paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        a.paths.clone()
    };
    let mut files = Vec::new();
    let mut linked = Vec::new();
    let mut canon: std::collections::HashMap<PathBuf, PathBuf> = std::collections::HashMap::new();
    let mut missing: Vec<FileResult> = Vec::new();
    for p in &paths {
        if p.is_dir() {
            let before = files.len() + linked.len();
            if let Err(e) = collect_in(p, &mut files, &mut linked, &mut canon) {
                missing.push(error_result(p, &format!("cannot read folder: {e}")));
            } else if files.len() + linked.len() == before {
                missing.push(error_result(
                    p,
                    "no netlist (`*.drive`) in this folder or below it: nothing was checked",
                ));
            }
        } else if p.exists() {
            if is_symlink(p) {
                linked.push(p.clone());
            } else {
                files.push(p.clone());
            }
        } else {
            missing.push(error_result(p, "no such file or folder"));
        }
    }
    // a netlist that is a symlink is read only when it resolves inside
    // the root: a link in a pull request must not make the tool quote a
    // file from elsewhere on the machine
    let root = a.common.root();
    for p in linked {
        match root.check(&p) {
            Ok(()) => files.push(p),
            Err(why) => missing.push(error_result(
                &p,
                &format!("the netlist is not read: {why}; pass `--allow-outside-root` to trust it"),
            )),
        }
    }
    files.sort();
    let cache = LibraryCache::default();
    // group the files by the configuration in force for each
    let mut profiles: Vec<(Option<PathBuf>, Profile)> = Vec::new();
    let mut assigned: Vec<(PathBuf, usize)> = Vec::new();
    // one profile per configuration, and one discovery per folder
    let mut by_config: std::collections::HashMap<Option<PathBuf>, usize> =
        std::collections::HashMap::new();
    let mut configs: Vec<Option<PathBuf>> = Vec::new();
    // one discovery per folder, the folders in parallel
    let mut unique: std::collections::HashSet<&Path> = std::collections::HashSet::new();
    let dirs: Vec<&Path> = files
        .iter()
        .map(|f| parent_of(f))
        .filter(|d| unique.insert(d))
        .collect();
    let found: Vec<Option<PathBuf>> = dirs
        .par_iter()
        .map(|d| config_in(d, canon.get(*d).map(PathBuf::as_path), &a.common))
        .collect();
    let by_dir: std::collections::HashMap<&Path, Option<PathBuf>> =
        dirs.into_iter().zip(found).collect();
    for f in &files {
        let cfg = by_dir.get(parent_of(f)).cloned().flatten();
        let idx = match by_config.get(&cfg) {
            Some(&i) => i,
            None => {
                configs.push(cfg.clone());
                by_config.insert(cfg, configs.len() - 1);
                configs.len() - 1
            }
        };
        assigned.push((f.clone(), idx));
    }
    // the configurations load in parallel (a tree may hold thousands)
    let loaded: Vec<Profile> = configs
        .par_iter()
        .map(|c| {
            let mut p = profile(c.as_deref(), &a.common);
            p.opts.scenes = a.format == FormatArg::Html;
            p
        })
        .collect();
    profiles.extend(configs.into_iter().zip(loaded));
    if files.is_empty() && a.common.config.is_some() {
        profiles.push((
            a.common.config.clone(),
            profile(a.common.config.as_deref(), &a.common),
        ));
    }
    // a bar on a terminal for a human, never in a machine format
    let bar = (std::io::stderr().is_terminal()
        && (to.is_some() || a.format == FormatArg::Human)
        && !assigned.is_empty())
    .then(|| progress_bar(assigned.len()));
    let mut results: Vec<FileResult> = assigned
        .par_iter()
        .filter(|(_, i)| profiles[*i].1.errors.is_empty())
        .map(|(p, i)| crate::check_path(p, &profiles[*i].1.opts, &cache))
        .collect();
    for (_, p) in &profiles {
        if let Some(first) = p.errors.first() {
            results.push(FileResult {
                file: first.file.clone(),
                findings: p.errors.clone(),
                suppressed: 0,
                settings: p.opts.settings.clone(),
                config: p.opts.config.clone(),
                scenes: None,
            });
        }
    }
    results.extend(missing);
    let fail_on = match a.fail_on {
        Some(FailOn::Warning) => Severity::Warning,
        Some(FailOn::Error) => Severity::Error,
        None => profiles
            .iter()
            .map(|(_, p)| p.opts.settings.fail_on)
            .min()
            .unwrap_or(Severity::Error),
    };
    let format = match a.format {
        FormatArg::Human => Format::Human,
        FormatArg::Compact => Format::Compact,
        FormatArg::Json => Format::Json,
        FormatArg::Sarif => Format::Sarif,
        FormatArg::Html => Format::Html,
    };
    let color = match a.color {
        ColorArg::Always => true,
        ColorArg::Never => false,
        ColorArg::Auto => {
            std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
                && std::io::stdout().is_terminal()
        }
    };
    if let Some(path) = to {
        if let Some(b) = &bar {
            b.set_message("writing the report");
        }
        let page = report::html::page(&results);
        if let Some(b) = bar {
            b.finish_and_clear();
        }
        if let Err(e) = std::fs::write(path, page) {
            eprintln!("error: cannot write `{}`: {e}", path.display());
            return 2;
        }
        return crate::exit_code(&results, fail_on);
    }
    if let Some(b) = bar {
        b.finish_and_clear();
    }
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    let mut team: Vec<std::sync::Arc<crate::team::TeamRule>> = Vec::new();
    for (_, p) in &profiles {
        for r in &p.opts.team {
            if !team.iter().any(|t| t.id == r.id) {
                team.push(r.clone());
            }
        }
    }
    let _ = emit(&mut out, &results, format, color, a.max_findings, &team);
    let _ = out.flush();
    crate::exit_code(&results, fail_on)
}

/// A progress bar on standard error by stage (three steps a file: read,
/// analysed, checked), drawn only once the check has run for a second
/// (`ARMATURE_PROGRESS_DELAY_MS` sets another delay), so that short runs
/// never flash one.
fn progress_bar(files: usize) -> indicatif::ProgressBar {
    use crate::progress::{Stage, set_sink};
    use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
    let bar = ProgressBar::with_draw_target(Some(3 * files as u64), ProgressDrawTarget::hidden());
    if let Ok(style) = ProgressStyle::with_template(
        "{spinner} {elapsed:>4} [{bar:32}] {pos}/{len} stages · {wide_msg}",
    ) {
        bar.set_style(style.progress_chars("=> "));
    }
    let sink = bar.clone();
    set_sink(Box::new(move |file, stage| {
        let shown = crate::trust::escape(file);
        match stage {
            Stage::Read => sink.set_message(format!("reading {shown}")),
            Stage::Analyse => {
                sink.inc(1);
                sink.set_message(format!("solving {shown}"));
            }
            Stage::Check => {
                sink.inc(1);
                sink.set_message(format!("checking {shown}"));
            }
            Stage::Done => sink.inc(1),
        }
    }));
    let delay = std::env::var("ARMATURE_PROGRESS_DELAY_MS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1000u64);
    let shown = bar.clone();
    std::thread::spawn(move || {
        std::thread::sleep(std::time::Duration::from_millis(delay));
        if !shown.is_finished() {
            shown.set_draw_target(ProgressDrawTarget::stderr());
            shown.enable_steady_tick(std::time::Duration::from_millis(120));
        }
    });
    bar
}

/// The configuration files in force, each once.
fn configs(results: &[FileResult]) -> Vec<String> {
    let mut v: Vec<String> = results.iter().filter_map(|r| r.config.clone()).collect();
    v.sort();
    v.dedup();
    v
}

use crate::trust::escape as esc;

fn configs_line(results: &[FileResult]) -> String {
    let v = configs(results);
    // a line to read, not a listing: JSON and SARIF carry every one
    const SHOWN: usize = 8;
    if v.is_empty() {
        "none (defaults)".to_string()
    } else {
        let mut line = v
            .iter()
            .take(SHOWN)
            .map(|c| crate::trust::escape(c).into_owned())
            .collect::<Vec<_>>()
            .join(", ");
        if v.len() > SHOWN {
            line.push_str(&format!(" and {} more", v.len() - SHOWN));
        }
        line
    }
}

fn error_result(p: &Path, msg: &str) -> FileResult {
    let shown = crate::shown_path(p);
    let file = crate::source::SourceFile::new(shown.clone(), p, String::new());
    FileResult {
        findings: vec![Finding::input(
            "file-error",
            &file,
            crate::source::Span::new(0, 0),
            format!("`{shown}`: {msg}"),
        )],
        file,
        suppressed: 0,
        settings: crate::settings::Settings::default(),
        config: None,
        scenes: None,
    }
}

pub fn emit(
    out: &mut dyn Write,
    results: &[FileResult],
    format: Format,
    color: bool,
    max: Option<usize>,
    team: &[std::sync::Arc<crate::team::TeamRule>],
) -> std::io::Result<()> {
    let all: Vec<&Finding> = results.iter().flat_map(|r| r.findings.iter()).collect();
    let suppressed: usize = results.iter().map(|r| r.suppressed).sum();
    match format {
        Format::Human => {
            let r = report::human::Renderer::new(color);
            let limit = max.unwrap_or(usize::MAX);
            for f in all.iter().take(limit) {
                write!(out, "{}", r.render(f))?;
                writeln!(out)?;
            }
            if all.len() > limit {
                writeln!(
                    out,
                    "… {} more findings not shown (--max-findings {limit})",
                    all.len() - limit
                )?;
            }
            let e = all.iter().filter(|f| f.severity == Severity::Error).count();
            let w = all
                .iter()
                .filter(|f| f.severity == Severity::Warning)
                .count();
            let mut line = format!(
                "{} file{} checked: {e} error{}, {w} warning{}",
                results.len(),
                if results.len() == 1 { "" } else { "s" },
                if e == 1 { "" } else { "s" },
                if w == 1 { "" } else { "s" },
            );
            if suppressed > 0 {
                line.push_str(&format!(", {suppressed} suppressed"));
            }
            writeln!(out, "{line}")?;
            writeln!(out, "configuration: {}", configs_line(results))?;
        }
        Format::Html => {
            write!(out, "{}", report::html::page(results))?;
        }
        Format::Compact => {
            for f in &all {
                writeln!(out, "{}", report::compact(f))?;
                if let Some(h) = report::compact_help(f) {
                    writeln!(out, "{h}")?;
                }
            }
        }
        Format::Json => {
            let owned: Vec<Finding> = all.iter().map(|f| (*f).clone()).collect();
            let derating = results
                .first()
                .map(|r| r.settings.derating.clone())
                .unwrap_or_default();
            let mut doc = report::json::document(&owned, results.len(), suppressed, &derating);
            if let Some(m) = doc.as_object_mut() {
                m.insert("config".into(), serde_json::json!(configs(results)));
                // every file's settings in force (the top-level derating is
                // the first file's)
                let files: Vec<serde_json::Value> = results
                    .iter()
                    .map(|r| {
                        serde_json::json!({
                            "file": r.file.name,
                            "config": r.config,
                            "derating": report::json::derating(&r.settings.derating),
                            "ambient": {"value": r.settings.ambient, "unit": "degC"},
                        })
                    })
                    .collect();
                m.insert("settings".into(), serde_json::Value::Array(files));
            }
            writeln!(
                out,
                "{}",
                serde_json::to_string_pretty(&doc).unwrap_or_default()
            )?;
        }
        Format::Sarif => {
            let owned: Vec<Finding> = all.iter().map(|f| (*f).clone()).collect();
            let mut doc = report::sarif::document(&owned, team);
            if let Some(run) = doc.pointer_mut("/runs/0").and_then(|r| r.as_object_mut()) {
                run.insert(
                    "properties".into(),
                    serde_json::json!({"configuration": configs(results)}),
                );
            }
            writeln!(
                out,
                "{}",
                serde_json::to_string_pretty(&doc).unwrap_or_default()
            )?;
        }
    }
    Ok(())
}

pub const CAUTION: &str = "Caution: armature supports a design review; it does not replace one. Motor drives store energy and \
can overheat, burn or injure. Verify on the bench with current-limited supplies, and defer to local codes, the \
parts' data sheets and licensed practice.";

fn explain(id: &str, common: &CommonArgs) -> i32 {
    if id.contains('/') {
        let p = profile(config_in(Path::new("."), None, common).as_deref(), common);
        if let Some(r) = p.opts.team.iter().find(|r| r.id == id) {
            let (l, _) = r.file.line_col(r.span.start());
            println!(
                "{} (team rule, default {}; {}:{l})\n",
                esc(&r.id),
                r.severity,
                esc(&r.file.name)
            );
            println!(
                "Applies to: {}",
                r.kinds
                    .iter()
                    .map(|k| k.name())
                    .collect::<Vec<_>>()
                    .join(", ")
            );
            if let Some(g) = &r.parts {
                println!("Parts: {}", esc(g.as_str()));
            }
            if let Some((_, w)) = &r.when {
                println!("When: {}", esc(w));
            }
            println!("Requires: {}", esc(&r.require.1));
            let show = |ps: &[crate::team::Piece]| -> String {
                ps.iter()
                    .map(|p| match p {
                        crate::team::Piece::Lit(s) => s.clone(),
                        crate::team::Piece::Expr(_, src) => format!("{{{src}}}"),
                    })
                    .collect()
            };
            println!("Message: {}", esc(&show(&r.message)));
            if let Some(h) = &r.help {
                println!("Help: {}", esc(&show(h)));
            }
            println!("\n{CAUTION}");
            return 0;
        }
    }
    let id = match crate::checks::RENAMED.iter().find(|(old, _)| *old == id) {
        Some((old, new)) => {
            println!("`{old}` is now `{new}`.\n");
            *new
        }
        None => id,
    };
    match crate::checks::explain_page(id) {
        Some(page) => {
            print!("{page}");
            0
        }
        None => {
            let hint = crate::checks::suggest_rule(id);
            eprintln!(
                "error: `{}` is no rule, input error, note or part kind{}",
                esc(id),
                if hint.is_empty() {
                    String::new()
                } else {
                    format!("; {hint}")
                }
            );
            eprintln!("known rules:");
            for r in crate::checks::registry() {
                eprintln!("  {}", r.meta.id);
            }
            2
        }
    }
}

fn rules(common: &CommonArgs) -> i32 {
    for r in crate::checks::registry() {
        println!(
            "{:<28} {:<8} {}",
            r.meta.id,
            r.meta.severity.as_str(),
            r.meta.summary
        );
    }
    let p = profile(config_in(Path::new("."), None, common).as_deref(), common);
    for r in &p.opts.team {
        println!(
            "{:<28} {:<8} {} ({})",
            esc(&r.id),
            r.severity.as_str(),
            esc(&r.summary()),
            esc(&r.file.name)
        );
    }
    let renderer = report::human::Renderer::new(false);
    for e in &p.errors {
        eprint!("{}", renderer.render(e));
    }
    if p.errors.is_empty() { 0 } else { 2 }
}

fn import_spice(file: &Path, output: Option<&Path>, common: &CommonArgs) -> i32 {
    let shown = crate::shown_path(file);
    if let Err(why) = linked_inside_root(file, common) {
        eprintln!("error: `{}`: the netlist is not read: {why}", esc(&shown));
        return 2;
    }
    let Some(opts) = profile_or_report(file, common) else {
        return 2;
    };
    let cache = LibraryCache::default();
    let base = match output {
        Some(o) => parent_of(o).to_path_buf(),
        None => parent_of(file).to_path_buf(),
    };
    match crate::spice::import(file, &opts, &cache, &base) {
        Ok(text) => match output {
            Some(o) => match std::fs::write(o, text) {
                Ok(()) => 0,
                Err(e) => {
                    eprintln!(
                        "error: `{}` cannot be written: {e}",
                        esc(&crate::shown_path(o))
                    );
                    2
                }
            },
            None => {
                let mut out = std::io::stdout().lock();
                let _ = out.write_all(text.as_bytes());
                0
            }
        },
        Err(errs) => {
            let r = report::human::Renderer::new(false);
            for e in errs {
                eprint!("{}", r.render(&e));
            }
            2
        }
    }
}

/// Read and build one netlist for `facts`/`export`, with the configuration
/// in force; `Err(2)` after printing the located errors.
fn built_for(path: &Path, common: &CommonArgs, cache: &LibraryCache) -> Result<crate::Built, i32> {
    let Some(opts) = profile_or_report(path, common) else {
        return Err(2);
    };
    built_with(path, &opts, common, cache)
}

/// `built_for` with the options already loaded.
fn built_with(
    path: &Path,
    opts: &Options,
    common: &CommonArgs,
    cache: &LibraryCache,
) -> Result<crate::Built, i32> {
    let shown = crate::shown_path(path);
    if let Err(why) = linked_inside_root(path, common) {
        eprintln!("error: `{}`: the netlist is not read: {why}", esc(&shown));
        return Err(2);
    }
    let r = report::human::Renderer::new(false);
    let file = match crate::read_netlist(path, &shown) {
        Ok(f) => f,
        Err(f) => {
            eprint!("{}", r.render(&f));
            return Err(2);
        }
    };
    let built = if crate::spice::reads_as_spice(path, opts) {
        crate::spice::build(&file, opts, cache)
    } else {
        crate::build(&file, opts, cache)
    };
    built.map_err(|errs| {
        for e in errs {
            eprint!("{}", r.render(&e));
        }
        2
    })
}

/// `facts` on a folder: every netlist below it, sorted; human output one
/// block per file, JSON as one array of the per-file objects.
fn facts_folder(dir: &Path, format: FactsFormat, wave: Option<&str>, common: &CommonArgs) -> i32 {
    use crate::analysis::present;
    if wave.is_some() || matches!(format, FactsFormat::Csv) {
        eprintln!("error: `--wave` and `--format csv` take one netlist, not a folder");
        return 2;
    }
    let (mut files, mut linked) = (Vec::new(), Vec::new());
    if let Err(e) = collect(dir, &mut files, &mut linked) {
        eprintln!(
            "error: cannot read folder `{}`: {e}",
            esc(&crate::shown_path(dir))
        );
        return 2;
    }
    files.extend(linked);
    files.sort();
    if files.is_empty() {
        eprintln!(
            "error: no netlist (`*.drive`) in `{}` or below it: nothing to show",
            esc(&crate::shown_path(dir))
        );
        return 2;
    }
    let cache = LibraryCache::default();
    // one load (and one report of its errors) per configuration
    let mut options: std::collections::HashMap<Option<PathBuf>, Option<Options>> =
        std::collections::HashMap::new();
    let mut code = 0;
    let mut docs = Vec::new();
    for (i, f) in files.iter().enumerate() {
        let cfg = config_for(f, common);
        let opts = options
            .entry(cfg)
            .or_insert_with_key(|c| options_or_report(c.as_deref(), common));
        let built = match opts {
            Some(o) => built_with(f, o, common, &cache),
            None => Err(2),
        };
        let b = match built {
            Ok(b) => b,
            Err(c) => {
                code = code.max(c);
                continue;
            }
        };
        match format {
            FactsFormat::Json => docs.push(present::facts_json(&b)),
            _ => {
                // each file's block opens with its name
                if i > 0 {
                    println!();
                }
                print!("{}", esc(&present::facts_human(&b)));
            }
        }
    }
    if matches!(format, FactsFormat::Json) {
        println!(
            "{}",
            serde_json::to_string_pretty(&serde_json::Value::Array(docs)).unwrap_or_default()
        );
    }
    code
}

fn facts(
    path: &Path,
    format: FactsFormat,
    wave: Option<&str>,
    edge: EdgeArg,
    common: &CommonArgs,
) -> i32 {
    if path.is_dir() {
        return facts_folder(path, format, wave, common);
    }
    let shown = crate::shown_path(path);
    match built_for(path, common, &LibraryCache::default()) {
        Err(code) => code,
        Ok(b) => {
            use crate::analysis::present;
            if let Some(name) = wave {
                let Some(pid) = b.circuit.part_id(name) else {
                    eprintln!("error: `{}` is not a part of {}", esc(name), esc(&shown));
                    return 2;
                };
                let e = match edge {
                    EdgeArg::Off => present::WaveEdge::Off,
                    EdgeArg::On => present::WaveEdge::On,
                };
                return match present::wave(&b, pid, e) {
                    Ok(w) => {
                        match format {
                            FactsFormat::Json => println!(
                                "{}",
                                serde_json::to_string_pretty(&present::wave_json(name, e, w))
                                    .unwrap_or_default()
                            ),
                            _ => print!("{}", present::wave_csv(w)),
                        }
                        0
                    }
                    Err(msg) => {
                        eprintln!("error: {msg}");
                        2
                    }
                };
            }
            match format {
                FactsFormat::Json => println!(
                    "{}",
                    serde_json::to_string_pretty(&present::facts_json(&b)).unwrap_or_default()
                ),
                FactsFormat::Human => print!("{}", esc(&present::facts_human(&b))),
                FactsFormat::Csv => {
                    eprintln!("error: `--format csv` is for `--wave`");
                    return 2;
                }
            }
            0
        }
    }
}

fn export_board(path: &Path, map_out: Option<&Path>, common: &CommonArgs) -> i32 {
    let b = match built_for(path, common, &LibraryCache::default()) {
        Ok(b) => b,
        Err(code) => return code,
    };
    let board = crate::spice::export::board(&b.circuit);
    if let Some(m) = map_out
        && let Err(e) = std::fs::write(m, &board.mapping)
    {
        eprintln!(
            "error: `{}` cannot be written: {e}",
            esc(&crate::shown_path(m))
        );
        return 2;
    }
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(board.netlist.as_bytes());
    0
}

fn export_spice(
    path: &Path,
    part: Option<&str>,
    state: Option<usize>,
    corner: CornerArg,
    common: &CommonArgs,
) -> i32 {
    let shown = crate::shown_path(path);
    let b = match built_for(path, common, &LibraryCache::default()) {
        Ok(b) => b,
        Err(code) => return code,
    };
    let sw = match part {
        Some(name) => match b.circuit.part_id(name) {
            Some(id) => id,
            None => {
                eprintln!("error: `{}` is not a part of {}", esc(name), esc(&shown));
                return 2;
            }
        },
        None => match b.analysis.turnoffs.first() {
            Some(t) => t.switch,
            None => {
                eprintln!(
                    "error: {} has no switch under an inductive load",
                    esc(&shown)
                );
                return 2;
            }
        },
    };
    if let Some(st) = state {
        let Some(gi) = b.analysis.groups.iter().position(|g| g.parts.contains(&sw)) else {
            eprintln!(
                "error: `{}` is in no control group",
                b.circuit.part(sw).reference
            );
            return 2;
        };
        let c = match corner {
            CornerArg::Max => crate::analysis::netlist::Corner::Max,
            CornerArg::Min => crate::analysis::netlist::Corner::Min,
        };
        return match crate::analysis::spice::state_deck(
            &b,
            gi,
            st,
            c,
            crate::analysis::op::Mode::Stall,
        ) {
            Ok((deck, _)) => {
                print!("{deck}");
                0
            }
            Err(e) => {
                let n = b.analysis.solutions.get(gi).map_or(0, |s| s.states.len());
                eprintln!(
                    "error: {e} (the group has {n} pin states, 0 to {})",
                    n.saturating_sub(1)
                );
                2
            }
        };
    }
    let out = format!(
        "{}.wave",
        crate::analysis::spice::sanitize(&b.circuit.part(sw).reference)
    );
    match crate::analysis::spice::edge_deck(&b, sw, &out) {
        Ok(d) => {
            print!("{}", d.deck);
            0
        }
        Err(e) => {
            eprintln!("error: {e}");
            2
        }
    }
}

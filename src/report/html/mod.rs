//! The HTML report: one self-contained page (inline CSS and SVG, no
//! script, no font or file fetched) with a summary, and per finding its
//! message and help, the sub-circuit drawn, the simulated edges of its
//! switches plotted, and the facts of its parts.

pub mod draw;
pub mod plot;
pub mod scene;

use crate::FileResult;
use crate::finding::{Finding, Severity};
use std::fmt::Write;

/// Findings drawn in one report at most; the rest are listed.
pub const MAX_DRAWN: usize = scene::MAX_DRAWN;

/// Text for HTML and XML: `& < > " '` as entities, and the characters a
/// terminal would be tricked by written visibly.
pub fn esc(s: &str) -> String {
    let s = crate::trust::escape(s);
    let mut o = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

const CSS: &str = r#"
:root { --ink:#111; --muted:#555; --line:#bbb; --error:#B3261E; --warning:#8A5A00; --info:#1F5F99; --flow:#0072B2; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: var(--ink); margin: 0 auto; max-width: 1100px; padding: 18px 22px 40px; line-height: 1.45; font-size: 14px; background: #fff; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 18px; margin: 28px 0 8px; border-bottom: 2px solid var(--ink); padding-bottom: 3px; }
h3 { font-size: 15px; margin: 0 0 6px; }
.meta, .where { color: var(--muted); }
.caution { border: 2px solid var(--warning); padding: 8px 12px; margin: 12px 0; background: #fff8e6; }
table { border-collapse: collapse; width: 100%; margin: 6px 0 10px; }
th, td { border: 1px solid var(--line); padding: 3px 6px; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.sev { font-weight: bold; white-space: nowrap; }
/* severity by word and border style, not by colour alone */
.sev-error { color: var(--error); }
.sev-warning { color: var(--warning); }
.sev-info { color: var(--info); }
section.finding { border: 1px solid var(--line); border-left: 6px solid var(--ink); padding: 10px 14px; margin: 16px 0; page-break-inside: avoid; break-inside: avoid-page; }
section.finding.error { border-left: 6px solid var(--error); }
section.finding.warning { border-left: 6px dashed var(--warning); }
section.finding.info { border-left: 6px dotted var(--info); }
.help { margin: 6px 0; }
.help::before { content: "Fix: "; font-weight: bold; }
pre { background: #f6f6f6; border: 1px solid #ddd; padding: 8px; overflow-x: auto; font-size: 12px; line-height: 1.3; white-space: pre; }
figure { margin: 10px 0; }
figcaption { color: var(--muted); font-size: 12.5px; }
svg { max-width: 100%; height: auto; display: block; }
details { margin: 6px 0; }
summary { cursor: pointer; font-weight: bold; }
.not-drawn { color: var(--muted); font-style: italic; }
.key span { display: inline-block; margin-right: 14px; }
a { color: #0B4F8A; }
@media print {
  @page { size: auto; margin: 14mm; }
  body { max-width: none; padding: 0; font-size: 11pt; }
  a { color: inherit; text-decoration: none; }
  details > *:not(summary) { display: block; }
  pre { white-space: pre-wrap; }
  svg { max-width: 180mm; }
}
"#;

fn sev_word(s: Severity) -> &'static str {
    s.as_str()
}

/// The whole page.
pub fn page(results: &[FileResult]) -> String {
    let all: Vec<&Finding> = results.iter().flat_map(|r| r.findings.iter()).collect();
    let count = |s: Severity| all.iter().filter(|f| f.severity == s).count();
    let suppressed: usize = results.iter().map(|r| r.suppressed).sum();
    let mut o = String::with_capacity(64 * 1024 + all.len() * 2048);
    o.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>armature report</title>\n<style>");
    o.push_str(CSS);
    o.push_str("</style>\n</head>\n<body>\n<header>\n<h1>armature report</h1>\n");
    let _ = writeln!(
        o,
        "<p class=\"meta\">armature {} · {} file{} · {} error{}, {} warning{}, {} note{}{}</p>",
        env!("CARGO_PKG_VERSION"),
        results.len(),
        if results.len() == 1 { "" } else { "s" },
        count(Severity::Error),
        if count(Severity::Error) == 1 { "" } else { "s" },
        count(Severity::Warning),
        if count(Severity::Warning) == 1 {
            ""
        } else {
            "s"
        },
        count(Severity::Info),
        if count(Severity::Info) == 1 { "" } else { "s" },
        if suppressed > 0 {
            format!(" · {suppressed} suppressed")
        } else {
            String::new()
        }
    );
    let _ = writeln!(
        o,
        "<p class=\"caution\" role=\"note\">{}</p>\n</header>\n<main>",
        esc(crate::cli::CAUTION)
    );
    // files with their settings
    o.push_str("<h2 id=\"files\">Files and settings</h2>\n<table>\n<thead><tr><th scope=\"col\">file</th><th scope=\"col\">errors</th><th scope=\"col\">warnings</th><th scope=\"col\">notes</th><th scope=\"col\">ambient</th><th scope=\"col\">derating (voltage, current, gate, power, T<sub>j</sub> margin)</th><th scope=\"col\">configuration</th></tr></thead>\n<tbody>\n");
    for r in results {
        let c = |s: Severity| r.findings.iter().filter(|f| f.severity == s).count();
        let d = &r.settings.derating;
        let _ = writeln!(
            o,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{} °C</td><td>{} % · {} % · {} % · {} % · {} K</td><td>{}</td></tr>",
            esc(&r.file.name),
            c(Severity::Error),
            c(Severity::Warning),
            c(Severity::Info),
            num(r.settings.ambient),
            num(d.voltage * 100.0),
            num(d.current * 100.0),
            num(d.gate_voltage * 100.0),
            num(d.power * 100.0),
            num(d.tj_margin),
            esc(r.config.as_deref().unwrap_or("none (defaults)")),
        );
    }
    o.push_str("</tbody>\n</table>\n");
    // the table of findings
    let _ = writeln!(o, "<h2 id=\"findings\">Findings ({})</h2>", all.len());
    if all.is_empty() {
        o.push_str("<p>No findings.</p>\n");
    } else {
        o.push_str("<table>\n<thead><tr><th scope=\"col\">#</th><th scope=\"col\">rule</th><th scope=\"col\">severity</th><th scope=\"col\">where</th><th scope=\"col\">parts</th><th scope=\"col\">message</th></tr></thead>\n<tbody>\n");
        for (i, f) in all.iter().enumerate() {
            let (l, c) = f.line_col();
            let _ = writeln!(
                o,
                "<tr><td class=\"num\"><a href=\"#f{n}\">{n}</a></td><td><code>{rule}</code></td><td class=\"sev sev-{s}\">{s}</td><td>{file}:{l}:{c}</td><td>{parts}</td><td>{msg}</td></tr>",
                n = i + 1,
                rule = esc(&f.rule),
                s = sev_word(f.severity),
                file = esc(&f.file.name),
                parts = esc(&f.parts.join(", ")),
                msg = esc(&f.message),
            );
        }
        o.push_str("</tbody>\n</table>\n");
    }
    // the findings, one section each
    let renderer = crate::report::human::Renderer::new(false);
    let mut drawn = 0usize;
    let mut not_drawn = 0usize;
    let mut id = 0usize;
    for r in results {
        for f in &r.findings {
            id += 1;
            let scene = r.scenes.as_ref().and_then(|s| s.get(f));
            let draw = scene.is_some() && drawn < MAX_DRAWN;
            if draw {
                drawn += 1;
            } else if !f.parts.is_empty() {
                not_drawn += 1;
            }
            section(&mut o, id, f, if draw { scene } else { None }, &renderer);
        }
    }
    if not_drawn > 0 {
        let _ = writeln!(
            o,
            "<p class=\"not-drawn\" id=\"not-drawn\">{not_drawn} finding{} naming parts {} listed without a drawing: a report draws the first {MAX_DRAWN}.</p>",
            if not_drawn == 1 { "" } else { "s" },
            if not_drawn == 1 { "is" } else { "are" },
        );
    }
    o.push_str("</main>\n<footer><p class=\"meta\">Drawings: rails on top, ground at the bottom; the parts a finding names on a tinted ground; the path the load current takes after the turn-off drawn thick, with arrows; a missing path dashed. Plots: the engine's simulated edges (device polarity).</p></footer>\n</body>\n</html>\n");
    o
}

fn num(v: f64) -> String {
    let r = (v * 100.0).round() / 100.0;
    format!("{r}")
}

fn section(
    o: &mut String,
    id: usize,
    f: &Finding,
    scene: Option<&scene::Scene>,
    renderer: &crate::report::human::Renderer,
) {
    let (l, c) = f.line_col();
    let s = sev_word(f.severity);
    let _ = writeln!(
        o,
        "<section class=\"finding {s}\" id=\"f{id}\" data-rule=\"{rule}\" data-parts=\"{parts}\">\n<h3><span class=\"sev sev-{s}\">{s}</span> <code>{rule}</code> — {msg}</h3>\n<p class=\"where\">{file}:{l}:{c}{parts_text}</p>",
        rule = esc(&f.rule),
        parts = esc(&f.parts.join(" ")),
        msg = esc(&f.message),
        file = esc(&f.file.name),
        parts_text = if f.parts.is_empty() {
            String::new()
        } else {
            format!(" · parts {}", esc(&f.parts.join(", ")))
        },
    );
    if let Some(h) = &f.help {
        let _ = writeln!(o, "<p class=\"help\">{}</p>", esc(h));
    }
    let text = renderer.render(f);
    let _ = writeln!(
        o,
        "<details><summary>Source lines</summary><pre>{}</pre></details>",
        esc(text.trim_end())
    );
    match scene {
        Some(sc) => {
            let title = format!("Sub-circuit of {} ({})", f.parts.join(", "), f.rule);
            let _ = writeln!(
                o,
                "<figure class=\"drawing\">{}<figcaption>{}</figcaption></figure>",
                draw::svg(sc, &format!("s{id}"), &title),
                esc(&title)
            );
            for (k, p) in sc.plots.iter().enumerate() {
                let _ = writeln!(
                    o,
                    "<figure class=\"edge\">{}<figcaption>Simulated {} of {}{}.</figcaption></figure>",
                    plot::svg(p, &format!("p{id}-{k}")),
                    p.edge,
                    esc(&p.switch),
                    p.load
                        .as_deref()
                        .map(|l| format!(" with {}", esc(l)))
                        .unwrap_or_default()
                );
            }
            for p in &sc.parts {
                if p.facts.is_empty() {
                    continue;
                }
                let _ = writeln!(
                    o,
                    "<details class=\"facts\" data-part=\"{n}\"><summary>Facts of {n} ({k}, {lab})</summary>\n<table><thead><tr><th scope=\"col\">fact</th><th scope=\"col\">value</th><th scope=\"col\">how it was obtained</th></tr></thead><tbody>",
                    n = esc(&p.name),
                    k = p.kind.name(),
                    lab = esc(&p.label),
                );
                for (name, value, note) in &p.facts {
                    let _ = writeln!(
                        o,
                        "<tr><td><code>{}</code></td><td class=\"num\">{}</td><td>{}</td></tr>",
                        esc(name),
                        esc(value),
                        esc(note)
                    );
                }
                o.push_str("</tbody></table></details>\n");
            }
        }
        None if !f.parts.is_empty() => {
            o.push_str(
                "<p class=\"not-drawn\">Not drawn (see the note at the end of the page).</p>\n",
            );
        }
        None => {}
    }
    o.push_str("</section>\n");
}

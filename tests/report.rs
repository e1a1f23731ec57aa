//! The HTML report: parsed as a browser would (html5ever through
//! `scraper`), every SVG parsed as XML (`roxmltree`), and rendered in a
//! real headless browser when there is one (always under `CI`).

use scraper::{ElementRef, Html, Selector};
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_armature"))
}

fn scratch(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("armature-report-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    let _ = std::fs::create_dir_all(&d);
    d
}

fn sel(s: &str) -> Selector {
    match Selector::parse(s) {
        Ok(x) => x,
        Err(e) => panic!("selector {s}: {e}"),
    }
}

fn report(args: &[&str], out: &Path) -> (i32, String) {
    let o = match bin().arg("report").args(args).arg("-o").arg(out).output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let page = std::fs::read_to_string(out).unwrap_or_default();
    assert!(
        !page.is_empty(),
        "no page written: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    (o.status.code().unwrap_or(-1), page)
}

fn json(args: &[&str]) -> serde_json::Value {
    let o = match bin().args(args).output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    serde_json::from_slice(&o.stdout).unwrap_or_default()
}

/// Every `<svg …>…</svg>` of the page as written (they do not nest).
fn raw_svgs(page: &str) -> Vec<&str> {
    let mut v = Vec::new();
    let mut rest = page;
    while let Some(a) = rest.find("<svg") {
        let Some(b) = rest[a..].find("</svg>") else {
            break;
        };
        v.push(&rest[a..a + b + 6]);
        rest = &rest[a + b + 6..];
    }
    v
}

fn attr<'a>(e: &ElementRef<'a>, name: &str) -> &'a str {
    e.value().attr(name).unwrap_or("")
}

fn num(s: &str) -> f64 {
    s.parse().unwrap_or(f64::NAN)
}

/// The y pixel coordinates of a path's points (`M x y L x y …`).
fn path_ys(d: &str) -> Vec<f64> {
    let nums: Vec<f64> = d
        .split(|c: char| c == 'M' || c == 'L' || c.is_whitespace())
        .filter(|t| !t.is_empty())
        .filter_map(|t| t.parse().ok())
        .collect();
    nums.chunks(2).filter_map(|c| c.get(1).copied()).collect()
}

#[test]
fn every_finding_has_its_drawing_with_its_parts_and_every_svg_parses() {
    let d = scratch("samples");
    let out = d.join("r.html");
    let (code, page) = report(&["samples"], &out);
    assert_eq!(code, 1, "the samples have errors: exit as `check` does");
    let doc = Html::parse_document(&page);
    assert!(doc.errors.is_empty(), "HTML parse errors: {:?}", doc.errors);
    let findings = json(&["check", "samples", "--format", "json"]);
    let n = findings["findings"].as_array().map(Vec::len).unwrap_or(0);
    assert!(n >= 10, "{n} findings");
    // the summary table: a row per finding, each linking to its section
    let rows: Vec<ElementRef> = doc.select(&sel("#findings + table tbody tr")).collect();
    assert_eq!(rows.len(), n);
    let sections: Vec<ElementRef> = doc.select(&sel("section.finding")).collect();
    assert_eq!(sections.len(), n);
    for r in &rows {
        let href = r
            .select(&sel("a"))
            .next()
            .map(|a| attr(&a, "href"))
            .unwrap_or("");
        let id = href.trim_start_matches('#');
        assert!(
            sections.iter().any(|s| attr(s, "id") == id),
            "link {href} has no section"
        );
    }
    let mut drawings = 0;
    for (s, f) in sections
        .iter()
        .zip(findings["findings"].as_array().into_iter().flatten())
    {
        assert_eq!(attr(s, "data-rule"), f["rule"].as_str().unwrap_or(""));
        let parts: Vec<&str> = f["parts"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(|p| p.as_str())
            .collect();
        if parts.is_empty() {
            continue;
        }
        let svg = s
            .select(&sel("figure.drawing svg.schematic"))
            .next()
            .unwrap_or_else(|| panic!("{} has no drawing", attr(s, "id")));
        drawings += 1;
        for p in &parts {
            let q = sel(&format!("g.part[data-part=\"{p}\"]"));
            assert!(
                svg.select(&q).next().is_some(),
                "{}: part {p} is not in its drawing",
                attr(s, "id")
            );
        }
        // its help and message are there
        let text: String = s.text().collect();
        assert!(text.contains(f["message"].as_str().unwrap_or("?")));
        if let Some(h) = f["help"].as_str() {
            assert!(text.contains(h));
        }
    }
    assert!(drawings >= 10);
    // every drawing and plot: an image with a title and a description,
    // and well-formed XML on its own
    let svgs: Vec<ElementRef> = doc.select(&sel("svg")).collect();
    let raw = raw_svgs(&page);
    assert_eq!(svgs.len(), raw.len());
    for (e, text) in svgs.iter().zip(&raw) {
        assert_eq!(attr(e, "role"), "img");
        let title: String = e
            .select(&sel("title"))
            .next()
            .map(|t| t.text().collect())
            .unwrap_or_default();
        let desc: String = e
            .select(&sel("desc"))
            .next()
            .map(|t| t.text().collect())
            .unwrap_or_default();
        assert!(!title.is_empty() && desc.len() > 20, "{title} / {desc}");
        let x = roxmltree::Document::parse(text);
        assert!(x.is_ok(), "an SVG is not well-formed XML: {x:?}");
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn each_plotted_peak_is_the_fact_it_illustrates() {
    let d = scratch("peaks");
    let out = d.join("r.html");
    let (_, page) = report(&["samples"], &out);
    let doc = Html::parse_document(&page);
    let mut checked = 0;
    let (mut want, mut seen) = (
        std::collections::BTreeSet::new(),
        std::collections::BTreeSet::new(),
    );
    for file in [
        "samples/alarm_relay_faulty.drive",
        "samples/conveyor_driver.drive",
        "samples/irrigation_valve.drive",
        "samples/vent_fan.drive",
        "samples/window_actuator.drive",
    ] {
        let facts = json(&["facts", file, "--format", "json"]);
        for p in doc.select(&sel("svg.plot")) {
            let edge = attr(&p, "data-edge");
            if edge == "turn-on" {
                continue;
            }
            let sw = attr(&p, "data-switch");
            let Some(v) = facts["parts"][sw]["v_peak"]["value"].as_f64() else {
                continue;
            };
            let section = p
                .ancestors()
                .filter_map(ElementRef::wrap)
                .find(|a| a.value().name() == "section");
            let in_file = section.is_some_and(|s| {
                s.select(&sel("p.where"))
                    .next()
                    .is_some_and(|w| w.text().collect::<String>().starts_with(file))
            });
            if !in_file {
                continue;
            }
            let sid = section.map(|s| attr(&s, "id")).unwrap_or("");
            want.insert((sid, sw));
            // a second turn-off (the switched one beside a worse reset)
            // illustrates no fact
            if p.value().attr("data-fact-v-peak").is_none() {
                continue;
            }
            seen.insert((sid, sw));
            let peak = num(attr(&p, "data-peak"));
            assert!(
                (peak - v).abs() <= 1e-9 * v.abs(),
                "{sw}: plotted peak {peak} but v_peak {v}"
            );
            assert_eq!(num(attr(&p, "data-fact-v-peak")), v);
            // the marker sits on the highest point of the V_DS trace
            let marker = p.select(&sel("g.peak")).next();
            let Some(marker) = marker else {
                panic!("{sw}: no peak marker")
            };
            assert!((num(attr(&marker, "data-v")) - v).abs() <= 1e-9 * v.abs());
            let cy = marker
                .select(&sel("circle"))
                .next()
                .map(|c| num(attr(&c, "cy")))
                .unwrap_or(f64::NAN);
            let trace = p
                .select(&sel("path.v-ds"))
                .next()
                .map(|t| path_ys(attr(&t, "d")))
                .unwrap_or_default();
            let top = trace.iter().copied().fold(f64::MAX, f64::min);
            assert!(
                (top - cy).abs() <= 0.11,
                "{sw}: trace top {top} px, marker {cy} px"
            );
            // the rating line is the library's rating
            if let Some(r) = p.select(&sel("g.rating")).next() {
                assert!(num(attr(&r, "data-v")) > 0.0);
            }
            checked += 1;
        }
    }
    assert!(checked >= 4, "{checked} plots checked");
    assert_eq!(want, seen, "a switch with a v_peak fact has no plot of it");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn the_page_is_self_contained_and_check_format_html_is_the_same_page() {
    let d = scratch("self");
    let out = d.join("r.html");
    let (_, page) = report(&["samples/alarm_relay_faulty.drive"], &out);
    for bad in [
        "<script", "<link", "@import", "url(", "src=", "http://", "https://",
    ] {
        let hits: Vec<&str> = page
            .match_indices(bad)
            .map(|(i, _)| &page[i..(i + 60).min(page.len())])
            // the SVG namespace is a name, not a fetch
            .filter(|s| !s.starts_with("http://www.w3.org/2000/svg"))
            .collect();
        assert!(hits.is_empty(), "{bad}: {hits:?}");
    }
    let o = bin()
        .args([
            "check",
            "samples/alarm_relay_faulty.drive",
            "--format",
            "html",
        ])
        .output();
    let stdout = o.map(|o| o.stdout).unwrap_or_default();
    assert_eq!(String::from_utf8_lossy(&stdout), page);
    // the caution and the derating in force are on the page
    assert!(page.contains("does not replace one"));
    assert!(page.contains("80 % · 80 % · 70 %"));
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_spice_netlist_reports_at_its_own_lines() {
    let d = scratch("spice");
    let out = d.join("r.html");
    let (_, page) = report(&["samples/spice/alarm_relay_faulty.cir"], &out);
    let doc = Html::parse_document(&page);
    let drawn = doc.select(&sel("section.finding figure.drawing")).count();
    assert!(drawn >= 5, "{drawn}");
    let wheres: Vec<String> = doc
        .select(&sel("section.finding p.where"))
        .map(|w| w.text().collect())
        .collect();
    assert!(
        wheres
            .iter()
            .all(|w| w.starts_with("samples/spice/alarm_relay_faulty.cir:")),
        "{wheres:?}"
    );
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn beyond_the_first_500_findings_are_listed_not_drawn() {
    let d = scratch("many");
    let lib = std::fs::canonicalize("samples/parts/greenhouse.yaml").unwrap_or_default();
    let mut net = format!(
        "library \"{}\"\nrail VBAT 12V max 14.4V\nrail V3 3.3V\nground GND\nmcu U1 (VDD: V3, VSS: GND",
        lib.display()
    );
    let n = 260;
    for i in 0..n {
        net.push_str(&format!(", P{i}: C{i}"));
    }
    net.push_str(") part=DEMO-MCU-3V3\n");
    for i in 0..n {
        // no freewheel diode and no base resistor: two findings or more each
        net.push_str(&format!(
            "npn Q{i} (c: SW{i}, b: C{i}, e: GND) part=DEMO-NPN-1A\nrelay K{i} (+: VBAT, -: SW{i}) part=DEMO-RLY-12V\n"
        ));
    }
    let file = d.join("many.drive");
    let _ = std::fs::write(&file, net);
    let out = d.join("r.html");
    let (_, page) = report(&[file.to_str().unwrap_or(""), "--allow-outside-root"], &out);
    let doc = Html::parse_document(&page);
    let sections = doc.select(&sel("section.finding")).count();
    let drawn = doc.select(&sel("section.finding figure.drawing")).count();
    assert!(sections > 600, "{sections} findings");
    assert_eq!(drawn, 500);
    let note: String = doc
        .select(&sel("#not-drawn"))
        .next()
        .map(|e| e.text().collect())
        .unwrap_or_default();
    assert!(
        note.contains(&format!("{} findings", sections - 500)) && note.contains("first 500"),
        "{note}"
    );
    let _ = std::fs::remove_dir_all(&d);
}

fn chromium() -> Option<PathBuf> {
    ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .iter()
        .map(PathBuf::from)
        .find(|p| p.exists())
}

fn browser(exe: &Path, profile: &Path) -> Command {
    let mut c = Command::new(exe);
    c.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
    ])
    .arg(format!("--user-data-dir={}", profile.display()));
    c
}

/// Non-white pixels of an RGB(A) PNG.
fn inked(png_path: &Path) -> (u32, u32, usize) {
    let Ok(f) = std::fs::File::open(png_path) else {
        return (0, 0, 0);
    };
    let dec = png::Decoder::new(std::io::BufReader::new(f));
    let Ok(mut r) = dec.read_info() else {
        return (0, 0, 0);
    };
    let mut buf = vec![0; r.output_buffer_size().unwrap_or(0)];
    let Ok(info) = r.next_frame(&mut buf) else {
        return (0, 0, 0);
    };
    let ch = info.color_type.samples();
    let ink = buf[..info.buffer_size()]
        .chunks(ch)
        .filter(|p| p.iter().take(3).any(|&v| v < 200))
        .count();
    (info.width, info.height, ink)
}

#[test]
fn a_real_browser_lays_the_report_out_with_visible_drawings_and_plots() {
    let Some(exe) = chromium() else {
        assert!(
            std::env::var_os("CI").is_none(),
            "CI is set but chromium is missing: .ci/run installs it"
        );
        eprintln!("skipped: no chromium");
        return;
    };
    let shots = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("report-screenshots");
    let _ = std::fs::create_dir_all(&shots);
    let d = scratch("browser");
    let page_path = shots.join("samples.html");
    let (_, page) = report(&["samples"], &page_path);
    // screenshots to look at: the top of the page and a finding's section
    let top = shots.join("samples-top.png");
    let o = browser(&exe, &d.join("p1"))
        .arg("--window-size=1100,1600")
        .arg(format!("--screenshot={}", top.display()))
        .arg(format!("file://{}", page_path.display()))
        .output();
    assert!(o.is_ok());
    let (w, h, ink) = inked(&top);
    assert_eq!((w, h), (1100, 1600));
    assert!(
        ink > (w * h) as usize / 50,
        "the page looks blank: {ink} inked pixels"
    );
    // measure after layout: a copy of the page with a script that writes
    // each drawing's and plot's laid-out size into the DOM, then dumped
    let probe = page.replace(
        "</body>",
        "<script>for (const s of document.querySelectorAll('svg')) { const r = s.getBoundingClientRect(); s.setAttribute('data-laid-w', Math.round(r.width)); s.setAttribute('data-laid-h', Math.round(r.height)); }</script></body>",
    );
    let probe_path = d.join("probe.html");
    let _ = std::fs::write(&probe_path, probe);
    let o = browser(&exe, &d.join("p2"))
        .arg("--window-size=1100,1600")
        .arg("--dump-dom")
        .arg(format!("file://{}", probe_path.display()))
        .output();
    let dom = o.map(|o| o.stdout).unwrap_or_default();
    let doc = Html::parse_document(&String::from_utf8_lossy(&dom));
    let mut n = 0;
    for s in doc.select(&sel("svg")) {
        let w = num(attr(&s, "data-laid-w"));
        let h = num(attr(&s, "data-laid-h"));
        assert!(
            w >= 150.0 && h >= 60.0,
            "{} laid out at {w}×{h}",
            attr(&s, "class")
        );
        n += 1;
    }
    assert!(n >= 15, "{n} drawings and plots measured");
    // one section alone, as the README shows it
    let one = page
        .find("<section class=\"finding error\" id=\"f4\"")
        .and_then(|a| page[a..].find("</section>").map(|b| &page[a..a + b + 10]));
    let Some(one) = one else {
        panic!("no section f4")
    };
    let head_end = page.find("<body>").map(|i| i + 6).unwrap_or(0);
    let single = format!("{}{}</body></html>", &page[..head_end], one);
    let single_path = shots.join("finding.html");
    let _ = std::fs::write(&single_path, single);
    let shot = shots.join("finding.png");
    let _ = browser(&exe, &d.join("p3"))
        .arg("--window-size=1000,1500")
        .arg(format!("--screenshot={}", shot.display()))
        .arg(format!("file://{}", single_path.display()))
        .output();
    let (_, _, ink) = inked(&shot);
    assert!(ink > 20_000, "the section looks blank: {ink}");
    eprintln!("screenshots in {}", shots.display());
    let _ = std::fs::remove_dir_all(&d);
}

/// An attribute of the marks `what` inside the plots of P5's turn-off.
fn values(doc: &Html, what: &str, name: &str) -> Vec<f64> {
    doc.select(&sel(&format!(
        "svg.plot[data-switch=P5][data-edge=turn-off] {what}"
    )))
    .map(|g| num(attr(&g, name)))
    .collect()
}

/// The dead time a bridge leg's plot measures on the simulated gate
/// drives moves one for one with the `deadtime` the netlist programs.
#[test]
fn a_leg_plot_measures_the_programmed_dead_time() {
    let d = scratch("deadtime");
    let src = std::fs::read_to_string("tests/fixtures/rules/dead-time-short/bad.drive")
        .unwrap_or_default()
        .replace("../../parts.yaml", "../../tests/fixtures/parts.yaml");
    let mut measured = Vec::new();
    for (tag, dt) in [("1us", 1e-6), ("2us", 2e-6)] {
        // a supply above the derated rating gives findings on the leg
        // without the short dead time
        let text = src
            .replace("deadtime 20ns", &format!("deadtime {tag}"))
            .lines()
            .map(|l| {
                if l.starts_with("rail VBAT") {
                    "rail VBAT 12V max 26V"
                } else {
                    l
                }
            })
            .collect::<Vec<_>>()
            .join("\n");
        let dir = Path::new("target").join(format!("deadtime-{}", std::process::id()));
        let _ = std::fs::create_dir_all(&dir);
        let f = dir.join(format!("leg-{tag}.drive"));
        let _ = std::fs::write(&f, &text);
        let out = d.join(format!("{tag}.html"));
        let (_, page) = report(&[f.to_str().unwrap_or("")], &out);
        let _ = std::fs::remove_dir_all(&dir);
        let doc = Html::parse_document(&page);
        let t = values(&doc, "g.dead-time", "data-t");
        assert!(!t.is_empty(), "{tag}: no dead time drawn");
        // the load freewheels through the other switch into the rail (12 V,
        // at most 26 V here): the level held is above the rail
        let clamps = values(&doc, "g.clamp", "data-v");
        assert!(
            clamps.iter().all(|v| (12.0..27.0).contains(v)),
            "{tag}: clamp levels {clamps:?} V"
        );
        let legend: String = doc
            .select(&sel("svg.plot[data-switch=P5][data-edge=turn-off]"))
            .flat_map(|s| s.text())
            .collect();
        assert!(
            legend.contains("N5"),
            "the other switch's gate is not named"
        );
        assert!(
            t.iter().all(|x| *x > 0.0 && *x < dt),
            "{tag}: {t:?} (the slower turn-off eats into it)"
        );
        measured.push(t[0]);
    }
    // with 20 ns programmed the two switches overlap and the leg carries
    // a shoot-through spike first: that is no clamping either
    let out = d.join("20ns.html");
    let (_, page) = report(&["tests/fixtures/rules/dead-time-short/bad.drive"], &out);
    let doc = Html::parse_document(&page);
    let overlap = values(&doc, "g.dead-time", "data-t");
    assert!(
        overlap.iter().all(|t| *t < 0.0) && !overlap.is_empty(),
        "{overlap:?}"
    );
    let clamps = values(&doc, "g.clamp", "data-v");
    assert!(
        !clamps.is_empty() && clamps.iter().all(|v| (12.0..15.0).contains(v)),
        "clamp levels {clamps:?} V (rail 12 V, 14.4 V at its maximum, plus the other switch's drop)"
    );
    let step = measured[1] - measured[0];
    assert!(
        (step - 1e-6).abs() < 20e-9,
        "1 µs more programmed, {step:e} s more measured"
    );
    let _ = std::fs::remove_dir_all(&d);
}

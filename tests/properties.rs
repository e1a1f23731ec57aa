//! Mutation properties over every channel of every clean sample: delete
//! its freewheel diode → `freewheel-missing`; reverse it →
//! `freewheel-reversed`; delete a gate's pull resistor → `gate-floating`;
//! shrink the switch's rating below the stall current →
//! `switch-overcurrent`. And no clean sample raises an error.

use armature::finding::Severity;
use armature::model::Kind;
use armature::source::SourceFile;
use armature::{Options, build, check_source};
use std::path::Path;

const CLEAN: &[&str] = &[
    "samples/vent_fan.drive",
    "samples/irrigation_valve.drive",
    "samples/window_actuator.drive",
    "samples/conveyor_driver.drive",
];

fn load(path: &str) -> (String, std::sync::Arc<SourceFile>) {
    let text = std::fs::read_to_string(path).unwrap_or_default();
    (text.clone(), SourceFile::new(path, Path::new(path), text))
}

fn fired(path: &str, text: &str) -> Vec<(String, Severity)> {
    let f = SourceFile::new(path, Path::new(path), text.to_string());
    let r = check_source(f, &Options::default(), &Default::default());
    assert!(
        !r.input_error(),
        "{path}: mutation made the input invalid: {:?}",
        r.findings.iter().map(|f| &f.message).collect::<Vec<_>>()
    );
    r.findings
        .iter()
        .map(|f| (f.rule.clone(), f.severity))
        .collect()
}

fn replace_line(text: &str, line: usize, new: &str) -> String {
    text.lines()
        .enumerate()
        .map(|(i, l)| {
            if i == line {
                new.to_string()
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

#[test]
fn no_clean_sample_raises_an_error() {
    for path in CLEAN {
        let (text, _) = load(path);
        let errors: Vec<_> = fired(path, &text)
            .into_iter()
            .filter(|(_, s)| *s == Severity::Error)
            .collect();
        assert!(errors.is_empty(), "{path}: {errors:?}");
    }
}

#[test]
fn mutations_of_every_channel_fire_the_expected_rule() {
    let mut cases = 0;
    for path in CLEAN {
        let (text, file) = load(path);
        let b = match build(&file, &Options::default(), &Default::default()) {
            Ok(b) => b,
            Err(e) => panic!(
                "{path}: {:?}",
                e.iter().map(|x| &x.message).collect::<Vec<_>>()
            ),
        };
        let c = &b.circuit;
        let lines: Vec<&str> = text.lines().collect();
        let mut diodes = Vec::new();
        for t in &b.analysis.turnoffs {
            for &(d, _) in &t.path {
                if c.part(d).kind == Kind::Diode && !diodes.contains(&d) {
                    diodes.push(d);
                }
            }
        }
        for &d in &diodes {
            let p = c.part(d);
            // delete the diode
            let out = fired(path, &replace_line(&text, p.line, "# removed"));
            assert!(
                out.iter().any(|(r, _)| r == "freewheel-missing"),
                "{path}: without {} got {out:?}",
                p.reference
            );
            // reverse it
            let (a, k) = (
                c.pin_net_name(d, "a").unwrap_or(""),
                c.pin_net_name(d, "k").unwrap_or(""),
            );
            let line = lines.get(p.line).copied().unwrap_or("");
            let swapped = line.replace(&format!("a: {a}, k: {k}"), &format!("a: {k}, k: {a}"));
            assert_ne!(swapped, line, "{path}: cannot reverse {}", p.reference);
            let out = fired(path, &replace_line(&text, p.line, &swapped));
            assert!(
                out.iter().any(|(r, _)| r == "freewheel-reversed"),
                "{path}: reversed {} got {out:?}",
                p.reference
            );
            cases += 2;
        }
        // pull resistors of every gate not held by a driver output
        for (&sw, info) in &b.analysis.switches {
            let p = c.part(sw);
            let Some((_, ctl, r)) = p.kind.switch_pins() else {
                continue;
            };
            let (Some(g), Some(rn)) = (p.net_of(ctl), p.net_of(r)) else {
                continue;
            };
            let Some(gi) = b.graph.island_of.get(g).copied().flatten() else {
                continue;
            };
            let island = &b.graph.islands[gi];
            let driven = island.iter().any(|&n| {
                c.net(n).conns.iter().any(|(q, pin)| {
                    c.part(*q).kind == Kind::Driver
                        && c.part(*q)
                            .pins
                            .get(*pin)
                            .is_some_and(|x| x.name.starts_with("out"))
                })
            });
            if driven || info.controls.is_empty() {
                continue;
            }
            // every pull resistor of the gate's network (pull-downs on the
            // controller side are shared through the pin net)
            let pulls: Vec<usize> = c
                .parts
                .iter()
                .filter(|qp| {
                    qp.kind == Kind::Resistor
                        && qp.pins.iter().any(|x| island.contains(&x.net))
                        && qp
                            .pins
                            .iter()
                            .any(|x| x.net == rn || c.net(x.net).is_fixed())
                })
                .map(|qp| qp.line)
                .collect();
            if pulls.is_empty() {
                continue;
            }
            let mut mutated = text.clone();
            for l in &pulls {
                mutated = replace_line(&mutated, *l, "# removed");
            }
            let out = fired(path, &mutated);
            assert!(
                out.iter().any(|(r, _)| r == "gate-floating"),
                "{path}: without the pulls of {} got {out:?}",
                p.reference
            );
            cases += 1;
        }
        // shrink every load switch's rating below its stall current
        for (sw, p) in c.parts.iter().enumerate() {
            // load switches only: a gate-network stage's current depends
            // on its own ratings' fit
            let Some(ion) = b
                .analysis
                .facts
                .value(sw, "i_on")
                .filter(|i| *i >= armature::analysis::solve::I_LOAD_MIN)
            else {
                continue;
            };
            let key = if p.kind.is_mos() { "id_max" } else { "ic_max" };
            let line = lines.get(p.line).copied().unwrap_or("");
            let mutated = format!("{line} {key}={:.4}A", ion * 0.5);
            let out = fired(path, &replace_line(&text, p.line, &mutated));
            assert!(
                out.iter().any(|(r, _)| r == "switch-overcurrent"),
                "{path}: {} at {key}={} got {out:?}",
                p.reference,
                ion * 0.5
            );
            cases += 1;
        }
    }
    eprintln!("{cases} mutations checked");
    assert!(cases >= 20, "only {cases} mutations");
}

/// The rating rules, on every part of every clean sample: a rating set
/// just below what the analysis computes (over the derating) fires the
/// rule, one just above does not.
#[test]
fn rating_mutations_fire_the_rating_rules() {
    let mut cases = 0;
    for path in CLEAN {
        let (text, file) = load(path);
        let b = match build(&file, &Options::default(), &Default::default()) {
            Ok(b) => b,
            Err(_) => panic!("{path}"),
        };
        let c = &b.circuit;
        let lines: Vec<&str> = text.lines().collect();
        for (i, p) in c.parts.iter().enumerate() {
            let line = lines.get(p.line).copied().unwrap_or("");
            let line = line.split('#').next().unwrap_or("");
            // a part whose line carries its own rating keeps it there
            let strip = |key: &str| -> String {
                line.split_whitespace()
                    .filter(|w| !w.starts_with(&format!("{key}=")))
                    .collect::<Vec<_>>()
                    .join(" ")
            };
            let (rule, key, value, derate) = match p.kind {
                Kind::Capacitor => {
                    let pins: Vec<usize> = p.pins.iter().map(|x| x.net).collect();
                    let hi = |n: usize| b.analysis.net_vmax[n].unwrap_or(0.0);
                    let lo = |n: usize| b.analysis.net_vmin[n].unwrap_or(0.0);
                    let v = (hi(pins[0]) - lo(pins[1]))
                        .abs()
                        .max((hi(pins[1]) - lo(pins[0])).abs());
                    ("capacitor-overvoltage", "v_max", v, 0.8)
                }
                Kind::Resistor => match b.analysis.facts.value(i, "p_loss") {
                    Some(pw) if pw > 1e-6 => ("resistor-overload", "p_max", pw, 0.5),
                    _ => continue,
                },
                Kind::Mcu => match p.pin("VDD").and_then(|x| c.net(x.net).fixed_max()) {
                    Some(v) => ("supply-overvoltage", "vdd_max", v, 1.0),
                    None => continue,
                },
                _ => continue,
            };
            let unit = if key == "p_max" { "W" } else { "V" };
            for (scale, fires) in [(0.9, true), (1.1, false)] {
                let m = format!("{} {key}={:.6e}{unit}", strip(key), value / derate * scale);
                let out = fired(path, &replace_line(&text, p.line, &m));
                assert_eq!(
                    out.iter().any(|(r, _)| r == rule),
                    fires,
                    "{path}: {} with {key} ×{scale}: {out:?}",
                    p.reference
                );
                cases += 1;
            }
        }
        // a pull-up from the highest rail onto every controller pin
        let top = c
            .nets
            .iter()
            .filter(|n| matches!(n.kind, armature::model::NetKind::Rail(_)))
            .max_by(|a, b| {
                a.fixed_max()
                    .unwrap_or(0.0)
                    .total_cmp(&b.fixed_max().unwrap_or(0.0))
            });
        for p in c.parts.iter().filter(|p| p.kind == Kind::Mcu) {
            let supply = p
                .pin("VDD")
                .and_then(|x| c.net(x.net).fixed_max())
                .unwrap_or(0.0);
            let Some(top) = top.filter(|t| t.fixed_max().unwrap_or(0.0) > supply + 1.0) else {
                continue;
            };
            for pin in p.pins.iter().filter(|x| !c.net(x.net).is_fixed()) {
                let extra = format!(
                    "{text}resistor RPU_X ({}, {}) 1k\n",
                    top.name,
                    c.net(pin.net).name
                );
                let out = fired(path, &extra);
                assert!(
                    out.iter().any(|(r, _)| r == "pin-overvoltage"),
                    "{path}: 1 kΩ from {} onto {}.{} got {out:?}",
                    top.name,
                    p.reference,
                    pin.name
                );
                cases += 1;
            }
        }
    }
    eprintln!("{cases} rating mutations checked");
    assert!(cases >= 30, "only {cases}");
}

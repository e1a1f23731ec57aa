//! Every number a finding's message prints comes from one source that
//! `armature facts` shows: a fact of a part the finding names, a rating
//! (or a rating × the derating in force), a rail, a net's extreme voltage,
//! a switch's operating point, or a setting. The test walks every rule
//! fixture and every sample and checks each printed quantity against those
//! sources at the printed precision.

use armature::units::{Dimension, format_si};
use armature::{Built, Options, build, read_netlist};
use std::path::Path;

fn files() -> Vec<String> {
    let mut v = Vec::new();
    for d in ["tests/fixtures/rules", "samples"] {
        let mut stack = vec![std::path::PathBuf::from(d)];
        while let Some(p) = stack.pop() {
            let Ok(rd) = std::fs::read_dir(&p) else {
                continue;
            };
            for e in rd.flatten() {
                let q = e.path();
                if q.is_dir() {
                    stack.push(q);
                } else if q.extension().is_some_and(|x| x == "drive") {
                    v.push(q.to_string_lossy().into_owned());
                }
            }
        }
    }
    v.sort();
    v
}

/// Quantities as `format_si` writes them: a number, a space, an optional
/// SI prefix and a unit.
fn quantities(msg: &str) -> Vec<String> {
    let units = ["V", "A", "W", "J", "s", "Hz", "°C", "Ω", "F", "H", "K/W"];
    let mut out = Vec::new();
    let toks: Vec<&str> = msg.split(' ').collect();
    for w in toks.windows(2) {
        let num = w[0].trim_start_matches(['(', '`', '±', '≈']);
        if num.parse::<f64>().is_err() {
            continue;
        }
        let unit = w[1].trim_end_matches([')', ',', ':', ';', '.', '`']);
        let bare = unit.trim_start_matches(['p', 'n', 'µ', 'm', 'k', 'M', 'G']);
        if units.contains(&unit) || units.contains(&bare) {
            out.push(format!("{num} {unit}"));
        }
    }
    out
}

fn sources(b: &Built, parts: &[String]) -> Vec<String> {
    let c = &b.circuit;
    let a = &b.analysis;
    let d = &b.settings.derating;
    let mut v: Vec<(f64, Dimension)> = Vec::new();
    for r in parts {
        let Some(p) = c.part_id(r) else { continue };
        let part = c.part(p);
        if let Some(pf) = a.facts.parts.get(p) {
            v.extend(pf.facts.iter().map(|f| (f.value, f.dim)));
        }
        for def in part.kind.keys() {
            if let (Some(x), armature::model::KeyType::Q(dim)) = (part.num(def.name), def.ty) {
                v.push((x, dim));
                for k in [d.voltage, d.current, d.power, d.gate_voltage] {
                    v.push((x * k, dim));
                }
                v.push((x - d.tj_margin, dim));
            }
        }
        for pin in &part.pins {
            for e in [a.net_vmax.get(pin.net), a.net_vmin.get(pin.net)]
                .into_iter()
                .flatten()
                .flatten()
            {
                v.push((*e, Dimension::Voltage));
            }
        }
        if part.kind == armature::model::Kind::Resistor {
            let a = armature::checks::rating::resistor_overload::P_ASSUMED;
            v.extend([(a, Dimension::Power), (a * d.power, Dimension::Power)]);
        }
        for (_, x) in &a.injections {
            if x.pin.0 == p {
                v.extend([
                    (x.current, Dimension::Current),
                    (x.v_pin, Dimension::Voltage),
                    (x.v_rail, Dimension::Voltage),
                ]);
            }
        }
        for (_, pt) in armature::analysis::present::switch_points(b, p) {
            v.push((pt.v_gs, Dimension::Voltage));
            v.push((pt.v_ds, Dimension::Voltage));
            v.push((pt.i_d, Dimension::Current));
            v.push((pt.i_d.abs(), Dimension::Current));
            v.push(((pt.v_ds * pt.i_d).abs(), Dimension::Power));
        }
    }
    for n in &c.nets {
        if let armature::model::NetKind::Rail(r) = n.kind {
            v.extend([
                (r.max, Dimension::Voltage),
                (r.min, Dimension::Voltage),
                (r.nominal, Dimension::Voltage),
            ]);
        }
    }
    v.push((b.settings.ambient, Dimension::Temperature));
    v.into_iter().map(|(x, dim)| format_si(x, dim)).collect()
}

#[test]
fn every_number_in_a_message_is_a_fact_a_rating_or_a_solved_value() {
    let mut checked = 0;
    let mut bad = Vec::new();
    for path in files() {
        let Ok(f) = read_netlist(Path::new(&path), &path) else {
            continue;
        };
        let Ok(b) = build(&f, &Options::default(), &Default::default()) else {
            continue;
        };
        let r = armature::check_source(f.clone(), &Options::default(), &Default::default());
        for finding in &r.findings {
            let src = sources(&b, &finding.parts);
            for q in quantities(&finding.message) {
                checked += 1;
                if !src.contains(&q) {
                    bad.push(format!(
                        "{path} [{}] {q}: {}",
                        finding.rule, finding.message
                    ));
                }
            }
        }
    }
    eprintln!("{checked} quantities checked");
    assert!(
        bad.is_empty(),
        "{} unsourced:\n{}",
        bad.len(),
        bad.join("\n")
    );
    assert!(checked > 50);
}

//! Electrical analysis: produces the `Facts` of every part.

pub mod facts;

pub use facts::{Fact, Facts};

use crate::graph::CircuitGraph;
use crate::model::Circuit;
use crate::settings::Settings;

/// Everything the analysis computed for a circuit.
#[derive(Debug, Default)]
pub struct Analysis {
    pub facts: Facts,
    /// Findings made before the checks (parse warnings, analysis notes).
    pub early: Vec<crate::finding::Finding>,
}

pub fn analyze(c: &Circuit, _g: &CircuitGraph, _s: &Settings) -> Analysis {
    Analysis {
        facts: Facts::new(c.parts.len()),
        early: Vec::new(),
    }
}

/// `facts --format json`.
pub fn facts_json(b: &crate::Built) -> serde_json::Value {
    let mut parts = serde_json::Map::new();
    for (i, p) in b.circuit.parts.iter().enumerate() {
        let mut m = serde_json::Map::new();
        if let Some(pf) = b.analysis.facts.parts.get(i) {
            for f in &pf.facts {
                m.insert(
                    f.name.clone(),
                    serde_json::json!({"value": f.value, "unit": f.dim.json_unit()}),
                );
            }
            if !pf.missing.is_empty() {
                let miss: serde_json::Map<String, serde_json::Value> = pf
                    .missing
                    .iter()
                    .map(|x| (x.name.clone(), serde_json::Value::String(x.reason.clone())))
                    .collect();
                m.insert("_missing".into(), serde_json::Value::Object(miss));
            }
        }
        parts.insert(p.reference.clone(), serde_json::Value::Object(m));
    }
    serde_json::json!({
        "file": b.circuit.file.name,
        "ambient": {"value": b.settings.ambient, "unit": "degC"},
        "derating": crate::report::json::derating(&b.settings.derating),
        "parts": parts,
    })
}

/// `facts` for people.
pub fn facts_human(b: &crate::Built) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{} (ambient {})",
        b.circuit.file.name,
        crate::units::format_si(b.settings.ambient, crate::units::Dimension::Temperature)
    );
    for (i, p) in b.circuit.parts.iter().enumerate() {
        let Some(pf) = b.analysis.facts.parts.get(i) else {
            continue;
        };
        if pf.facts.is_empty() && pf.missing.is_empty() {
            continue;
        }
        let _ = writeln!(
            s,
            "\n{} ({}, {})",
            p.reference,
            p.kind.name(),
            p.part_label()
        );
        for f in &pf.facts {
            let _ = write!(
                s,
                "  {:<10} {}",
                f.name,
                crate::units::format_si(f.value, f.dim)
            );
            if let Some(n) = &f.note {
                let _ = write!(s, "   {n}");
            }
            let _ = writeln!(s);
        }
        for m in &pf.missing {
            let _ = writeln!(s, "  {:<10} —   {}", m.name, m.reason);
        }
    }
    s
}

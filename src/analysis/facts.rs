//! The `Facts` table: named, unit-carrying quantities per part. Built-in
//! checks, team rules and `armature facts` all read it.

use crate::units::Dimension;

#[derive(Clone, Debug, PartialEq)]
pub struct Fact {
    pub name: &'static str,
    pub value: f64,
    pub dim: Dimension,
    /// How it was obtained, for `facts` and messages.
    /// Shared between the identical groups that reuse one reading.
    pub note: Option<std::sync::Arc<str>>,
}

/// A fact that could not be computed, with the reason.
#[derive(Clone, Debug, PartialEq)]
pub struct Missing {
    pub name: &'static str,
    pub reason: std::sync::Arc<str>,
}

#[derive(Clone, Debug, Default)]
pub struct PartFacts {
    pub facts: Vec<Fact>,
    pub missing: Vec<Missing>,
}

impl PartFacts {
    pub fn set(&mut self, name: &'static str, value: f64, dim: Dimension, note: Option<String>) {
        if !value.is_finite() {
            self.missing(name, "the computation did not give a finite number");
            return;
        }
        self.missing.retain(|m| m.name != name);
        let note = note.map(std::sync::Arc::<str>::from);
        if let Some(f) = self.facts.iter_mut().find(|f| f.name == name) {
            f.value = value;
            f.dim = dim;
            f.note = note;
        } else {
            if self.facts.capacity() == 0 {
                // loads and diodes get 5-6 facts, switches 11: room for 6,
                // then 12, instead of 4, 8, 16 (a large board has
                // hundreds of thousands of these lists)
                self.facts.reserve_exact(6);
            }
            self.facts.push(Fact {
                name,
                value,
                dim,
                note,
            });
        }
    }

    pub fn missing(&mut self, name: &'static str, reason: impl Into<String>) {
        if self.facts.iter().any(|f| f.name == name) || self.missing.iter().any(|m| m.name == name)
        {
            return;
        }
        self.missing.push(Missing {
            name,
            reason: std::sync::Arc::from(reason.into()),
        });
    }

    pub fn get(&self, name: &str) -> Option<&Fact> {
        self.facts.iter().find(|f| f.name == name)
    }

    /// Fold in what another, independent computation learnt about the
    /// same part. A part reached from several groups (a diode between two
    /// rails on the freewheel path of several loads) only ever gets
    /// worst-case facts from them, so the larger value wins, with its note.
    pub fn merge(&mut self, other: PartFacts) {
        for f in other.facts {
            match self.facts.iter_mut().find(|g| g.name == f.name) {
                Some(g) => {
                    if f.value > g.value {
                        *g = f;
                    }
                }
                None => {
                    self.missing.retain(|m| m.name != f.name);
                    self.facts.push(f);
                }
            }
        }
        for m in other.missing {
            self.missing(m.name, m.reason.to_string());
        }
    }
}

#[derive(Clone, Debug, Default)]
pub struct Facts {
    pub parts: Vec<PartFacts>,
}

impl Facts {
    pub fn new(n: usize) -> Facts {
        Facts {
            parts: vec![PartFacts::default(); n],
        }
    }

    pub fn get(&self, part: usize, name: &str) -> Option<&Fact> {
        self.parts.get(part)?.get(name)
    }

    pub fn value(&self, part: usize, name: &str) -> Option<f64> {
        self.get(part, name).map(|f| f.value)
    }

    pub fn why_missing(&self, part: usize, name: &str) -> Option<&str> {
        self.parts
            .get(part)?
            .missing
            .iter()
            .find(|m| m.name == name)
            .map(|m| &*m.reason)
    }

    /// Fold in the facts one group computed on its own.
    pub fn merge(&mut self, local: LocalFacts) {
        let mut parts: Vec<(usize, PartFacts)> = local.parts.into_iter().collect();
        parts.sort_unstable_by_key(|(p, _)| *p);
        for (p, pf) in parts {
            if let Some(g) = self.parts.get_mut(p) {
                if g.facts.is_empty() && g.missing.is_empty() {
                    *g = pf;
                } else {
                    g.merge(pf);
                }
            }
        }
    }
}

/// The facts of the parts one group touches, computed apart from the
/// other groups (in parallel) and merged afterwards.
#[derive(Clone, Debug, Default)]
pub struct LocalFacts {
    parts: crate::fasthash::FastMap<usize, PartFacts>,
}

impl LocalFacts {
    /// The same facts for the parts another, identical group has in their
    /// place.
    pub fn remap(&self, f: impl Fn(usize) -> Option<usize>) -> LocalFacts {
        LocalFacts {
            parts: self
                .parts
                .iter()
                .filter_map(|(&p, pf)| Some((f(p)?, pf.clone())))
                .collect(),
        }
    }
}

/// Where the analysis writes a part's facts: the circuit's dense table
/// (`Facts`) or one group's sparse one (`LocalFacts`).
pub trait FactTable {
    /// The part's facts, created on first use (`None`: no such part).
    fn slot(&mut self, part: usize) -> Option<&mut PartFacts>;
    fn peek(&self, part: usize) -> Option<&PartFacts>;

    fn set(
        &mut self,
        part: usize,
        name: &'static str,
        value: f64,
        dim: Dimension,
        note: Option<String>,
    ) {
        if let Some(pf) = self.slot(part) {
            pf.set(name, value, dim, note);
        }
    }

    fn missing(&mut self, part: usize, name: &'static str, reason: impl Into<String>) {
        if let Some(pf) = self.slot(part) {
            pf.missing(name, reason);
        }
    }

    fn value(&self, part: usize, name: &str) -> Option<f64> {
        self.peek(part)?.get(name).map(|f| f.value)
    }
}

impl FactTable for Facts {
    fn slot(&mut self, part: usize) -> Option<&mut PartFacts> {
        self.parts.get_mut(part)
    }
    fn peek(&self, part: usize) -> Option<&PartFacts> {
        self.parts.get(part)
    }
}

impl FactTable for LocalFacts {
    fn slot(&mut self, part: usize) -> Option<&mut PartFacts> {
        Some(self.parts.entry(part).or_default())
    }
    fn peek(&self, part: usize) -> Option<&PartFacts> {
        self.parts.get(&part)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn merging_groups_keeps_the_worst_case_and_its_note() {
        let mut all = Facts::new(3);
        let mut g1 = LocalFacts::default();
        g1.set(
            1,
            "i_fw",
            0.5,
            Dimension::Current,
            Some("first load".into()),
        );
        g1.missing(2, "tj", "no rth_ja");
        let mut g2 = LocalFacts::default();
        g2.set(
            1,
            "i_fw",
            0.9,
            Dimension::Current,
            Some("second load".into()),
        );
        g2.set(1, "f_pwm", 20e3, Dimension::Frequency, None);
        g2.set(2, "tj", 80.0, Dimension::Temperature, None);
        let mut g3 = LocalFacts::default();
        g3.set(
            1,
            "i_fw",
            0.7,
            Dimension::Current,
            Some("third load".into()),
        );
        all.merge(g1);
        all.merge(g2);
        all.merge(g3);
        let f = all.get(1, "i_fw");
        assert_eq!(f.map(|f| f.value), Some(0.9));
        assert_eq!(f.and_then(|f| f.note.as_deref()), Some("second load"));
        assert_eq!(all.value(1, "f_pwm"), Some(20e3));
        // a fact found later clears the reason it was missing
        assert_eq!(all.value(2, "tj"), Some(80.0));
        assert_eq!(all.why_missing(2, "tj"), None);
        // out-of-range parts are ignored, not a panic
        let mut g4 = LocalFacts::default();
        g4.set(7, "tj", 1.0, Dimension::Temperature, None);
        all.merge(g4);
    }
}

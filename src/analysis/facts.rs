//! The `Facts` table: named, unit-carrying quantities per part. Built-in
//! checks, team rules and `armature facts` all read it.

use crate::units::Dimension;

#[derive(Clone, Debug, PartialEq)]
pub struct Fact {
    pub name: &'static str,
    pub value: f64,
    pub dim: Dimension,
    /// How it was obtained, for `facts` and messages.
    pub note: Option<String>,
}

/// A fact that could not be computed, with the reason.
#[derive(Clone, Debug, PartialEq)]
pub struct Missing {
    pub name: &'static str,
    pub reason: String,
}

#[derive(Clone, Debug, Default)]
pub struct PartFacts {
    pub facts: Vec<Fact>,
    pub missing: Vec<Missing>,
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

    pub fn set(
        &mut self,
        part: usize,
        name: &'static str,
        value: f64,
        dim: Dimension,
        note: Option<String>,
    ) {
        if !value.is_finite() {
            self.missing(part, name, "the computation did not give a finite number");
            return;
        }
        if let Some(pf) = self.parts.get_mut(part) {
            pf.missing.retain(|m| m.name != name);
            if let Some(f) = pf.facts.iter_mut().find(|f| f.name == name) {
                f.value = value;
                f.dim = dim;
                f.note = note;
            } else {
                pf.facts.push(Fact {
                    name,
                    value,
                    dim,
                    note,
                });
            }
        }
    }

    pub fn missing(&mut self, part: usize, name: &'static str, reason: impl Into<String>) {
        if let Some(pf) = self.parts.get_mut(part) {
            if pf.facts.iter().any(|f| f.name == name) || pf.missing.iter().any(|m| m.name == name)
            {
                return;
            }
            pf.missing.push(Missing {
                name,
                reason: reason.into(),
            });
        }
    }

    pub fn get(&self, part: usize, name: &str) -> Option<&Fact> {
        self.parts.get(part)?.facts.iter().find(|f| f.name == name)
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
            .map(|m| m.reason.as_str())
    }
}

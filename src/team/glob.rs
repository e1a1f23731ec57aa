//! The `parts:` pattern of a team rule (`*` any run, `?` any one
//! character), compiled once into a bit-parallel automaton: one pass over
//! a name, a few word operations per character, no backtracking, so a
//! hostile pattern costs what a plain one does.

use std::collections::HashMap;

#[derive(Clone, Debug)]
pub struct Glob {
    /// The pattern as written.
    pattern: String,
    /// Pattern positions (a run of `*` counts once) and what each takes.
    len: usize,
    /// Per literal character: the positions it may advance from.
    lit: HashMap<char, Vec<u64>>,
    /// Positions `?` advances from (any character).
    any: Vec<u64>,
    /// Positions holding `*` (stay on any character, or skip it).
    star: Vec<u64>,
}

#[derive(Clone, Copy)]
enum Tok {
    Lit(char),
    Any,
    Star,
}

impl Glob {
    pub fn new(pattern: &str) -> Glob {
        let mut toks: Vec<Tok> = Vec::new();
        for c in pattern.chars() {
            let t = match c {
                '*' => Tok::Star,
                '?' => Tok::Any,
                c => Tok::Lit(c),
            };
            if matches!((toks.last(), t), (Some(Tok::Star), Tok::Star)) {
                continue;
            }
            toks.push(t);
        }
        // states 0..=len: state i means "the first i tokens are matched"
        let words = (toks.len() + 1).div_ceil(64);
        let mut g = Glob {
            pattern: pattern.to_string(),
            len: toks.len(),
            lit: HashMap::new(),
            any: vec![0; words],
            star: vec![0; words],
        };
        for (i, t) in toks.iter().enumerate() {
            let (w, b) = (i / 64, 1u64 << (i % 64));
            match t {
                Tok::Lit(c) => {
                    let m = g.lit.entry(*c).or_insert_with(|| vec![0; words]);
                    if let Some(x) = m.get_mut(w) {
                        *x |= b;
                    }
                }
                Tok::Any => {
                    if let Some(x) = g.any.get_mut(w) {
                        *x |= b;
                    }
                }
                Tok::Star => {
                    if let Some(x) = g.star.get_mut(w) {
                        *x |= b;
                    }
                }
            }
        }
        g
    }

    /// The pattern as written.
    pub fn as_str(&self) -> &str {
        &self.pattern
    }

    /// Follow the `*` positions' empty matches (a star's state also holds
    /// the next one); stars never follow each other, so one step does.
    fn close(&self, d: &mut [u64]) {
        let mut carry = 0u64;
        for (x, s) in d.iter_mut().zip(&self.star) {
            let m = *x & s;
            *x |= (m << 1) | carry;
            carry = m >> 63;
        }
    }

    pub fn matches(&self, s: &str) -> bool {
        let words = self.any.len();
        let mut d = vec![0u64; words];
        let mut next = vec![0u64; words];
        if let Some(x) = d.first_mut() {
            *x = 1;
        }
        self.close(&mut d);
        let none = vec![0u64; words];
        for c in s.chars() {
            let lit = self.lit.get(&c).unwrap_or(&none);
            // advance the states whose token takes `c` (shifted by one,
            // across words), and keep the states on a `*`
            let mut carry = 0u64;
            for i in 0..words {
                let (x, l, a, st) = (
                    d.get(i).copied().unwrap_or(0),
                    lit.get(i).copied().unwrap_or(0),
                    self.any.get(i).copied().unwrap_or(0),
                    self.star.get(i).copied().unwrap_or(0),
                );
                let adv = x & (l | a);
                if let Some(n) = next.get_mut(i) {
                    *n = (adv << 1) | carry | (x & st);
                }
                carry = adv >> 63;
            }
            std::mem::swap(&mut d, &mut next);
            self.close(&mut d);
            if d.iter().all(|&x| x == 0) {
                return false;
            }
        }
        let (w, b) = (self.len / 64, 1u64 << (self.len % 64));
        d.get(w).is_some_and(|x| x & b != 0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The reference: the plain recursive definition.
    fn naive(p: &[char], t: &[char]) -> bool {
        match p.split_first() {
            None => t.is_empty(),
            Some(('*', rest)) => (0..=t.len()).any(|i| naive(rest, &t[i..])),
            Some(('?', rest)) => !t.is_empty() && naive(rest, &t[1..]),
            Some((c, rest)) => t.first() == Some(c) && naive(rest, &t[1..]),
        }
    }

    #[test]
    fn agrees_with_the_definition() {
        let pats = [
            "",
            "*",
            "?",
            "DEMO-*",
            "*-3A",
            "D*N*A",
            "D?MO*",
            "**",
            "*?*",
            "a*b*c",
            "*a*a*b",
            "DEMO-N60-3A",
            "?*?",
            "é*",
        ];
        let texts = [
            "",
            "a",
            "ab",
            "DEMO-N60-3A",
            "DEMO-",
            "DxMO",
            "aab",
            "abc",
            "aaab",
            "aXbYc",
            "é",
            "éa",
            "DEMO-N60-3B",
        ];
        for p in pats {
            let g = Glob::new(p);
            let pc: Vec<char> = p.chars().collect();
            for t in texts {
                let tc: Vec<char> = t.chars().collect();
                assert_eq!(g.matches(t), naive(&pc, &tc), "{p:?} on {t:?}");
            }
        }
    }

    #[test]
    fn long_patterns_span_several_words() {
        let p = format!("{}*{}", "a".repeat(100), "b".repeat(80));
        let g = Glob::new(&p);
        assert!(g.matches(&format!("{}xyz{}", "a".repeat(100), "b".repeat(80))));
        assert!(!g.matches(&format!("{}xyz{}", "a".repeat(100), "b".repeat(79))));
        let hostile = Glob::new(&"*a".repeat(200));
        assert!(!hostile.matches(&"a".repeat(199)));
        assert!(hostile.matches(&"a".repeat(200)));
    }
}

//! "Did you mean" suggestions.

/// Levenshtein distance, on chars.
pub fn distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for (i, ca) in a.chars().enumerate() {
        cur[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != *cb);
            cur[j + 1] = (prev[j + 1] + 1).min(cur[j] + 1).min(prev[j] + cost);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// The closest candidate within a distance that scales with the length,
/// case-insensitive matches first.
pub fn closest<'a, I>(word: &str, candidates: I) -> Option<&'a str>
where
    I: IntoIterator<Item = &'a str>,
{
    let limit = (word.chars().count() / 3).max(1);
    let lower = word.to_lowercase();
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        if c == word {
            continue;
        }
        let d = if c.to_lowercase() == lower {
            0
        } else {
            distance(word, c)
        };
        if d <= limit && best.is_none_or(|(bd, bc)| d < bd || (d == bd && c < bc)) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

/// Words longer than this get no suggestion (a name that long is not a
/// typo of another, and the distance is quadratic in the length).
pub const MAX_WORD: usize = 64;

/// Candidates compared per query at most: a word far from every name of a
/// large board stops there with the best match found so far.
pub const MAX_COMPARED: usize = 4096;

/// Levenshtein distance if it is at most `k`, by a band of width 2k+1
/// (None beyond `k`).
pub fn distance_within(a: &[char], b: &[char], k: usize) -> Option<usize> {
    if a.len().abs_diff(b.len()) > k {
        return None;
    }
    let big = k + 1;
    let mut prev: Vec<usize> = (0..=b.len()).map(|j| j.min(big)).collect();
    let mut cur = vec![big; b.len() + 1];
    for (i, ca) in a.iter().enumerate() {
        let lo = (i + 1).saturating_sub(k);
        let hi = (i + 1 + k).min(b.len());
        cur.iter_mut().for_each(|x| *x = big);
        if lo == 0 {
            cur[0] = (i + 1).min(big);
        }
        let mut row_min = cur[0];
        for j in lo.max(1)..=hi {
            let cost = usize::from(*ca != b[j - 1]);
            let v = (prev[j] + 1).min(cur[j - 1] + 1).min(prev[j - 1] + cost);
            cur[j] = v.min(big);
            row_min = row_min.min(cur[j]);
        }
        if row_min > k {
            return None;
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    (prev[b.len()] <= k).then_some(prev[b.len()])
}

/// Suggestions from a large set of names in time that does not grow with
/// the set for a typical query: an index of character pairs. A name within
/// edit distance `k` of a word keeps all but at most 2k of the word's
/// distinct pairs (an edit touches two), so it contains at least one of
/// any 2k+1 of them: the candidates are the names listed under the word's
/// 2k+1 rarest pairs. Distances 1, 2, … are tried in turn and the first
/// that finds a name wins (ties: the name first in order). A name that
/// differs only in case wins outright.
pub struct Index {
    names: Vec<String>,
    chars: Vec<Vec<char>>,
    /// Lowercase name: the names of that spelling, first in order first.
    lower: std::collections::HashMap<String, Vec<u32>>,
    pairs: std::collections::HashMap<(char, char), Vec<u32>>,
}

fn pairs_of(w: &[char]) -> Vec<(char, char)> {
    let mut v: Vec<(char, char)> = w.windows(2).map(|p| (p[0], p[1])).collect();
    v.sort_unstable();
    v.dedup();
    v
}

impl Index {
    pub fn new<'a, I>(names: I) -> Index
    where
        I: IntoIterator<Item = &'a str>,
    {
        let mut names: Vec<String> = names.into_iter().map(str::to_string).collect();
        names.sort_unstable();
        names.dedup();
        let chars: Vec<Vec<char>> = names.iter().map(|n| n.chars().collect()).collect();
        let mut lower = std::collections::HashMap::new();
        let mut pairs: std::collections::HashMap<(char, char), Vec<u32>> =
            std::collections::HashMap::new();
        for (i, (n, c)) in names.iter().zip(&chars).enumerate() {
            lower
                .entry(n.to_lowercase())
                .or_insert_with(Vec::new)
                .push(i as u32);
            if c.len() <= MAX_WORD {
                for p in pairs_of(c) {
                    pairs.entry(p).or_default().push(i as u32);
                }
            }
        }
        Index {
            names,
            chars,
            lower,
            pairs,
        }
    }

    /// The closest name within a distance that scales with the length
    /// (as [`closest`]), or None.
    pub fn closest(&self, word: &str) -> Option<&str> {
        let w: Vec<char> = word.chars().collect();
        if w.len() > MAX_WORD {
            return None;
        }
        if let Some(n) = self
            .lower
            .get(&word.to_lowercase())
            .into_iter()
            .flatten()
            .filter_map(|&i| self.names.get(i as usize))
            .find(|n| n.as_str() != word)
        {
            return Some(n);
        }
        let limit = (w.len() / 3).max(1);
        let mut grams: Vec<(usize, (char, char))> = pairs_of(&w)
            .into_iter()
            .map(|p| (self.pairs.get(&p).map_or(0, Vec::len), p))
            .collect();
        grams.sort_unstable();
        let mut compared = 0usize;
        for k in 1..=limit {
            let mut best: Option<u32> = None;
            let mut seen = std::collections::HashSet::new();
            let mut consider = |i: u32, best: &mut Option<u32>, compared: &mut usize| {
                if !seen.insert(i) {
                    return;
                }
                let Some(c) = self.chars.get(i as usize) else {
                    return;
                };
                if self.names.get(i as usize).is_some_and(|n| n == word) {
                    return;
                }
                *compared += 1;
                if distance_within(&w, c, k).is_some() {
                    // names are sorted: the smallest index is first in order
                    if best.is_none_or(|b| i < b) {
                        *best = Some(i);
                    }
                }
            };
            if grams.len() <= 2 * k {
                // too few pairs to filter: names of a near length
                for (i, c) in self.chars.iter().enumerate() {
                    if compared >= MAX_COMPARED {
                        break;
                    }
                    if c.len().abs_diff(w.len()) <= k {
                        consider(i as u32, &mut best, &mut compared);
                    }
                }
            } else {
                'lists: for (_, p) in grams.iter().take(2 * k + 1) {
                    for &i in self.pairs.get(p).into_iter().flatten() {
                        if compared >= MAX_COMPARED {
                            break 'lists;
                        }
                        consider(i, &mut best, &mut compared);
                    }
                }
            }
            if let Some(b) = best {
                return self.names.get(b as usize).map(String::as_str);
            }
            if compared >= MAX_COMPARED {
                return None;
            }
        }
        None
    }
}

/// ", did you mean `x`?" or "" from an index.
pub fn did_you_mean_in(word: &str, index: &Index) -> String {
    match index.closest(word) {
        Some(c) => format!("did you mean `{c}`?"),
        None => String::new(),
    }
}

/// ", did you mean `x`?" or "".
pub fn did_you_mean<'a, I>(word: &str, candidates: I) -> String
where
    I: IntoIterator<Item = &'a str>,
{
    match closest(word, candidates) {
        Some(c) => format!("did you mean `{c}`?"),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn suggests_near_names() {
        assert_eq!(distance("kitten", "sitting"), 3);
        assert_eq!(
            closest("vds_mx", ["vds_max", "vgs_max", "id_max"]),
            Some("vds_max")
        );
        assert_eq!(closest("FAN_SW", ["FAN_SW1", "GND"]), Some("FAN_SW1"));
        assert_eq!(closest("zzzz", ["vds_max"]), None);
        assert_eq!(closest("gnd", ["GND"]), Some("GND"));
    }

    #[test]
    fn the_index_agrees_with_the_scan() {
        let mut names: Vec<String> = (0..3000).map(|i| format!("DEMO-R-{i:05}")).collect();
        names
            .extend(["FAN_SW1", "GND", "gnd", "VBAT", "MOTOR_A", "MOTOR_B", "X"].map(String::from));
        let idx = Index::new(names.iter().map(String::as_str));
        for w in [
            "DEMO-R-X00017",
            "DEMO-R-0017",
            "DEMO-Q-00017",
            "FAN_SW",
            "gnd",
            "VBATT",
            "MOTOR_C",
            "Y",
            "zzzzzzzzzzzz",
            "DEMO-R-00017",
            "Gnd",
        ] {
            assert_eq!(
                idx.closest(w),
                closest(w, names.iter().map(String::as_str)),
                "{w}"
            );
        }
    }

    #[test]
    fn banded_distance_matches_the_full_one() {
        let words = [
            "kitten",
            "sitting",
            "",
            "a",
            "abc",
            "acb",
            "DEMO-R-00017",
            "DEMO-R-X0017",
        ];
        for a in words {
            for b in words {
                let ac: Vec<char> = a.chars().collect();
                let bc: Vec<char> = b.chars().collect();
                let d = distance(a, b);
                for k in 0..8 {
                    assert_eq!(
                        distance_within(&ac, &bc, k),
                        (d <= k).then_some(d),
                        "{a} {b} {k}"
                    );
                }
            }
        }
    }
}

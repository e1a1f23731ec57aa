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
    // rows on the stack for names up to MAX_WORD (all an index holds)
    let (mut prev_buf, mut cur_buf) = ([0usize; MAX_WORD + 1], [0usize; MAX_WORD + 1]);
    let (mut prev_heap, mut cur_heap);
    let (mut prev, mut cur): (&mut [usize], &mut [usize]) = if b.len() <= MAX_WORD {
        (&mut prev_buf[..=b.len()], &mut cur_buf[..=b.len()])
    } else {
        prev_heap = vec![0usize; b.len() + 1];
        cur_heap = vec![0usize; b.len() + 1];
        (&mut prev_heap[..], &mut cur_heap[..])
    };
    for (j, x) in prev.iter_mut().enumerate() {
        *x = j.min(big);
    }
    cur.iter_mut().for_each(|x| *x = big);
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
    let d = prev.get(b.len()).copied().unwrap_or(big);
    (d <= k).then_some(d)
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
    /// The names, sorted and deduplicated, one after another in `text`
    /// (`ends[i]` is where name `i` ends), and their characters likewise
    /// in `chars` (one allocation each instead of two per name).
    text: String,
    ends: Vec<u32>,
    /// The names of each length in characters, in order.
    by_len: Vec<Vec<u32>>,
    chars: Vec<char>,
    char_ends: Vec<u32>,
    /// Which characters each name holds, one bit per character class
    /// (see [`signature`]).
    sigs: Vec<u64>,
    /// A name's lowercase spelling (hashed, keyed SipHash): the first two
    /// names of that spelling in order, enough to skip the word itself.
    lower: std::collections::HashMap<u64, [u32; 2]>,
    hasher: std::collections::hash_map::RandomState,
    pairs: Pairs,
}

/// The names holding each pair of characters: a dense table for ASCII
/// pairs (no hashing on the common path), a map for the rest.
#[derive(Default)]
struct Pairs {
    ascii: Vec<Vec<u32>>,
    other: std::collections::HashMap<(char, char), Vec<u32>>,
}

impl Pairs {
    fn slot((a, b): (char, char)) -> Option<usize> {
        (a.is_ascii() && b.is_ascii()).then(|| a as usize * 128 + b as usize)
    }
    fn get(&self, p: &(char, char)) -> Option<&Vec<u32>> {
        match Self::slot(*p) {
            Some(i) => self.ascii.get(i),
            None => self.other.get(p),
        }
    }
    fn push(&mut self, p: (char, char), name: u32) {
        match Self::slot(p) {
            Some(i) => {
                if self.ascii.is_empty() {
                    self.ascii = vec![Vec::new(); 128 * 128];
                }
                if let Some(l) = self.ascii.get_mut(i) {
                    l.push(name);
                }
            }
            None => self.other.entry(p).or_default().push(name),
        }
    }
}

/// Where entry `i` of an arena lies, from the entries' end offsets.
fn entry(ends: &[u32], i: usize) -> Option<std::ops::Range<usize>> {
    let start = match i.checked_sub(1) {
        Some(j) => *ends.get(j)? as usize,
        None => 0,
    };
    Some(start..*ends.get(i)? as usize)
}

/// The hash of a word's lowercase spelling, without building it.
fn lower_hash(h: &std::collections::hash_map::RandomState, w: &str) -> u64 {
    use std::hash::{BuildHasher, Hasher};
    let mut s = h.build_hasher();
    for c in w.chars().flat_map(char::to_lowercase) {
        s.write_u32(c as u32);
    }
    s.finish()
}

/// A set of the characters of a word, hashed into 64 bits. One edit
/// changes at most two bits (a substitution drops one character and adds
/// another), so two words whose sets differ in more than 2k bits are more
/// than k edits apart: a test far cheaper than the distance.
fn signature(w: &[char]) -> u64 {
    w.iter().fold(0u64, |s, &c| {
        s | 1u64 << ((c as u32).wrapping_mul(0x9E37_79B9) >> 26)
    })
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
        let mut names: Vec<&str> = names.into_iter().collect();
        names.sort_unstable();
        names.dedup();
        let mut text = String::with_capacity(names.iter().map(|n| n.len()).sum());
        let mut ends = Vec::with_capacity(names.len());
        let mut chars: Vec<char> = Vec::with_capacity(text.capacity());
        let mut char_ends = Vec::with_capacity(names.len());
        let mut sigs = Vec::with_capacity(names.len());
        let hasher = std::collections::hash_map::RandomState::new();
        let mut lower: std::collections::HashMap<u64, [u32; 2]> =
            std::collections::HashMap::with_capacity(names.len());
        let mut pairs = Pairs::default();
        let mut by_len: Vec<Vec<u32>> = Vec::new();
        for (i, n) in names.iter().enumerate() {
            text.push_str(n);
            ends.push(text.len() as u32);
            let start = chars.len();
            chars.extend(n.chars());
            char_ends.push(chars.len() as u32);
            let c = chars.get(start..).unwrap_or(&[]);
            sigs.push(signature(c));
            if by_len.len() <= c.len() {
                by_len.resize(c.len() + 1, Vec::new());
            }
            if let Some(l) = by_len.get_mut(c.len()) {
                l.push(i as u32);
            }
            lower
                .entry(lower_hash(&hasher, n))
                .and_modify(|v| {
                    if v[1] == u32::MAX {
                        v[1] = i as u32;
                    }
                })
                .or_insert([i as u32, u32::MAX]);
            if c.len() <= MAX_WORD {
                for p in pairs_of(c) {
                    pairs.push(p, i as u32);
                }
            }
        }
        Index {
            text,
            ends,
            by_len,
            chars,
            char_ends,
            sigs,
            lower,
            hasher,
            pairs,
        }
    }

    /// Name `i`.
    fn name(&self, i: usize) -> Option<&str> {
        self.text.get(entry(&self.ends, i)?)
    }

    /// The characters of name `i`.
    fn chars_of(&self, i: usize) -> Option<&[char]> {
        self.chars.get(entry(&self.char_ends, i)?)
    }

    /// The closest name within a distance that scales with the length
    /// (as [`closest`]), or None.
    pub fn closest(&self, word: &str) -> Option<&str> {
        let w: Vec<char> = word.chars().collect();
        if w.len() > MAX_WORD {
            return None;
        }
        let lw = word.to_lowercase();
        if let Some(n) = self
            .lower
            .get(&lower_hash(&self.hasher, word))
            .into_iter()
            .flatten()
            .filter_map(|&i| self.name(i as usize))
            .find(|n| *n != word && n.to_lowercase() == lw)
        {
            return Some(n);
        }
        let limit = (w.len() / 3).max(1);
        let sig = signature(&w);
        let mut grams: Vec<(usize, (char, char))> = pairs_of(&w)
            .into_iter()
            .map(|p| (self.pairs.get(&p).map_or(0, Vec::len), p))
            .collect();
        grams.sort_unstable();
        let mut compared = 0usize;
        for k in 1..=limit {
            let mut best: Option<u32> = None;
            // candidate indices (ours, not the input's): a fast set
            let mut seen = crate::fasthash::FastSet::<u32>::default();
            let mut consider = |i: u32, best: &mut Option<u32>, compared: &mut usize| {
                if !seen.insert(i) {
                    return;
                }
                let Some(c) = self.chars_of(i as usize) else {
                    return;
                };
                if self.name(i as usize).is_some_and(|n| n == word) {
                    return;
                }
                *compared += 1;
                let apart = (self.sigs.get(i as usize).copied().unwrap_or(0) ^ sig).count_ones();
                if apart as usize <= 2 * k && distance_within(&w, c, k).is_some() {
                    // names are sorted: the smallest index is first in order
                    if best.is_none_or(|b| i < b) {
                        *best = Some(i);
                    }
                }
            };
            if grams.len() <= 2 * k {
                // too few pairs to filter: names of a near length, in
                // order (the lists of each length merged)
                let lists: Vec<&[u32]> = (w.len().saturating_sub(k)..=w.len() + k)
                    .filter_map(|n| self.by_len.get(n).map(Vec::as_slice))
                    .collect();
                let mut at = vec![0usize; lists.len()];
                while compared < MAX_COMPARED {
                    let next = lists
                        .iter()
                        .zip(&at)
                        .enumerate()
                        .filter_map(|(j, (l, &a))| l.get(a).map(|&i| (i, j)))
                        .min();
                    let Some((i, j)) = next else { break };
                    if let Some(a) = at.get_mut(j) {
                        *a += 1;
                    }
                    consider(i, &mut best, &mut compared);
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
                return self.name(b as usize);
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

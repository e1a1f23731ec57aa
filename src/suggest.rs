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
}

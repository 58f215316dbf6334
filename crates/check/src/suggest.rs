//! "Did you mean" suggestions: the nearest candidate by edit distance.

/// The candidate closest to `word` (optimal string alignment distance, so a
/// swapped pair of letters counts as one edit), if it is close enough to be a
/// plausible typo: at most a third of the word's length, and at least one edit.
pub fn nearest<'a, I>(word: &str, candidates: I) -> Option<&'a str>
where
    I: IntoIterator<Item = &'a str>,
{
    let limit = (word.chars().count() / 3).max(1);
    let lower = word.to_lowercase();
    let mut best: Option<(usize, &'a str)> = None;
    for cand in candidates {
        if cand == word {
            continue;
        }
        // A difference in case alone is the likeliest typo of all.
        let d = if cand.to_lowercase() == lower {
            0
        } else {
            distance(word, cand)
        };
        if d <= limit && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, cand));
        }
    }
    best.map(|(_, c)| c)
}

/// Optimal string alignment distance over Unicode scalar values.
fn distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let w = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * w];
    for i in 0..=a.len() {
        d[i * w] = i;
    }
    for (j, cell) in d.iter_mut().enumerate().take(w) {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[(i - 1) * w + j] + 1)
                .min(d[i * w + j - 1] + 1)
                .min(d[(i - 1) * w + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[(i - 2) * w + j - 2] + 1);
            }
            d[i * w + j] = v;
        }
    }
    d[a.len() * w + b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_typos_and_ignores_strangers() {
        let cols = ["remote_days", "meetings", "tenure", "focus"];
        assert_eq!(nearest("meetngs", cols), Some("meetings"));
        assert_eq!(nearest("tenrue", cols), Some("tenure"));
        assert_eq!(nearest("Focus", cols), Some("focus"));
        assert_eq!(nearest("salary", cols), None);
        assert_eq!(distance("kitten", "sitting"), 3);
        assert_eq!(distance("ab", "ba"), 1);
    }
}

//! Names people write in a line file (materials, cable kinds): how they are compared, and the closest
//! known name to suggest when one is not known.
//!
//! Conventions: names are compared after [`normalise`] (ASCII case folded, surrounding blanks trimmed,
//! spaces and underscores read as hyphens), so `NbTi`, `nbti` and ` NBTI ` are one name and
//! `stainless steel` is `stainless-steel`. Distances are Levenshtein edit distances (insertions,
//! deletions and substitutions of one character each cost 1) on the normalised names.

/// The form in which names are compared: trimmed, ASCII lower case, spaces and underscores as hyphens.
pub fn normalise(name: &str) -> String {
    name.trim()
        .chars()
        .map(|c| match c {
            ' ' | '_' => '-',
            c => c.to_ascii_lowercase(),
        })
        .collect()
}

/// Levenshtein edit distance between `a` and `b`, counted in characters (V. I. Levenshtein, "Binary codes
/// capable of correcting deletions, insertions, and reversals", Soviet Physics Doklady 10(8):707, 1966;
/// the two-row dynamic programme, from memory).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut row = vec![0; b.len() + 1];
    for (i, ca) in a.chars().enumerate() {
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let substitute = prev[j] + usize::from(ca != *cb);
            row[j + 1] = substitute.min(prev[j + 1] + 1).min(row[j] + 1);
        }
        std::mem::swap(&mut prev, &mut row);
    }
    prev[b.len()]
}

/// Largest edit distance at which a known name is still offered as "did you mean": a third of the
/// longer name, at least 2 (our choice, common practice, no source: one or two slips in a short name,
/// proportionally more in a long one; anything further is more likely a different word).
pub fn suggestion_limit(written: &str, known: &str) -> usize {
    (written.chars().count().max(known.chars().count()) / 3).max(2)
}

/// The known name closest to `written`, among `candidates` given as (name compared, name suggested)
/// pairs (an alias is compared, its canonical name suggested). `None` when nothing is within
/// [`suggestion_limit`]; ties go to the first candidate.
pub fn closest<'a>(
    written: &str,
    candidates: impl IntoIterator<Item = (&'a str, &'a str)>,
) -> Option<&'a str> {
    let w = normalise(written);
    candidates
        .into_iter()
        .map(|(compared, suggested)| {
            let c = normalise(compared);
            (edit_distance(&w, &c), suggestion_limit(&w, &c), suggested)
        })
        .filter(|(d, limit, _)| d <= limit)
        .min_by_key(|(d, _, _)| *d)
        .map(|(_, _, suggested)| suggested)
}

/// `" (did you mean 'NAME'?)"`, or nothing when there is no close name.
pub fn did_you_mean(suggestion: Option<&str>) -> String {
    suggestion
        .map(|s| format!(" (did you mean '{s}'?)"))
        .unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_of_textbook_pairs() {
        // kitten -> sitting is 3 (k->s, e->i, +g), the standard worked example (from memory);
        // flaw -> lawn is 2 (-f, +n).
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("sitting", "kitten"), 3);
        assert_eq!(edit_distance("flaw", "lawn"), 2);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("abc", ""), 3);
        assert_eq!(edit_distance("same", "same"), 0);
        assert_eq!(edit_distance("stainles", "stainless"), 1);
    }

    #[test]
    fn normalise_folds_case_blanks_and_separators() {
        assert_eq!(normalise(" NbTi "), "nbti");
        assert_eq!(normalise("Stainless Steel"), "stainless-steel");
        assert_eq!(normalise("copper_OFHC"), "copper-ofhc");
    }

    #[test]
    fn closest_suggests_the_canonical_name_and_nothing_far() {
        let c = [
            ("stainless304", "stainless304"),
            ("stainless", "stainless304"),
            ("copper", "copper"),
        ];
        assert_eq!(closest("stainles", c), Some("stainless304"));
        assert_eq!(closest("Coper", c), Some("copper"));
        assert_eq!(closest("unobtainium", c), None);
    }
}

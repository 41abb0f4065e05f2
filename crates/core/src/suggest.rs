//! "Did you mean": the nearest known name to a misspelt one, for every error message that
//! names a field, a parameter, a plugin, a scene or a file.
//!
//! The distance is the optimal-string-alignment distance from `strsim` (Levenshtein with
//! adjacent transpositions counted as one edit, the most common slip when typing), so every
//! crate suggests by the same rule.

/// The nearest of `options` to `word`, if it is near enough to be a plausible slip: at most 2
/// edits, or a third of the word's length for long words. Ties go to the first option.
///
/// ```
/// use echobench_core::suggest::nearest;
/// assert_eq!(nearest("carier_hz", &["carrier_hz", "sample_rate_hz"]), Some("carrier_hz"));
/// assert_eq!(nearest("colour", &["carrier_hz"]), None);
/// ```
pub fn nearest<'a>(word: &str, options: &[&'a str]) -> Option<&'a str> {
    let limit = 2.max(word.chars().count() / 3);
    options
        .iter()
        .map(|o| (strsim::osa_distance(word, o), *o))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, o)| o)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_distance_counts_a_transposition_as_one_edit() {
        // Worked examples: "kitten" → "sitting" needs 3 edits (the textbook Levenshtein
        // example), "abc" → "acb" one transposition.
        assert_eq!(strsim::osa_distance("kitten", "sitting"), 3);
        assert_eq!(strsim::osa_distance("abc", "acb"), 1);
        assert_eq!(nearest("hpo", &["hop", "frame_len"]), Some("hop"));
        // A third of a long word: 12 letters allow 4 edits.
        assert_eq!(nearest("thresholdxyz", &["threshold"]), Some("threshold"));
        assert_eq!(nearest("window", &["frame_len", "hop"]), None);
    }
}

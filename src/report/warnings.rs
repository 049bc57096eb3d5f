//! Repeated warnings summarised for people: a file with 100,000 parts that each lack
//! `<divisions>` gives a few lines and a count, not 100,000 lines. Warnings that differ only in
//! their numbers (bar labels, part ids, ticks) are one kind; the first few of each kind are
//! shown, then how many more there were. The JSON records keep every warning.

/// Warnings of one kind shown before the rest are counted.
pub const SHOWN_PER_KIND: usize = 3;

/// The lines to print for `warnings`: the kinds in the order of their first occurrence, each
/// with its first few warnings and the count of the rest.
pub fn summarise(warnings: &[String]) -> Vec<String> {
    let mut kinds: Vec<(String, Vec<&String>)> = Vec::new();
    let mut index: std::collections::HashMap<String, usize> = std::collections::HashMap::new();
    for w in warnings {
        let key = kind(w);
        let k = *index.entry(key.clone()).or_insert_with(|| {
            kinds.push((key, Vec::new()));
            kinds.len() - 1
        });
        kinds[k].1.push(w);
    }
    let mut lines = Vec::new();
    for (_, members) in kinds {
        lines.extend(members.iter().take(SHOWN_PER_KIND).map(|w| (*w).clone()));
        if members.len() > SHOWN_PER_KIND {
            lines.push(format!(
                "… and {} more warnings like the one above ({} in all)",
                members.len() - SHOWN_PER_KIND,
                members.len()
            ));
        }
    }
    lines
}

/// A warning with every run of digits replaced by `#`.
fn kind(warning: &str) -> String {
    let mut out = String::with_capacity(warning.len());
    let mut in_digits = false;
    for c in warning.chars() {
        if c.is_ascii_digit() {
            if !in_digits {
                out.push('#');
            }
            in_digits = true;
        } else {
            out.push(c);
            in_digits = false;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn repeats_are_counted_and_kinds_kept_in_order() {
        let mut warnings: Vec<String> = (1..=100_000)
            .map(|k| {
                format!(
                    "musicxml: part P{k}: no <divisions>; one division per quarter note assumed"
                )
            })
            .collect();
        warnings.insert(1, "musicxml: some bytes were replaced".into());
        let lines = summarise(&warnings);
        assert_eq!(lines.len(), SHOWN_PER_KIND + 2);
        assert!(lines[0].contains("part P1:") && lines[2].contains("part P3:"));
        assert_eq!(lines[4], "musicxml: some bytes were replaced");
        assert_eq!(
            lines[3],
            "… and 99997 more warnings like the one above (100000 in all)"
        );
        let few = vec!["a 1".to_string(), "b".to_string()];
        assert_eq!(summarise(&few), few);
    }
}

//! Cautions every report states in the same words, whatever renders it.

use crate::stats::null::NullSummary;

/// The caution stated when the null model's shuffles gave few distinct pitch orders
/// ([`crate::stats::null::NullSummary::few_orders`]); empty otherwise.
pub fn shuffle_caution(null: &NullSummary) -> String {
    if !null.few_orders() {
        return String::new();
    }
    let few = |n: usize| 2 * n < null.shuffles;
    let which = match (few(null.distinct_a), few(null.distinct_b)) {
        (true, true) => format!(
            "A and B in only {} and {} distinct ways",
            null.distinct_a, null.distinct_b
        ),
        (true, false) => format!("A in only {} distinct ways", null.distinct_a),
        _ => format!("B in only {} distinct ways", null.distinct_b),
    };
    format!(
        "The shuffles behind the chance figures could reorder the pitches of {which} out of {} \
         drawn: keeping runs of {} pitches leaves such a melody little freedom, so the shuffled \
         melodies keep much of the originals, including what the two works share. The chance \
         figures are therefore conservative: they make a passage look more likely to arise by \
         chance than it is (shorter runs, `--shuffle-runs {}`, free the shuffles at the price of \
         more chance agreement between melodies of one idiom).",
        null.shuffles,
        null.run_length,
        null.run_length.saturating_sub(1).max(2)
    )
}

//! Ranges of the numeric options, checked by the parser: a value outside gets a usage error
//! that names the option and the range, before any file is read.
//!
//! The alignment points are bounded so that no score can overflow an `i32`: a pair (or a
//! fragmentation or consolidation, which counts one pair) scores at most four terms of
//! [`POINTS`] each, and a passage holds at most [`MAX_NOTES`] pairs: 4 × 50 × 10⁷ = 2×10⁹.

use clap::builder::{RangedI64ValueParser, RangedU64ValueParser};

/// Largest magnitude of the points of one term of the pair score.
pub const POINTS: i64 = 50;
/// Highest value of `--max-notes`.
pub const MAX_NOTES: u64 = 10_000_000;
/// Largest gap or fragmentation cost.
pub const COST: i64 = 1_000;

/// Points of one term of the pair score, −[`POINTS`] to [`POINTS`].
pub fn points() -> RangedI64ValueParser<i32> {
    RangedI64ValueParser::new().range(-POINTS..=POINTS)
}

/// A cost (subtracted), 0 to [`COST`].
pub fn cost() -> RangedI64ValueParser<i32> {
    RangedI64ValueParser::new().range(0..=COST)
}

/// A count from `low` to `high`.
pub fn count(low: u64, high: u64) -> RangedU64ValueParser<usize> {
    RangedU64ValueParser::new().range(low..=high)
}

/// A number (finite) from `low` to `high`, as a parser for clap.
pub fn number(low: f64, high: f64) -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync {
    move |text: &str| {
        let value: f64 = text
            .trim()
            .parse()
            .map_err(|_| format!("'{text}' is not a number"))?;
        if value.is_finite() && (low..=high).contains(&value) {
            Ok(value)
        } else {
            Err(format!("{value} is not in {low}..={high}"))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_outside_the_range_are_refused() {
        let a4 = number(220.0, 880.0);
        assert_eq!(a4("440"), Ok(440.0));
        assert!(a4("1e300").is_err());
        assert!(a4("NaN").is_err());
        assert!(a4("inf").is_err());
        assert!(a4("x").is_err());
    }

    #[test]
    fn the_largest_passage_score_fits_an_i32() {
        let most = 4 * POINTS * MAX_NOTES as i64;
        assert!(most < i64::from(i32::MAX));
    }
}

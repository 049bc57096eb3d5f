//! The templates' view of the alignment parameters: each with its command-line flag, value
//! and meaning.

use crate::align::AlignParams;
use serde::Serialize;

/// One row of parameters.
#[derive(Debug, Serialize)]
pub struct ParamRow {
    /// Name as in the JSON record.
    pub name: String,
    /// The command-line flag.
    pub flag: String,
    /// Value.
    pub value: String,
    /// What it does.
    pub meaning: String,
}

/// The alignment parameters as rows: name, flag, value, meaning.
pub fn param_rows(p: &AlignParams) -> Vec<ParamRow> {
    let row = |name: &str, value: String, meaning: &str| ParamRow {
        name: name.into(),
        flag: format!("--{}", name.replace('_', "-")),
        value,
        meaning: meaning.into(),
    };
    let mut rows = vec![
        row(
            "pitch_match",
            p.pitch_match.to_string(),
            "points for the same pitch class after transposing",
        ),
        row(
            "pitch_near",
            p.pitch_near.to_string(),
            "points for a pitch one semitone off",
        ),
        row(
            "pitch_mismatch",
            p.pitch_mismatch.to_string(),
            "points for any other pitch",
        ),
        row(
            "interval_match",
            p.interval_match.to_string(),
            "points for the same interval into both notes",
        ),
        row(
            "interval_near",
            p.interval_near.to_string(),
            "points for intervals in one direction within two semitones",
        ),
        row(
            "interval_mismatch",
            p.interval_mismatch.to_string(),
            "points for other intervals",
        ),
        row(
            "rhythm_match",
            p.rhythm_match.to_string(),
            "points for the same duration ratio to the previous note",
        ),
        row(
            "rhythm_near",
            p.rhythm_near.to_string(),
            "points for ratios within a factor of two",
        ),
        row(
            "rhythm_mismatch",
            p.rhythm_mismatch.to_string(),
            "points for other ratios",
        ),
        row(
            "metric_match",
            p.metric_match.to_string(),
            "points for the same metric level",
        ),
        row(
            "gap_open",
            p.gap_open.to_string(),
            "cost of a note with no counterpart",
        ),
        row(
            "gap_extend",
            p.gap_extend.to_string(),
            "cost of each further such note in a row",
        ),
        row(
            "fragment_penalty",
            p.fragment_penalty.to_string(),
            "cost per extra note when one note is split",
        ),
        row(
            "max_fragments",
            p.max_fragments.to_string(),
            "most repeated notes one note may be split into",
        ),
        row(
            "min_score",
            p.min_score.to_string(),
            "lowest score reported as a passage",
        ),
        row(
            "min_notes",
            p.min_notes.to_string(),
            "fewest notes on each side of a passage",
        ),
        row(
            "max_passages",
            p.max_passages.to_string(),
            "most passages reported",
        ),
    ];
    if p.full_search {
        rows.push(row(
            "full_search",
            "yes".into(),
            "every note pair aligned, also in long works",
        ));
    }
    rows
}

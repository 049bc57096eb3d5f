//! Cautions every report states in the same words, whatever renders it.

/// The usual cautions in short, for every output a conclusion can be drawn from.
pub const SHORT: [&str; 4] = [
    "Similarity is not proof of copying: two works can share material independently.",
    "Shared material may be commonplace in the idiom or in the public domain.",
    "The analysis rests on the transcription of each work (score, MIDI file or the melody \
     read from a recording) and on the parts chosen as the melodies.",
    "This is an analytical aid for a qualified expert; it is not a legal opinion and defers \
     to qualified legal counsel and the law that applies.",
];

/// The cautions in one line, for files where space is short (passage exports).
pub const ONE_LINE: &str = "Caution: similarity is not proof of copying; shared material may be \
    commonplace or in the public domain; this rests on the transcription of each work; it is \
    not legal advice and defers to qualified legal counsel and the law that applies.";

/// The short cautions as an indented paragraph for a text report.
pub fn short_text() -> String {
    let mut out = String::from("\nCautions:\n");
    for c in SHORT {
        out.push_str(&format!(" - {c}\n"));
    }
    out
}

/// What a search that found nothing, or only weak hits, does not show.
pub fn absence_caution(corpus_melodies: usize) -> String {
    format!(
        "Absence of a match in this corpus of {corpus_melodies} melodies is not clearance: \
         other music, other versions and other transcriptions are not in it, and a match can \
         hide in a line that was not indexed (an index holds the few most melody-like lines \
         of each file)."
    )
}

use crate::stats::chance::{ChanceSummary, NullKind};
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

/// What the chance figures rest on, in plain sentences for the reader of a report.
pub fn chance_words(chance: &ChanceSummary) -> String {
    let core = match chance.null {
        NullKind::Corpus => format!(
            "E-values and p-values set each passage's score against the best scores of A's \
             melody with {} melodies of the reference corpus, corrected for the melodies' \
             lengths and fitted with an extreme-value distribution (the method of Pearson \
             1998): they say how often a passage this strong arises between A and unrelated \
             melodies of the corpus's repertoire.",
            chance.references
        ),
        NullKind::General => "E-values and p-values set each passage's score against the best \
            scores of 6,000 pairs of unrelated real melodies (German folk songs, Irish and \
            American dance tunes, Bach chorale melodies), corrected for the melodies' lengths \
            and fitted with an extreme-value distribution (the method of Pearson 1998); the \
            fit ships with collatio for its default scoring."
            .to_string(),
        NullKind::Shuffles => match &chance.shuffles {
            Some(s) => format!(
                "E-values and p-values set each passage's score against {} pairs of the two \
                 melodies with their pitches shuffled, keeping every run of {} pitches and the \
                 rhythm (the k-let shuffle after Altschul & Erickson 1985; seed {}), fitted with \
                 an extreme-value distribution (Karlin & Altschul 1990){}.",
                s.shuffles,
                s.run_length,
                s.seed,
                match s.window {
                    Some(w) => format!(
                        "; the works being long, windows of {w} notes of each shuffled pair \
                         were aligned and the fit carried to the works' lengths (a sampled \
                         null)"
                    ),
                    None => String::new(),
                }
            ),
            None => String::new(),
        },
    };
    let core = match &chance.note {
        Some(why) => format!("{core} (This null is used because {why}.)"),
        None => core,
    };
    match &chance.withheld {
        Some(why) => format!("{core} No chance figure is given: {why}."),
        None => core,
    }
}

/// The caution that goes with the null used; empty when none is needed.
pub fn chance_caution(chance: &ChanceSummary) -> String {
    match chance.null {
        NullKind::General => "The general null describes no single repertoire: between melodies \
            of an idiom that shares much stock material (dance tunes, hymn tunes, much popular \
            music) passages this strong arise more often than it allows, so its figures can \
            make a passage look rarer than it is. A corpus of the relevant repertoire \
            (`--corpus`) gives figures for that repertoire."
            .to_string(),
        NullKind::Shuffles => chance
            .shuffles
            .as_ref()
            .map(shuffle_caution)
            .unwrap_or_default(),
        NullKind::Corpus => "The corpus null holds for B's repertoire as far as the corpus \
            represents it."
            .to_string(),
    }
}

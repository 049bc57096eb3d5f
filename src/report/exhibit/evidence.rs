//! The exhibit's view of the harmonic evidence and of a recording placed on a score's bars:
//! plain strings for the `harmony` template.

use crate::compare::harmony::{HarmonicEvidence, HarmonicSide};
use crate::compare::sync::SyncSummary;
use crate::report::format::{bars_text, format_empirical_p, trim_number};
use crate::theory::describe_transposition;
use crate::timeline::ChromaSource;
use serde::Serialize;

/// One harmonic passage as the exhibit prints it.
#[derive(Debug, Clone, Serialize)]
pub struct HarmonicRow {
    /// Rank.
    pub rank: usize,
    /// Bars and seconds in A.
    pub a: String,
    /// Bars and seconds in B.
    pub b: String,
    /// How much faster B performs the span.
    pub tempo: String,
    /// Qmax score.
    pub score: String,
    /// Mean cosine similarity.
    pub similarity: String,
    /// Empirical p-value.
    pub p: String,
    /// The melodic passage it confirms, or a dash.
    pub confirms: String,
}

/// The harmonic section's facts.
#[derive(Debug, Clone, Serialize)]
pub struct HarmonyContext {
    /// Where A's chroma comes from, in words.
    pub source_a: String,
    /// Where B's chroma comes from, in words.
    pub source_b: String,
    /// B's key relative to A's.
    pub transposition: String,
    /// Passages.
    pub rows: Vec<HarmonicRow>,
    /// Shuffles behind the p-values.
    pub shuffles: usize,
    /// Largest p-value reported.
    pub max_p: String,
    /// Shortest passage reported, seconds.
    pub min_seconds: String,
    /// Parameters as `name = value` pairs.
    pub parameters: String,
}

/// The recording-and-score paragraph's facts.
#[derive(Debug, Clone, Serialize)]
pub struct SyncContext {
    /// `A` or `B`.
    pub score: String,
    /// `A` or `B`.
    pub recording: String,
    /// Whether the recording follows the score.
    pub follows: bool,
    /// Whether its bars were taken from the score.
    pub bars_from_score: bool,
    /// Path cost over average cost.
    pub cost_ratio: String,
    /// Share of the recording's melody notes agreeing with the score's, percent.
    pub agreement: String,
    /// How many notes agree.
    pub agreeing_notes: usize,
    /// Recording relative to score.
    pub transposition: String,
    /// First and last bar placed.
    pub first_bar: String,
    /// Last bar placed.
    pub last_bar: String,
    /// Recording time of the first bar placed.
    pub first_seconds: String,
    /// Recording time of the last bar placed.
    pub last_seconds: String,
}

fn source_words(source: ChromaSource) -> String {
    match source {
        ChromaSource::Recording => "the recording's spectrum".into(),
        ChromaSource::Notes => "every notated part".into(),
    }
}

fn side_text(side: &HarmonicSide) -> String {
    format!(
        "{} ({}–{} s)",
        bars_text(&side.bars[0], &side.bars[1]),
        trim_number(side.seconds[0], 1),
        trim_number(side.seconds[1], 1)
    )
}

/// The harmonic section, when the comparison computed one.
pub fn harmony_context(evidence: Option<&HarmonicEvidence>) -> Option<HarmonyContext> {
    let h = evidence?;
    let p = &h.parameters;
    Some(HarmonyContext {
        source_a: source_words(h.sources[0]),
        source_b: source_words(h.sources[1]),
        transposition: h.transposition.clone(),
        rows: h
            .passages
            .iter()
            .map(|x| HarmonicRow {
                rank: x.rank,
                a: side_text(&x.a),
                b: side_text(&x.b),
                tempo: trim_number(x.tempo_ratio, 2),
                score: trim_number(f64::from(x.score), 1),
                similarity: trim_number(x.similarity, 2),
                p: format_empirical_p(x.empirical_p, p.shuffles),
                confirms: x
                    .confirms
                    .map_or_else(|| "–".to_string(), |r| format!("passage {r}")),
            })
            .collect(),
        shuffles: p.shuffles,
        max_p: trim_number(p.max_p, 3),
        min_seconds: trim_number(p.min_seconds, 1),
        parameters: format!(
            "{}; embedding dimension {}, delay {}; \
             nearest-neighbour share {}; least mean cosine {}; gap opening {}, gap extension {}; \
             shuffled in blocks of {}; seed {}",
            if h.beat_synchronous {
                format!(
                    "{} frames per beat, each averaging {}",
                    p.per_beat, p.beat_window
                )
            } else {
                format!(
                    "frames of {} analysis frames averaged over {}",
                    p.step, p.window
                )
            },
            p.embedding,
            p.delay,
            trim_number(p.neighbours, 3),
            trim_number(f64::from(p.min_similarity), 2),
            trim_number(f64::from(p.gap_open), 2),
            trim_number(f64::from(p.gap_extend), 2),
            p.block,
            p.seed
        ),
    })
}

/// The recording-and-score paragraph, when one work is each.
pub fn sync_context(summary: Option<&SyncSummary>) -> Option<SyncContext> {
    let s = summary?;
    let first = s.bar_map.first();
    let last = s.bar_map.last();
    Some(SyncContext {
        score: s.score.letter().to_string(),
        recording: s.recording.letter().to_string(),
        follows: s.follows,
        bars_from_score: s.bars_from_score,
        cost_ratio: trim_number(s.cost_ratio, 2),
        agreement: trim_number(100.0 * s.melody_agreement, 0),
        agreeing_notes: s.agreeing_notes,
        transposition: describe_transposition(s.transposition_semitones),
        first_bar: first.map_or_else(String::new, |b| b.label.clone()),
        last_bar: last.map_or_else(String::new, |b| b.label.clone()),
        first_seconds: first.map_or_else(String::new, |b| trim_number(b.recording_seconds, 2)),
        last_seconds: last.map_or_else(String::new, |b| trim_number(b.recording_seconds, 2)),
    })
}

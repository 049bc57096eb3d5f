//! A recording placed on a score's bars: when one work of a comparison is a score (or MIDI
//! file) and the other a recording, the recording is aligned to the score by chroma DTW
//! ([`crate::align::sync`]), against the chroma of all the score's parts, or, when that does
//! not fit, of its melody alone (a recording of only the tune). When the recording performs
//! the score, a copy of the recording is made whose beat-tracked bar grid is replaced by the
//! score's bars at the times the alignment gives them, every note taking its bar and its
//! position in the bar from the score; passages are then reported in the score's bar numbers
//! on both sides and in the recording's seconds. The recording as read is left as it was.

use super::Side;
use crate::align::sync::{synchronise, SyncParams, Synchronisation};
use crate::features::chroma::{chroma_of, melody_chroma_of};
use crate::timeline::{Bar, Piece, TimeSignature};
use crate::units::{Beats, Seconds};
use serde::Serialize;

/// Where one bar of the score falls in the recording.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BarTime {
    /// Bar label as printed in the score.
    pub label: String,
    /// Start of the bar in the score's own timing, seconds.
    pub score_seconds: f64,
    /// Start of the bar in the recording, seconds.
    pub recording_seconds: f64,
}

/// The alignment of a recording to a score, as a comparison reports it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SyncSummary {
    /// Which work is the score.
    pub score: Side,
    /// Which work is the recording.
    pub recording: Side,
    /// Whether the recording performs the score: its chroma follows the score's (see
    /// [`crate::align::sync`]) and its melody agrees with the score's along the path.
    pub follows: bool,
    /// Share of the recording's melody notes that, placed in the score by the path, meet a
    /// note of the score's melody of the same pitch class (after the key shift) within
    /// 100 ms.
    pub melody_agreement: f64,
    /// How many notes that is ([`MIN_AGREEING_NOTES`] at least for `follows`).
    pub agreeing_notes: usize,
    /// Mean chroma cost of the path over the mean cost of all pairs.
    pub cost_ratio: f64,
    /// The recording's key relative to the score's, semitones.
    pub transposition_semitones: i32,
    /// The part of the score the recording covers, seconds of the score.
    pub score_span_seconds: [f64; 2],
    /// Whether the recording's bars were taken from the score.
    pub bars_from_score: bool,
    /// Start of every covered bar in the recording (empty unless the recording follows).
    pub bar_map: Vec<BarTime>,
    /// Every parameter used.
    pub parameters: SyncParams,
}

/// A recording aligned to a score.
#[derive(Debug, Clone)]
pub struct ScoreFollowing {
    /// What the alignment found.
    pub summary: SyncSummary,
    /// The recording on the score's bars, when it follows the score closely enough.
    pub rebarred: Option<Piece>,
}

/// Aligns `recording` to `score`; when it follows, also returns the recording on the score's
/// bars. `score_side` names the score's side. `None` when either chroma is too short.
pub fn follow_score(
    score: &Piece,
    recording: &Piece,
    score_side: Side,
    params: &SyncParams,
) -> Option<ScoreFollowing> {
    // The recording may hold every part of the score or only its melody (a solo take of the
    // tune): the score's full chroma first, its melody's when the full one does not follow.
    let heard = chroma_of(recording);
    let full = synchronise(&chroma_of(score), &heard, params)?;
    let sync = if full.follows {
        full
    } else {
        match synchronise(&melody_chroma_of(score), &heard, params) {
            Some(tune) if tune.follows => tune,
            _ => full,
        }
    };
    let bar_map: Vec<BarTime> = score
        .bars
        .iter()
        .filter_map(|bar| {
            sync.recording_time(bar.start_seconds.0).map(|t| BarTime {
                label: bar.label.clone(),
                score_seconds: bar.start_seconds.0,
                recording_seconds: t,
            })
        })
        .collect();
    let (agreement, agreeing) = melody_agreement(score, recording, &sync);
    let follows =
        sync.follows && agreement >= MIN_MELODY_AGREEMENT && agreeing >= MIN_AGREEING_NOTES;
    let bars_from_score = follows && bar_map.len() >= 2;
    // A path through another work places nothing: no bar map unless the recording follows.
    let bar_map = if follows { bar_map } else { Vec::new() };
    let rebarred = if bars_from_score {
        with_score_bars(recording, score, &sync)
    } else {
        None
    };
    let summary = SyncSummary {
        score: score_side,
        recording: score_side.other(),
        follows,
        cost_ratio: sync.cost_ratio,
        melody_agreement: agreement,
        agreeing_notes: agreeing,
        transposition_semitones: sync.transposition_semitones,
        score_span_seconds: sync.score_span,
        bars_from_score,
        bar_map,
        parameters: params.clone(),
    };
    Some(ScoreFollowing { summary, rebarred })
}

/// Least share of the recording's melody notes that must agree with the score's melody for
/// the recording to count as a performance of the score. A chroma path alone cannot tell a
/// performance from another arrangement sharing some chords: on the arrangement fixtures the
/// renders of a score (also after SoX tempo and pitch changes) agree on 0.95 to 1.0 of their
/// notes, another arrangement quoting eight of its twenty bars on 0.62 (its chroma path costs
/// 0.49 of an unrelated pairing, as much as a true performance's may).
pub const MIN_MELODY_AGREEMENT: f64 = 0.8;

/// Fewest agreeing melody notes for a recording to count as a performance of the score: a
/// clip of a note or two agrees with any score that has those pitches somewhere (two bars of
/// quarter notes; our choice).
pub const MIN_AGREEING_NOTES: usize = 8;

/// Tolerance of [`melody_agreement`], seconds of the score.
const AGREEMENT_TOLERANCE: f64 = 0.1;

/// Share (and number) of the recording's melody notes whose onset, carried into the score's
/// time by the path, falls within [`AGREEMENT_TOLERANCE`] of a score melody note sounding the
/// same pitch class (after the key shift the alignment found).
pub fn melody_agreement(score: &Piece, recording: &Piece, sync: &Synchronisation) -> (f64, usize) {
    if recording.melody.is_empty() {
        return (0.0, 0);
    }
    let shift = sync.transposition_semitones;
    let agreeing = recording
        .melody
        .iter()
        .filter(|note| {
            let Some(t) = sync.score_time(note.onset_seconds.0) else {
                return false;
            };
            let class = (note.pitch.0.round() as i64 - i64::from(shift)).rem_euclid(12);
            let from = score.melody.partition_point(|n| {
                n.onset_seconds.0 + n.duration_seconds.0 < t - AGREEMENT_TOLERANCE
            });
            score.melody[from..]
                .iter()
                .take_while(|n| n.onset_seconds.0 <= t + AGREEMENT_TOLERANCE)
                .any(|n| (n.pitch.0.round() as i64).rem_euclid(12) == class)
        })
        .count();
    (agreeing as f64 / recording.melody.len() as f64, agreeing)
}

/// A copy of the recording whose bars are the score's bars the path reaches, each note taking
/// the bar and the position in the bar its time has in the score. `None` when the path places
/// fewer than two bars.
fn with_score_bars(recording: &Piece, score: &Piece, sync: &Synchronisation) -> Option<Piece> {
    let mut bars: Vec<Bar> = Vec::new();
    let mut source: Vec<usize> = Vec::new();
    for (k, bar) in score.bars.iter().enumerate() {
        let Some(t) = sync.recording_time(bar.start_seconds.0) else {
            continue;
        };
        let ticks = recording.tempo.ticks_at(t);
        if bars.last().is_some_and(|b| b.start_ticks >= ticks) {
            continue;
        }
        bars.push(Bar {
            index: bars.len(),
            label: bar.label.clone(),
            start_ticks: ticks,
            length_ticks: 0,
            start: recording.tempo.beats_at(ticks),
            start_seconds: Seconds(t),
            time_signature: bar.time_signature,
            pickup: bar.pickup,
            implicit: bar.implicit,
            estimated: true,
        });
        source.push(k);
    }
    if bars.len() < 2 {
        return None;
    }
    let mut recording = recording.clone();
    let end_ticks = recording
        .melody
        .iter()
        .map(|n| n.end_ticks())
        .max()
        .unwrap_or(0);
    for k in 0..bars.len() {
        let next = bars.get(k + 1).map_or(end_ticks, |b| b.start_ticks);
        bars[k].length_ticks = (next - bars[k].start_ticks).max(1);
    }
    let place = |onset_seconds: f64| -> (usize, Beats) {
        let k = bars
            .partition_point(|b| b.start_seconds.0 <= onset_seconds)
            .saturating_sub(1);
        // The note's position in its bar, read from the score's timing.
        let offset = sync
            .score_time(onset_seconds)
            .and_then(|t| {
                let bar = score.bars.get(*source.get(k)?)?;
                let ticks = score.tempo.ticks_at(t);
                Some(score.tempo.beats_at(ticks).0 - bar.start.0)
            })
            .unwrap_or(0.0)
            .max(0.0);
        (k, Beats(offset))
    };
    for note in recording
        .melody
        .iter_mut()
        .chain(recording.parts.iter_mut().flat_map(|p| p.notes.iter_mut()))
    {
        let (bar, offset) = place(note.onset_seconds.0);
        note.bar = bar;
        note.offset_in_bar = offset;
    }
    let mut signatures: Vec<TimeSignature> = Vec::new();
    for bar in &bars {
        let (numerator, denominator) = bar.time_signature;
        if signatures
            .last()
            .is_none_or(|t| (t.numerator, t.denominator) != bar.time_signature)
        {
            signatures.push(TimeSignature {
                ticks: bar.start_ticks,
                numerator,
                denominator,
            });
        }
    }
    recording.bars = bars;
    recording.time_signatures = signatures;
    recording.provenance.detail.push_str(&format!(
        "; bars taken from the score by chroma alignment (cost ratio {:.2}), as exact as \
         the alignment",
        sync.cost_ratio
    ));
    Some(recording)
}

//! The templates' view of one passage: where it lies, its figures, and its differences in
//! words (the differences themselves are found by [`crate::compare::differences`]).

use super::prepared::Exhibit;
use crate::compare::differences::{Difference, DifferenceKind};
use crate::findings::Finding;
use crate::report::format::{bars_text, percent, sci, trim_number};
use crate::report::notation::{self, PassageView};
use crate::theory::{describe_transposition, pitch_name};
use crate::timeline::Piece;
use serde::Serialize;

/// A difference between the two sides of a passage, worded for the templates.
#[derive(Debug, Serialize)]
pub struct DifferenceText {
    /// `pitch`, `only_a`, `only_b`, `split`, `merge`, `rhythm`, `placement`, `grace_a`,
    /// `grace_b`.
    pub kind: String,
    /// A's bar label.
    pub a_bar: String,
    /// A's beat in the bar.
    pub a_beat: String,
    /// A's note name(s).
    pub a_name: String,
    /// A's scale degree(s).
    pub a_degree: String,
    /// A's length in quarter notes.
    pub a_length: String,
    /// B's bar label.
    pub b_bar: String,
    /// B's beat in the bar.
    pub b_beat: String,
    /// B's note name(s).
    pub b_name: String,
    /// B's scale degree(s).
    pub b_degree: String,
    /// B's length in quarter notes.
    pub b_length: String,
    /// Notes involved on the split or merged side.
    pub count: usize,
}

/// One passage as the templates see it.
#[derive(Debug, Serialize)]
pub struct PassageContext {
    /// Rank.
    pub rank: usize,
    /// A's bars text.
    pub a_bars: String,
    /// B's bars text.
    pub b_bars: String,
    /// First and last bar labels of A.
    pub a_first: String,
    /// Last bar label of A.
    pub a_last: String,
    /// First bar label of B.
    pub b_first: String,
    /// Last bar label of B.
    pub b_last: String,
    /// A's start beat.
    pub a_beat: String,
    /// B's start beat.
    pub b_beat: String,
    /// Seconds of A.
    pub a_time: String,
    /// Seconds of B.
    pub b_time: String,
    /// Notes of A.
    pub a_notes: usize,
    /// Notes of B.
    pub b_notes: usize,
    /// Unmatched in A.
    pub a_unmatched: usize,
    /// Unmatched in B.
    pub b_unmatched: usize,
    /// Keys.
    pub a_key: String,
    /// Keys.
    pub b_key: String,
    /// Transposition text.
    pub transposition: String,
    /// Semitones.
    pub semitones: i32,
    /// Tempo ratio.
    pub tempo: String,
    /// Note value ratio.
    pub note_values: String,
    /// Same note values (ratio 1).
    pub same_values: bool,
    /// Score.
    pub score: i32,
    /// PMI.
    pub pmi: String,
    /// The passage's relatedness (its score over its notes' self scores).
    pub relatedness: String,
    /// Agreement percentages.
    pub agree_pitch: String,
    /// Intervals.
    pub agree_interval: String,
    /// Rhythm.
    pub agree_rhythm: String,
    /// Metric position.
    pub agree_metric: String,
    /// Identical pairs.
    pub identical: usize,
    /// Aligned pairs.
    pub aligned: usize,
    /// E-value, or empty when not computed.
    pub e_value: String,
    /// p-value, or empty.
    pub p_value: String,
    /// Corpus commonness, or empty.
    pub corpus: String,
    /// Whether significance was computed.
    pub has_significance: bool,
    /// Whether commonness was computed.
    pub has_corpus: bool,
    /// How A is shown: key and shift.
    pub a_shown: String,
    /// How B is shown.
    pub b_shown: String,
    /// Shown key of A.
    pub a_shown_key: String,
    /// Shown key of B.
    pub b_shown_key: String,
    /// Whether a piano roll is drawn instead of staves.
    pub piano_roll: bool,
    /// Whether only the opening of a long passage is written out (at most
    /// [`crate::report::notation::MAX_STAFF_BARS`] bars and
    /// [`crate::report::notation::MAX_STAFF_NOTES`] notes of each work).
    pub notation_cut: bool,
    /// That number of bars.
    pub notation_bars: usize,
    /// That number of notes.
    pub notation_notes: usize,
    /// Differences, in order.
    pub differences: Vec<DifferenceText>,
}

fn shift_text(shift: i32) -> String {
    if shift == 0 {
        "at pitch".into()
    } else {
        describe_transposition(shift)
    }
}

/// A passage as the templates see it.
pub fn passage_context(ex: &Exhibit<'_>, f: &Finding, view: &PassageView) -> PassageContext {
    let p = &f.passage;
    let identical = p.pairs.iter().filter(|x| x.equal).count();
    let aligned = p.pairs.iter().filter(|x| x.kind.is_aligned()).count();
    let (e_value, p_value) = match &f.significance {
        Some(s) => (sci(s.e_value), sci(s.p_value)),
        None => (String::new(), String::new()),
    };
    let corpus = match &f.commonness {
        Some(c) => format!(
            "{} of {} melodies exactly, {} within tolerance",
            c.exact, c.corpus_melodies, c.similar
        ),
        None => String::new(),
    };
    PassageContext {
        rank: p.rank,
        a_bars: bars_text(&p.a.bars[0], &p.a.bars[1]),
        b_bars: bars_text(&p.b.bars[0], &p.b.bars[1]),
        a_first: p.a.bars[0].clone(),
        a_last: p.a.bars[1].clone(),
        b_first: p.b.bars[0].clone(),
        b_last: p.b.bars[1].clone(),
        a_beat: trim_number(p.a.start_beat, 2),
        b_beat: trim_number(p.b.start_beat, 2),
        a_time: format!(
            "{}–{} s",
            trim_number(p.a.onset_seconds, 2),
            trim_number(p.a.end_seconds, 2)
        ),
        b_time: format!(
            "{}–{} s",
            trim_number(p.b.onset_seconds, 2),
            trim_number(p.b.end_seconds, 2)
        ),
        a_notes: p.a.notes,
        b_notes: p.b.notes,
        a_unmatched: p.a.unmatched,
        b_unmatched: p.b.unmatched,
        a_key: p.a.key.clone().unwrap_or_else(|| "not stated".into()),
        b_key: p.b.key.clone().unwrap_or_else(|| "not stated".into()),
        transposition: p.transposition.clone(),
        semitones: p.transposition_semitones,
        tempo: trim_number(p.tempo_ratio, 2),
        note_values: trim_number(p.note_value_ratio, 2),
        same_values: (p.note_value_ratio - 1.0).abs() < 0.01,
        score: p.score,
        pmi: trim_number(p.pmi, 1),
        relatedness: trim_number(p.relatedness, 2),
        agree_pitch: percent(p.agreement.pitch_class),
        agree_interval: percent(p.agreement.interval),
        agree_rhythm: percent(p.agreement.rhythm),
        agree_metric: percent(p.agreement.metric_position),
        identical,
        aligned,
        has_significance: f.significance.is_some(),
        has_corpus: f.commonness.is_some(),
        e_value,
        p_value,
        corpus,
        a_shown: shift_text(view.a.shift),
        b_shown: shift_text(view.b.shift),
        a_shown_key: view.a.shown_key.clone(),
        b_shown_key: view.b.shown_key.clone(),
        piano_roll: view.a.unstable_pitch || view.b.unstable_pitch,
        notation_cut: view.cut,
        notation_bars: crate::report::notation::MAX_STAFF_BARS,
        notation_notes: crate::report::notation::MAX_STAFF_NOTES,
        differences: f
            .differences
            .iter()
            .map(|d| difference_text(ex, view, d))
            .collect(),
    }
}

/// The words of one note: bar label, beat, name in the common key, scale degree in its own key,
/// length in quarter notes.
fn note_words(piece: &Piece, side: &notation::StaffView, i: usize, heard: bool) -> [String; 5] {
    let n = side.notes.iter().find(|n| n.index == i);
    // The bar by the same rule as the beat (a recording's early downbeat is the next bar's).
    let bar = piece
        .melody
        .get(i)
        .and_then(|note| piece.bars.get(piece.grid_position(note).0))
        .map(|b| b.label.clone());
    [
        bar.unwrap_or_else(|| n.map_or_else(String::new, |n| n.bar_label.clone())),
        n.map_or_else(String::new, |n| trim_number(n.beat_in_bar, 2)),
        n.map_or_else(String::new, |n| n.name.clone()),
        n.map_or_else(String::new, |n| n.degree.clone()),
        crate::compare::differences::compared_length(piece, i, heard)
            .map_or_else(String::new, |l| trim_number(l, 3)),
    ]
}

/// A grace note's words: bar label, beat, sounding name.
fn grace_words(piece: &Piece, ornament: Option<usize>) -> [String; 3] {
    let Some(o) = ornament.and_then(|k| piece.ornaments.get(k)) else {
        return Default::default();
    };
    let res = f64::from(piece.resolution.max(1));
    let ticks = (o.onset.0 * res).round() as i64;
    let bar = &piece.bars
        [crate::timeline::bar_index_at(&piece.bars, ticks).min(piece.bars.len().saturating_sub(1))];
    let beat = 1.0 + (ticks - bar.start_ticks) as f64 / res * f64::from(bar.time_signature.1) / 4.0;
    [
        bar.label.clone(),
        trim_number(beat, 2),
        pitch_name(o.pitch.0.round()),
    ]
}

fn kind_word(kind: DifferenceKind) -> &'static str {
    match kind {
        DifferenceKind::Pitch => "pitch",
        DifferenceKind::OnlyA => "only_a",
        DifferenceKind::OnlyB => "only_b",
        DifferenceKind::Split => "split",
        DifferenceKind::Merge => "merge",
        DifferenceKind::Rhythm => "rhythm",
        DifferenceKind::Placement => "placement",
        DifferenceKind::GraceA => "grace_a",
        DifferenceKind::GraceB => "grace_b",
    }
}

/// One difference in words: the first note of each side, and every note of a split or merged
/// group.
fn difference_text(ex: &Exhibit<'_>, view: &PassageView, d: &Difference) -> DifferenceText {
    let heard = crate::compare::differences::judged_as_heard(ex.a, ex.b);
    let empty = || -> [String; 5] { Default::default() };
    let first = |piece: &Piece, side: &notation::StaffView, notes: &[usize]| {
        notes
            .first()
            .map_or_else(empty, |&i| note_words(piece, side, i, heard))
    };
    let names = |piece: &Piece, side: &notation::StaffView, notes: &[usize]| {
        notes
            .iter()
            .map(|&i| note_words(piece, side, i, heard)[2].clone())
            .collect::<Vec<_>>()
            .join(" ")
    };
    let [mut a_bar, mut a_beat, mut a_name, a_degree, a_length] = first(ex.a, &view.a, &d.a);
    let [mut b_bar, mut b_beat, mut b_name, b_degree, b_length] = first(ex.b, &view.b, &d.b);
    let mut count = 1;
    match d.kind {
        DifferenceKind::Split => {
            count = d.b.len();
            b_name = names(ex.b, &view.b, &d.b);
        }
        DifferenceKind::Merge => {
            count = d.a.len();
            a_name = names(ex.a, &view.a, &d.a);
        }
        DifferenceKind::GraceA => [a_bar, a_beat, a_name] = grace_words(ex.a, d.ornament),
        DifferenceKind::GraceB => [b_bar, b_beat, b_name] = grace_words(ex.b, d.ornament),
        _ => {}
    }
    DifferenceText {
        kind: kind_word(d.kind).into(),
        a_bar,
        a_beat,
        a_name,
        a_degree,
        a_length,
        b_bar,
        b_beat,
        b_name,
        b_degree,
        b_length,
        count,
    }
}

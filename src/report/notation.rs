//! The passages as notation: bars, notes and rests with note values, ties, spelled pitches in a
//! common key, the marks that say what matched, lyrics, chord symbols and grace notes.
//!
//! In: the two [`Piece`]s and one [`Passage`]. Out: a [`PassageView`] with one [`StaffView`]
//! per work. The PDF staves ([`crate::report::pdf`]) and the MusicXML and MIDI exports
//! ([`crate::report::export`]) both draw from this one model, so they show the same notes.
//!
//! Conventions:
//! - Every bar the passage touches is shown whole, in both works; notes of those bars outside
//!   the passage are marked [`Mark::Outside`]. A pickup bar keeps its actual length.
//! - The **common key**: work A is moved from its key signature's tonic to the chosen tonic (C by
//!   default) by the smallest shift that keeps its passage near the middle of its staff; work B
//!   is moved so that the pitch classes it shares with A coincide on the page (B's shift = A's
//!   shift − the passage's transposition, modulo octaves). Spelling follows the key signature
//!   interval (a score's own spelling is transposed diatonically).
//! - Scale degrees are relative to each work's **own** key at the note (major: 1 b2 2 b3 3 4 #4
//!   5 b6 6 b7 7; minor, against the natural minor: 1 b2 2 3 #3 4 #4 5 6 #6 7 #7).
//! - Note values: each note or rest is split at bar lines and, in 4/4 and 2/2, at the half bar
//!   unless it starts there or on the downbeat; a length that is two thirds of a plain value is a
//!   triplet note. Lengths that none of these express (rare: quintuplets) are split greedily
//!   into the nearest values, down to 1/64 of a whole note.

use crate::compare::{PairKind, Passage};
use crate::theory::{
    degree, fifths_of, key_name, spell_in_key, spelling_shift, tonic, KeyMode, Spelling, Step,
};
use crate::timeline::{Note, Piece};

/// How a note relates to the passage.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// In the passage and identical (same pitch class under the transposition) to its
    /// counterpart.
    Matched,
    /// In the passage, but its counterpart differs in pitch, or it has none.
    Differs,
    /// In a bar the passage touches, but outside the passage.
    Outside,
}

impl Mark {
    /// A short word for exports.
    pub fn word(self) -> &'static str {
        match self {
            Mark::Matched => "matched",
            Mark::Differs => "differs",
            Mark::Outside => "outside",
        }
    }
}

/// A written note value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NoteValue {
    /// 0 whole, 1 half, 2 quarter, 3 eighth, 4 16th, 5 32nd, 6 64th.
    pub log: u8,
    /// Augmentation dots (0–2).
    pub dots: u8,
    /// Part of a triplet (three in the time of two).
    pub triplet: bool,
}

impl NoteValue {
    /// MusicXML `<type>` name.
    pub fn type_name(self) -> &'static str {
        match self.log {
            0 => "whole",
            1 => "half",
            2 => "quarter",
            3 => "eighth",
            4 => "16th",
            5 => "32nd",
            _ => "64th",
        }
    }

    /// Length in ticks at `res` ticks per quarter (None when not a whole number of ticks).
    pub fn ticks(self, res: i64) -> Option<i64> {
        let whole = 4 * res;
        let div = 1i64 << self.log;
        if whole % div != 0 {
            return None;
        }
        let base = whole / div;
        let mut total = base;
        let mut add = base;
        for _ in 0..self.dots {
            if add % 2 != 0 {
                return None;
            }
            add /= 2;
            total += add;
        }
        if self.triplet {
            if (total * 2) % 3 != 0 {
                return None;
            }
            total = total * 2 / 3;
        }
        Some(total)
    }
}

/// A note or rest of one bar, or a piece of a note split by a bar line or the half bar.
#[derive(Debug, Clone, PartialEq)]
pub struct Event {
    /// Start in ticks from the start of the bar.
    pub start: i64,
    /// Length in ticks.
    pub ticks: i64,
    /// The written value (None: no single value fits; drawn as the nearest).
    pub value: NoteValue,
    /// Index into [`StaffView::notes`]; None for a rest.
    pub note: Option<usize>,
    /// Tied to the next piece.
    pub tie_start: bool,
    /// Tied from the previous piece (a continuation: lyrics, degrees and marks sit on the
    /// first piece only).
    pub tie_stop: bool,
}

impl Event {
    /// A rest of `ticks` from `start` (ticks from the bar start), written as `value`.
    fn rest(start: i64, ticks: i64, value: NoteValue) -> Event {
        Event {
            start,
            ticks,
            value,
            note: None,
            tie_start: false,
            tie_stop: false,
        }
    }
}

/// A note of the melody as the view shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct ViewNote {
    /// Index in the work's melody.
    pub index: usize,
    /// Shown pitch, MIDI number (after the common-key shift).
    pub pitch: i32,
    /// Sounding pitch in the work, MIDI number (may be fractional for audio).
    pub original_pitch: f64,
    /// Shown spelling.
    pub spelling: Spelling,
    /// Whether and how it matched.
    pub mark: Mark,
    /// Lyric syllable.
    pub lyric: Option<String>,
    /// Scale degree in the work's own key.
    pub degree: String,
    /// Semitones from the previous melody note, when there is one.
    pub interval: Option<i32>,
    /// Length in quarter notes.
    pub beats: f64,
    /// Beat within the bar, 1-based, time-signature unit.
    pub beat_in_bar: f64,
    /// Bar label.
    pub bar_label: String,
    /// Sounding name in the work (e.g. `F#5`).
    pub name: String,
}

/// A grace note shown before a note (not compared).
#[derive(Debug, Clone, PartialEq)]
pub struct Grace {
    /// Ticks from the bar start of the note it ornaments.
    pub start: i64,
    /// Shown pitch.
    pub pitch: i32,
    /// Shown spelling.
    pub spelling: Spelling,
}

/// One bar of a staff.
#[derive(Debug, Clone, PartialEq)]
pub struct ViewBar {
    /// Label as printed.
    pub label: String,
    /// Ordinal in the work.
    pub index: usize,
    /// Actual length in ticks (a pickup is short).
    pub length: i64,
    /// Time signature (numerator, denominator).
    pub time: (u32, u32),
    /// Print the time signature at this bar (first bar, or a change).
    pub show_time: bool,
    /// An incomplete opening bar.
    pub pickup: bool,
    /// Notes and rests in time order.
    pub events: Vec<Event>,
    /// Chord symbols: ticks from the bar start and the text in the shown key.
    pub chords: Vec<(i64, String)>,
    /// Grace notes.
    pub graces: Vec<Grace>,
    /// Start in ticks in the work.
    pub start_ticks: i64,
}

/// Clef of a staff.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Clef {
    /// G clef on the second line.
    Treble,
    /// F clef on the fourth line.
    Bass,
}

/// One work's side of a passage as notation.
#[derive(Debug, Clone, PartialEq)]
pub struct StaffView {
    /// Label of the work (e.g. `A: Pierside Lamps at Evening`).
    pub label: String,
    /// Ticks per quarter note.
    pub resolution: i64,
    /// Clef.
    pub clef: Clef,
    /// Shown key signature (sharps positive).
    pub key_fifths: i32,
    /// Mode of the shown key.
    pub mode: KeyMode,
    /// Semitones added to every pitch to show it in the common key.
    pub shift: i32,
    /// Shown key name, e.g. `C major`.
    pub shown_key: String,
    /// The work's own key at the passage, e.g. `G major`.
    pub own_key: String,
    /// The bars.
    pub bars: Vec<ViewBar>,
    /// The notes referred to by events.
    pub notes: Vec<ViewNote>,
    /// Whether the pitches are too unstable for staff notation (audio), so a piano roll is
    /// drawn instead.
    pub unstable_pitch: bool,
}

/// A passage as notation, both works.
#[derive(Debug, Clone, PartialEq)]
pub struct PassageView {
    /// Work A.
    pub a: StaffView,
    /// Work B.
    pub b: StaffView,
    /// Whether a side spans more than [`MAX_STAFF_BARS`] bars or [`MAX_STAFF_NOTES`] notes,
    /// so that only its opening is written out.
    pub cut: bool,
}

/// Most bars of one work written out for a passage: a passage as long as a whole long work
/// would otherwise fill hundreds of pages (a 50,000-note work against itself: 1,399 pages and
/// 1.5 GB while writing). The whole alignment stays in the JSON record and the exports.
pub const MAX_STAFF_BARS: usize = 64;

/// Most notes of one work written out for a passage (the bar holding the last of them is
/// shown whole): dense bars take a page for two.
pub const MAX_STAFF_NOTES: usize = 96;

/// Key signature and mode in force at `ticks`; C major when the piece states none.
fn key_at(piece: &Piece, ticks: i64) -> (i32, KeyMode) {
    piece
        .key_at(ticks)
        .map_or((0, KeyMode::Major), |k| (k.fifths, k.mode))
}

/// The written values, from longest, that a length may take.
fn candidates(res: i64) -> Vec<NoteValue> {
    let mut out = Vec::new();
    for log in 0..=6u8 {
        for dots in (0..=2u8).rev() {
            let v = NoteValue {
                log,
                dots,
                triplet: false,
            };
            if v.ticks(res).is_some() {
                out.push(v);
            }
        }
    }
    out.sort_by_key(|v| std::cmp::Reverse(v.ticks(res).unwrap_or(0)));
    out
}

/// Splits a length starting `start` ticks into a bar into written values.
pub fn split_values(
    start: i64,
    ticks: i64,
    res: i64,
    time: (u32, u32),
) -> Vec<(i64, i64, NoteValue)> {
    let mut out = Vec::new();
    if ticks <= 0 {
        return out;
    }
    let plain = candidates(res);
    // One value for the whole length?
    let half_bar = if time == (4, 4) || time == (2, 2) {
        Some(2 * res)
    } else {
        None
    };
    // Only a note that starts off the beat may not cross the half bar (a syncopation is then
    // written as two tied notes, so the middle of the bar stays visible).
    let crosses_half = |s: i64, len: i64| match half_bar {
        Some(h) => s < h && s + len > h && s % res != 0,
        None => false,
    };
    if let Some(v) = plain
        .iter()
        .find(|v| v.ticks(res) == Some(ticks) && !crosses_half(start, ticks))
    {
        out.push((start, ticks, *v));
        return out;
    }
    // A triplet note?
    for log in 1..=6u8 {
        let v = NoteValue {
            log,
            dots: 0,
            triplet: true,
        };
        if v.ticks(res) == Some(ticks) {
            out.push((start, ticks, v));
            return out;
        }
    }
    // Greedy, respecting the half bar.
    let mut s = start;
    let mut left = ticks;
    let smallest = plain.last().and_then(|v| v.ticks(res)).unwrap_or(1).max(1);
    let mut guard = 0;
    while left > 0 && guard < 64 {
        guard += 1;
        let limit = match half_bar {
            Some(h) if s < h && s % res != 0 => left.min(h - s),
            _ => left,
        };
        let pick = plain
            .iter()
            .filter_map(|v| v.ticks(res).map(|t| (t, *v)))
            .find(|&(t, _)| t <= limit);
        match pick {
            Some((t, v)) => {
                out.push((s, t, v));
                s += t;
                left -= t;
            }
            None => {
                // Shorter than any written value: attach it to the last piece.
                let v = NoteValue {
                    log: 6,
                    dots: 0,
                    triplet: false,
                };
                out.push((s, left.max(smallest.min(left)), v));
                left = 0;
            }
        }
    }
    out
}

/// Transposes the root (and bass) of a chord symbol by a spelling shift.
fn transpose_chord(text: &str, diatonic: i32, chromatic: i32) -> String {
    let mut out = String::new();
    for (i, part) in text.split('/').enumerate() {
        if i > 0 {
            out.push('/');
        }
        let mut chars = part.chars();
        let Some(first) = chars.next() else {
            continue;
        };
        let Some(step) = Step::parse(&first.to_string()) else {
            out.push_str(part);
            continue;
        };
        let rest: String = chars.collect();
        let mut alter = 0;
        let mut tail = rest.as_str();
        loop {
            if let Some(t) = tail.strip_prefix('#').or_else(|| tail.strip_prefix('♯')) {
                alter += 1;
                tail = t;
            } else if let Some(t) = tail.strip_prefix('b').or_else(|| tail.strip_prefix('♭')) {
                alter -= 1;
                tail = t;
            } else {
                break;
            }
        }
        let s = Spelling {
            step,
            alter: f64::from(alter),
            octave: 4,
        }
        .transposed(diatonic, f64::from(chromatic));
        let name = s.name();
        out.push_str(name.trim_end_matches(|c: char| c.is_ascii_digit() || c == '-'));
        out.push_str(tail);
    }
    out
}

/// Builds the notation of both works' sides of a passage.
///
/// `target_tonic` is the pitch class of the common key's tonic (0 = C).
pub fn passage_view(
    a: &Piece,
    b: &Piece,
    passage: &Passage,
    labels: (&str, &str),
    target_tonic: i32,
) -> PassageView {
    let marks_a = marks(passage, true, a.melody.len());
    let marks_b = marks(passage, false, b.melody.len());
    let first_a = a.melody.get(passage.a.note_range[0]);
    let first_b = b.melody.get(passage.b.note_range[0]);
    let key_a = key_at(a, first_a.map_or(0, |n| n.onset_ticks));
    let key_b = key_at(b, first_b.map_or(0, |n| n.onset_ticks));
    let (tonic_a, _) = tonic(key_a.0, key_a.1);
    let k_a = wrap_shift(target_tonic - tonic_a);
    let median_a = median_pitch(a, passage.a.note_range);
    let median_b = median_pitch(b, passage.b.note_range);
    let (clef_a, shift_a) = place(median_a, k_a);
    let k_b = wrap_shift(shift_a - passage.transposition_semitones);
    let (clef_b, shift_b) = place(median_b, k_b);
    // The opening of a long passage: at most MAX_STAFF_BARS bars, and no bar past the one
    // holding its MAX_STAFF_NOTES-th note.
    let capped = |piece: &Piece, side: &crate::compare::PassageSide| {
        let [first, last] = side.bar_indices;
        let [from, to] = side.note_range;
        let by_notes = piece
            .melody
            .get((from + MAX_STAFF_NOTES - 1).min(to))
            .map_or(last, |n| n.bar.max(first));
        [first, last.min(first + MAX_STAFF_BARS - 1).min(by_notes)]
    };
    let (bars_a, bars_b) = (capped(a, &passage.a), capped(b, &passage.b));
    let view_a = staff_view(a, bars_a, &marks_a, key_a, shift_a, clef_a, labels.0);
    let view_b = staff_view(b, bars_b, &marks_b, key_b, shift_b, clef_b, labels.1);
    PassageView {
        a: view_a,
        b: view_b,
        cut: bars_a != passage.a.bar_indices || bars_b != passage.b.bar_indices,
    }
}

fn wrap_shift(s: i32) -> i32 {
    let s = s.rem_euclid(12);
    if s > 6 {
        s - 12
    } else {
        s
    }
}

fn median_pitch(piece: &Piece, range: [usize; 2]) -> f64 {
    let mut p: Vec<f64> = piece
        .melody
        .get(range[0]..=range[1].min(piece.melody.len().saturating_sub(1)))
        .unwrap_or(&[])
        .iter()
        .map(|n| n.pitch.0)
        .collect();
    p.sort_by(f64::total_cmp);
    p.get(p.len() / 2).copied().unwrap_or(67.0)
}

/// Clef from the register, and the octave of the shift that keeps the passage near the middle
/// of that clef's staff (B4 treble, D3 bass).
fn place(median: f64, k: i32) -> (Clef, i32) {
    let (clef, centre) = if median < 55.0 {
        (Clef::Bass, 50.0)
    } else {
        (Clef::Treble, 71.0)
    };
    let mut best = k;
    let mut best_err = f64::MAX;
    for s in [k - 12, k, k + 12] {
        let err = (median + f64::from(s) - centre).abs();
        if err < best_err - 1e-9 {
            best_err = err;
            best = s;
        }
    }
    (clef, best)
}

fn marks(passage: &Passage, side_a: bool, len: usize) -> Vec<Option<Mark>> {
    let mut out = vec![None; len];
    for pair in &passage.pairs {
        let notes = if side_a { &pair.a } else { &pair.b };
        let mark = if pair.equal && pair.kind.is_aligned() && pair.kind != PairKind::Mismatch {
            Mark::Matched
        } else {
            Mark::Differs
        };
        for &i in notes {
            if let Some(m) = out.get_mut(i) {
                *m = Some(mark);
            }
        }
    }
    out
}

fn staff_view(
    piece: &Piece,
    bar_range: [usize; 2],
    marks: &[Option<Mark>],
    own_key: (i32, KeyMode),
    shift: i32,
    clef: Clef,
    label: &str,
) -> StaffView {
    let res = i64::from(piece.resolution.max(1));
    let (own_tonic, _) = tonic(own_key.0, own_key.1);
    let shown_tonic = (own_tonic + shift).rem_euclid(12);
    let shown_fifths = fifths_of(shown_tonic, own_key.1);
    let diatonic = spelling_shift(own_key, shown_fifths, own_key.1, shift);
    // Bars: the passage's bars, extended to every bar a note of them reaches.
    let first_bar = bar_range[0];
    let mut last_bar = bar_range[1].min(piece.bars.len().saturating_sub(1));
    let in_range: Vec<usize> = (0..piece.melody.len())
        .filter(|&i| {
            let bar = piece.melody[i].bar;
            bar >= first_bar && bar <= last_bar
        })
        .collect();
    if let Some(&last) = in_range.last() {
        let n = &piece.melody[last];
        last_bar = last_bar.max(
            piece
                .bar_at(n.end_ticks() - 1)
                .min(piece.bars.len().saturating_sub(1)),
        );
    }
    let mut notes: Vec<ViewNote> = Vec::new();
    let mut unstable = false;
    for &i in &in_range {
        let n: &Note = &piece.melody[i];
        if (n.pitch.0 - n.pitch.0.round()).abs() > 0.2 || n.confidence < 0.6 {
            unstable = true;
        }
        let pitch = n.pitch.0.round() as i32 + shift;
        let spelling = match n.spelling {
            Some(s) if s.alter.fract() == 0.0 => {
                let t = s.transposed(diatonic, f64::from(shift));
                if t.alter.abs() <= 2.0 {
                    t
                } else {
                    spell_in_key(pitch, shown_fifths)
                }
            }
            _ => spell_in_key(pitch, shown_fifths),
        };
        let key_here = key_at(piece, n.onset_ticks);
        let (t_here, _) = tonic(key_here.0, key_here.1);
        let pc = (n.pitch.0.round() as i32).rem_euclid(12);
        let interval = i
            .checked_sub(1)
            .and_then(|j| piece.melody.get(j))
            .map(|p| (n.pitch.0 - p.pitch.0).round() as i32);
        notes.push(ViewNote {
            index: i,
            pitch,
            original_pitch: n.pitch.0,
            spelling,
            mark: marks.get(i).copied().flatten().unwrap_or(Mark::Outside),
            lyric: n.lyric.clone(),
            // No key stated (a recording, a MIDI file without a key signature): no degree.
            degree: if piece.key_at(n.onset_ticks).is_some() {
                degree(pc - t_here, key_here.1).to_string()
            } else {
                String::new()
            },
            interval,
            beats: n.duration.0,
            beat_in_bar: piece.grid_beat(n).1,
            bar_label: piece
                .bars
                .get(n.bar)
                .map_or_else(String::new, |b| b.label.clone()),
            name: n
                .spelling
                .map_or_else(|| crate::theory::pitch_name(n.pitch.0), |s| s.name()),
        });
    }
    // Chord symbols of the melody's part, or of any part when it has none.
    let own_chords: Vec<_> = piece
        .chord_symbols
        .iter()
        .filter(|c| c.part == piece.selection.part)
        .collect();
    let chords: Vec<_> = if own_chords.is_empty() {
        let mut all: Vec<_> = piece.chord_symbols.iter().collect();
        all.dedup_by_key(|c| c.ticks);
        all
    } else {
        own_chords
    };
    let mut bars = Vec::new();
    let mut prev_time: Option<(u32, u32)> = None;
    for bar_index in first_bar..=last_bar {
        let Some(bar) = piece.bars.get(bar_index) else {
            continue;
        };
        let start = bar.start_ticks;
        let end = start + bar.length_ticks;
        let mut events = Vec::new();
        let mut cursor = start;
        let time = bar.time_signature;
        // Notes sounding in this bar (starting here or tied in from before).
        for (k, vn) in notes.iter().enumerate() {
            let n = &piece.melody[vn.index];
            let next_onset = piece
                .melody
                .get(vn.index + 1)
                .map_or(i64::MAX, |m| m.onset_ticks);
            let n_end = n.end_ticks().min(next_onset).max(n.onset_ticks + 1);
            let s = n.onset_ticks.max(start);
            let e = n_end.min(end);
            if e <= s || n.onset_ticks >= end || n_end <= start {
                continue;
            }
            if s > cursor {
                for (rs, rt, v) in split_values(cursor - start, s - cursor, res, time) {
                    events.push(Event::rest(rs, rt, v));
                }
            }
            let pieces = split_values(s - start, e - s, res, time);
            let count = pieces.len();
            for (j, (ps, pt, v)) in pieces.into_iter().enumerate() {
                events.push(Event {
                    start: ps,
                    ticks: pt,
                    value: v,
                    note: Some(k),
                    tie_start: j + 1 < count || (j + 1 == count && n_end > end),
                    tie_stop: j > 0 || (j == 0 && n.onset_ticks < start),
                });
            }
            cursor = e.max(cursor);
        }
        if cursor < end {
            if events.is_empty() {
                // A bar of rest: one whole-bar rest.
                let whole = NoteValue {
                    log: 0,
                    dots: 0,
                    triplet: false,
                };
                events.push(Event::rest(0, end - start, whole));
            } else {
                for (rs, rt, v) in split_values(cursor - start, end - cursor, res, time) {
                    events.push(Event::rest(rs, rt, v));
                }
            }
        }
        let bar_chords = chords
            .iter()
            .filter(|c| c.ticks >= start && c.ticks < end)
            .map(|c| (c.ticks - start, transpose_chord(&c.text, diatonic, shift)))
            .collect();
        let graces = piece
            .ornaments
            .iter()
            .filter(|o| o.part == piece.selection.part && o.kind == "grace")
            .filter_map(|o| {
                let t = (o.onset.0 * f64::from(piece.resolution)).round() as i64;
                (t >= start && t < end).then(|| {
                    let p = o.pitch.0.round() as i32 + shift;
                    Grace {
                        start: t - start,
                        pitch: p,
                        spelling: spell_in_key(p, shown_fifths),
                    }
                })
            })
            .collect();
        bars.push(ViewBar {
            label: bar.label.clone(),
            index: bar.index,
            length: bar.length_ticks,
            time,
            show_time: prev_time != Some(time),
            pickup: bar.pickup,
            events,
            chords: bar_chords,
            graces,
            start_ticks: start,
        });
        prev_time = Some(time);
    }
    StaffView {
        label: label.to_string(),
        resolution: res,
        clef,
        key_fifths: shown_fifths,
        mode: own_key.1,
        shift,
        shown_key: key_name(shown_fifths, own_key.1),
        own_key: key_name(own_key.0, own_key.1),
        bars,
        notes,
        unstable_pitch: unstable,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_split_at_the_half_bar() {
        // 4/4 at 480: a dotted quarter from beat 2 is one value; a quarter from beat 2½
        // crosses the half bar off the beat and is split into two tied eighths.
        let res = 480;
        let one = split_values(480, 720, res, (4, 4));
        assert_eq!(one.len(), 1);
        assert_eq!(one[0].2.dots, 1);
        let two = split_values(720, 480, res, (4, 4));
        assert_eq!(two.len(), 2);
        // A triplet eighth.
        let t = split_values(0, 160, res, (4, 4));
        assert!(t[0].2.triplet && t[0].2.log == 3);
    }

    #[test]
    fn chord_roots_transpose() {
        // G major to C major: down a perfect fifth (4 letters, 7 semitones).
        assert_eq!(transpose_chord("D7/F#", -4, -7), "G7/B");
        assert_eq!(transpose_chord("Em", -4, -7), "Am");
        assert_eq!(transpose_chord("N.C.", -4, -7), "N.C.");
    }
}

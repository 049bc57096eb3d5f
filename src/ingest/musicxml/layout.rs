//! Laying measures end to end: the bar grid, absolute positions, repeats and ties.

use super::measure::{MeasureContent, RepeatMarks};
use crate::ingest::{Limits, Problem, RawBar, RawPiece};
use crate::timeline::{KeySignature, Note, TempoChange, TimeSignature};

/// What a measure ordinal looks like across all parts: label, implicit flag, length in ticks,
/// time signature in force, repeat marks.
type MeasureShape = (String, bool, i64, (u32, u32), RepeatMarks);

/// Places every part's measures on one time line, in written or unfolded order.
pub(super) fn lay_out(
    raw: &mut RawPiece,
    contents: Vec<Vec<MeasureContent>>,
    unfold: bool,
    limits: &Limits,
) -> Result<(), Problem> {
    let resolution = raw.resolution;
    let count = contents.iter().map(Vec::len).max().unwrap_or(0);
    if count == 0 {
        return Err(Problem::MusicXml("the score has no <measure>".into()));
    }

    // Per measure ordinal, across parts.
    let mut shape: Vec<MeasureShape> = Vec::with_capacity(count);
    let mut current = (4u32, 4u32);
    for i in 0..count {
        let present: Vec<&MeasureContent> = contents.iter().filter_map(|p| p.get(i)).collect();
        let first = present.first().copied();
        if let Some(&(_, n, d)) = present.iter().flat_map(|m| m.time.iter()).next() {
            current = (n, d);
        }
        let nominal = TimeSignature {
            ticks: 0,
            numerator: current.0,
            denominator: current.1,
        }
        .bar_ticks(resolution);
        let actual = present.iter().map(|m| m.length).max().unwrap_or(0);
        let sounding = present.iter().map(|m| m.sounding_end).max().unwrap_or(0);
        // Parts share barlines. When one part fills the bar exactly and the others run past it
        // only with rests or <forward> (an export error), the bar keeps its written length.
        let overrun_by_rests =
            actual > nominal && sounding <= nominal && present.iter().any(|m| m.length == nominal);
        let length = if overrun_by_rests {
            if let Some(m) = present.iter().find(|m| m.length > nominal) {
                raw.warnings.push(format!(
                    "musicxml: measure {}: some part runs past the time signature with rests only; \
                     the bar is kept at its written length",
                    m.label
                ));
            }
            nominal
        } else if actual > 0 {
            actual
        } else {
            nominal.max(1)
        };
        let mut marks = RepeatMarks::default();
        for m in &present {
            let r = &m.repeats;
            marks.forward |= r.forward;
            marks.backward = marks.backward.or(r.backward);
            if marks.ending_start.is_none() {
                marks.ending_start.clone_from(&r.ending_start);
            }
            marks.ending_stop |= r.ending_stop;
            for j in &r.jumps {
                if !marks.jumps.contains(j) {
                    marks.jumps.push(j.clone());
                }
            }
        }
        shape.push((
            first.map_or_else(|| (i + 1).to_string(), |m| m.label.clone()),
            first.is_some_and(|m| m.implicit),
            length,
            current,
            marks,
        ));
    }

    let marks: Vec<&RepeatMarks> = shape.iter().map(|s| &s.4).collect();
    let order = if unfold {
        let (order, warning) = unfold_order(&marks, limits.max_bars as usize);
        if let Some(w) = warning {
            raw.warnings.push(w);
        }
        order
    } else {
        (0..count).collect()
    };
    limits.check_bars(order.len() as u64)?;

    // Bars and their starts.
    let mut starts = Vec::with_capacity(order.len());
    let mut cursor = 0i64;
    for (k, &i) in order.iter().enumerate() {
        let (label, implicit, length, time_signature, _) = &shape[i];
        let nominal = TimeSignature {
            ticks: 0,
            numerator: time_signature.0,
            denominator: time_signature.1,
        }
        .bar_ticks(resolution);
        let pickup = k == 0 && (*implicit || label == "0" || *length < nominal);
        raw.bars.push(RawBar {
            label: label.clone(),
            start_ticks: cursor,
            length_ticks: *length,
            time_signature: *time_signature,
            pickup,
            implicit: *implicit,
        });
        starts.push(cursor);
        cursor = cursor.saturating_add(*length);
    }

    // Events of every part at absolute positions.
    for (part_index, measures) in contents.iter().enumerate() {
        let mut notes: Vec<(Note, bool, bool)> = Vec::new();
        let mut voices: Vec<String> = Vec::new();
        let mut unpitched = 0usize;
        for (&i, &start) in order.iter().zip(&starts) {
            let Some(m) = measures.get(i) else { continue };
            unpitched += m.unpitched;
            for n in &m.notes {
                let concert = n.spelling.transposed(n.transpose.0, n.transpose.1);
                if let Some(v) = &n.voice {
                    if !voices.contains(v) {
                        voices.push(v.clone());
                    }
                }
                notes.push((
                    Note {
                        spelling: Some(concert),
                        part: part_index,
                        voice: n.voice.clone(),
                        staff: n.staff,
                        lyric: n.lyric.clone(),
                        ..Note::at_ticks(start + n.offset, n.duration, concert.midi())
                    },
                    n.tie_start,
                    n.tie_stop,
                ));
            }
            for g in &m.graces {
                let concert = g.spelling.transposed(g.transpose.0, g.transpose.1);
                raw.ornaments
                    .push((start + g.offset, part_index, concert.midi(), "grace".into()));
            }
            for (offset, text) in &m.harmony {
                raw.chord_symbols
                    .push((start + offset, part_index, text.clone()));
            }
            for (offset, bpm) in &m.tempos {
                raw.tempo.push(TempoChange {
                    ticks: start + offset,
                    micros_per_quarter: 60_000_000.0 / bpm,
                });
            }
            for &(offset, numerator, denominator) in &m.time {
                raw.time_signatures.push(TimeSignature {
                    ticks: start + offset,
                    numerator,
                    denominator,
                });
            }
            if part_index == 0 {
                for &(offset, fifths, mode) in &m.keys {
                    let ticks = start + offset;
                    if raw
                        .key_signatures
                        .last()
                        .is_none_or(|k| k.ticks != ticks && (k.fifths, k.mode) != (fifths, mode))
                    {
                        raw.key_signatures.push(KeySignature {
                            ticks,
                            fifths,
                            mode,
                        });
                    }
                }
            }
        }
        let (merged, ties) = merge_ties(notes);
        let part_id = raw
            .parts
            .get(part_index)
            .map_or("?", |p| p.id.as_str())
            .to_string();
        if ties.broken > 0 {
            raw.warnings.push(format!(
                "musicxml: part {part_id}: {} tie stops had no matching tied note before them; \
                 read as new notes",
                ties.broken
            ));
        }
        if ties.joined_without_stop > 0 {
            raw.warnings.push(format!(
                "musicxml: part {part_id}: {} ties have a start but no stop; each was joined to \
                 the next note of its pitch, voice and staff",
                ties.joined_without_stop
            ));
        }
        if ties.joined_across_gap > 0 {
            raw.warnings.push(format!(
                "musicxml: part {part_id}: {} tie stops were joined to a tied note that ended \
                 earlier (a measure of the part is short)",
                ties.joined_across_gap
            ));
        }
        if let Some(part) = raw.parts.get_mut(part_index) {
            part.percussion |= merged.is_empty() && unpitched > 0;
            part.notes = merged;
            part.voices = voices;
        }
    }
    for measures in &contents {
        for m in measures {
            raw.warnings.extend(m.warnings.iter().cloned());
            for jump in &m.repeats.jumps {
                if unfold {
                    raw.warnings.push(format!(
                        "musicxml: measure {}: '{jump}' is not followed when unfolding repeats",
                        m.label
                    ));
                }
            }
        }
    }
    raw.time_signatures.sort_by_key(|t| t.ticks);
    // Keep changes only: the same signature met again (other parts, unfolded repeats) is no
    // new event.
    raw.time_signatures.dedup_by(|later, earlier| {
        (later.numerator, later.denominator) == (earlier.numerator, earlier.denominator)
    });
    Ok(())
}

/// What tie merging did that a reader should know.
#[derive(Debug, Default, PartialEq, Eq)]
struct TieReport {
    /// Tie stops with no open tie to continue (read as new notes).
    broken: usize,
    /// Tie starts continued by the next note of their pitch, voice and staff although it has no
    /// tie stop (as some notation programs write ties).
    joined_without_stop: usize,
    /// Tie stops joined across a short gap (a measure that ends early in one part).
    joined_across_gap: usize,
}

/// Merges tied notes into one (MusicXML 4.0: a tie "indicates that a tie begins or ends with
/// this note"; the sound is one note).
///
/// A note continues an open tie of the same pitch when
/// 1. it has a tie stop and the tied note ends where it begins (the same voice preferred), or
/// 2. it has no tie stop but is the next note of the tied note's voice and staff, beginning
///    where the tied note ends (tie starts without stops, as some programs write them), or
/// 3. it has a tie stop, is in the tied note's voice and staff, and no other note of that voice
///    began in between (a measure cut short in one part leaves a gap).
fn merge_ties(mut notes: Vec<(Note, bool, bool)>) -> (Vec<Note>, TieReport) {
    // Time order; at one onset, tie stops first so that they meet their open ties before any
    // other note of the voice closes them.
    notes.sort_by(|a, b| {
        (a.0.onset_ticks, !a.2, a.0.pitch.0)
            .partial_cmp(&(b.0.onset_ticks, !b.2, b.0.pitch.0))
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    let mut out: Vec<Note> = Vec::with_capacity(notes.len());
    // Open ties: indices into `out` of notes whose tie has not been continued yet.
    let mut open: Vec<usize> = Vec::new();
    let mut report = TieReport::default();
    let same_line = |x: &Note, y: &Note| x.voice == y.voice && x.staff == y.staff;
    for (note, tie_start, tie_stop) in notes {
        let same_pitch = |idx: &usize| (out[*idx].pitch.0 - note.pitch.0).abs() < 1e-9;
        let exact: Vec<usize> = (0..open.len())
            .filter(|&k| same_pitch(&open[k]) && out[open[k]].end_ticks() == note.onset_ticks)
            .collect();
        let chosen = if tie_stop {
            exact
                .iter()
                .copied()
                .find(|&k| same_line(&out[open[k]], &note))
                .or(exact.first().copied())
                .or_else(|| {
                    let k = (0..open.len()).find(|&k| {
                        same_pitch(&open[k])
                            && same_line(&out[open[k]], &note)
                            && out[open[k]].end_ticks() < note.onset_ticks
                    });
                    if k.is_some() {
                        report.joined_across_gap += 1;
                    }
                    k
                })
        } else {
            let k = exact
                .iter()
                .copied()
                .find(|&k| same_line(&out[open[k]], &note));
            if k.is_some() {
                report.joined_without_stop += 1;
            }
            k
        };
        if let Some(k) = chosen {
            let idx = open[k];
            out[idx].duration_ticks = note.end_ticks() - out[idx].onset_ticks;
            if out[idx].lyric.is_none() {
                out[idx].lyric.clone_from(&note.lyric);
            }
            if !tie_start {
                open.swap_remove(k);
            }
            continue;
        }
        if tie_stop {
            report.broken += 1;
        }
        // A new note of a voice ends that voice's open ties that ended before it.
        open.retain(|&idx| {
            !(same_line(&out[idx], &note) && out[idx].end_ticks() < note.onset_ticks)
        });
        if tie_start {
            open.push(out.len());
        }
        out.push(note);
    }
    (out, report)
}

/// The order in which measures are played when repeats and endings are followed.
///
/// A backward repeat sends play back to the last forward repeat (or the start, or the measure
/// after the previous completed section) until its section has played `times` times; measures
/// inside an ending play only on the passes the ending lists. Returns the order and a warning
/// when it had to stop at `max_len` measures.
pub(super) fn unfold_order(marks: &[&RepeatMarks], max_len: usize) -> (Vec<usize>, Option<String>) {
    // Ending numbers of each measure (None outside endings).
    let mut endings: Vec<Option<Vec<u32>>> = vec![None; marks.len()];
    let mut active: Option<Vec<u32>> = None;
    for (i, m) in marks.iter().enumerate() {
        if let Some(numbers) = &m.ending_start {
            active = Some(numbers.clone());
        }
        endings[i].clone_from(&active);
        // An ending closes at its stop mark, or failing that at its backward repeat.
        if m.ending_stop || m.backward.is_some() {
            active = None;
        }
    }
    let mut order = Vec::new();
    let mut i = 0usize;
    let mut pass = 1u32;
    let mut section_start = 0usize;
    let mut previous_in_ending = false;
    while i < marks.len() {
        if order.len() >= max_len {
            return (
                order,
                Some(format!(
                    "musicxml: unfolding repeats stopped at {max_len} bars (raise with --max-bars)"
                )),
            );
        }
        let in_ending = endings[i].is_some();
        if !in_ending && previous_in_ending {
            // Past the last ending of a section: a new section begins.
            pass = 1;
            section_start = i;
        }
        if marks[i].forward && !in_ending && i != section_start && pass == 1 {
            section_start = i;
        }
        previous_in_ending = in_ending;
        if let Some(numbers) = &endings[i] {
            // An ending with no numbers plays on every pass.
            if !numbers.is_empty() && !numbers.contains(&pass) {
                i += 1;
                continue;
            }
        }
        order.push(i);
        if let Some(times) = marks[i].backward {
            if pass < times {
                pass += 1;
                i = section_start;
                previous_in_ending = false;
                continue;
            }
            if !in_ending {
                pass = 1;
                section_start = i + 1;
            }
        }
        i += 1;
    }
    (order, None)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn marks(spec: &[&str]) -> Vec<RepeatMarks> {
        // Each measure: "f" forward repeat, "b" backward repeat, "e1"/"e2" ending start,
        // "s" ending stop; combined with '+'.
        spec.iter()
            .map(|s| {
                let mut m = RepeatMarks::default();
                for part in s.split('+').filter(|p| !p.is_empty()) {
                    match part {
                        "f" => m.forward = true,
                        "b" => m.backward = Some(2),
                        "s" => m.ending_stop = true,
                        e if e.starts_with('e') => {
                            m.ending_start = Some(vec![e[1..].parse().unwrap_or(1)])
                        }
                        _ => {}
                    }
                }
                m
            })
            .collect()
    }

    fn order(spec: &[&str]) -> Vec<usize> {
        let m = marks(spec);
        let refs: Vec<&RepeatMarks> = m.iter().collect();
        unfold_order(&refs, 1000).0
    }

    #[test]
    fn simple_repeat() {
        // |: 0 1 :| 2  →  0 1 0 1 2 (common practice)
        assert_eq!(order(&["f", "b", ""]), vec![0, 1, 0, 1, 2]);
    }

    #[test]
    fn repeat_from_start_without_forward_sign() {
        assert_eq!(order(&["", "b", ""]), vec![0, 1, 0, 1, 2]);
    }

    #[test]
    fn first_and_second_endings() {
        // 0 |: 1 2 [1. 3 :| [2. 4 ] 5  →  0 1 2 3 1 2 4 5
        assert_eq!(
            order(&["", "f", "", "e1+s+b", "e2+s", ""]),
            vec![0, 1, 2, 3, 1, 2, 4, 5]
        );
    }

    #[test]
    fn two_sections_in_a_row() {
        // |: 0 :| |: 1 :| 2  →  0 0 1 1 2
        assert_eq!(order(&["f+b", "f+b", ""]), vec![0, 0, 1, 1, 2]);
    }

    #[test]
    fn second_section_after_endings_repeats_too() {
        // |: 0 [1. 1 :| [2. 2 ] |: 3 :|  →  0 1 0 2 3 3
        assert_eq!(
            order(&["f", "e1+s+b", "e2+s", "f+b"]),
            vec![0, 1, 0, 2, 3, 3]
        );
    }
}

//! Choosing the melody: a part (or track and channel), optionally a staff, voice and bar
//! range; chords reduced to their highest note. Without a choice, every candidate line is
//! ranked by melody-likeness ([`super::likeness`]).

use super::{likeness, Problem};
use crate::theory::pitch_name;
use crate::timeline::{MelodyCandidate, Note, Part, Piece, Selection};

/// A range of bars by their printed labels, inclusive: `9-24`, `12a-16`, or one bar `7`.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct BarRange {
    /// Label of the first bar.
    pub first: String,
    /// Label of the last bar.
    pub last: String,
}

impl std::str::FromStr for BarRange {
    type Err = String;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let text = text.trim();
        let (first, last) = match text.split_once('-') {
            Some((a, b)) => (a.trim(), b.trim()),
            None => (text, text),
        };
        if first.is_empty() || last.is_empty() {
            return Err(format!(
                "bar range '{text}' should look like 9-24 (labels as printed) or a single bar"
            ));
        }
        Ok(BarRange {
            first: first.to_string(),
            last: last.to_string(),
        })
    }
}

/// Which line of a file to take as the melody. Everything optional; without a choice the
/// most melody-like pitched part is taken.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct MelodyChoice {
    /// Part id (MusicXML `P1`, MIDI `track2-ch1`), part name, or 1-based position.
    pub part: Option<String>,
    /// MIDI track, 1-based.
    pub track: Option<u32>,
    /// MIDI channel, 1–16.
    pub channel: Option<u8>,
    /// Staff within the part, 1-based.
    pub staff: Option<u8>,
    /// Voice within the part, as the source names it (MusicXML `1`, `2`, …).
    pub voice: Option<String>,
    /// Bar range by printed labels.
    pub bars: Option<BarRange>,
    /// Allow percussion parts (MIDI channel 10) to be chosen automatically. Default false.
    pub include_percussion: bool,
}

/// Fills [`Piece::melody`], [`Piece::selection`] and [`Piece::candidates`]: every candidate
/// line (each pitched part, and each staff and voice of a part that has several), reduced to
/// its top voice and ranked by melody-likeness ([`super::likeness`]); the most melody-like is
/// the melody. An explicit part, track, channel, staff or voice keeps only the line asked for.
pub(crate) fn select_melody(mut piece: Piece, choice: &MelodyChoice) -> Result<Piece, Problem> {
    if piece.parts.iter().all(|p| p.notes.is_empty()) {
        if piece.parts.iter().any(|p| p.percussion) {
            // A readable file of unpitched percussion: listed, with no melody to compare.
            piece.selection.reason = "no melody: the file holds only unpitched percussion".into();
            piece
                .warnings
                .push("no pitched notes: the file holds only unpitched percussion".into());
            return Ok(piece);
        }
        return Err(Problem::NoNotes(
            "the file contains no pitched notes (only rests or nothing)".into(),
        ));
    }
    let parts = candidate_parts(&piece, choice)?;
    let asked_part = choice.part.is_some() || choice.track.is_some() || choice.channel.is_some();
    let explicit = asked_part || choice.staff.is_some() || choice.voice.is_some();
    let bar_span = match &choice.bars {
        Some(range) => Some(resolve_bars(&piece, range)?),
        None => None,
    };
    let lines = candidate_lines(&piece, &parts, choice, bar_span, explicit);
    if lines.is_empty() {
        let part = &piece.parts[parts[0]];
        return Err(Problem::Selection(format!(
            "part {} has no notes for the chosen staff, voice and bars{}",
            describe_part(part),
            available_voices(part)
        )));
    }
    let span = sounding_span(&piece, choice.include_percussion);
    let tops: Vec<Vec<Note>> = lines
        .iter()
        .map(|line| {
            let notes: Vec<&Note> = line
                .notes
                .iter()
                .map(|&k| &piece.parts[line.part].notes[k])
                .collect();
            skyline(&notes, &piece.tempo)
        })
        .collect();
    // A line whose every note sounds in another line at the same onset and pitch class (a
    // piano part and its upper staff; an instrument doubling the voice for a few bars, in
    // unison or octaves) adds nothing to compare: the longer line (of equal ones, the first)
    // stands for both.
    let doubling: Vec<bool> = (0..lines.len())
        .map(|i| {
            (0..lines.len()).any(|j| {
                j != i
                    && (tops[j].len() > tops[i].len() || (tops[j].len() == tops[i].len() && j < i))
                    && doubles(&tops[i], &tops[j])
            })
        })
        .collect();
    let mut features = Vec::with_capacity(lines.len());
    let mut melodies: Vec<(Vec<Note>, bool)> = Vec::with_capacity(lines.len());
    let mut kept = Vec::with_capacity(lines.len());
    for ((line, top), doubled) in lines.into_iter().zip(tops).zip(doubling) {
        if doubled {
            continue;
        }
        let notes: Vec<&Note> = line
            .notes
            .iter()
            .map(|&k| &piece.parts[line.part].notes[k])
            .collect();
        features.push(likeness::line_features(&notes, &top, span));
        melodies.push((top, has_simultaneous_onsets(&notes)));
        kept.push(line);
    }
    let lines = kept;
    likeness::relate(&mut features);
    let mut order: Vec<usize> = (0..lines.len()).collect();
    let scores: Vec<f64> = features.iter().map(likeness::likeness).collect();
    order.sort_by(|&x, &y| scores[y].total_cmp(&scores[x]).then(x.cmp(&y)));
    if explicit {
        order.truncate(1);
    }
    let total = lines.len();
    let mut candidates: Vec<MelodyCandidate> = Vec::with_capacity(order.len());
    for (rank, &k) in order.iter().enumerate() {
        let line = &lines[k];
        let part = &piece.parts[line.part];
        let (melody, had_chords) = std::mem::take(&mut melodies[k]);
        let why = if total == 1 {
            if asked_part || explicit {
                "as asked".to_string()
            } else {
                "the only pitched line".to_string()
            }
        } else if rank == 0 {
            format!(
                "most melody-like of {total} candidate lines: likeness {:.2}, {:.0}% single-note onsets, average pitch near {}",
                scores[k],
                100.0 * features[k].single_onsets,
                // The nearest note: a mean is not a tuning, so no cents are shown.
                pitch_name((60.0 + 12.0 * features[k].pitch_mean).round())
            )
        } else {
            format!(
                "candidate {} of {total}: likeness {:.2}",
                rank + 1,
                scores[k]
            )
        };
        let mut reason = format!("part {} ({why})", describe_part(part));
        if let Some(s) = line.staff {
            reason.push_str(&format!(", staff {s}"));
        }
        if let Some(v) = &line.voice {
            reason.push_str(&format!(", voice {v}"));
        }
        if let Some(range) = &choice.bars {
            reason.push_str(&format!(", bars {}–{}", range.first, range.last));
        }
        if had_chords {
            reason.push_str(
                "; chords reduced to their highest note, and notes starting under a held higher \
                 note left out (skyline)",
            );
        }
        candidates.push(MelodyCandidate {
            selection: Selection {
                part: line.part,
                staff: line.staff,
                voice: line.voice.clone(),
                bars: choice
                    .bars
                    .as_ref()
                    .map(|r| (r.first.clone(), r.last.clone())),
                skyline: had_chords,
                reason,
            },
            label: line_label(part, line.staff, line.voice.as_deref()),
            likeness: scores[k],
            features: features[k],
            melody,
        });
    }
    if let Some(best) = candidates.first() {
        piece.selection = best.selection.clone();
        piece.melody = best.melody.clone();
    }
    piece.candidates = candidates;
    Ok(piece)
}

/// A line that may be the melody: notes of one part, optionally of one staff or voice.
struct Line {
    part: usize,
    staff: Option<u8>,
    voice: Option<String>,
    /// Indices into the part's notes, in time order.
    notes: Vec<usize>,
}

/// Every candidate line of the allowed parts: the whole part, then (unless the choice names a
/// staff or voice, or a part explicitly) each of its staves and voices when it has several;
/// lines with no notes, or the same notes as an earlier line, are left out.
fn candidate_lines(
    piece: &Piece,
    parts: &[usize],
    choice: &MelodyChoice,
    bar_span: Option<(usize, usize)>,
    explicit: bool,
) -> Vec<Line> {
    let mut lines: Vec<Line> = Vec::new();
    for &p in parts {
        let part = &piece.parts[p];
        let pick = |staff: Option<u8>, voice: Option<&str>| -> Vec<usize> {
            part.notes
                .iter()
                .enumerate()
                .filter(|(_, n)| staff.is_none_or(|s| n.staff == s))
                .filter(|(_, n)| voice.is_none_or(|v| n.voice.as_deref() == Some(v)))
                .filter(|(_, n)| bar_span.is_none_or(|(a, b)| n.bar >= a && n.bar <= b))
                .map(|(k, _)| k)
                .collect()
        };
        let mut push = |staff: Option<u8>, voice: Option<String>| {
            let notes = pick(staff, voice.as_deref());
            if notes.is_empty() || lines.iter().any(|l| l.part == p && l.notes == notes) {
                return;
            }
            lines.push(Line {
                part: p,
                staff,
                voice,
                notes,
            });
        };
        push(choice.staff, choice.voice.clone());
        if explicit {
            continue;
        }
        let mut staves: Vec<u8> = part.notes.iter().map(|n| n.staff).collect();
        staves.sort_unstable();
        staves.dedup();
        if staves.len() > 1 {
            for s in staves {
                push(Some(s), None);
            }
        }
        let mut voices: Vec<&str> = part
            .notes
            .iter()
            .filter_map(|n| n.voice.as_deref())
            .collect();
        voices.sort_unstable();
        voices.dedup();
        if voices.len() > 1 {
            for v in voices {
                push(None, Some(v.to_string()));
            }
        }
    }
    lines
}

/// Whether every note of line `x` sounds in line `y` at the same onset and pitch class (both in
/// time order).
fn doubles(x: &[Note], y: &[Note]) -> bool {
    if x.is_empty() {
        return true;
    }
    let mut k = 0;
    x.iter().all(|n| {
        while k < y.len() && y[k].onset_ticks < n.onset_ticks {
            k += 1;
        }
        k < y.len()
            && y[k].onset_ticks == n.onset_ticks
            && (y[k].pitch.0.round() as i64 - n.pitch.0.round() as i64).rem_euclid(12) == 0
    })
}

/// First onset to last end, in quarter notes, over the pitched parts that may be chosen.
fn sounding_span(piece: &Piece, include_percussion: bool) -> (f64, f64) {
    let notes = piece
        .parts
        .iter()
        .filter(|p| include_percussion || !p.percussion)
        .flat_map(|p| p.notes.iter());
    let (mut first, mut last) = (f64::MAX, f64::MIN);
    for n in notes {
        first = first.min(n.onset.0);
        last = last.max(n.onset.0 + n.duration.0);
    }
    if first > last {
        (0.0, 1.0)
    } else {
        (first, last)
    }
}

/// `P2 "Piano", staff 1, voice 2`.
fn line_label(part: &Part, staff: Option<u8>, voice: Option<&str>) -> String {
    let mut label = describe_part(part);
    if let Some(s) = staff {
        label.push_str(&format!(", staff {s}"));
    }
    if let Some(v) = voice {
        label.push_str(&format!(", voice {v}"));
    }
    label
}

fn describe_part(part: &Part) -> String {
    if part.name.is_empty() {
        part.id.clone()
    } else {
        format!("{} \"{}\"", part.id, part.name)
    }
}

fn available_voices(part: &Part) -> String {
    if part.voices.is_empty() {
        String::new()
    } else {
        format!(" (voices in this part: {})", part.voices.join(", "))
    }
}

/// The parts allowed by the choice, in file order.
fn candidate_parts(piece: &Piece, choice: &MelodyChoice) -> Result<Vec<usize>, Problem> {
    let listing = || {
        piece
            .parts
            .iter()
            .map(describe_part)
            .collect::<Vec<_>>()
            .join(", ")
    };
    if let Some(wanted) = &choice.part {
        let by_id = piece.parts.iter().position(|p| &p.id == wanted);
        let by_name = || {
            piece
                .parts
                .iter()
                .position(|p| !p.name.is_empty() && p.name.eq_ignore_ascii_case(wanted))
        };
        let by_position = || {
            wanted
                .parse::<usize>()
                .ok()
                .filter(|&n| n >= 1 && n <= piece.parts.len())
                .map(|n| n - 1)
        };
        return match by_id.or_else(by_name).or_else(by_position) {
            Some(i) if piece.parts[i].notes.is_empty() => Err(Problem::Selection(format!(
                "part '{wanted}' has no pitched notes"
            ))),
            Some(i) => Ok(vec![i]),
            None => Err(Problem::Selection(format!(
                "no part '{wanted}'; the parts are: {}",
                listing()
            ))),
        };
    }
    let explicit = choice.track.is_some() || choice.channel.is_some();
    let matching: Vec<usize> = piece
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| !p.notes.is_empty())
        .filter(|(_, p)| choice.track.is_none_or(|t| p.track == Some(t)))
        .filter(|(_, p)| choice.channel.is_none_or(|c| p.channel == Some(c)))
        .filter(|(_, p)| explicit || choice.include_percussion || !p.percussion)
        .map(|(i, _)| i)
        .collect();
    if matching.is_empty() {
        return Err(if explicit {
            Problem::Selection(format!(
                "no pitched notes on the chosen track/channel; the parts are: {}",
                listing()
            ))
        } else {
            Problem::NoNotes(
                "every part with notes is percussion (use --include-percussion to allow it)".into(),
            )
        });
    }
    Ok(matching)
}

fn has_simultaneous_onsets(notes: &[&Note]) -> bool {
    notes
        .windows(2)
        .any(|w| w[0].onset_ticks == w[1].onset_ticks)
        || notes
            .windows(2)
            .any(|w| w[1].onset_ticks < w[0].end_ticks())
}

/// Skyline reduction to one note at a time: at each onset keep the highest note, unless a
/// higher kept note is still sounding (then the new note lies under the melody and is left
/// out); a kept note is cut short where the next kept note begins. `notes` must be in time
/// order.
pub(crate) fn skyline(notes: &[&Note], tempo: &crate::timeline::TempoMap) -> Vec<Note> {
    let mut out: Vec<Note> = Vec::with_capacity(notes.len());
    let mut i = 0;
    while i < notes.len() {
        let onset = notes[i].onset_ticks;
        let mut top = notes[i];
        let mut j = i + 1;
        while j < notes.len() && notes[j].onset_ticks == onset {
            if notes[j].pitch.0 > top.pitch.0 {
                top = notes[j];
            }
            j += 1;
        }
        i = j;
        if let Some(prev) = out.last_mut() {
            if prev.end_ticks() > onset && prev.pitch.0 > top.pitch.0 {
                continue;
            }
            if prev.end_ticks() > onset {
                prev.duration_ticks = onset - prev.onset_ticks;
                prev.duration = tempo.beats_at(prev.duration_ticks);
                prev.duration_seconds = tempo.seconds_at(onset) - prev.onset_seconds;
            }
        }
        out.push(top.clone());
    }
    out
}

/// Bar indices for a label range: the first bar labelled `first`, and the first bar at or
/// after it labelled `last`.
fn resolve_bars(piece: &Piece, range: &BarRange) -> Result<(usize, usize), Problem> {
    let labels = || {
        let first = piece.bars.first().map_or("", |b| b.label.as_str());
        let last = piece.bars.last().map_or("", |b| b.label.as_str());
        format!("bars run from {first} to {last}")
    };
    let start = piece
        .bars
        .iter()
        .position(|b| b.label == range.first)
        .ok_or_else(|| {
            Problem::Selection(format!("no bar labelled '{}'; {}", range.first, labels()))
        })?;
    let end = piece.bars[start..]
        .iter()
        .position(|b| b.label == range.last)
        .map(|k| start + k)
        .ok_or_else(|| {
            Problem::Selection(format!(
                "no bar labelled '{}' at or after bar {}; {}",
                range.last,
                range.first,
                labels()
            ))
        })?;
    Ok((start, end))
}

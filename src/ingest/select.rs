//! Choosing the melody: a part (or track and channel), optionally a staff, voice and bar
//! range; chords reduced to their highest note.

use super::Problem;
use crate::theory::pitch_name;
use crate::timeline::{Note, Part, Piece};

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

/// Words in a part or instrument name that suggest the melody line.
const MELODY_WORDS: [&str; 12] = [
    "melod", "vocal", "voice", "voc", "lead", "solo", "soprano", "sing", "tune", "canto", "chant",
    "lyric",
];

/// Fills [`Piece::melody`] and [`Piece::selection`].
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
    let candidates = candidate_parts(&piece, choice)?;
    let asked = choice.part.is_some() || choice.track.is_some() || choice.channel.is_some();
    let (part_index, why) = if candidates.len() == 1 {
        let why = if asked {
            "as asked"
        } else {
            "the only pitched part"
        };
        (candidates[0], why.to_string())
    } else {
        most_melodic(&piece, &candidates)
    };
    let part = &piece.parts[part_index];

    let bar_span = match &choice.bars {
        Some(range) => Some(resolve_bars(&piece, range)?),
        None => None,
    };
    let chosen: Vec<&Note> = part
        .notes
        .iter()
        .filter(|n| choice.staff.is_none_or(|s| n.staff == s))
        .filter(|n| {
            choice
                .voice
                .as_ref()
                .is_none_or(|v| n.voice.as_deref() == Some(v.as_str()))
        })
        .filter(|n| bar_span.is_none_or(|(a, b)| n.bar >= a && n.bar <= b))
        .collect();
    if chosen.is_empty() {
        return Err(Problem::Selection(format!(
            "part {} has no notes for the chosen staff, voice and bars{}",
            describe_part(part),
            available_voices(part)
        )));
    }
    let had_chords = has_simultaneous_onsets(&chosen);
    let melody = skyline(&chosen, &piece.tempo);

    let mut reason = format!("part {} ({})", describe_part(part), why);
    if let Some(s) = choice.staff {
        reason.push_str(&format!(", staff {s}"));
    }
    if let Some(v) = &choice.voice {
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
    piece.selection = crate::timeline::Selection {
        part: part_index,
        staff: choice.staff,
        voice: choice.voice.clone(),
        bars: choice
            .bars
            .as_ref()
            .map(|r| (r.first.clone(), r.last.clone())),
        skyline: had_chords,
        reason,
    };
    piece.melody = melody;
    Ok(piece)
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

/// Picks the most melody-like part by a documented heuristic. Each part gets
/// 0.35 · share of onsets that carry a single note (melodies are mostly monophonic)
/// + 0.25 · mean pitch mapped from C2..C7 to 0..1 (melodies tend to lie high)
/// + 0.20 if its name suggests a melody line ("melody", "vocal", "lead", "soprano", …)
/// + 0.10 · share of the piece's duration it spans
/// + 0.10 · its note count relative to the busiest part.
fn most_melodic(piece: &Piece, candidates: &[usize]) -> (usize, String) {
    let piece_span = piece
        .parts
        .iter()
        .flat_map(|p| p.notes.iter())
        .map(|n| n.end_ticks())
        .max()
        .unwrap_or(1)
        .max(1) as f64;
    let busiest = candidates
        .iter()
        .map(|&i| piece.parts[i].notes.len())
        .max()
        .unwrap_or(1)
        .max(1) as f64;
    let mut best: Option<(f64, usize, String)> = None;
    for &i in candidates {
        let part = &piece.parts[i];
        let notes: Vec<&Note> = part.notes.iter().collect();
        let monophony = single_onset_share(&notes);
        let mean = notes.iter().map(|n| n.pitch.0).sum::<f64>() / notes.len().max(1) as f64;
        let height = ((mean - 36.0) / 60.0).clamp(0.0, 1.0);
        let text = format!("{} {}", part.name, part.instrument).to_lowercase();
        let named = MELODY_WORDS.iter().any(|w| text.contains(w));
        let first = notes.first().map_or(0, |n| n.onset_ticks);
        let last = notes.iter().map(|n| n.end_ticks()).max().unwrap_or(0);
        let coverage = ((last - first) as f64 / piece_span).clamp(0.0, 1.0);
        let count = notes.len() as f64 / busiest;
        let score = 0.35 * monophony
            + 0.25 * height
            + if named { 0.20 } else { 0.0 }
            + 0.10 * coverage
            + 0.10 * count;
        let why = format!(
            "most melody-like of {} pitched parts: {:.0}% single-note onsets, mean pitch {}{}",
            candidates.len(),
            100.0 * monophony,
            pitch_name(mean),
            if named {
                ", named like a melody line"
            } else {
                ""
            }
        );
        if best.as_ref().is_none_or(|(s, _, _)| score > *s + 1e-12) {
            best = Some((score, i, why));
        }
    }
    match best {
        Some((_, i, why)) => (i, why),
        None => (candidates[0], "the first pitched part".into()),
    }
}

/// Share of distinct onsets at which exactly one note starts.
fn single_onset_share(notes: &[&Note]) -> f64 {
    let mut onsets = 0usize;
    let mut single = 0usize;
    let mut i = 0;
    while i < notes.len() {
        let mut j = i + 1;
        while j < notes.len() && notes[j].onset_ticks == notes[i].onset_ticks {
            j += 1;
        }
        onsets += 1;
        if j - i == 1 {
            single += 1;
        }
        i = j;
    }
    single as f64 / onsets.max(1) as f64
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

//! Reading the content of one measure of one part: notes, attributes, directions, harmony and
//! barlines, with positions in ticks relative to the start of the measure.
//!
//! MusicXML 4.0 semantics: `<divisions>` is the number of divisions per quarter note and may
//! change anywhere; `<duration>` is the sounding length in divisions, used by notes, `<backup>`
//! and `<forward>`; a `<chord/>` note starts with the previous note; grace notes take no time.

use super::super::Problem;
use crate::theory::{KeyMode, Spelling, Step};
use roxmltree::Node;

/// Longest single duration accepted, in quarter notes; anything longer is a corrupt file.
const MAX_DURATION_QUARTERS: f64 = 1.0e6;
/// Octaves of written pitches read (MusicXML 4.0 `octave` type: "Octaves are represented by
/// the numbers 0 to 9, where 4 indicates the octave started by middle C").
const OCTAVES: std::ops::RangeInclusive<i32> = 0..=9;
/// Largest alteration in semitones (triple sharps and flats, the most common practice writes).
const MAX_ALTER: f64 = 3.0;
/// Most beats in a time signature read (the longest additive meters in use have a few dozen).
const MAX_BEATS: u32 = 128;
/// Largest transposition of a part in semitones or diatonic steps (four octaves).
const MAX_TRANSPOSE: f64 = 48.0;

/// A note found in a measure, before ties are merged and time is made absolute.
#[derive(Debug, Clone)]
pub(crate) struct PendingNote {
    pub offset: i64,
    pub duration: i64,
    /// Written pitch.
    pub spelling: Spelling,
    pub voice: Option<String>,
    pub staff: u8,
    pub lyric: Option<String>,
    pub tie_start: bool,
    pub tie_stop: bool,
    /// Written-to-sounding transposition in force: (diatonic, chromatic incl. octaves).
    pub transpose: (i32, f64),
}

/// A grace note: listed as an ornament, kept out of the melody.
#[derive(Debug, Clone)]
pub(crate) struct PendingGrace {
    pub offset: i64,
    pub spelling: Spelling,
    pub transpose: (i32, f64),
}

/// Repeat and ending marks of a measure.
#[derive(Debug, Clone, Default)]
pub(crate) struct RepeatMarks {
    pub forward: bool,
    /// `Some(times)` when the measure ends with a backward repeat (times the section plays).
    pub backward: Option<u32>,
    /// Ending numbers when an ending starts in this measure.
    pub ending_start: Option<Vec<u32>>,
    /// An ending stops or is discontinued at the end of this measure.
    pub ending_stop: bool,
    /// Jumps that unfolding does not follow (da capo, dal segno, …).
    pub jumps: Vec<String>,
}

/// Everything read from one measure of one part.
#[derive(Debug, Clone, Default)]
pub(crate) struct MeasureContent {
    pub label: String,
    pub implicit: bool,
    /// The furthest position reached, in ticks.
    pub length: i64,
    /// The furthest end of a sounding note (rests and `<forward>` excluded), in ticks.
    pub sounding_end: i64,
    pub notes: Vec<PendingNote>,
    pub graces: Vec<PendingGrace>,
    pub unpitched: usize,
    pub time: Vec<(i64, u32, u32)>,
    /// (offset, fifths at concert pitch, mode)
    pub keys: Vec<(i64, i32, KeyMode)>,
    /// (offset, quarter notes per minute)
    pub tempos: Vec<(i64, f64)>,
    /// (offset, chord symbol at concert pitch)
    pub harmony: Vec<(i64, String)>,
    pub repeats: RepeatMarks,
    pub warnings: Vec<String>,
}

/// Per-part reading state that carries from one measure to the next.
#[derive(Debug, Clone)]
pub(crate) struct PartState {
    pub divisions: f64,
    pub resolution: u32,
    /// (diatonic, chromatic semitones including octave change)
    pub transpose: (i32, f64),
    pub staves: u8,
    pub saw_divisions: bool,
}

impl PartState {
    pub fn new(resolution: u32) -> PartState {
        PartState {
            divisions: 1.0,
            resolution,
            transpose: (0, 0.0),
            staves: 1,
            saw_divisions: false,
        }
    }

    /// Converts a length in divisions to ticks at the piece resolution.
    fn ticks(&self, divisions: f64, label: &str) -> Result<i64, Problem> {
        let quarters = divisions / self.divisions;
        if !quarters.is_finite() || quarters.abs() > MAX_DURATION_QUARTERS {
            return Err(Problem::MusicXml(format!(
                "measure {label}: duration {} (at {} divisions per quarter) is not a usable length",
                shown(divisions),
                shown(self.divisions)
            )));
        }
        Ok((quarters * f64::from(self.resolution)).round() as i64)
    }
}

/// A number as a message shows it: very large and very small magnitudes in exponent form.
fn shown(value: f64) -> String {
    if value != 0.0 && !(1e-3..1e9).contains(&value.abs()) {
        format!("{value:e}")
    } else {
        format!("{value}")
    }
}

fn child<'a, 'input>(node: Node<'a, 'input>, name: &str) -> Option<Node<'a, 'input>> {
    node.children().find(|c| c.has_tag_name(name))
}

fn child_text<'a>(node: Node<'a, '_>, name: &str) -> Option<&'a str> {
    child(node, name).and_then(|c| c.text()).map(str::trim)
}

fn child_number(node: Node, name: &str) -> Option<f64> {
    child_text(node, name)
        .and_then(|t| t.parse::<f64>().ok())
        .filter(|v| v.is_finite())
}

/// Reads one measure (`node` holds the content: the `<measure>` in partwise files, the
/// `<part>` inside a `<measure>` in timewise files; `measure` holds the attributes).
pub(crate) fn read_measure(
    measure: Node,
    node: Node,
    ordinal: usize,
    state: &mut PartState,
) -> Result<MeasureContent, Problem> {
    let label = measure
        .attribute("number")
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map_or_else(|| (ordinal + 1).to_string(), str::to_string);
    let mut out = MeasureContent {
        implicit: measure.attribute("implicit") == Some("yes"),
        label: label.clone(),
        ..MeasureContent::default()
    };
    let mut cursor: i64 = 0;
    let mut last_onset: i64 = 0;
    let mut unmatched_backup = false;
    for element in node.children().filter(Node::is_element) {
        match element.tag_name().name() {
            "attributes" => read_attributes(element, cursor, state, &mut out),
            "note" => {
                read_note(element, &mut cursor, &mut last_onset, state, &mut out)?;
            }
            "backup" => {
                let d = child_number(element, "duration").unwrap_or(0.0);
                let ticks = state.ticks(d, &label)?;
                if ticks > cursor {
                    unmatched_backup = true;
                }
                cursor = (cursor - ticks).max(0);
            }
            "forward" => {
                let d = child_number(element, "duration").unwrap_or(0.0);
                cursor = cursor.saturating_add(state.ticks(d, &label)?.max(0));
            }
            "direction" => read_direction(element, cursor, state, &mut out)?,
            "sound" => read_sound(element, cursor, &mut out),
            "harmony" => {
                let offset = match child_number(element, "offset") {
                    Some(d) => state.ticks(d, &label)?,
                    None => 0,
                };
                if let Some(text) = chord_symbol(element, state.transpose) {
                    out.harmony.push(((cursor + offset).max(0), text));
                }
            }
            "barline" => read_barline(element, &mut out.repeats),
            _ => {}
        }
        out.length = out.length.max(cursor);
    }
    if unmatched_backup {
        out.warnings.push(format!(
            "musicxml: measure {label}: <backup> goes before the start of the measure; clamped"
        ));
    }
    Ok(out)
}

fn read_attributes(node: Node, cursor: i64, state: &mut PartState, out: &mut MeasureContent) {
    if let Some(d) = child_number(node, "divisions") {
        if d > 0.0 {
            state.divisions = d;
            state.saw_divisions = true;
        } else {
            out.warnings.push(format!(
                "musicxml: measure {}: <divisions> {d} is not positive; ignored",
                out.label
            ));
        }
    }
    if let Some(n) = child_text(node, "staves").and_then(|t| t.parse::<u8>().ok()) {
        state.staves = n.max(1);
    }
    if let Some(t) = node.children().find(|c| c.has_tag_name("transpose")) {
        let chromatic = child_number(t, "chromatic").unwrap_or(0.0);
        let diatonic = child_number(t, "diatonic").unwrap_or(0.0);
        let octaves = child_number(t, "octave-change").unwrap_or(0.0);
        let semitones = chromatic + 12.0 * octaves;
        if semitones.abs() <= MAX_TRANSPOSE && diatonic.abs() <= MAX_TRANSPOSE {
            state.transpose = (diatonic as i32 + 7 * octaves as i32, semitones);
        } else {
            out.warnings.push(format!(
                "musicxml: measure {}: <transpose> of {} semitones is beyond {MAX_TRANSPOSE}; ignored",
                out.label,
                shown(semitones)
            ));
        }
    }
    if let Some(key) = child(node, "key") {
        let fifths = child_number(key, "fifths");
        if let Some(f) = fifths
            .filter(|f| !super::super::FIFTHS_RANGE.contains(&(*f as i32)) || f.fract() != 0.0)
        {
            out.warnings.push(format!(
                "musicxml: measure {}: <fifths> {} is outside -7 to 7; key signature ignored",
                out.label,
                shown(f)
            ));
        } else if let Some(fifths) = fifths {
            let mode = match child_text(key, "mode") {
                Some("major") => KeyMode::Major,
                Some("minor") => KeyMode::Minor,
                _ => KeyMode::Unknown,
            };
            let concert = concert_fifths(fifths as i32, state.transpose.1);
            out.keys.push((cursor, concert, mode));
        }
    }
    if let Some(time) = child(node, "time").filter(|t| child(*t, "senza-misura").is_none()) {
        match time_signature(time) {
            Some((n, d)) if n <= MAX_BEATS => out.time.push((cursor, n, d)),
            found => out.warnings.push(format!(
                "musicxml: measure {}: {} is not a usable time signature (at most {MAX_BEATS} beats of a unit from 1 to 128); ignored",
                out.label,
                found.map_or_else(|| "<time>".to_string(), |(n, d)| format!("{n}/{d}"))
            )),
        }
    }
}

/// Key signature at concert pitch: each chromatic semitone of transposition moves the key by
/// 7 fifths (mod 12), normalised to −6…+6 (common practice).
fn concert_fifths(written: i32, chromatic: f64) -> i32 {
    let shift = chromatic.round() as i32;
    if shift == 0 {
        return written;
    }
    let f = (written + 7 * shift).rem_euclid(12);
    if f > 6 {
        f - 12
    } else {
        f
    }
}

/// A time signature as (numerator, denominator); additive numerators (`3+2`) are summed and
/// composite signatures (`3/8 + 2/4`) brought to the largest denominator.
fn time_signature(time: Node) -> Option<(u32, u32)> {
    let beats: Vec<&str> = time
        .children()
        .filter(|c| c.has_tag_name("beats"))
        .filter_map(|c| c.text())
        .collect();
    let types: Vec<u32> = time
        .children()
        .filter(|c| c.has_tag_name("beat-type"))
        .filter_map(|c| c.text()?.trim().parse::<u32>().ok())
        .filter(|&d| d > 0 && d <= 128)
        .collect();
    if beats.is_empty() || beats.len() != types.len() {
        return None;
    }
    let denominator = *types.iter().max()?;
    let mut numerator = 0u32;
    for (b, t) in beats.iter().zip(&types) {
        let count: u32 = b
            .split('+')
            .map(|p| p.trim().parse::<u32>().ok())
            .sum::<Option<u32>>()?;
        numerator = numerator.checked_add(count.checked_mul(denominator / t)?)?;
    }
    (numerator > 0).then_some((numerator, denominator))
}

fn read_note(
    node: Node,
    cursor: &mut i64,
    last_onset: &mut i64,
    state: &PartState,
    out: &mut MeasureContent,
) -> Result<(), Problem> {
    let is_chord = child(node, "chord").is_some();
    let is_grace = child(node, "grace").is_some();
    let is_cue = child(node, "cue").is_some();
    let onset = if is_chord { *last_onset } else { *cursor };
    let spelling = child(node, "pitch").and_then(|p| {
        Some(Spelling {
            step: Step::parse(child_text(p, "step")?)?,
            alter: child_number(p, "alter").unwrap_or(0.0),
            octave: child_text(p, "octave")?.parse().ok()?,
        })
    });
    // MIDI note numbers run 0-127 (MIDI 1.0 Detailed Specification, Note On); a pitch that
    // sounds outside them after transposition is as unusable as an octave outside 0-9.
    let sounding = |s: &Spelling| s.transposed(state.transpose.0, state.transpose.1).midi();
    let absurd = spelling.is_some_and(|s| {
        !OCTAVES.contains(&s.octave)
            || s.alter.abs() > MAX_ALTER
            || !(0.0..=127.0).contains(&sounding(&s))
    });
    if let Some(s) = spelling.filter(|_| absurd) {
        out.warnings.push(format!(
            "musicxml: measure {}: a pitch with <octave> {} and <alter> {} is outside octaves {OCTAVES:?}, alterations of {MAX_ALTER} semitones or sounding MIDI notes 0-127; note skipped",
            out.label,
            s.octave,
            shown(s.alter)
        ));
    }
    let spelling = spelling.filter(|_| !absurd);
    if is_grace {
        if let Some(spelling) = spelling {
            out.graces.push(PendingGrace {
                offset: onset,
                spelling,
                transpose: state.transpose,
            });
        }
        return Ok(());
    }
    let duration = match child_number(node, "duration") {
        Some(d) => state.ticks(d, &out.label)?.max(0),
        None => {
            let guessed = duration_from_type(node, state.resolution);
            out.warnings.push(format!(
                "musicxml: measure {}: a note without <duration>; length taken from its <type>",
                out.label
            ));
            guessed
        }
    };
    if !is_chord {
        *last_onset = *cursor;
        *cursor = cursor.saturating_add(duration);
    }
    out.length = out.length.max(*cursor).max(onset.saturating_add(duration));
    if child(node, "rest").is_none() {
        out.sounding_end = out.sounding_end.max(onset.saturating_add(duration));
    }
    if is_cue {
        return Ok(());
    }
    if child(node, "unpitched").is_some() {
        out.unpitched += 1;
        return Ok(());
    }
    let Some(spelling) = spelling else {
        if !absurd && child(node, "rest").is_none() && child(node, "pitch").is_some() {
            out.warnings.push(format!(
                "musicxml: measure {}: a <pitch> without a usable step and octave; note skipped",
                out.label
            ));
        }
        return Ok(());
    };
    let (mut tie_start, mut tie_stop) = (false, false);
    let mut saw_tie = false;
    for tie in node.children().filter(|c| c.has_tag_name("tie")) {
        saw_tie = true;
        match tie.attribute("type") {
            Some("start") => tie_start = true,
            Some("stop") => tie_stop = true,
            _ => {}
        }
    }
    if !saw_tie {
        for tied in node
            .children()
            .filter(|c| c.has_tag_name("notations"))
            .flat_map(|n| n.children())
            .filter(|c| c.has_tag_name("tied"))
        {
            match tied.attribute("type") {
                Some("start") => tie_start = true,
                Some("stop") => tie_stop = true,
                Some("continue") => {
                    tie_start = true;
                    tie_stop = true;
                }
                _ => {}
            }
        }
    }
    let staff = child_text(node, "staff")
        .and_then(|t| t.parse::<u8>().ok())
        .unwrap_or(1);
    out.notes.push(PendingNote {
        offset: onset,
        duration,
        spelling,
        voice: child_text(node, "voice").map(str::to_string),
        staff,
        lyric: lyric_of(node),
        tie_start,
        tie_stop,
        transpose: state.transpose,
    });
    Ok(())
}

/// Length from `<type>`, dots and `<time-modification>`, for notes missing `<duration>`.
fn duration_from_type(node: Node, resolution: u32) -> i64 {
    let base = match child_text(node, "type") {
        Some("maxima") => 32.0,
        Some("long") => 16.0,
        Some("breve") => 8.0,
        Some("whole") => 4.0,
        Some("half") => 2.0,
        Some("quarter") => 1.0,
        Some("eighth") => 0.5,
        Some("16th") => 0.25,
        Some("32nd") => 0.125,
        Some("64th") => 0.0625,
        Some("128th") => 0.03125,
        Some("256th") => 0.015625,
        _ => 0.0,
    };
    let dots = node.children().filter(|c| c.has_tag_name("dot")).count() as i32;
    let dotted = base * (2.0 - 0.5f64.powi(dots));
    let ratio = child(node, "time-modification")
        .and_then(|t| Some(child_number(t, "normal-notes")? / child_number(t, "actual-notes")?))
        .filter(|r| r.is_finite() && *r > 0.0)
        .unwrap_or(1.0);
    (dotted * ratio * f64::from(resolution)).round() as i64
}

/// The first verse's syllable: `<lyric>` numbered 1 (or the first), its `<text>` parts joined,
/// with a trailing hyphen when the word continues (`syllabic` begin or middle).
fn lyric_of(node: Node) -> Option<String> {
    let lyrics: Vec<Node> = node
        .children()
        .filter(|c| c.has_tag_name("lyric"))
        .collect();
    let lyric = lyrics
        .iter()
        .find(|l| l.attribute("number").is_none_or(|n| n == "1"))
        .or(lyrics.first())?;
    let text: Vec<&str> = lyric
        .children()
        .filter(|c| c.has_tag_name("text"))
        .filter_map(|c| c.text())
        .collect();
    if text.is_empty() {
        return None;
    }
    let mut syllable = text.join("_");
    let continues = lyric
        .children()
        .filter(|c| c.has_tag_name("syllabic"))
        .filter_map(|c| c.text())
        .any(|s| s.trim() == "begin" || s.trim() == "middle");
    if continues {
        syllable.push('-');
    }
    Some(syllable)
}

fn read_direction(
    node: Node,
    cursor: i64,
    state: &PartState,
    out: &mut MeasureContent,
) -> Result<(), Problem> {
    let sounding_offset = match (child_number(node, "offset"), child(node, "offset")) {
        (Some(d), Some(o)) if o.attribute("sound") == Some("yes") => state.ticks(d, &out.label)?,
        _ => 0,
    };
    let position = (cursor + sounding_offset).max(0);
    let mut had_sound_tempo = false;
    if let Some(sound) = child(node, "sound") {
        had_sound_tempo = sound.attribute("tempo").is_some();
        read_sound(sound, position, out);
    }
    if !had_sound_tempo {
        let metronome = node
            .children()
            .filter(|c| c.has_tag_name("direction-type"))
            .find_map(|d| child(d, "metronome"));
        if let Some(bpm) = metronome.and_then(metronome_quarters_per_minute) {
            out.tempos.push((position, bpm));
        }
    }
    if let Some(&(_, bpm)) = out.tempos.last().filter(|(at, _)| *at == position) {
        if !super::super::TEMPO_RANGE.contains(&bpm) {
            out.tempos.pop();
            out.warnings.push(format!(
                "musicxml: measure {}: tempo {} quarter notes per minute is outside {:?}; ignored",
                out.label,
                shown(bpm),
                super::super::TEMPO_RANGE
            ));
        }
    }
    Ok(())
}

/// `<sound tempo>` is in quarter notes per minute (MusicXML 4.0), checked against
/// [`super::super::TEMPO_RANGE`] by the caller; also notes jumps.
fn read_sound(node: Node, position: i64, out: &mut MeasureContent) {
    if let Some(bpm) = node
        .attribute("tempo")
        .and_then(|t| t.trim().parse::<f64>().ok())
    {
        out.tempos.push((position, bpm));
    }
    for jump in ["dacapo", "dalsegno", "tocoda", "segno", "coda", "fine"] {
        if node.attribute(jump).is_some() {
            out.repeats.jumps.push(jump.to_string());
        }
    }
}

/// A metronome mark as quarter notes per minute: per-minute × the beat unit in quarters.
fn metronome_quarters_per_minute(node: Node) -> Option<f64> {
    let unit = match child_text(node, "beat-unit")? {
        "whole" => 4.0,
        "half" => 2.0,
        "quarter" => 1.0,
        "eighth" => 0.5,
        "16th" => 0.25,
        _ => return None,
    };
    let dots = node
        .children()
        .filter(|c| c.has_tag_name("beat-unit-dot"))
        .count() as i32;
    let per_minute: f64 = child_text(node, "per-minute")?
        .trim_start_matches(['c', '.', ' ', '~'])
        .parse()
        .ok()?;
    let quarters = per_minute * unit * (2.0 - 0.5f64.powi(dots));
    // Out-of-range values are refused with a warning by the caller.
    Some(quarters)
}

fn read_barline(node: Node, marks: &mut RepeatMarks) {
    if let Some(repeat) = child(node, "repeat") {
        match repeat.attribute("direction") {
            Some("forward") => marks.forward = true,
            Some("backward") => {
                let times = repeat
                    .attribute("times")
                    .and_then(|t| t.trim().parse::<u32>().ok())
                    .filter(|&t| t >= 1)
                    .unwrap_or(2);
                marks.backward = Some(times.min(16));
            }
            _ => {}
        }
    }
    if let Some(ending) = child(node, "ending") {
        match ending.attribute("type") {
            Some("start") => {
                let numbers: Vec<u32> = ending
                    .attribute("number")
                    .unwrap_or("")
                    .split(|c: char| c == ',' || c.is_whitespace())
                    .filter_map(|n| n.trim().trim_end_matches('.').parse().ok())
                    .collect();
                marks.ending_start = Some(numbers);
            }
            Some("stop") | Some("discontinue") => marks.ending_stop = true,
            _ => {}
        }
    }
}

/// A chord symbol as text, root and bass moved to concert pitch: `Dm7`, `G7/B`, `C(add9)`.
fn chord_symbol(node: Node, transpose: (i32, f64)) -> Option<String> {
    let note_name = |parent: Node, step_tag: &str, alter_tag: &str| -> Option<String> {
        let step = Step::parse(child_text(parent, step_tag)?)?;
        let written = Spelling {
            step,
            alter: child_number(parent, alter_tag).unwrap_or(0.0),
            octave: 4,
        };
        let s = written.transposed(transpose.0, transpose.1);
        let name = s.name();
        Some(
            name.trim_end_matches(|c: char| c.is_ascii_digit() || c == '-')
                .to_string(),
        )
    };
    let kind_node = child(node, "kind");
    if kind_node.and_then(|k| k.text()).map(str::trim) == Some("none") {
        return Some("N.C.".into());
    }
    let root = child(node, "root").and_then(|r| note_name(r, "root-step", "root-alter"))?;
    let suffix = match kind_node.and_then(|k| k.attribute("text")) {
        Some(text) => text.to_string(),
        None => crate::theory::kind_suffix(kind_node.and_then(|k| k.text()).map_or("", str::trim))
            .to_string(),
    };
    let mut text = format!("{root}{suffix}");
    for degree in node.children().filter(|c| c.has_tag_name("degree")) {
        let value = child_text(degree, "degree-value").unwrap_or("");
        let alter = child_number(degree, "degree-alter").unwrap_or(0.0);
        let accidental = if alter > 0.0 {
            "#"
        } else if alter < 0.0 {
            "b"
        } else {
            ""
        };
        match child_text(degree, "degree-type") {
            Some("add") => text.push_str(&format!("(add{accidental}{value})")),
            Some("subtract") => text.push_str(&format!("(omit{value})")),
            _ => text.push_str(&format!("({accidental}{value})")),
        }
    }
    if let Some(bass) = child(node, "bass").and_then(|b| note_name(b, "bass-step", "bass-alter")) {
        text.push('/');
        text.push_str(&bass);
    }
    Some(text)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn concert_key_of_b_flat_clarinet() {
        // A B-flat instrument sounds a major second lower (chromatic −2): written D major
        // (2 sharps) sounds C major (common practice).
        assert_eq!(concert_fifths(2, -2.0), 0);
        // An F horn sounds a perfect fifth lower (−7): written G major sounds C major.
        assert_eq!(concert_fifths(1, -7.0), 0);
        // An E-flat alto sax sounds a major sixth lower (−9): written A major sounds C major.
        assert_eq!(concert_fifths(3, -9.0), 0);
    }
}

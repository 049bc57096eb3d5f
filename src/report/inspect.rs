//! The `inspect` report: what a file holds and the melody read from it, as a human listing or
//! as JSON (schema documented in `docs/inspect-json.md`).

use crate::theory::{key_name, pitch_name};
use crate::timeline::{Note, Piece};
use serde::Serialize;

/// Version of the JSON layout below; bumped on any incompatible change.
pub const INSPECT_SCHEMA_VERSION: u32 = 1;

/// The JSON record of `collatio inspect`.
#[derive(Debug, Serialize)]
pub struct InspectRecord {
    /// Layout version.
    pub schema_version: u32,
    /// Tool name and version.
    pub tool: ToolInfo,
    /// Where the data came from.
    pub source: crate::timeline::Provenance,
    /// Title, when the file has one.
    pub title: Option<String>,
    /// Composer, when the file has one.
    pub composer: Option<String>,
    /// Pitches are at concert pitch (always true; transposing parts are converted).
    pub concert_pitch: bool,
    /// Read in performance order (repeats and endings played out).
    pub performance_order: bool,
    /// Every part or track.
    pub parts: Vec<PartSummary>,
    /// What was chosen as the melody and why.
    pub selection: SelectionRecord,
    /// Every candidate line considered for the melody, most melody-like first, with its
    /// melody-likeness and the statistics it rests on.
    pub candidates: Vec<CandidateRecord>,
    /// Bars in timeline order.
    pub bars: Vec<BarRecord>,
    /// Tempo changes.
    pub tempo: Vec<TempoRecord>,
    /// Time signatures.
    pub time_signatures: Vec<TimeSignatureRecord>,
    /// Key signatures at concert pitch.
    pub key_signatures: Vec<KeyRecord>,
    /// Chord symbols.
    pub chord_symbols: Vec<ChordRecord>,
    /// Grace notes and other notes kept out of the melody.
    pub ornaments: Vec<OrnamentRecord>,
    /// The chosen melody.
    pub notes: Vec<NoteRecord>,
    /// Warnings met while reading.
    pub warnings: Vec<String>,
}

/// Tool identity.
#[derive(Debug, Serialize)]
pub struct ToolInfo {
    /// `collatio`.
    pub name: &'static str,
    /// Crate version.
    pub version: &'static str,
}

/// One part or track.
#[derive(Debug, Serialize)]
pub struct PartSummary {
    /// Identifier for selection.
    pub id: String,
    /// Name from the file.
    pub name: String,
    /// Instrument.
    pub instrument: String,
    /// MIDI track (1-based).
    pub track: Option<u32>,
    /// MIDI channel (1–16).
    pub channel: Option<u8>,
    /// Percussion part.
    pub percussion: bool,
    /// Written-to-sounding transposition in semitones.
    pub transposition_semitones: i32,
    /// Staves.
    pub staves: u8,
    /// Voices.
    pub voices: Vec<String>,
    /// Number of notes (each chord tone counts; tied notes count once; grace notes excluded).
    pub note_count: usize,
    /// Lowest note, name.
    pub lowest: Option<String>,
    /// Highest note, name.
    pub highest: Option<String>,
}

/// The melody selection.
#[derive(Debug, Serialize)]
pub struct SelectionRecord {
    /// Part id.
    pub part: String,
    /// Staff restriction.
    pub staff: Option<u8>,
    /// Voice restriction.
    pub voice: Option<String>,
    /// Bar range (first and last label).
    pub bars: Option<[String; 2]>,
    /// Chords reduced to the top note.
    pub skyline: bool,
    /// Why.
    pub reason: String,
}

/// One candidate melody line.
#[derive(Debug, Serialize)]
pub struct CandidateRecord {
    /// Part id.
    pub part: String,
    /// Staff, when the line is one staff of its part.
    pub staff: Option<u8>,
    /// Voice, when the line is one voice of its part.
    pub voice: Option<String>,
    /// Part, staff and voice in words.
    pub label: String,
    /// Notes of the top-voice line.
    pub notes: usize,
    /// Melody-likeness in [0, 1].
    pub likeness: f64,
    /// The statistics of the line (see `docs/melody-choice.md`).
    pub features: crate::timeline::LineFeatures,
}

/// One bar.
#[derive(Debug, Serialize)]
pub struct BarRecord {
    /// Ordinal.
    pub index: usize,
    /// Label as printed.
    pub label: String,
    /// Start in quarter notes.
    pub start_beats: f64,
    /// Start in seconds.
    pub start_seconds: f64,
    /// Length in quarter notes.
    pub length_beats: f64,
    /// Time signature, e.g. `6/8`.
    pub time_signature: String,
    /// Pickup bar.
    pub pickup: bool,
    /// Not counted in the numbering.
    pub implicit: bool,
}

/// A tempo change.
#[derive(Debug, Serialize)]
pub struct TempoRecord {
    /// Bar label.
    pub bar: String,
    /// Position in quarter notes.
    pub onset_beats: f64,
    /// Quarter notes per minute.
    pub bpm: f64,
}

/// A time signature.
#[derive(Debug, Serialize)]
pub struct TimeSignatureRecord {
    /// Bar label.
    pub bar: String,
    /// Position in quarter notes.
    pub onset_beats: f64,
    /// E.g. `3/4`.
    pub signature: String,
}

/// A key signature.
#[derive(Debug, Serialize)]
pub struct KeyRecord {
    /// Bar label.
    pub bar: String,
    /// Position in quarter notes.
    pub onset_beats: f64,
    /// Sharps (+) or flats (−).
    pub fifths: i32,
    /// `major`, `minor` or `unknown`.
    pub mode: crate::theory::KeyMode,
    /// E.g. `D major`.
    pub name: String,
}

/// A chord symbol.
#[derive(Debug, Serialize)]
pub struct ChordRecord {
    /// Bar label.
    pub bar: String,
    /// Beat within the bar (1-based, in the time signature's unit).
    pub beat: f64,
    /// Position in quarter notes.
    pub onset_beats: f64,
    /// Symbol text.
    pub text: String,
    /// Part id.
    pub part: String,
}

/// An ornament.
#[derive(Debug, Serialize)]
pub struct OrnamentRecord {
    /// Kind.
    pub kind: String,
    /// Bar label.
    pub bar: String,
    /// Position in quarter notes.
    pub onset_beats: f64,
    /// MIDI pitch.
    pub midi: f64,
    /// Pitch name.
    pub name: String,
    /// Part id.
    pub part: String,
}

/// One melody note.
#[derive(Debug, Serialize)]
pub struct NoteRecord {
    /// Bar label as printed.
    pub bar: String,
    /// Bar ordinal.
    pub bar_index: usize,
    /// Beat within the bar, 1-based, in the time signature's unit.
    pub beat: f64,
    /// MIDI pitch (concert).
    pub midi: f64,
    /// Name in scientific pitch notation, as spelled by the source where it spells.
    pub name: String,
    /// Onset in quarter notes.
    pub onset_beats: f64,
    /// Duration in quarter notes.
    pub duration_beats: f64,
    /// Onset in seconds.
    pub onset_seconds: f64,
    /// Duration in seconds.
    pub duration_seconds: f64,
    /// Voice.
    pub voice: Option<String>,
    /// Staff.
    pub staff: u8,
    /// Lyric syllable.
    pub lyric: Option<String>,
}

fn bar_label(piece: &Piece, index: usize) -> String {
    piece
        .bars
        .get(index)
        .map_or_else(String::new, |b| b.label.clone())
}

fn note_name(note: &Note) -> String {
    match &note.spelling {
        Some(s) => s.name(),
        None => pitch_name(note.pitch.0),
    }
}

/// Builds the record for a piece.
pub fn record(piece: &Piece) -> InspectRecord {
    let part_id = |i: usize| {
        piece
            .parts
            .get(i)
            .map_or_else(String::new, |p| p.id.clone())
    };
    let beats = |ticks: i64| piece.tempo.beats_at(ticks).0;
    InspectRecord {
        schema_version: INSPECT_SCHEMA_VERSION,
        tool: ToolInfo {
            name: "collatio",
            version: env!("CARGO_PKG_VERSION"),
        },
        source: piece.provenance.clone(),
        title: piece.title.clone(),
        composer: piece.composer.clone(),
        concert_pitch: true,
        performance_order: piece.repeats_unfolded,
        parts: piece
            .parts
            .iter()
            .map(|p| {
                let low = p
                    .notes
                    .iter()
                    .min_by(|a, b| a.pitch.0.total_cmp(&b.pitch.0));
                let high = p
                    .notes
                    .iter()
                    .max_by(|a, b| a.pitch.0.total_cmp(&b.pitch.0));
                PartSummary {
                    id: p.id.clone(),
                    name: p.name.clone(),
                    instrument: p.instrument.clone(),
                    track: p.track,
                    channel: p.channel,
                    percussion: p.percussion,
                    transposition_semitones: p.transposition,
                    staves: p.staves,
                    voices: p.voices.clone(),
                    note_count: p.notes.len(),
                    lowest: low.map(note_name),
                    highest: high.map(note_name),
                }
            })
            .collect(),
        selection: SelectionRecord {
            part: part_id(piece.selection.part),
            staff: piece.selection.staff,
            voice: piece.selection.voice.clone(),
            bars: piece.selection.bars.clone().map(|(a, b)| [a, b]),
            skyline: piece.selection.skyline,
            reason: piece.selection.reason.clone(),
        },
        candidates: piece
            .candidates
            .iter()
            .map(|c| CandidateRecord {
                part: part_id(c.selection.part),
                staff: c.selection.staff,
                voice: c.selection.voice.clone(),
                label: c.label.clone(),
                notes: c.melody.len(),
                likeness: c.likeness,
                features: c.features,
            })
            .collect(),
        bars: piece
            .bars
            .iter()
            .map(|b| BarRecord {
                index: b.index,
                label: b.label.clone(),
                start_beats: b.start.0,
                start_seconds: b.start_seconds.0,
                length_beats: beats(b.length_ticks),
                time_signature: format!("{}/{}", b.time_signature.0, b.time_signature.1),
                pickup: b.pickup,
                implicit: b.implicit,
            })
            .collect(),
        tempo: piece
            .tempo
            .changes
            .iter()
            .map(|c| TempoRecord {
                bar: bar_label(piece, piece.bar_at(c.ticks)),
                onset_beats: beats(c.ticks),
                bpm: c.bpm(),
            })
            .collect(),
        time_signatures: piece
            .time_signatures
            .iter()
            .map(|t| TimeSignatureRecord {
                bar: bar_label(piece, piece.bar_at(t.ticks)),
                onset_beats: beats(t.ticks),
                signature: format!("{}/{}", t.numerator, t.denominator),
            })
            .collect(),
        key_signatures: piece
            .key_signatures
            .iter()
            .map(|k| KeyRecord {
                bar: bar_label(piece, piece.bar_at(k.ticks)),
                onset_beats: beats(k.ticks),
                fifths: k.fifths,
                mode: k.mode,
                name: key_name(k.fifths, k.mode),
            })
            .collect(),
        chord_symbols: piece
            .chord_symbols
            .iter()
            .map(|c| {
                let bar = piece.bars.get(c.bar);
                let offset = bar.map_or(0, |b| c.ticks - b.start_ticks);
                let unit = bar.map_or(4, |b| b.time_signature.1.max(1));
                ChordRecord {
                    bar: bar_label(piece, c.bar),
                    beat: 1.0 + beats(offset) * f64::from(unit) / 4.0,
                    onset_beats: c.onset.0,
                    text: c.text.clone(),
                    part: part_id(c.part),
                }
            })
            .collect(),
        ornaments: piece
            .ornaments
            .iter()
            .map(|o| OrnamentRecord {
                kind: o.kind.clone(),
                bar: bar_label(piece, o.bar),
                onset_beats: o.onset.0,
                midi: o.pitch.0,
                name: pitch_name(o.pitch.0),
                part: part_id(o.part),
            })
            .collect(),
        notes: piece
            .melody
            .iter()
            .map(|n| NoteRecord {
                bar: bar_label(piece, n.bar),
                bar_index: n.bar,
                beat: piece.beat_in_bar(n),
                midi: n.pitch.0,
                name: note_name(n),
                onset_beats: n.onset.0,
                duration_beats: n.duration.0,
                onset_seconds: n.onset_seconds.0,
                duration_seconds: n.duration_seconds.0,
                voice: n.voice.clone(),
                staff: n.staff,
                lyric: n.lyric.clone(),
            })
            .collect(),
        warnings: piece.warnings.clone(),
    }
}

/// Formats a number of beats compactly: `1`, `0.5`, `0.333`.
fn short(value: f64) -> String {
    let text = format!("{value:.3}");
    let text = text.trim_end_matches('0').trim_end_matches('.');
    if text == "-0" {
        "0".into()
    } else {
        text.to_string()
    }
}

/// The human listing: header, parts, selection, then the melody bar by bar.
pub fn render_text(piece: &Piece) -> String {
    let r = record(piece);
    let mut out = String::new();
    let line = |out: &mut String, key: &str, value: &str| {
        out.push_str(&format!("{key:<11}{value}\n"));
    };
    line(&mut out, "file", &r.source.path);
    line(
        &mut out,
        "format",
        &format!(
            "{} ({})",
            piece.provenance.format.describe(),
            r.source.detail
        ),
    );
    line(&mut out, "size", &format!("{} bytes", r.source.bytes));
    line(&mut out, "sha-256", &r.source.sha256);
    if let Some(t) = &r.title {
        line(&mut out, "title", t);
    }
    if let Some(c) = &r.composer {
        line(&mut out, "composer", c);
    }
    let listing = |items: Vec<String>| {
        if items.is_empty() {
            "none given".to_string()
        } else {
            items.join(", ")
        }
    };
    line(
        &mut out,
        "tempo",
        &listing(
            r.tempo
                .iter()
                .map(|t| format!("{} bpm from bar {}", short(t.bpm), t.bar))
                .collect(),
        ),
    );
    line(
        &mut out,
        "meter",
        &listing(
            r.time_signatures
                .iter()
                .map(|t| format!("{} from bar {}", t.signature, t.bar))
                .collect(),
        ),
    );
    line(
        &mut out,
        "key",
        &listing(
            r.key_signatures
                .iter()
                .map(|k| format!("{} from bar {}", k.name, k.bar))
                .collect(),
        ),
    );
    let first = r.bars.first().map_or("", |b| b.label.as_str());
    let last = r.bars.last().map_or("", |b| b.label.as_str());
    line(
        &mut out,
        "bars",
        &format!(
            "{} ({first} to {last}{}{})",
            r.bars.len(),
            if r.bars.first().is_some_and(|b| b.pickup) {
                ", opening with a pickup"
            } else {
                ""
            },
            if r.performance_order {
                ", in performance order"
            } else {
                ", written order"
            }
        ),
    );
    line(&mut out, "pitch", "concert pitch, C4 = MIDI 60 = middle C");
    out.push('\n');
    out.push_str("parts\n");
    out.push_str(&format!(
        "  {:<14} {:<22} {:>6}  {:<9}  {}\n",
        "id", "name", "notes", "range", "remarks"
    ));
    for p in &r.parts {
        let mut remarks = Vec::new();
        if p.percussion {
            remarks.push("percussion".to_string());
        }
        if p.transposition_semitones != 0 {
            remarks.push(format!(
                "transposing ({:+} semitones written to sounding)",
                p.transposition_semitones
            ));
        }
        if p.voices.len() > 1 {
            remarks.push(format!("voices {}", p.voices.join(",")));
        }
        if p.staves > 1 {
            remarks.push(format!("{} staves", p.staves));
        }
        if !p.instrument.is_empty() {
            remarks.push(p.instrument.clone());
        }
        let range = match (&p.lowest, &p.highest) {
            (Some(l), Some(h)) => format!("{l}-{h}"),
            _ => "-".into(),
        };
        let name: String = p.name.chars().take(22).collect();
        out.push_str(&format!(
            "  {:<14} {:<22} {:>6}  {:<9}  {}\n",
            p.id,
            name,
            p.note_count,
            range,
            remarks.join("; ")
        ));
    }
    out.push('\n');
    line(&mut out, "melody", &r.selection.reason);
    if r.candidates.len() > 1 {
        let others: Vec<String> = r
            .candidates
            .iter()
            .skip(1)
            .map(|c| format!("{} {:.2}", c.label, c.likeness))
            .collect();
        line(
            &mut out,
            "",
            &format!(
                "other candidate lines (melody-likeness): {}",
                others.join("; ")
            ),
        );
    }
    line(&mut out, "", &format!("{} notes", r.notes.len()));
    out.push('\n');
    out.push_str(&format!(
        "  {:<6} {:>6}  {:<8} {:>7} {:>9} {:>9}  {}\n",
        "bar", "beat", "pitch", "beats", "onset s", "length s", "lyric"
    ));
    let mut previous_bar: Option<usize> = None;
    for n in &r.notes {
        let chords: Vec<&str> = r
            .chord_symbols
            .iter()
            .filter(|c| c.bar == n.bar && (c.onset_beats - n.onset_beats).abs() < 1e-9)
            .map(|c| c.text.as_str())
            .collect();
        let bar = if previous_bar == Some(n.bar_index) {
            String::new()
        } else {
            n.bar.clone()
        };
        previous_bar = Some(n.bar_index);
        let mut extra = n.lyric.clone().unwrap_or_default();
        if !chords.is_empty() {
            if !extra.is_empty() {
                extra.push_str("  ");
            }
            extra.push_str(&format!("[{}]", chords.join(" ")));
        }
        out.push_str(&format!(
            "  {:<6} {:>6}  {:<8} {:>7} {:>9.3} {:>9.3}  {}\n",
            bar,
            short(n.beat),
            n.name,
            short(n.duration_beats),
            n.onset_seconds,
            n.duration_seconds,
            extra
        ));
    }
    if !r.ornaments.is_empty() {
        out.push('\n');
        line(
            &mut out,
            "ornaments",
            &format!(
                "{} grace notes kept out of the melody: {}",
                r.ornaments.len(),
                r.ornaments
                    .iter()
                    .take(12)
                    .map(|o| format!("{} in bar {}", o.name, o.bar))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        );
    }
    if !r.warnings.is_empty() {
        out.push('\n');
        out.push_str("warnings\n");
        for w in crate::report::warnings::summarise(&r.warnings) {
            out.push_str(&format!("  {w}\n"));
        }
    }
    out
}

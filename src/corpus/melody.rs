//! A corpus melody in and out of its slim stored form: notes, bars and key, enough to align a
//! hit and report it in its own bars without the original file.

use crate::theory::KeyMode;
use crate::timeline::{
    Bar, Format, KeySignature, Note, Part, Piece, Provenance, Selection, TempoMap,
    DEFAULT_MICROS_PER_QUARTER,
};
use crate::units::{Beats, Seconds};
use serde::{Deserialize, Serialize};

/// Ticks per quarter note of rebuilt pieces.
const RESOLUTION: u32 = 960;

/// A note as the index keeps it.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct StoredNote {
    /// MIDI pitch.
    pub pitch: f32,
    /// Onset, quarter notes.
    pub onset: f32,
    /// Duration, quarter notes.
    pub duration: f32,
    /// Onset, seconds.
    pub onset_seconds: f32,
    /// Duration, seconds.
    pub duration_seconds: f32,
    /// Bar ordinal.
    pub bar: u32,
    /// Position in the bar, quarter notes.
    pub offset_in_bar: f32,
}

/// A bar as the index keeps it.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct StoredBar {
    /// Label as printed.
    pub label: String,
    /// Start, quarter notes.
    pub start: f32,
    /// Start, seconds.
    pub start_seconds: f32,
    /// Length, quarter notes.
    pub length: f32,
    /// Time signature.
    pub time_signature: (u32, u32),
    /// Pickup bar.
    pub pickup: bool,
}

/// One melody of the corpus.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct MelodyEntry {
    /// Path as found under the corpus folder (relative).
    pub path: String,
    /// SHA-256 of the file.
    pub sha256: String,
    /// Title from the file.
    pub title: Option<String>,
    /// The line the melody came from: its candidate line's label (part id and name, staff and
    /// voice, as `inspect` lists candidates), or the part id when the piece offered no
    /// candidates. Indexes built before several lines were indexed per file hold the part
    /// id; the field's place and type are unchanged, so they still read.
    pub part: String,
    /// The melody.
    pub notes: Vec<StoredNote>,
    /// The bar grid.
    pub bars: Vec<StoredBar>,
    /// First key signature (fifths, minor).
    pub key: Option<(i32, bool)>,
}

impl MelodyEntry {
    /// The slim form of a piece's melody, named by its part id.
    pub fn from_piece(piece: &Piece, path: String) -> MelodyEntry {
        let part = piece
            .parts
            .get(piece.selection.part)
            .map_or_else(String::new, |p| p.id.clone());
        MelodyEntry::from_line(piece, path, part, &piece.melody)
    }

    /// The slim forms of a piece's first `limit` candidate lines (at least one), most
    /// melody-like first, each named by its candidate's label; a piece without candidates
    /// (a recording) gives its melody, named by its part id. A file whose tune is its second
    /// or third most melody-like line is then found by a search through that line.
    pub fn lines_of(piece: &Piece, path: &str, limit: usize) -> Vec<MelodyEntry> {
        if piece.candidates.is_empty() {
            return vec![MelodyEntry::from_piece(piece, path.to_string())];
        }
        piece
            .candidates
            .iter()
            .take(limit.max(1))
            .map(|c| MelodyEntry::from_line(piece, path.to_string(), c.label.clone(), &c.melody))
            .collect()
    }

    /// The slim form of one line of a piece (its notes as the melody, with the piece's bars
    /// and first key).
    fn from_line(piece: &Piece, path: String, part: String, melody: &[Note]) -> MelodyEntry {
        let beats = |ticks: i64| piece.tempo.beats_at(ticks).0 as f32;
        MelodyEntry {
            path,
            sha256: piece.provenance.sha256.clone(),
            title: piece.title.clone(),
            part,
            notes: melody
                .iter()
                .map(|n| StoredNote {
                    pitch: n.pitch.0 as f32,
                    onset: n.onset.0 as f32,
                    duration: n.duration.0 as f32,
                    onset_seconds: n.onset_seconds.0 as f32,
                    duration_seconds: n.duration_seconds.0 as f32,
                    bar: n.bar as u32,
                    offset_in_bar: n.offset_in_bar.0 as f32,
                })
                .collect(),
            bars: piece
                .bars
                .iter()
                .map(|b| StoredBar {
                    label: b.label.clone(),
                    start: b.start.0 as f32,
                    start_seconds: b.start_seconds.0 as f32,
                    length: beats(b.length_ticks),
                    time_signature: b.time_signature,
                    pickup: b.pickup,
                })
                .collect(),
            key: piece
                .key_signatures
                .first()
                .map(|k| (k.fifths, k.mode == KeyMode::Minor)),
        }
    }

    /// A piece holding this melody, for alignment and reporting in its own bars.
    pub fn to_piece(&self) -> Piece {
        let ticks = |beats: f32| (f64::from(beats) * f64::from(RESOLUTION)).round() as i64;
        let melody: Vec<Note> = self
            .notes
            .iter()
            .map(|n| Note {
                onset: Beats(f64::from(n.onset)),
                duration: Beats(f64::from(n.duration)),
                onset_seconds: Seconds(f64::from(n.onset_seconds)),
                duration_seconds: Seconds(f64::from(n.duration_seconds)),
                bar: n.bar as usize,
                offset_in_bar: Beats(f64::from(n.offset_in_bar)),
                ..Note::at_ticks(ticks(n.onset), ticks(n.duration), f64::from(n.pitch))
            })
            .collect();
        let bars = self
            .bars
            .iter()
            .enumerate()
            .map(|(index, b)| Bar {
                index,
                label: b.label.clone(),
                start_ticks: ticks(b.start),
                length_ticks: ticks(b.length),
                start: Beats(f64::from(b.start)),
                start_seconds: Seconds(f64::from(b.start_seconds)),
                time_signature: b.time_signature,
                pickup: b.pickup,
                implicit: false,
                estimated: false,
            })
            .collect();
        Piece {
            provenance: Provenance {
                path: self.path.clone(),
                opened: self.path.clone().into(),
                bytes: 0,
                sha256: self.sha256.clone(),
                format: Format::IndexedMelody,
                detail: "melody from a corpus index".into(),
            },
            title: self.title.clone(),
            composer: None,
            resolution: RESOLUTION,
            parts: vec![Part::single_line(
                self.part.clone(),
                String::new(),
                melody.clone(),
            )],
            bars,
            tempo: TempoMap::new(
                RESOLUTION,
                vec![crate::timeline::TempoChange {
                    ticks: 0,
                    micros_per_quarter: DEFAULT_MICROS_PER_QUARTER,
                }],
            ),
            time_signatures: Vec::new(),
            key_signatures: self
                .key
                .map(|(fifths, minor)| KeySignature {
                    ticks: 0,
                    fifths,
                    mode: if minor {
                        KeyMode::Minor
                    } else {
                        KeyMode::Major
                    },
                })
                .into_iter()
                .collect(),
            chord_symbols: Vec::new(),
            ornaments: Vec::new(),
            repeats_unfolded: false,
            melody,
            selection: Selection::whole_part(0, format!("melody {} of the corpus", self.part)),
            candidates: Vec::new(),
            warnings: Vec::new(),
            chroma: None,
            transcription: None,
            unsure_spans: Vec::new(),
        }
    }
}

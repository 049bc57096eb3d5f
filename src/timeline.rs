//! The common note-and-bar timeline that every input kind is read into.
//!
//! A [`Piece`] holds where the data came from ([`Provenance`]), every part or track found
//! ([`Part`], each with all its notes), the bar grid ([`Bar`]), the tempo map
//! ([`TempoMap`]), key and time signatures, chord symbols, ornaments, the selected melody and
//! the warnings met while reading.
//!
//! Conventions: times are in quarter-note [`Beats`] from the start of the piece and in
//! [`Seconds`] through the tempo map; symbolic inputs also keep exact integer ticks at
//! [`Piece::resolution`] ticks per quarter note, so `onset = onset_ticks / resolution` holds
//! exactly. The first sounding moment of the piece is 0, pickup or not. Pitches are in concert
//! pitch (transposing instruments are transposed to sounding pitch while reading).

use crate::units::{Beats, MidiPitch, Seconds};
use serde::Serialize;

/// Input format, detected from the content.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Format {
    /// Standard MIDI File.
    Midi,
    /// Uncompressed MusicXML.
    MusicXml,
    /// Compressed MusicXML (`.mxl` zip container).
    Mxl,
    /// WAVE audio (RIFF `WAVE`).
    Wav,
    /// FLAC audio (`fLaC`).
    Flac,
    /// MPEG audio layer III (an ID3v2 tag or an MPEG frame sync).
    Mp3,
    /// Ogg container with Vorbis audio (`OggS`).
    OggVorbis,
    /// AAC audio, in an MP4/M4A container (`ftyp`) or as ADTS frames.
    Aac,
    /// AIFF or AIFF-C audio (IFF `FORM` … `AIFF`/`AIFC`).
    Aiff,
    /// A melody kept in a corpus index (its notes, bars and key; the original file is
    /// named by its path and SHA-256).
    IndexedMelody,
}

impl Format {
    /// A short human name.
    pub fn describe(self) -> &'static str {
        match self {
            Format::Midi => "Standard MIDI File",
            Format::MusicXml => "MusicXML",
            Format::Mxl => "compressed MusicXML (.mxl)",
            Format::Wav => "WAV audio",
            Format::Flac => "FLAC audio",
            Format::Mp3 => "MP3 audio",
            Format::OggVorbis => "Ogg Vorbis audio",
            Format::Aac => "AAC audio (MP4/M4A or ADTS)",
            Format::Aiff => "AIFF audio",
            Format::IndexedMelody => "melody from a corpus index",
        }
    }

    /// Whether the format is an audio recording (read through `crate::audio`).
    pub fn is_audio(self) -> bool {
        matches!(
            self,
            Format::Wav
                | Format::Flac
                | Format::Mp3
                | Format::OggVorbis
                | Format::Aac
                | Format::Aiff
        )
    }
}

/// Where a piece came from.
#[derive(Debug, Clone, Serialize)]
pub struct Provenance {
    /// The path recorded in reports: as given by the user when read, or the file name only
    /// after [`Provenance::record_paths`] with [`RecordPaths::Names`].
    pub path: String,
    /// The path the file was read from (never recorded; used to keep outputs off the inputs).
    #[serde(skip)]
    pub opened: std::path::PathBuf,
    /// Size in bytes.
    pub bytes: u64,
    /// SHA-256 of the file's bytes, lower-case hex.
    pub sha256: String,
    /// Detected format.
    pub format: Format,
    /// Details of the container, e.g. `SMF format 1, 480 ticks per quarter` or the root file
    /// inside an `.mxl`.
    pub detail: String,
}

/// How an input's path is recorded in reports, the JSON record and the PDF exhibit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RecordPaths {
    /// The file name only: a report shows no folder of the machine it was made on, and the
    /// same inputs give the same report from any folder (the SHA-256 identifies the file).
    #[default]
    Names,
    /// The path as given.
    AsGiven,
}

impl RecordPaths {
    /// `path` as recorded: its last component (the path itself when it has none, as `..`), or
    /// the path as given.
    pub fn apply(self, path: &std::path::Path) -> String {
        match self {
            RecordPaths::Names => path.file_name().map_or_else(
                || path.display().to_string(),
                |n| n.to_string_lossy().into_owned(),
            ),
            RecordPaths::AsGiven => path.display().to_string(),
        }
    }
}

impl Provenance {
    /// Records the path the file was read from as `how` asks.
    pub fn record_paths(&mut self, how: RecordPaths) {
        self.path = how.apply(&self.opened);
    }
}

/// One note of the timeline.
#[derive(Debug, Clone, Serialize)]
pub struct Note {
    /// Onset in exact ticks at the piece's resolution.
    pub onset_ticks: i64,
    /// Duration in exact ticks at the piece's resolution.
    pub duration_ticks: i64,
    /// Onset in quarter notes from the start of the piece.
    pub onset: Beats,
    /// Duration in quarter notes.
    pub duration: Beats,
    /// Onset in seconds through the tempo map.
    pub onset_seconds: Seconds,
    /// Duration in seconds through the tempo map.
    pub duration_seconds: Seconds,
    /// Concert pitch as a MIDI number (fractional for microtones and audio).
    pub pitch: MidiPitch,
    /// Spelling at concert pitch, where the source spells it.
    pub spelling: Option<crate::theory::Spelling>,
    /// Index into [`Piece::bars`] of the bar the note starts in.
    pub bar: usize,
    /// Position within that bar in quarter notes (0 = downbeat).
    pub offset_in_bar: Beats,
    /// Index into [`Piece::parts`].
    pub part: usize,
    /// Voice as given by the source (MusicXML `<voice>`); MIDI notes have none.
    pub voice: Option<String>,
    /// Staff number within the part, 1-based (MusicXML `<staff>`; 1 when absent).
    pub staff: u8,
    /// Lyric syllable sung on this note, with a hyphen marking a syllable that continues.
    pub lyric: Option<String>,
    /// Key velocity for MIDI input.
    pub velocity: Option<u8>,
    /// Confidence in [0, 1]; 1 for symbolic input.
    pub confidence: f32,
}

impl Note {
    /// A note of a reader: position in ticks and concert pitch, everything else at its
    /// default (staff 1, no voice, spelling, lyric or velocity, confidence 1). Beats, seconds
    /// and the bar are filled in by the finishing step of ingest.
    pub fn at_ticks(onset_ticks: i64, duration_ticks: i64, pitch: f64) -> Note {
        Note {
            onset_ticks,
            duration_ticks,
            onset: Beats(0.0),
            duration: Beats(0.0),
            onset_seconds: Seconds(0.0),
            duration_seconds: Seconds(0.0),
            pitch: MidiPitch(pitch),
            spelling: None,
            bar: 0,
            offset_in_bar: Beats(0.0),
            part: 0,
            voice: None,
            staff: 1,
            lyric: None,
            velocity: None,
            confidence: 1.0,
        }
    }

    /// End of the note in ticks.
    pub fn end_ticks(&self) -> i64 {
        self.onset_ticks + self.duration_ticks
    }
}

/// A bar (measure) of the bar grid.
#[derive(Debug, Clone, Serialize)]
pub struct Bar {
    /// 0-based ordinal position in the timeline.
    pub index: usize,
    /// The label as printed (MusicXML `number`, e.g. `0`, `12a`); 1-based numbers for MIDI.
    pub label: String,
    /// Start in ticks.
    pub start_ticks: i64,
    /// Actual length in ticks (a pickup is shorter than its time signature).
    pub length_ticks: i64,
    /// Start in quarter notes.
    pub start: Beats,
    /// Start in seconds.
    pub start_seconds: Seconds,
    /// Time signature in force, as (numerator, denominator).
    pub time_signature: (u32, u32),
    /// An incomplete opening bar (anacrusis).
    pub pickup: bool,
    /// The source marks the bar as not counted in the numbering (MusicXML `implicit="yes"`).
    pub implicit: bool,
    /// The grid is estimated rather than read (audio).
    pub estimated: bool,
}

/// A tempo change: from `ticks` on, a quarter note lasts `micros_per_quarter` µs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TempoChange {
    /// Position in ticks.
    pub ticks: i64,
    /// Microseconds per quarter note (SMF Set Tempo); 500,000 = 120 bpm.
    pub micros_per_quarter: f64,
}

impl TempoChange {
    /// Quarter notes per minute.
    pub fn bpm(&self) -> f64 {
        60_000_000.0 / self.micros_per_quarter
    }
}

/// Tempo map: converts ticks to seconds. The only place where beats become seconds.
#[derive(Debug, Clone, Serialize)]
pub struct TempoMap {
    /// Ticks per quarter note.
    pub resolution: u32,
    /// Tempo changes sorted by position; the first is at tick 0.
    pub changes: Vec<TempoChange>,
    /// Seconds elapsed at each change (parallel to `changes`).
    #[serde(skip)]
    elapsed: Vec<f64>,
}

/// Default tempo when the source gives none: 500,000 µs per quarter note = 120 bpm
/// (Standard MIDI Files 1.0; also the usual default for MusicXML without `<sound tempo>`).
pub const DEFAULT_MICROS_PER_QUARTER: f64 = 500_000.0;

impl TempoMap {
    /// Builds a map from changes in any order; later entries at the same tick win, and a
    /// change at tick 0 of 120 bpm is assumed when none is given there.
    pub fn new(resolution: u32, mut changes: Vec<TempoChange>) -> TempoMap {
        let resolution = resolution.max(1);
        changes.retain(|c| c.micros_per_quarter.is_finite() && c.micros_per_quarter > 0.0);
        changes.sort_by_key(|c| c.ticks.max(0));
        let mut merged: Vec<TempoChange> = Vec::with_capacity(changes.len() + 1);
        for mut change in changes {
            change.ticks = change.ticks.max(0);
            match merged.last_mut() {
                Some(last) if last.ticks == change.ticks => *last = change,
                Some(last) if last.micros_per_quarter == change.micros_per_quarter => {}
                _ => merged.push(change),
            }
        }
        if merged.first().is_none_or(|c| c.ticks > 0) {
            merged.insert(
                0,
                TempoChange {
                    ticks: 0,
                    micros_per_quarter: DEFAULT_MICROS_PER_QUARTER,
                },
            );
        }
        let mut elapsed = Vec::with_capacity(merged.len());
        let mut seconds = 0.0;
        for (i, change) in merged.iter().enumerate() {
            if i > 0 {
                let prev = merged[i - 1];
                seconds += (change.ticks - prev.ticks) as f64 / f64::from(resolution)
                    * prev.micros_per_quarter
                    / 1e6;
            }
            elapsed.push(seconds);
        }
        TempoMap {
            resolution,
            changes: merged,
            elapsed,
        }
    }

    /// Seconds from the start at a position in ticks.
    pub fn seconds_at(&self, ticks: i64) -> Seconds {
        let i = self
            .changes
            .partition_point(|c| c.ticks <= ticks)
            .saturating_sub(1);
        let (change, base) = match (self.changes.get(i), self.elapsed.get(i)) {
            (Some(c), Some(e)) => (*c, *e),
            _ => {
                return Seconds(
                    ticks as f64 / f64::from(self.resolution) * DEFAULT_MICROS_PER_QUARTER / 1e6,
                )
            }
        };
        Seconds(
            base + (ticks - change.ticks) as f64 / f64::from(self.resolution)
                * change.micros_per_quarter
                / 1e6,
        )
    }

    /// The position in ticks at a time in seconds (the inverse of [`TempoMap::seconds_at`],
    /// rounded to the nearest tick; 0 for times at or before the start).
    pub fn ticks_at(&self, seconds: f64) -> i64 {
        if !seconds.is_finite() || seconds <= 0.0 {
            return 0;
        }
        let i = self
            .elapsed
            .partition_point(|e| *e <= seconds)
            .saturating_sub(1);
        let (change, base) = match (self.changes.get(i), self.elapsed.get(i)) {
            (Some(c), Some(e)) => (*c, *e),
            _ => (
                TempoChange {
                    ticks: 0,
                    micros_per_quarter: DEFAULT_MICROS_PER_QUARTER,
                },
                0.0,
            ),
        };
        let quarters = (seconds - base) * 1e6 / change.micros_per_quarter;
        change.ticks + (quarters * f64::from(self.resolution)).round() as i64
    }

    /// Quarter notes at a position in ticks.
    pub fn beats_at(&self, ticks: i64) -> Beats {
        Beats(ticks as f64 / f64::from(self.resolution))
    }
}

/// A time signature from a position on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct TimeSignature {
    /// Position in ticks.
    pub ticks: i64,
    /// Beats per bar (the sum for additive signatures such as 3+2/8).
    pub numerator: u32,
    /// Beat unit (4 = quarter, 8 = eighth).
    pub denominator: u32,
}

impl TimeSignature {
    /// Nominal bar length in ticks at `resolution` ticks per quarter.
    pub fn bar_ticks(&self, resolution: u32) -> i64 {
        i64::from(self.numerator) * 4 * i64::from(resolution) / i64::from(self.denominator.max(1))
    }
}

/// A key signature from a position on (concert pitch).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct KeySignature {
    /// Position in ticks.
    pub ticks: i64,
    /// Sharps (positive) or flats (negative).
    pub fifths: i32,
    /// Mode where the source gives it.
    pub mode: crate::theory::KeyMode,
}

/// A chord symbol written above the music (MusicXML `<harmony>`).
#[derive(Debug, Clone, Serialize)]
pub struct ChordSymbol {
    /// Position in ticks.
    pub ticks: i64,
    /// Position in quarter notes.
    pub onset: Beats,
    /// Index into [`Piece::bars`].
    pub bar: usize,
    /// Index into [`Piece::parts`].
    pub part: usize,
    /// The symbol as text, e.g. `Dm7`, `G7/B` (concert pitch).
    pub text: String,
}

/// A note kept out of the melody but listed, e.g. a grace note.
#[derive(Debug, Clone, Serialize)]
pub struct Ornament {
    /// Kind, e.g. `grace`.
    pub kind: String,
    /// Index into [`Piece::parts`].
    pub part: usize,
    /// Index into [`Piece::bars`].
    pub bar: usize,
    /// Position in quarter notes (of the note it ornaments).
    pub onset: Beats,
    /// Concert pitch.
    pub pitch: MidiPitch,
}

/// A part (MusicXML) or a track/channel pair (MIDI).
#[derive(Debug, Clone, Serialize)]
pub struct Part {
    /// Identifier used to select it: the MusicXML part id, or `track<T>-ch<C>` for MIDI
    /// (tracks numbered from 1, channels 1–16).
    pub id: String,
    /// Name from the source (part name, track name), empty when none.
    pub name: String,
    /// Instrument name or General MIDI program, empty when none.
    pub instrument: String,
    /// MIDI track number (1-based) for MIDI input.
    pub track: Option<u32>,
    /// MIDI channel (1–16) where known.
    pub channel: Option<u8>,
    /// Percussion (MIDI channel 10, or unpitched MusicXML notes).
    pub percussion: bool,
    /// Written-to-sounding transposition in semitones (MusicXML `<transpose>`); pitches in
    /// `notes` are already at concert pitch.
    pub transposition: i32,
    /// Number of staves.
    pub staves: u8,
    /// Voices found, in order of first appearance.
    pub voices: Vec<String>,
    /// All notes of the part in time order (ties merged, grace notes excluded).
    pub notes: Vec<Note>,
}

impl Part {
    /// A part holding one melodic line and nothing else (a transcription, a corpus melody):
    /// no track, channel, transposition or voices, one staff.
    pub fn single_line(id: String, name: String, notes: Vec<Note>) -> Part {
        Part {
            id,
            name,
            instrument: String::new(),
            track: None,
            channel: None,
            percussion: false,
            transposition: 0,
            staves: 1,
            voices: Vec::new(),
            notes,
        }
    }
}

/// Why and what was chosen as the melody.
#[derive(Debug, Clone, Serialize)]
pub struct Selection {
    /// Index into [`Piece::parts`].
    pub part: usize,
    /// Staff restriction, if any.
    pub staff: Option<u8>,
    /// Voice restriction, if any.
    pub voice: Option<String>,
    /// Bar range as labels, if any.
    pub bars: Option<(String, String)>,
    /// Whether chords were reduced to their highest note (skyline).
    pub skyline: bool,
    /// A sentence saying what was chosen and why.
    pub reason: String,
}

impl Selection {
    /// A whole part, unrestricted and without chord reduction.
    pub fn whole_part(part: usize, reason: String) -> Selection {
        Selection {
            part,
            staff: None,
            voice: None,
            bars: None,
            skyline: false,
            reason,
        }
    }
}

/// A candidate line at least this share of the busiest line's onset density counts as
/// voice-like for [`LineFeatures::pitch_below_voices`]. Stated in advance (half), not fitted.
pub const VOICE_LIKE_DENSITY: f64 = 0.5;
/// A candidate line with a single note at at least this share of its onsets counts as
/// voice-like for [`LineFeatures::pitch_below_voices`]. Stated in advance (half), not fitted.
pub const VOICE_LIKE_SINGLE: f64 = 0.5;

/// Statistics of one candidate melody line, after the track descriptors of Rizo et al.
/// (2006), "A pattern recognition approach for melody track selection in MIDI files"
/// (ISMIR): each a share, or a size scaled to about one. Computed by the reader's melody
/// choice; the weights that turn them into a melody-likeness are documented there.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct LineFeatures {
    /// Share of the line's onsets at which a single note starts (1 − polyphony rate).
    pub single_onsets: f64,
    /// Share of the piece's sounding span during which the line sounds (1 − silence share).
    pub occupation: f64,
    /// ln(1 + onsets per quarter note of the piece's span), of the top-voice line.
    pub density: f64,
    /// Onset density over the densest candidate line's, in [0, 1].
    pub density_relative: f64,
    /// Entropy of the inter-onset intervals (quantised to 1/12 quarter), in bits over 3,
    /// at most 1: rhythmic variety.
    pub rhythm_variety: f64,
    /// Pitch range of the top-voice line in semitones over 24, at most 2.
    pub range: f64,
    /// Mean pitch of the top-voice line, (MIDI − 60) / 12. Reported, not used by the model:
    /// absolute height does not carry from one arrangement or voice type to another.
    pub pitch_mean: f64,
    /// Mean pitch less the highest mean pitch of the candidate lines, in octaves (≤ 0).
    /// Reported, not used by the model: a pad or block chords above the tune make the tune
    /// lie below the highest line.
    pub pitch_mean_relative: f64,
    /// Mean pitch less the highest mean pitch of the voice-like candidate lines, in octaves,
    /// at most 0: lines at least half as busy as the busiest
    /// ([`VOICE_LIKE_DENSITY`](crate::timeline::VOICE_LIKE_DENSITY)) with a single note at at
    /// least half their onsets ([`VOICE_LIKE_SINGLE`](crate::timeline::VOICE_LIKE_SINGLE));
    /// the highest line when none is. How far the line lies below the highest line that moves
    /// like a voice, rather than below a sustained pad or block chords.
    pub pitch_below_voices: f64,
    /// Mean pitch less the lowest mean pitch of the candidate lines, in octaves (≥ 0): how
    /// far the line lies above the work's bass.
    pub pitch_above_lowest: f64,
    /// Standard deviation of the pitches, in octaves.
    pub pitch_spread: f64,
    /// Mean absolute interval between successive notes, in octaves.
    pub interval_mean: f64,
    /// Share of intervals of one or two semitones (steps).
    pub steps: f64,
    /// Share of repeated pitches (unisons).
    pub repeats: f64,
    /// Share of intervals larger than a fifth.
    pub leaps: f64,
}

/// One line of a piece that could be its melody: a part, or one staff or voice of it, reduced
/// to its top voice, with its melody-likeness.
#[derive(Debug, Clone, Serialize)]
pub struct MelodyCandidate {
    /// What the line is and why it was considered.
    pub selection: Selection,
    /// Short name of the line: part id and name, staff, voice.
    pub label: String,
    /// Melody-likeness in [0, 1] (a logistic model of [`LineFeatures`]).
    pub likeness: f64,
    /// The statistics it rests on.
    pub features: LineFeatures,
    /// The line, one note at a time.
    #[serde(skip)]
    pub melody: Vec<Note>,
}

/// A piece of music in the common timeline.
#[derive(Debug, Clone, Serialize)]
pub struct Piece {
    /// Where it came from.
    pub provenance: Provenance,
    /// Title, where the file has one.
    pub title: Option<String>,
    /// Composer, where the file has one.
    pub composer: Option<String>,
    /// Ticks per quarter note of the `*_ticks` fields.
    pub resolution: u32,
    /// Every part or track found.
    pub parts: Vec<Part>,
    /// The bar grid, in timeline order.
    pub bars: Vec<Bar>,
    /// Tempo map.
    pub tempo: TempoMap,
    /// Time signatures.
    pub time_signatures: Vec<TimeSignature>,
    /// Key signatures (concert pitch).
    pub key_signatures: Vec<KeySignature>,
    /// Chord symbols.
    pub chord_symbols: Vec<ChordSymbol>,
    /// Notes kept out of the melody (grace notes).
    pub ornaments: Vec<Ornament>,
    /// Whether repeats were unfolded into performance order.
    pub repeats_unfolded: bool,
    /// The selected melody: one note at a time, in time order.
    pub melody: Vec<Note>,
    /// What was selected and why.
    pub selection: Selection,
    /// The candidate lines considered, most melody-like first; the first is [`Piece::melody`]
    /// unless a comparison chose another pairing. One entry when the selection was explicit;
    /// empty for recordings and corpus melodies.
    pub candidates: Vec<MelodyCandidate>,
    /// Warnings met while reading, each naming where.
    pub warnings: Vec<String>,
    /// Time spans in seconds where a recording's melody extractor was unsure (empty for
    /// scores, MIDI files and solo recordings).
    pub unsure_spans: Vec<[f64; 2]>,
    /// The harmony layer measured from a recording (`None` for scores and MIDI files, whose
    /// chroma [`crate::features::chroma::chroma_of`] derives from all their parts).
    pub chroma: Option<ChromaLayer>,
    /// How a recording was turned into notes (`None` for scores and MIDI files).
    pub transcription: Option<Transcription>,
}

/// How a recording was turned into notes: every setting that changes the result, and what was
/// estimated from the sound. Recorded in every output, so that a reader can repeat the reading.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transcription {
    /// Frequency of A4 (MIDI 69) that names the pitches, Hz (`--a4`; 440 by ISO 16).
    pub a4_hz: f64,
    /// Lowest melody pitch searched, Hz (`--fmin`).
    pub fmin_hz: f64,
    /// Highest melody pitch searched, Hz (`--fmax`).
    pub fmax_hz: f64,
    /// Start of the range analysed, seconds of the file (`--from`; `None`: the beginning).
    pub from_seconds: Option<f64>,
    /// End of the range analysed, seconds of the file (`--to`; `None`: the end).
    pub to_seconds: Option<f64>,
    /// Longest audio analysed, seconds (`--max-audio-seconds`).
    pub max_seconds: f64,
    /// Expected tempo given, beats per minute (`--tempo`; `None`: not given).
    pub tempo_hint_bpm: Option<f64>,
    /// Meter given (`--meter`; `None`: 4/4 assumed).
    pub meter: Option<(u32, u32)>,
    /// Downbeat given, seconds of the file (`--downbeat`; `None`: estimated).
    pub downbeat_seconds: Option<f64>,
    /// Melody tracker asked for (`--audio-melody`: `auto`, `solo` or `mix`).
    pub melody_requested: String,
    /// Melody tracker used: `solo` (pYIN, one line) or `mix` (predominant melody).
    pub melody_used: String,
    /// Sample rate of the analysis, Hz.
    pub analysis_rate_hz: u32,
    /// Seconds analysed.
    pub analysed_seconds: f64,
    /// Estimated tuning: the recording's deviation from the A4 above, in semitones
    /// (−0.5 ..< 0.5).
    pub estimated_tuning_semitones: f64,
    /// Tracked tempo, beats per minute (0 when no steady beat was found).
    pub estimated_tempo_bpm: f64,
}

/// Where a chroma profile comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ChromaSource {
    /// The short-time spectrum of a recording.
    Recording,
    /// Every sounding note of every pitched part of a score or MIDI file.
    Notes,
}

/// A chromagram: a 12-bin pitch-class profile per frame on a fixed time step (the harmony
/// layer of a piece). Pitch class 0 is C; frame `k` is centred on `k · hop_seconds` seconds
/// of the piece's timeline.
#[derive(Debug, Clone, Serialize)]
pub struct ChromaLayer {
    /// Frame advance in seconds.
    pub hop_seconds: f64,
    /// Tuning of the recording in fractions of a semitone relative to A4 = 440 Hz (0 for
    /// notated music).
    pub tuning: f64,
    /// Where the profile comes from.
    pub source: ChromaSource,
    /// One profile per frame, each frame's maximum 1 (or all 0 in silence).
    #[serde(skip)]
    pub frames: Vec<[f32; 12]>,
    /// Onset activity per frame (≥ 0, any scale): the spectral-flux onset strength of a
    /// recording, or the summed power of the notes starting in the frame of a score.
    #[serde(skip)]
    pub onsets: Vec<f32>,
    /// Beat times in seconds: the quarter notes of a score's or MIDI file's tempo map, the
    /// tracked beats of a recording (extended over its whole length); empty when unknown (a
    /// recording without a steady beat). The harmonic comparison averages chroma between
    /// them, so that its states span musical time rather than seconds.
    #[serde(skip)]
    pub beats: Vec<f64>,
}

impl ChromaLayer {
    /// Duration covered, in seconds.
    pub fn seconds(&self) -> f64 {
        self.frames.len() as f64 * self.hop_seconds
    }
}

impl Piece {
    /// The key signature in force at `ticks`: the last one at or before it, or, before the
    /// first one, the first (a signature that arrives after a few notes still governs them).
    /// `None` when the piece states no key signature.
    pub fn key_at(&self, ticks: i64) -> Option<&KeySignature> {
        let i = self.key_signatures.partition_point(|k| k.ticks <= ticks);
        self.key_signatures
            .get(i.saturating_sub(1))
            .or_else(|| self.key_signatures.first())
    }

    /// The bar a time in seconds falls in (the last bar starting at or before it; 0 before
    /// the first).
    pub fn bar_at_seconds(&self, seconds: f64) -> usize {
        self.bars
            .partition_point(|b| b.start_seconds.0 <= seconds)
            .saturating_sub(1)
    }

    /// The bar a tick position falls in (the last bar starting at or before it).
    pub fn bar_at(&self, ticks: i64) -> usize {
        bar_index_at(&self.bars, ticks)
    }

    /// The time signature in force at a tick position (4/4 when none).
    pub fn time_signature_at(&self, ticks: i64) -> (u32, u32) {
        let i = self.time_signatures.partition_point(|t| t.ticks <= ticks);
        match i.checked_sub(1).and_then(|i| self.time_signatures.get(i)) {
            Some(t) => (t.numerator, t.denominator),
            None => (4, 4),
        }
    }

    /// The beat of a note within its bar, 1-based, counted in the time signature's
    /// denominator unit (in 6/8 an eighth note is one beat; in 4/4 a quarter note).
    pub fn beat_in_bar(&self, note: &Note) -> f64 {
        let denominator = self
            .bars
            .get(note.bar)
            .map_or(4, |b| b.time_signature.1.max(1));
        1.0 + note.offset_in_bar.0 * f64::from(denominator) / 4.0
    }

    /// Where a note stands in the bars, as a reader would place it: `(bar index, offset in the
    /// bar in quarter notes)`. A score's or MIDI file's notes stand where they are written. A
    /// recording's transcribed onsets jitter around the tracked beat grid, so they are placed on
    /// the nearest step of [`RECORDING_GRID_QUARTERS`]; an onset that rounds to the end of its
    /// bar is the next bar's downbeat played early. Every bar span and every placement of a
    /// recording's note in the reports uses this one rule.
    pub fn grid_position(&self, note: &Note) -> (usize, f64) {
        if self.transcription.is_none() {
            return (note.bar, note.offset_in_bar.0);
        }
        let step = RECORDING_GRID_QUARTERS;
        let offset = (note.offset_in_bar.0 / step).round() * step;
        let length = self.bars.get(note.bar).map_or(f64::INFINITY, |b| {
            b.length_ticks as f64 / f64::from(self.resolution.max(1))
        });
        if offset >= length - 1e-9 && note.bar + 1 < self.bars.len() {
            (note.bar + 1, 0.0)
        } else {
            (note.bar, offset)
        }
    }

    /// A note's beat in its bar (1 = the downbeat) by [`Piece::grid_position`], with its bar.
    pub fn grid_beat(&self, note: &Note) -> (usize, f64) {
        let (bar, offset) = self.grid_position(note);
        let denominator = self.bars.get(bar).map_or(4, |b| b.time_signature.1.max(1));
        (bar, 1.0 + offset * f64::from(denominator) / 4.0)
    }
}

/// The grid a recording's transcribed onsets and lengths are read on, in quarter notes of the
/// tracked beat: a sixteenth note. Onset jitter of a performance (about ±60 ms, a tenth of a
/// beat at 100 beats per minute, in the demo recordings and the rendered test recordings) stays
/// within half a step, while the shortest values that melodies commonly use (sixteenths) keep
/// their place. Our choice.
pub const RECORDING_GRID_QUARTERS: f64 = 0.25;

/// The index of the last bar starting at or before `ticks` (0 when before the first).
pub fn bar_index_at(bars: &[Bar], ticks: i64) -> usize {
    bars.partition_point(|b| b.start_ticks <= ticks)
        .saturating_sub(1)
}

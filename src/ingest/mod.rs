//! Reading files into the common timeline.
//!
//! In: a path (or bytes) and [`ReadOptions`]. Out: a [`Piece`] with every part, the bar grid,
//! the tempo map and the selected melody, or an [`IngestError`] naming the file and the
//! problem. The format is detected from the content ([`detect`]), never from the extension
//! alone.
//!
//! ```no_run
//! use collatio::ingest::{read_file, ReadOptions};
//! let piece = read_file("song.musicxml".as_ref(), &ReadOptions::default())?;
//! println!("{} notes in the melody", piece.melody.len());
//! # Ok::<(), collatio::ingest::IngestError>(())
//! ```

pub mod audio;
pub mod detect;
mod error;
mod finish;
pub mod likeness;
pub mod midi;
pub mod musicxml;
mod select;

pub use error::{IngestError, Problem};
pub use select::{BarRange, MelodyChoice};

use crate::timeline::{Format, Piece, Provenance};
use sha2::{Digest, Sha256};
use std::io::Read;
use std::path::Path;

/// Tempi read from a file, in quarter notes per minute: outside this range a tempo is taken as
/// damage and ignored with a warning (the slowest Set Tempo a Standard MIDI File can hold,
/// 2²⁴ − 1 µs per quarter note, is 3.6 per minute; SMF 1.0, "Set Tempo").
pub const TEMPO_RANGE: std::ops::RangeInclusive<f64> = 3.0..=1_200.0;

/// Key signatures as sharps (positive) or flats (negative): −7 to +7 (SMF 1.0 "Key Signature":
/// "sf = -7: 7 flats … sf = 7: 7 sharps"; MusicXML 4.0 `<fifths>` in common practice).
pub const FIFTHS_RANGE: std::ops::RangeInclusive<i32> = -7..=7;

/// Limits on what a file may declare or contain; each has a command-line flag to raise it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Limits {
    /// Largest input file in bytes. Default 256 MiB.
    pub max_file_bytes: u64,
    /// Largest total decompressed size of the entries read from an `.mxl` container, in bytes.
    /// Default 256 MiB.
    pub max_decompressed_bytes: u64,
    /// Most entries an `.mxl` container may list. Default 10,000.
    pub max_archive_entries: u64,
    /// Most notes in one file, all parts together. Default 2,000,000.
    pub max_notes: u64,
    /// Most bars in one file (after unfolding repeats). Default 100,000.
    pub max_bars: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_file_bytes: 256 << 20,
            max_decompressed_bytes: 256 << 20,
            max_archive_entries: 10_000,
            max_notes: 2_000_000,
            max_bars: 100_000,
        }
    }
}

impl Limits {
    /// The one check of every limit: `value` against `limit`, with what was measured and the
    /// flag that raises it named in the error.
    fn check(
        value: u64,
        limit: u64,
        what: &'static str,
        flag: &'static str,
    ) -> Result<(), Problem> {
        if value > limit {
            return Err(Problem::Limit {
                what,
                value,
                limit,
                flag,
            });
        }
        Ok(())
    }

    /// Checks a file size in bytes against [`Limits::max_file_bytes`].
    pub fn check_file_bytes(&self, bytes: u64) -> Result<(), Problem> {
        Self::check(
            bytes,
            self.max_file_bytes,
            "file size in bytes",
            "--max-file-mb",
        )
    }

    /// Checks a decompressed size in bytes against [`Limits::max_decompressed_bytes`].
    pub fn check_decompressed_bytes(&self, bytes: u64) -> Result<(), Problem> {
        Self::check(
            bytes,
            self.max_decompressed_bytes,
            "decompressed size in bytes of an .mxl entry",
            "--max-decompressed-mb",
        )
    }

    /// Checks the entries of an `.mxl` container against [`Limits::max_archive_entries`].
    pub fn check_archive_entries(&self, entries: u64) -> Result<(), Problem> {
        Self::check(
            entries,
            self.max_archive_entries,
            "number of entries in the .mxl container",
            "--max-archive-entries",
        )
    }

    /// Checks a note count against [`Limits::max_notes`].
    pub fn check_notes(&self, notes: u64) -> Result<(), Problem> {
        Self::check(notes, self.max_notes, "number of notes", "--max-notes")
    }

    /// Checks a bar count against [`Limits::max_bars`].
    pub fn check_bars(&self, bars: u64) -> Result<(), Problem> {
        Self::check(bars, self.max_bars, "number of bars", "--max-bars")
    }
}

/// How to read a file.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Size and count limits.
    pub limits: Limits,
    /// Which line to take as the melody.
    pub choice: MelodyChoice,
    /// Unfold repeats and endings into performance order (MusicXML). Default: written order.
    pub unfold_repeats: bool,
    /// Decoding and analysis of audio recordings.
    pub audio: audio::AudioReadOptions,
}

/// Reads a file from disk into the timeline.
pub fn read_file(path: &Path, options: &ReadOptions) -> Result<Piece, IngestError> {
    regular_file(path).map_err(|p| p.at(path))?;
    // Audio is streamed from disk (bounded memory) rather than read whole.
    if let Some(format) = sniff_audio(path) {
        return read_audio_file(path, format, options).map_err(|p| p.at(path));
    }
    let bytes = read_limited(path, &options.limits).map_err(|p| p.at(path))?;
    read_bytes(path, &bytes, options)
}

/// Refuses a path that is not a regular file (after following symbolic links): a folder, a
/// device such as `/dev/zero`, a named pipe or a socket, whose reading could block or never end.
pub fn regular_file(path: &Path) -> Result<(), Problem> {
    let kind = std::fs::metadata(path)?.file_type();
    if kind.is_file() {
        return Ok(());
    }
    Err(Problem::NotAFile(file_kind(&kind)))
}

/// A file type in words.
fn file_kind(kind: &std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if kind.is_fifo() {
            return "a named pipe";
        }
        if kind.is_char_device() || kind.is_block_device() {
            return "a device";
        }
        if kind.is_socket() {
            return "a socket";
        }
    }
    if kind.is_dir() {
        "a folder"
    } else {
        "an entry of another kind"
    }
}

/// The audio format of a file on disk, judged from its first 64 KiB.
fn sniff_audio(path: &Path) -> Option<Format> {
    let file = std::fs::File::open(path).ok()?;
    let mut head = Vec::with_capacity(1 << 16);
    file.take(1 << 16).read_to_end(&mut head).ok()?;
    detect::detect_audio(&head)
}

/// Hashes and size-checks an audio file by streaming it, then decodes it from disk.
fn read_audio_file(path: &Path, format: Format, options: &ReadOptions) -> Result<Piece, Problem> {
    let mut file = std::fs::File::open(path)?;
    // The size on disk first, so that the error names it rather than the bytes read so far.
    options.limits.check_file_bytes(file.metadata()?.len())?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 16];
    let mut total = 0u64;
    loop {
        let n = file.read(&mut buffer)?;
        if n == 0 {
            break;
        }
        total += n as u64;
        options.limits.check_file_bytes(total)?;
        hasher.update(&buffer[..n]);
    }
    let raw = audio::read_file(path, format, &options.audio, &options.limits)?;
    let sha256 = hasher
        .finalize()
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    complete(path, total, sha256, format, raw, options)
}

/// Finishes a reader's output into a piece and selects its melody.
fn complete(
    path: &Path,
    bytes: u64,
    sha256: String,
    format: Format,
    raw: RawPiece,
    options: &ReadOptions,
) -> Result<Piece, Problem> {
    let provenance = Provenance {
        path: path.display().to_string(),
        opened: path.to_path_buf(),
        bytes,
        sha256,
        format,
        detail: raw.detail.clone(),
    };
    let mut piece = finish::finish(raw, provenance, options.unfold_repeats)?;
    if format.is_audio() {
        // Audio bars rest on tracked beats.
        for bar in &mut piece.bars {
            bar.estimated = true;
        }
    }
    select::select_melody(piece, &options.choice)
}

/// Reads bytes already in memory; `path` is used for provenance and messages.
pub fn read_bytes(path: &Path, bytes: &[u8], options: &ReadOptions) -> Result<Piece, IngestError> {
    read_inner(path, bytes, options).map_err(|p| p.at(path))
}

fn read_inner(path: &Path, bytes: &[u8], options: &ReadOptions) -> Result<Piece, Problem> {
    let limits = &options.limits;
    limits.check_file_bytes(bytes.len() as u64)?;
    let format = detect::detect(bytes)?;
    let raw = match format {
        Format::Midi => midi::read(bytes, limits)?,
        Format::MusicXml => musicxml::read_xml(bytes, limits, options.unfold_repeats)?,
        Format::Mxl => musicxml::read_mxl(bytes, limits, options.unfold_repeats)?,
        audio_format => audio::read_bytes(bytes, audio_format, &options.audio, limits)?,
    };
    if format.is_audio() {
        return complete(
            path,
            bytes.len() as u64,
            sha256_hex(bytes),
            format,
            raw,
            options,
        );
    }
    let provenance = Provenance {
        path: path.display().to_string(),
        opened: path.to_path_buf(),
        bytes: bytes.len() as u64,
        sha256: sha256_hex(bytes),
        format,
        detail: raw.detail.clone(),
    };
    let piece = finish::finish(raw, provenance, options.unfold_repeats)?;
    select::select_melody(piece, &options.choice)
}

/// Reads at most the file-size limit's bytes, failing with a limit error beyond it.
fn read_limited(path: &Path, limits: &Limits) -> Result<Vec<u8>, Problem> {
    let limit = limits.max_file_bytes;
    let file = std::fs::File::open(path)?;
    let declared = file.metadata()?.len();
    limits.check_file_bytes(declared)?;
    let mut bytes = Vec::with_capacity(declared as usize);
    file.take(limit.saturating_add(1)).read_to_end(&mut bytes)?;
    limits.check_file_bytes(bytes.len() as u64)?;
    Ok(bytes)
}

/// SHA-256 of bytes as lower-case hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// What a format reader hands to the finishing step: parts with notes in ticks, the bar grid
/// and the maps. Derived fields (beats, seconds, bar of each note) are filled in by `finish`.
#[derive(Debug, Default)]
pub(crate) struct RawPiece {
    pub detail: String,
    pub title: Option<String>,
    pub composer: Option<String>,
    pub resolution: u32,
    pub parts: Vec<crate::timeline::Part>,
    pub bars: Vec<RawBar>,
    pub tempo: Vec<crate::timeline::TempoChange>,
    pub time_signatures: Vec<crate::timeline::TimeSignature>,
    pub key_signatures: Vec<crate::timeline::KeySignature>,
    /// (ticks, part index, text)
    pub chord_symbols: Vec<(i64, usize, String)>,
    /// (ticks, part index, pitch, kind)
    pub ornaments: Vec<(i64, usize, f64, String)>,
    pub warnings: Vec<String>,
    /// The measured harmony layer (audio only).
    pub chroma: Option<crate::timeline::ChromaLayer>,
    pub transcription: Option<crate::timeline::Transcription>,
    /// Where the melody extractor was unsure, seconds (audio only).
    pub unsure_spans: Vec<[f64; 2]>,
}

/// A bar as a reader finds it.
#[derive(Debug, Clone, Default)]
pub(crate) struct RawBar {
    pub label: String,
    pub start_ticks: i64,
    pub length_ticks: i64,
    pub time_signature: (u32, u32),
    pub pickup: bool,
    pub implicit: bool,
}

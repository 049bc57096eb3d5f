//! A corpus of prior art: an index of melodies, retrieval by interval-and-rhythm n-grams, and
//! how common a figure is.
//!
//! Each melody is kept in a slim form (its notes, bars and key) so that a hit can be aligned and
//! reported in its own bars without the original file. Each note after the first becomes a
//! token: the interval into it (clamped to ±12 semitones) and its inter-onset ratio to the
//! previous note, rounded to half-octave steps of log2 (clamped to ±2): transposition- and
//! tempo-free. Runs of [`NGRAM`] tokens are the figures indexed, with the melodies that contain
//! each. Rarity is inverse document frequency, IDF(τ) = ln(|C| / |{m ∈ C : τ ∈ m}|), as in
//! Müllensiefen & Pendzich (2009), who weight such "m-types" to model how court experts judge
//! similarity.
//!
//! The index file: 16-byte magic `COLLATIO-CORPUS\0`, format version (u32 LE), payload length
//! (u64 LE), SHA-256 of the payload (32 bytes), payload (bincode). A foreign, truncated or
//! corrupt file gets a clear error.

use crate::align::{best_score, AlignParams};
use crate::features::Sequence;
use crate::theory::KeyMode;
use crate::timeline::{
    Bar, KeySignature, Note, Part, Piece, Provenance, Selection, TempoMap,
    DEFAULT_MICROS_PER_QUARTER,
};
use crate::units::{Beats, MidiPitch, Seconds};
use bincode::Options;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;

/// Tokens per indexed figure (a figure of four tokens spans five notes).
pub const NGRAM: usize = 4;
/// Index file magic.
pub const MAGIC: &[u8; 16] = b"COLLATIO-CORPUS\0";
/// Index format version.
pub const VERSION: u32 = 1;
/// Ticks per quarter note of rebuilt pieces.
const RESOLUTION: u32 = 960;
const HEADER: usize = 16 + 4 + 8 + 32;

/// Problems with an index file.
#[derive(Debug, thiserror::Error)]
pub enum IndexError {
    /// Not an index at all.
    #[error("not a collatio corpus index (the file does not start with the index header)")]
    Foreign,
    /// Written by another format version.
    #[error("index format version {found}; this collatio reads version {VERSION} (rebuild it with `collatio corpus build`)")]
    Version {
        /// Version in the file.
        found: u32,
    },
    /// Cut short or damaged.
    #[error("corrupt index: {0}")]
    Corrupt(String),
    /// Could not be written.
    #[error("cannot encode the index: {0}")]
    Encode(String),
}

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
    /// Part the melody came from.
    pub part: String,
    /// The melody.
    pub notes: Vec<StoredNote>,
    /// The bar grid.
    pub bars: Vec<StoredBar>,
    /// First key signature (fifths, minor).
    pub key: Option<(i32, bool)>,
}

/// The index: melodies and the postings of each figure.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct CorpusIndex {
    /// Tokens per figure.
    pub ngram: usize,
    /// The melodies, in path order.
    pub melodies: Vec<MelodyEntry>,
    /// Figure → melodies containing it (sorted, unique), sorted by figure.
    pub postings: Vec<(u64, Vec<u32>)>,
}

/// The token of each note after the first: interval and rhythm class.
pub fn tokens(seq: &Sequence) -> Vec<u16> {
    seq.notes
        .iter()
        .skip(1)
        .map(|n| {
            let interval = n.interval.unwrap_or(0).clamp(-12, 12) + 12;
            let rhythm = n
                .log_ioi_ratio
                .map_or(4, |r| ((r * 2.0).round().clamp(-4.0, 4.0) + 4.0) as i32);
            (interval * 9 + rhythm) as u16
        })
        .collect()
}

/// The figures (runs of `n` tokens) of a token sequence, packed into integers.
pub fn figures(tokens: &[u16], n: usize) -> Vec<u64> {
    tokens
        .windows(n)
        .map(|w| w.iter().fold(0u64, |acc, &t| (acc << 8) | u64::from(t)))
        .collect()
}

impl MelodyEntry {
    /// The slim form of a piece's melody.
    pub fn from_piece(piece: &Piece, path: String) -> MelodyEntry {
        let beats = |ticks: i64| piece.tempo.beats_at(ticks).0 as f32;
        MelodyEntry {
            path,
            sha256: piece.provenance.sha256.clone(),
            title: piece.title.clone(),
            part: piece
                .parts
                .get(piece.selection.part)
                .map_or_else(String::new, |p| p.id.clone()),
            notes: piece
                .melody
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
                onset_ticks: ticks(n.onset),
                duration_ticks: ticks(n.duration),
                onset: Beats(f64::from(n.onset)),
                duration: Beats(f64::from(n.duration)),
                onset_seconds: Seconds(f64::from(n.onset_seconds)),
                duration_seconds: Seconds(f64::from(n.duration_seconds)),
                pitch: MidiPitch(f64::from(n.pitch)),
                spelling: None,
                bar: n.bar as usize,
                offset_in_bar: Beats(f64::from(n.offset_in_bar)),
                part: 0,
                voice: None,
                staff: 1,
                lyric: None,
                velocity: None,
                confidence: 1.0,
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
                bytes: 0,
                sha256: self.sha256.clone(),
                format: crate::timeline::Format::MusicXml,
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
            selection: Selection {
                part: 0,
                staff: None,
                voice: None,
                bars: None,
                skyline: false,
                reason: format!("melody {} of the corpus", self.part),
            },
            warnings: Vec::new(),
            chroma: None,
            unsure_spans: Vec::new(),
        }
    }
}

fn codec() -> impl Options {
    bincode::DefaultOptions::new()
        .with_fixint_encoding()
        .allow_trailing_bytes()
}

impl CorpusIndex {
    /// Builds the index of melodies (sorted by path for a deterministic file).
    pub fn build(mut melodies: Vec<MelodyEntry>) -> CorpusIndex {
        melodies.sort_by(|a, b| a.path.cmp(&b.path));
        let mut postings: BTreeMap<u64, Vec<u32>> = BTreeMap::new();
        for (id, m) in melodies.iter().enumerate() {
            let seq = Sequence::from_piece(&m.to_piece());
            let mut figs = figures(&tokens(&seq), NGRAM);
            figs.sort_unstable();
            figs.dedup();
            for f in figs {
                postings.entry(f).or_default().push(id as u32);
            }
        }
        CorpusIndex {
            ngram: NGRAM,
            melodies,
            postings: postings.into_iter().collect(),
        }
    }

    /// The index file's bytes.
    pub fn to_bytes(&self) -> Result<Vec<u8>, IndexError> {
        let payload = codec()
            .serialize(self)
            .map_err(|e| IndexError::Encode(e.to_string()))?;
        let mut out = Vec::with_capacity(HEADER + payload.len());
        out.extend_from_slice(MAGIC);
        out.extend_from_slice(&VERSION.to_le_bytes());
        out.extend_from_slice(&(payload.len() as u64).to_le_bytes());
        out.extend_from_slice(&Sha256::digest(&payload));
        out.extend_from_slice(&payload);
        Ok(out)
    }

    /// Reads an index file's bytes, checking magic, version, length and checksum.
    pub fn from_bytes(bytes: &[u8]) -> Result<CorpusIndex, IndexError> {
        if bytes.len() < 16 || &bytes[..16] != MAGIC {
            return Err(IndexError::Foreign);
        }
        if bytes.len() < HEADER {
            return Err(IndexError::Corrupt(format!(
                "{} bytes, shorter than the {HEADER}-byte header",
                bytes.len()
            )));
        }
        let version = u32::from_le_bytes([bytes[16], bytes[17], bytes[18], bytes[19]]);
        if version != VERSION {
            return Err(IndexError::Version { found: version });
        }
        let mut len = [0u8; 8];
        len.copy_from_slice(&bytes[20..28]);
        let declared = u64::from_le_bytes(len);
        let payload = &bytes[HEADER..];
        if declared != payload.len() as u64 {
            return Err(IndexError::Corrupt(format!(
                "the header declares {declared} bytes of data, the file holds {}",
                payload.len()
            )));
        }
        if Sha256::digest(payload).as_slice() != &bytes[28..60] {
            return Err(IndexError::Corrupt("checksum mismatch".into()));
        }
        codec()
            .with_limit(declared.saturating_mul(4).max(1 << 20))
            .deserialize(payload)
            .map_err(|e| IndexError::Corrupt(e.to_string()))
    }

    fn postings_of(&self, figure: u64) -> &[u32] {
        match self.postings.binary_search_by_key(&figure, |(f, _)| *f) {
            Ok(i) => &self.postings[i].1,
            Err(_) => &[],
        }
    }

    /// IDF of a figure: ln(|C| / df); a figure absent from the corpus counts as rare as one
    /// found once, ln |C|; a figure in every melody weighs 0.
    pub fn idf(&self, figure: u64) -> f64 {
        let df = self.postings_of(figure).len();
        if df == 0 {
            // Unseen in the corpus: as rare as a figure found once.
            (self.melodies.len().max(1) as f64).ln()
        } else {
            (self.melodies.len() as f64 / df as f64).ln()
        }
    }

    /// Candidate melodies for a query: IDF-weighted count of shared figures, best first, at
    /// most `limit` (ties by index order).
    pub fn candidates(&self, query: &Sequence, limit: usize) -> Vec<(u32, f64)> {
        let mut figs = figures(&tokens(query), self.ngram);
        figs.sort_unstable();
        figs.dedup();
        let mut weight: BTreeMap<u32, f64> = BTreeMap::new();
        for f in figs {
            let idf = self.idf(f);
            for &m in self.postings_of(f) {
                *weight.entry(m).or_default() += idf;
            }
        }
        let mut ranked: Vec<(u32, f64)> = weight.into_iter().collect();
        ranked.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
        ranked.truncate(limit);
        ranked
    }

    /// How many melodies contain a figure (a passage of a melody): exactly (the same tokens in a
    /// row) and within the alignment's tolerance (a local alignment scoring at least
    /// `tolerance` times the figure's score against itself, among the `limit` best candidates).
    pub fn commonness(
        &self,
        figure: &Sequence,
        params: &AlignParams,
        tolerance: f64,
        limit: usize,
    ) -> (usize, usize) {
        let toks = tokens(figure);
        if toks.len() < self.ngram {
            return (0, 0);
        }
        let figs = figures(&toks, self.ngram);
        // Exact: melodies holding every figure, then checked for the whole run in order.
        let mut common: Option<Vec<u32>> = None;
        for f in &figs {
            let p = self.postings_of(*f);
            common = Some(match common {
                None => p.to_vec(),
                Some(c) => c
                    .into_iter()
                    .filter(|m| p.binary_search(m).is_ok())
                    .collect(),
            });
        }
        let exact = common
            .unwrap_or_default()
            .into_iter()
            .filter(|&m| {
                let seq = Sequence::from_piece(&self.melodies[m as usize].to_piece());
                tokens(&seq)
                    .windows(toks.len())
                    .any(|w| w == toks.as_slice())
            })
            .count();
        let own = best_score(figure, figure, params);
        let threshold = (f64::from(own) * tolerance).ceil() as i32;
        let similar = self
            .candidates(figure, limit)
            .into_iter()
            .filter(|&(m, _)| {
                let seq = Sequence::from_piece(&self.melodies[m as usize].to_piece());
                best_score(figure, &seq, params) >= threshold.max(1)
            })
            .count();
        (exact, similar.max(exact))
    }

    /// Corpus-weighted similarity of two melodies after Müllensiefen & Pendzich (2009):
    /// Tversky's ratio model over their figure sets, each figure weighted by its IDF in this
    /// corpus: σ = f(s∩t) / (f(s∩t) + α f(s∖t) + β f(t∖s)), with α = β = 0.5 (our choice).
    pub fn weighted_similarity(&self, a: &Sequence, b: &Sequence) -> f64 {
        let set = |s: &Sequence| {
            let mut f = figures(&tokens(s), self.ngram);
            f.sort_unstable();
            f.dedup();
            f
        };
        let (sa, sb) = (set(a), set(b));
        let weight = |xs: &mut dyn Iterator<Item = &u64>| xs.map(|&f| self.idf(f)).sum::<f64>();
        let both = weight(&mut sa.iter().filter(|f| sb.binary_search(f).is_ok()));
        let only_a = weight(&mut sa.iter().filter(|f| sb.binary_search(f).is_err()));
        let only_b = weight(&mut sb.iter().filter(|f| sa.binary_search(f).is_err()));
        let denominator = both + 0.5 * only_a + 0.5 * only_b;
        if denominator > 0.0 {
            both / denominator
        } else {
            0.0
        }
    }
}

/// File extensions read when building a corpus (the content decides the format; this only
/// chooses which files to try).
pub const CORPUS_EXTENSIONS: [&str; 16] = [
    "mid", "midi", "kar", "rmi", "musicxml", "xml", "mxl", "wav", "wave", "flac", "mp3", "ogg",
    "oga", "m4a", "aif", "aiff",
];

/// Every file under `dir` (recursively, hidden entries skipped) with a corpus extension, in
/// sorted order.
pub fn corpus_files(dir: &std::path::Path) -> std::io::Result<Vec<std::path::PathBuf>> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(folder) = stack.pop() {
        for entry in std::fs::read_dir(&folder)? {
            let path = entry?.path();
            let hidden = path
                .file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with('.'));
            if hidden {
                continue;
            }
            if path.is_dir() {
                stack.push(path);
            } else if path
                .extension()
                .and_then(|e| e.to_str())
                .is_some_and(|e| CORPUS_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
            {
                out.push(path);
            }
        }
    }
    out.sort();
    Ok(out)
}

/// The outcome of building an index from a folder.
#[derive(Debug)]
pub struct Built {
    /// The index.
    pub index: CorpusIndex,
    /// Files tried.
    pub files: usize,
    /// Files skipped, each with the reason.
    pub skipped: Vec<String>,
}

/// Reads every corpus file under `dir` in parallel (results in path order) and indexes the
/// melodies; unreadable files are skipped and listed. `tick` is called once per file read.
pub fn build_from_dir(
    dir: &std::path::Path,
    options: &crate::ingest::ReadOptions,
    tick: &(dyn Fn() + Sync),
) -> std::io::Result<Built> {
    use rayon::prelude::*;
    let files = corpus_files(dir)?;
    let results: Vec<Result<MelodyEntry, String>> = files
        .par_iter()
        .map(|path| {
            let relative = path
                .strip_prefix(dir)
                .unwrap_or(path)
                .to_string_lossy()
                .replace('\\', "/");
            let outcome = crate::ingest::read_file(path, options)
                .map(|piece| MelodyEntry::from_piece(&piece, relative))
                .map_err(|e| e.to_string());
            tick();
            outcome
        })
        .collect();
    let mut melodies = Vec::new();
    let mut skipped = Vec::new();
    for result in results {
        match result {
            Ok(m) => melodies.push(m),
            Err(e) => skipped.push(e),
        }
    }
    Ok(Built {
        index: CorpusIndex::build(melodies),
        files: files.len(),
        skipped,
    })
}

/// Share of a passage's own score a corpus melody must reach to count as containing the figure
/// "within the alignment's tolerance".
pub const SIMILAR_SHARE: f64 = 0.8;
/// Candidates aligned per figure when counting similar melodies.
pub const SIMILAR_CANDIDATES: usize = 500;

/// Adds corpus commonness to every passage (A's side of the passage is the figure) and the
/// corpus-weighted similarity of the two melodies.
pub fn annotate(
    comparison: &mut crate::compare::Comparison,
    a: &Sequence,
    b: &Sequence,
    index: &CorpusIndex,
    index_path: &str,
    params: &AlignParams,
) {
    for passage in &mut comparison.passages {
        let [lo, hi] = passage.a.note_range;
        let figure = slice(a, lo, hi);
        let (exact, similar) = index.commonness(&figure, params, SIMILAR_SHARE, SIMILAR_CANDIDATES);
        passage.commonness = Some(crate::compare::Commonness {
            corpus_melodies: index.melodies.len(),
            exact,
            similar,
        });
    }
    comparison.corpus = Some(crate::compare::CorpusSummary {
        path: index_path.to_string(),
        melodies: index.melodies.len(),
        weighted_similarity: index.weighted_similarity(a, b),
    });
}

/// Notes `lo..=hi` of a sequence as a sequence of their own (the first loses its interval and
/// rhythm context).
pub fn slice(seq: &Sequence, lo: usize, hi: usize) -> Sequence {
    let hi = hi.min(seq.len().saturating_sub(1));
    let mut notes: Vec<crate::features::SeqNote> = seq.notes.get(lo..=hi).unwrap_or(&[]).to_vec();
    if let Some(first) = notes.first_mut() {
        first.interval = None;
        first.log_ioi_ratio = None;
    }
    Sequence { notes }
}

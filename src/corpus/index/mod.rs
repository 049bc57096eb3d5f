//! The index file and its lookups: melodies in slim form, the postings of every figure, and
//! the rarity (IDF) of a figure.
//!
//! Each note after the first becomes a token: the interval into it (clamped to ±12
//! semitones) and its inter-onset ratio to the previous note, rounded to half-octave steps of
//! log2 (clamped to ±2): transposition- and tempo-free. Runs of [`NGRAM`] tokens are the
//! figures indexed, with the melodies that contain each. Rarity is inverse document frequency,
//! IDF(τ) = ln(|C| / |{m ∈ C : τ ∈ m}|), as in Müllensiefen & Pendzich (2009).
//!
//! The file is written in format version 3 ([`mapped`]: sections read in place); the
//! previous version 2 (16-byte magic `COLLATIO-CORPUS\0`, format version (u32 LE), payload
//! length (u64 LE), SHA-256 of the payload (32 bytes), payload (bincode)) is still read whole.
//! A foreign, truncated or corrupt file gets a clear error.

pub mod mapped;

use super::melody::MelodyEntry;
use crate::features::{interval_size_class, Sequence};
use bincode::Options;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;

/// Tokens per indexed figure (a figure of four tokens spans five notes).
pub const NGRAM: usize = 4;
/// Interval size classes per contour figure, the second kind of figure retrieval uses (five
/// classes span six notes).
pub const CONTOUR_NGRAM: usize = 5;
/// Marks a contour figure's key, so that the two kinds never collide.
const CONTOUR_TAG: u64 = 1 << 63;
/// Index file magic.
pub const MAGIC: &[u8; 16] = b"COLLATIO-CORPUS\0";
/// Index format version written (and read in place: [`mapped`]).
pub const VERSION: u32 = mapped::MAPPED_VERSION;
/// The previous format version (one checksummed bincode payload), still read whole into
/// memory.
pub const LEGACY_VERSION: u32 = 2;
const HEADER: usize = 16 + 4 + 8 + 32;
/// Largest index file read, in bytes (4 GiB: about a million melodies of a few hundred notes).
pub const MAX_INDEX_BYTES: u64 = 4 << 30;

/// Problems with an index file.
#[derive(Debug, thiserror::Error)]
pub enum IndexError {
    /// Not an index at all.
    #[error("not a collatio corpus index (the file does not start with the index header)")]
    Foreign,
    /// Written by another format version.
    #[error("index format version {found}; this collatio reads versions {LEGACY_VERSION} and {VERSION} (rebuild it with `collatio corpus build`)")]
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

/// The interval size class ([`crate::features::interval_size_class`]) into each note after
/// the first, rhythm left out: a token that a change of mode or of rhythm leaves alone.
pub fn contour_tokens(seq: &Sequence) -> Vec<u16> {
    seq.notes
        .iter()
        .skip(1)
        .map(|n| (i16::from(interval_size_class(n.interval.unwrap_or(0))) + 8) as u16)
        .collect()
}

/// Every figure retrieval looks up, distinct and sorted: the interval-and-rhythm figures
/// ([`NGRAM`] tokens) and the contour figures ([`CONTOUR_NGRAM`] interval size classes).
/// Variants of one tune often change rhythm or mode in places; the two kinds together find
/// more of them than either alone (measured in `docs/relatedness.md`).
pub fn retrieval_figures(seq: &Sequence) -> Vec<u64> {
    let mut figs = figures(&tokens(seq), NGRAM);
    figs.extend(
        figures(&contour_tokens(seq), CONTOUR_NGRAM)
            .into_iter()
            .map(|f| f | CONTOUR_TAG),
    );
    figs.sort_unstable();
    figs.dedup();
    figs
}

/// The figures (runs of `n` tokens) of a token sequence, packed into integers.
pub fn figures(tokens: &[u16], n: usize) -> Vec<u64> {
    tokens
        .windows(n)
        .map(|w| w.iter().fold(0u64, |acc, &t| (acc << 8) | u64::from(t)))
        .collect()
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
            for f in retrieval_figures(&seq) {
                postings.entry(f).or_default().push(id as u32);
            }
        }
        CorpusIndex {
            ngram: NGRAM,
            melodies,
            postings: postings.into_iter().collect(),
        }
    }

    /// The index file's bytes, in format [`VERSION`] ([`mapped`]).
    pub fn to_bytes(&self) -> Result<Vec<u8>, IndexError> {
        mapped::encode(self)
    }

    /// The bytes of the previous format version ([`LEGACY_VERSION`]): magic, version, payload
    /// length (u64 LE), SHA-256 of the payload, payload (bincode).
    pub fn to_legacy_bytes(&self) -> Result<Vec<u8>, IndexError> {
        let payload = codec()
            .serialize(self)
            .map_err(|e| IndexError::Encode(e.to_string()))?;
        let mut out = Vec::with_capacity(HEADER + payload.len());
        out.extend_from_slice(MAGIC);
        out.extend_from_slice(&LEGACY_VERSION.to_le_bytes());
        out.extend_from_slice(&(payload.len() as u64).to_le_bytes());
        out.extend_from_slice(&Sha256::digest(&payload));
        out.extend_from_slice(&payload);
        Ok(out)
    }

    /// Reads an index file's bytes whole, checking every section and every field
    /// ([`mapped::MappedIndex::verify`]); files of the previous format version are read
    /// too.
    pub fn from_bytes(bytes: &[u8]) -> Result<CorpusIndex, IndexError> {
        if mapped::version_of(bytes)? == LEGACY_VERSION {
            return CorpusIndex::from_legacy_bytes(bytes);
        }
        mapped::MappedIndex::open(mapped::IndexBytes::Owned(bytes.to_vec()))?.to_index()
    }

    /// Reads the previous format version, checking magic, version, length and checksum, then
    /// every field ([`super::validate`]).
    pub fn from_legacy_bytes(bytes: &[u8]) -> Result<CorpusIndex, IndexError> {
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
        if version != LEGACY_VERSION {
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
        let index: CorpusIndex = codec()
            .with_limit(declared.saturating_mul(4).max(1 << 20))
            .deserialize(payload)
            .map_err(|e| IndexError::Corrupt(e.to_string()))?;
        super::validate::validate(index.ngram, NGRAM, &index.melodies, &index.postings)
            .map_err(IndexError::Corrupt)?;
        Ok(index)
    }

    /// The melodies containing a figure (sorted ids; empty when none).
    pub fn postings_of(&self, figure: u64) -> &[u32] {
        match self.postings.binary_search_by_key(&figure, |(f, _)| *f) {
            Ok(i) => &self.postings[i].1,
            Err(_) => &[],
        }
    }
}

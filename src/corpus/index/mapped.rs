//! Index format version 3: postings and melodies in separate, separately checksummed sections
//! behind a section table, read in place (a memory map of the file) so that a query decodes
//! only the postings of its own figures and the melodies it aligns.
//!
//! The file:
//!
//! - header, 64 bytes: magic `COLLATIO-CORPUS\0` (16), format version (u32 LE, 3), figure
//!   length (u32), melodies (u32), sections (u32), SHA-256 of header bytes 16–31 followed by
//!   the section table (32);
//! - section table, 64 bytes per section: kind (u32: 1 postings, 2 melodies), items (u32),
//!   first item (u64: the first figure of a postings section, the first melody id of a melody
//!   section), offset and length in the file (u64 each), SHA-256 of the section's bytes (32);
//! - the sections, in table order: every postings section first (figures ascending across
//!   them), then every melody section (melody ids ascending and contiguous).
//!
//! A postings section of n figures: n figures (u64 LE, strictly ascending), n end offsets
//! (u32 LE: the end of each figure's melody ids among the ids that follow, non-decreasing),
//! then the melody ids (u32 LE). A melody section: the bincode of its melodies (fixed-width
//! integers), [`MELODIES_PER_SECTION`] of them (fewer in the last).
//!
//! Opening checks the header, the table's checksum and the table's layout (sections inside
//! the file, in order, without overlap, covering every melody). A section's checksum is
//! verified the first time a query touches it (once per section per opening), and the fields a
//! query reads are checked as they are decoded ([`crate::corpus::validate`]); [`MappedIndex::verify`]
//! checks every section and every field, as `collatio corpus verify` does. A problem met
//! during a query is kept ([`MappedIndex::failure`]) and the query's findings must then be
//! discarded.

use super::{retrieval_figures, CorpusIndex, IndexError, MAGIC, NGRAM};
use crate::corpus::melody::MelodyEntry;
use crate::features::Sequence;
use bincode::Options;
use sha2::{Digest, Sha256};
use std::borrow::Cow;
use std::sync::OnceLock;

/// This format's version.
pub const MAPPED_VERSION: u32 = 3;
/// Bytes of the header.
const HEADER: usize = 64;
/// Bytes of a section table entry.
const ENTRY: usize = 64;
/// Figures per postings section: about 20 KB each (a figure, an end offset and about one
/// melody id), small enough that the sections a query touches are few kilobytes each, few
/// enough that the section table stays well under a megabyte at 100,000 melodies.
pub const FIGURES_PER_SECTION: usize = 1024;
/// Melodies per melody section: about 12 KB each at 3 KB a melody; a query decodes and
/// checksums only the sections of the melodies it aligns.
pub const MELODIES_PER_SECTION: usize = 4;
const POSTINGS: u32 = 1;
const MELODIES: u32 = 2;

fn codec() -> impl Options {
    bincode::DefaultOptions::new()
        .with_fixint_encoding()
        .allow_trailing_bytes()
}

/// What a search or a comparison reads of a corpus: its size, the melodies holding a figure,
/// and a melody. Implemented by the index in memory ([`CorpusIndex`]) and read in place
/// ([`MappedIndex`]); the retrieval and weighting built on these give the same figures for the
/// same corpus either way.
pub trait Corpus: Sync + std::fmt::Debug {
    /// Tokens per interval-and-rhythm figure.
    fn ngram(&self) -> usize;
    /// Melodies in the corpus.
    fn melody_count(&self) -> usize;
    /// The melodies containing a figure (sorted ids; empty when none).
    fn postings(&self, figure: u64) -> Cow<'_, [u32]>;
    /// Melody `id`, or `None` when there is none (or it cannot be read: see
    /// [`MappedIndex::failure`]).
    fn melody(&self, id: usize) -> Option<Cow<'_, MelodyEntry>>;

    /// IDF of a figure: ln(|C| / df); a figure absent from the corpus counts as rare as one
    /// found once, ln |C|; a figure in every melody weighs 0.
    fn idf(&self, figure: u64) -> f64 {
        idf_of(self.melody_count(), self.postings(figure).len())
    }

    /// Candidate melodies for a query: IDF-weighted count of the shared figures of both kinds
    /// ([`retrieval_figures`]), best first, at most `limit` (ties by index order).
    fn candidates(&self, query: &Sequence, limit: usize) -> Vec<(u32, f64)> {
        // One weight per melody in a dense array (the postings of a large corpus touch a
        // good share of it), and the melodies touched, in the order first touched.
        let mut weight: Vec<f64> = vec![0.0; self.melody_count()];
        let mut touched: Vec<u32> = Vec::new();
        for f in retrieval_figures(query) {
            let ids = self.postings(f);
            let idf = idf_of(self.melody_count(), ids.len());
            for &m in ids.iter() {
                let Some(w) = weight.get_mut(m as usize) else {
                    continue;
                };
                if *w == 0.0 {
                    touched.push(m);
                }
                *w += idf;
            }
        }
        touched.sort_unstable();
        touched.dedup();
        let mut ranked: Vec<(u32, f64)> = touched
            .into_iter()
            .map(|m| (m, weight[m as usize]))
            .collect();
        ranked.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
        ranked.truncate(limit);
        ranked
    }
}

/// IDF of a figure found in `df` of `total` melodies (ln |C| when unseen).
pub(crate) fn idf_of(total: usize, df: usize) -> f64 {
    if df == 0 {
        (total.max(1) as f64).ln()
    } else {
        (total as f64 / df as f64).ln()
    }
}

impl Corpus for CorpusIndex {
    fn ngram(&self) -> usize {
        self.ngram
    }
    fn melody_count(&self) -> usize {
        self.melodies.len()
    }
    fn postings(&self, figure: u64) -> Cow<'_, [u32]> {
        Cow::Borrowed(self.postings_of(figure))
    }
    fn melody(&self, id: usize) -> Option<Cow<'_, MelodyEntry>> {
        self.melodies.get(id).map(Cow::Borrowed)
    }
}

/// The bytes of an index file: a memory map of it, or bytes in memory.
#[derive(Debug)]
pub enum IndexBytes {
    /// The file mapped read-only.
    Mapped(memmap2::Mmap),
    /// Bytes in memory.
    Owned(Vec<u8>),
}

impl IndexBytes {
    /// Maps a file read-only.
    pub fn map(file: &std::fs::File) -> std::io::Result<IndexBytes> {
        // SAFETY: the map is read-only, and every byte read from it is bounds-checked, its
        // section's checksum verified and its fields validated: a file changed by another
        // process while mapped can only read as corrupt data, never as memory unsafety in
        // this reader (which holds no references into the map across a check).
        #[allow(unsafe_code)]
        let map = unsafe { memmap2::Mmap::map(file)? };
        Ok(IndexBytes::Mapped(map))
    }
}

impl std::ops::Deref for IndexBytes {
    type Target = [u8];
    fn deref(&self) -> &[u8] {
        match self {
            IndexBytes::Mapped(m) => m,
            IndexBytes::Owned(v) => v,
        }
    }
}

/// One entry of the section table.
#[derive(Debug, Clone, Copy)]
struct Section {
    kind: u32,
    items: u32,
    first: u64,
    offset: usize,
    length: usize,
    sha256: [u8; 32],
}

/// An index of format version 3 read in place.
#[derive(Debug)]
pub struct MappedIndex {
    bytes: IndexBytes,
    ngram: usize,
    melodies: usize,
    /// Postings sections, then melody sections.
    postings: Vec<Section>,
    melody_sections: Vec<Section>,
    /// The outcome of each section's check, once checked (postings, then melodies).
    checked: Vec<OnceLock<Result<(), String>>>,
    failure: OnceLock<String>,
    identity: [u8; 32],
}

fn u32_at(b: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_le_bytes(b.get(at..at + 4)?.try_into().ok()?))
}
fn u64_at(b: &[u8], at: usize) -> Option<u64> {
    Some(u64::from_le_bytes(b.get(at..at + 8)?.try_into().ok()?))
}

/// The format version of an index file's bytes, once the magic is found; a file shorter than
/// the smallest header (60 bytes, format 2) is corrupt whatever its version.
pub fn version_of(bytes: &[u8]) -> Result<u32, IndexError> {
    if bytes.len() < 16 || &bytes[..16] != MAGIC {
        return Err(IndexError::Foreign);
    }
    match u32_at(bytes, 16) {
        Some(version) if bytes.len() >= 60 => Ok(version),
        _ => Err(IndexError::Corrupt(format!(
            "{} bytes, shorter than the index header",
            bytes.len()
        ))),
    }
}

fn corrupt<T>(what: impl Into<String>) -> Result<T, IndexError> {
    Err(IndexError::Corrupt(what.into()))
}

impl MappedIndex {
    /// Opens an index file's bytes: checks the header, the section table's checksum and its
    /// layout; sections are checked when first read.
    pub fn open(bytes: IndexBytes) -> Result<MappedIndex, IndexError> {
        let version = version_of(&bytes)?;
        if version != MAPPED_VERSION {
            return Err(IndexError::Version { found: version });
        }
        if bytes.len() < HEADER {
            return corrupt(format!(
                "{} bytes, shorter than the {HEADER}-byte header",
                bytes.len()
            ));
        }
        let field = |at: usize| u32_at(&bytes, at).unwrap_or(0);
        let (ngram, melodies, sections) = (field(20), field(24) as usize, field(28) as usize);
        let table_end = sections
            .checked_mul(ENTRY)
            .and_then(|t| t.checked_add(HEADER))
            .filter(|&end| end <= bytes.len());
        let Some(table_end) = table_end else {
            return corrupt(format!(
                "the header declares {sections} sections, more than the file holds"
            ));
        };
        let mut hasher = Sha256::new();
        hasher.update(&bytes[16..32]);
        hasher.update(&bytes[HEADER..table_end]);
        let identity: [u8; 32] = hasher.finalize().into();
        if identity[..] != bytes[32..64] {
            return corrupt("checksum mismatch in the section table");
        }
        if ngram as usize != NGRAM {
            return corrupt(format!("figure length {ngram}, expected {NGRAM}"));
        }
        let mut postings = Vec::new();
        let mut melody_sections: Vec<Section> = Vec::new();
        let mut end = table_end;
        for k in 0..sections {
            let at = HEADER + k * ENTRY;
            let read = |o: usize| u64_at(&bytes, at + o).unwrap_or(0);
            let mut sha256 = [0u8; 32];
            sha256.copy_from_slice(&bytes[at + 32..at + 64]);
            let s = Section {
                kind: field(at),
                items: field(at + 4),
                first: read(8),
                offset: usize::try_from(read(16)).unwrap_or(usize::MAX),
                length: usize::try_from(read(24)).unwrap_or(usize::MAX),
                sha256,
            };
            if s.offset != end
                || s.offset
                    .checked_add(s.length)
                    .is_none_or(|e| e > bytes.len())
            {
                return corrupt(format!("section {k} lies outside its place in the file"));
            }
            end = s.offset + s.length;
            if s.items == 0 {
                return corrupt(format!("section {k} holds nothing"));
            }
            match s.kind {
                POSTINGS if melody_sections.is_empty() => {
                    if postings
                        .last()
                        .is_some_and(|p: &Section| p.first >= s.first)
                    {
                        return corrupt(format!("section {k}: figures out of order"));
                    }
                    postings.push(s);
                }
                MELODIES => {
                    let next = melody_sections
                        .last()
                        .map_or(0, |m| m.first + u64::from(m.items));
                    if s.first != next {
                        return corrupt(format!("section {k}: melodies out of order"));
                    }
                    melody_sections.push(s);
                }
                kind => return corrupt(format!("section {k} of unknown kind {kind}")),
            }
        }
        if end != bytes.len() {
            return corrupt(format!(
                "the sections end at byte {end}, the file at {}",
                bytes.len()
            ));
        }
        let covered = melody_sections
            .last()
            .map_or(0, |m| m.first + u64::from(m.items));
        if covered != melodies as u64 {
            return corrupt(format!(
                "the header declares {melodies} melodies, the sections hold {covered}"
            ));
        }
        let checked = (0..sections).map(|_| OnceLock::new()).collect();
        Ok(MappedIndex {
            bytes,
            ngram: ngram as usize,
            melodies,
            postings,
            melody_sections,
            checked,
            failure: OnceLock::new(),
            identity,
        })
    }

    /// SHA-256 of the header's fields and the section table, which holds the SHA-256 of every
    /// section: the identity of the index's content, known without reading the sections.
    pub fn identity(&self) -> [u8; 32] {
        self.identity
    }

    /// Size of the file, in bytes.
    pub fn file_bytes(&self) -> u64 {
        self.bytes.len() as u64
    }

    /// Figures indexed (the sum over postings sections).
    pub fn figure_count(&self) -> u64 {
        self.postings.iter().map(|s| u64::from(s.items)).sum()
    }

    /// The first problem met while reading the index, if any: findings computed from it must
    /// be discarded.
    pub fn failure(&self) -> Option<IndexError> {
        self.failure.get().map(|e| IndexError::Corrupt(e.clone()))
    }

    fn fail(&self, what: String) {
        let _ = self.failure.set(what);
    }

    /// The bytes of section `k` (postings sections first), its checksum (and, for postings,
    /// every field: [`PostingsView::check`]) verified the first time it is read.
    fn section(&self, k: usize) -> Result<(&Section, &[u8]), String> {
        let s = if k < self.postings.len() {
            &self.postings[k]
        } else {
            self.melody_sections
                .get(k - self.postings.len())
                .ok_or_else(|| format!("no section {k}"))?
        };
        let data = self
            .bytes
            .get(s.offset..s.offset + s.length)
            .ok_or_else(|| format!("section {k} lies outside the file"))?;
        let check = || {
            if Sha256::digest(data).as_slice() != s.sha256 {
                return Err(format!("checksum mismatch in section {k}"));
            }
            if s.kind == POSTINGS {
                let view = PostingsView::new(k, s, data)?;
                view.check(self.melodies)?;
                let next = self.postings.get(k + 1).map_or(u64::MAX, |n| n.first);
                let last = view.figure(view.n.saturating_sub(1));
                if view.figure(0) != s.first || (k + 1 < self.postings.len() && last >= next) {
                    return Err(format!(
                        "section {k}: its figures disagree with the section table"
                    ));
                }
            }
            Ok(())
        };
        match self.checked.get(k) {
            Some(c) => c.get_or_init(check).clone()?,
            None => return Err(format!("no section {k}")),
        }
        Ok((s, data))
    }

    /// Postings section `k`, checked.
    fn postings_section(&self, k: usize) -> Result<PostingsView<'_>, String> {
        let (s, data) = self.section(k)?;
        PostingsView::new(k, s, data)
    }

    fn lookup(&self, figure: u64) -> Result<Vec<u32>, String> {
        // The last section whose first figure is at most `figure`.
        let k = self.postings.partition_point(|s| s.first <= figure);
        if k == 0 {
            return Ok(Vec::new());
        }
        let view = self.postings_section(k - 1)?;
        let (mut lo, mut hi) = (0, view.n);
        while lo < hi {
            let mid = (lo + hi) / 2;
            if view.figure(mid) < figure {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        if lo == view.n || view.figure(lo) != figure {
            return Ok(Vec::new());
        }
        view.ids_of(lo)
    }

    /// The melodies of melody section `k` (counted among melody sections), decoded and checked.
    fn melody_page(&self, k: usize) -> Result<Vec<MelodyEntry>, String> {
        let index = self.postings.len() + k;
        let (s, data) = self.section(index)?;
        let page: Vec<MelodyEntry> = codec()
            .with_limit((data.len() as u64).saturating_mul(4).max(1 << 16))
            .deserialize(data)
            .map_err(|e| format!("section {index}: {e}"))?;
        if page.len() != s.items as usize {
            return Err(format!(
                "section {index} declares {} melodies and holds {}",
                s.items,
                page.len()
            ));
        }
        for (j, m) in page.iter().enumerate() {
            crate::corpus::validate::melody_ok(m)
                .map_err(|e| format!("melody {}: {e}", s.first + j as u64))?;
        }
        Ok(page)
    }

    /// Checks every section and every field: checksums, the order and range of every posting,
    /// the figures ascending across sections, and every melody's notes, bars and key.
    pub fn verify(&self) -> Result<(), IndexError> {
        // Each postings section checks its own fields when read, and its figures against the
        // section table (whose order was checked on opening).
        for k in 0..self.postings.len() {
            self.postings_section(k).map_err(IndexError::Corrupt)?;
        }
        for k in 0..self.melody_sections.len() {
            self.melody_page(k).map_err(IndexError::Corrupt)?;
        }
        Ok(())
    }

    /// The whole index in memory (every section verified).
    pub fn to_index(&self) -> Result<CorpusIndex, IndexError> {
        self.verify()?;
        let mut postings = Vec::new();
        for k in 0..self.postings.len() {
            let view = self.postings_section(k).map_err(IndexError::Corrupt)?;
            for i in 0..view.n {
                postings.push((view.figure(i), view.ids_of(i).map_err(IndexError::Corrupt)?));
            }
        }
        let mut melodies = Vec::with_capacity(self.melodies);
        for k in 0..self.melody_sections.len() {
            melodies.extend(self.melody_page(k).map_err(IndexError::Corrupt)?);
        }
        Ok(CorpusIndex {
            ngram: self.ngram,
            melodies,
            postings,
        })
    }
}

/// A postings section's bytes read in place.
struct PostingsView<'a> {
    section: usize,
    n: usize,
    data: &'a [u8],
    ids: usize,
}

impl<'a> PostingsView<'a> {
    fn new(section: usize, s: &Section, data: &'a [u8]) -> Result<PostingsView<'a>, String> {
        let n = s.items as usize;
        let ids_at = n * 12;
        if data.len() < ids_at || (data.len() - ids_at) % 4 != 0 {
            return Err(format!(
                "section {section}: {} bytes for {n} figures",
                data.len()
            ));
        }
        Ok(PostingsView {
            section,
            n,
            data,
            ids: (data.len() - ids_at) / 4,
        })
    }

    /// Every field: figures strictly ascending, each listing melodies (ascending, within the
    /// index), the last figure's ids ending the section.
    fn check(&self, melodies: usize) -> Result<(), String> {
        let mut previous: Option<u64> = None;
        for i in 0..self.n {
            let figure = self.figure(i);
            if previous.is_some_and(|p| p >= figure) {
                return Err(format!("figure {figure:#x} is out of order"));
            }
            previous = Some(figure);
            check_ids(figure, &self.ids_of(i)?, melodies)?;
        }
        if self.n > 0 && self.end(self.n - 1) as usize != self.ids {
            return Err(format!(
                "section {}: melody ids beyond the last figure",
                self.section
            ));
        }
        Ok(())
    }

    fn figure(&self, i: usize) -> u64 {
        u64_at(self.data, i * 8).unwrap_or(u64::MAX)
    }
    fn end(&self, i: usize) -> u32 {
        u32_at(self.data, self.n * 8 + i * 4).unwrap_or(u32::MAX)
    }
    fn ids_of(&self, i: usize) -> Result<Vec<u32>, String> {
        let start = if i == 0 { 0 } else { self.end(i - 1) as usize };
        let end = self.end(i) as usize;
        if start > end || end > self.ids {
            return Err(format!(
                "section {}: figure {i} has melody ids {start}..{end} of {}",
                self.section, self.ids
            ));
        }
        let base = self.n * 12;
        Ok((start..end)
            .map(|j| u32_at(self.data, base + j * 4).unwrap_or(u32::MAX))
            .collect())
    }
}

fn check_ids(figure: u64, ids: &[u32], melodies: usize) -> Result<(), String> {
    if ids.is_empty() {
        return Err(format!("figure {figure:#x} lists no melodies"));
    }
    if ids.windows(2).any(|w| w[0] >= w[1]) {
        return Err(format!(
            "the melodies of figure {figure:#x} are out of order"
        ));
    }
    if let Some(&id) = ids.iter().find(|&&id| id as usize >= melodies) {
        return Err(format!(
            "figure {figure:#x} lists melody {id}, but the index holds {melodies}"
        ));
    }
    Ok(())
}

impl Corpus for MappedIndex {
    fn ngram(&self) -> usize {
        self.ngram
    }
    fn melody_count(&self) -> usize {
        self.melodies
    }
    fn postings(&self, figure: u64) -> Cow<'_, [u32]> {
        match self.lookup(figure) {
            Ok(ids) => Cow::Owned(ids),
            Err(e) => {
                self.fail(e);
                Cow::Borrowed(&[])
            }
        }
    }
    fn melody(&self, id: usize) -> Option<Cow<'_, MelodyEntry>> {
        if id >= self.melodies {
            return None;
        }
        // The section holding the melody: the last whose first melody is at most `id` (the
        // table's sections were checked contiguous on opening; their sizes are read, not
        // assumed).
        let k = self
            .melody_sections
            .partition_point(|s| s.first <= id as u64)
            .checked_sub(1)?;
        let j = usize::try_from(id as u64 - self.melody_sections[k].first).ok()?;
        match self.melody_page(k) {
            Ok(mut page) => (j < page.len()).then(|| Cow::Owned(page.swap_remove(j))),
            Err(e) => {
                self.fail(e);
                None
            }
        }
    }
}

/// The bytes of an index of format version 3 holding `index`.
pub fn encode(index: &CorpusIndex) -> Result<Vec<u8>, IndexError> {
    let mut table: Vec<(u32, u32, u64, Vec<u8>)> = Vec::new();
    for chunk in index.postings.chunks(FIGURES_PER_SECTION) {
        let mut data = Vec::new();
        for (f, _) in chunk {
            data.extend_from_slice(&f.to_le_bytes());
        }
        let mut end = 0u32;
        for (_, ids) in chunk {
            end = u32::try_from(ids.len())
                .ok()
                .and_then(|n| end.checked_add(n))
                .ok_or_else(|| IndexError::Encode("a postings section too large".into()))?;
            data.extend_from_slice(&end.to_le_bytes());
        }
        for (_, ids) in chunk {
            for id in ids {
                data.extend_from_slice(&id.to_le_bytes());
            }
        }
        table.push((POSTINGS, chunk.len() as u32, chunk[0].0, data));
    }
    for (k, chunk) in index.melodies.chunks(MELODIES_PER_SECTION).enumerate() {
        let data = codec()
            .serialize(chunk)
            .map_err(|e| IndexError::Encode(e.to_string()))?;
        let first = (k * MELODIES_PER_SECTION) as u64;
        table.push((MELODIES, chunk.len() as u32, first, data));
    }
    let count = |n: usize, what: &str| {
        u32::try_from(n).map_err(|_| IndexError::Encode(format!("too many {what}")))
    };
    let mut out = Vec::new();
    out.extend_from_slice(MAGIC);
    out.extend_from_slice(&MAPPED_VERSION.to_le_bytes());
    out.extend_from_slice(&count(index.ngram, "tokens per figure")?.to_le_bytes());
    out.extend_from_slice(&count(index.melodies.len(), "melodies")?.to_le_bytes());
    out.extend_from_slice(&count(table.len(), "sections")?.to_le_bytes());
    out.extend_from_slice(&[0u8; 32]);
    let mut offset = (HEADER + table.len() * ENTRY) as u64;
    for (kind, items, first, data) in &table {
        out.extend_from_slice(&kind.to_le_bytes());
        out.extend_from_slice(&items.to_le_bytes());
        out.extend_from_slice(&first.to_le_bytes());
        out.extend_from_slice(&offset.to_le_bytes());
        out.extend_from_slice(&(data.len() as u64).to_le_bytes());
        out.extend_from_slice(&Sha256::digest(data));
        offset += data.len() as u64;
    }
    let mut hasher = Sha256::new();
    hasher.update(&out[16..32]);
    hasher.update(&out[HEADER..]);
    let identity: [u8; 32] = hasher.finalize().into();
    out[32..64].copy_from_slice(&identity);
    for (_, _, _, data) in &table {
        out.extend_from_slice(data);
    }
    Ok(out)
}

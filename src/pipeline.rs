//! The library's entry points for whole jobs: compare two works, search a corpus.
//!
//! In: works already read ([`crate::ingest::read_file`]), the settings, and optionally a corpus
//! index. Out: [`Findings`] or [`SearchFindings`], which the renderers of [`crate::report`]
//! turn into text, JSON, a PDF exhibit and exports. The command line is a thin layer over
//! these two calls.
//!
//! A comparison runs, in order: score following (when one work is a recording and the other a
//! score or MIDI file, the recording may take the score's bars), the melodic comparison, the
//! null model's chance figures, the corpus's commonness figures, the harmonic comparison, and
//! the note-level differences of every passage.
//!
//! ```no_run
//! use collatio::findings::CompareSettings;
//! use collatio::ingest::{read_file, ReadOptions};
//! # fn demo() -> Result<(), Box<dyn std::error::Error>> {
//! let options = ReadOptions::default();
//! let a = read_file("demo/harbour-lights.musicxml".as_ref(), &options)?;
//! let b = read_file("demo/paper-boats.musicxml".as_ref(), &options)?;
//! let findings = collatio::pipeline::compare_works(a, b, &CompareSettings::default(), None);
//! println!("{} shared passages", findings.passages.len());
//! # Ok(()) }
//! ```

use crate::align::sync::SyncParams;
use crate::align::AlignParams;
use crate::compare::differences::differences;
use crate::compare::harmony::harmonic_evidence;
use crate::compare::recurrence::interval_recurrences;
use crate::compare::sync::{follow_score, SyncSummary};
use crate::compare::{compare, Side};
use crate::corpus::CorpusIndex;
use crate::features::Sequence;
use crate::findings::{CompareSettings, Evidence, Finding, Findings, Hit, SearchFindings};
use crate::stats::null::null_model;
use crate::timeline::Piece;
use rayon::prelude::*;

/// A corpus index consulted by a comparison or a search, with the path it was read from.
#[derive(Debug, Clone, Copy)]
pub struct CorpusRef<'a> {
    /// The index.
    pub index: &'a CorpusIndex,
    /// The index file as given, for the report.
    pub path: &'a str,
}

/// Settings of a search.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchSettings {
    /// Melodic alignment, as in a comparison.
    pub align: AlignParams,
    /// Candidates retrieved by shared figures and then aligned in full. Default 20.
    pub candidates: usize,
    /// Best matches kept. Default 10.
    pub top: usize,
}

impl Default for SearchSettings {
    fn default() -> Self {
        SearchSettings {
            align: AlignParams::default(),
            candidates: 20,
            top: 10,
        }
    }
}

/// When one work is a recording and the other a score or MIDI file, aligns the recording to
/// the score; a recording that follows the score comes back on the score's bars.
fn follow(a: Piece, b: Piece, params: Option<&SyncParams>) -> (Piece, Piece, Option<SyncSummary>) {
    let Some(params) = params else {
        return (a, b, None);
    };
    match (
        a.provenance.format.is_audio(),
        b.provenance.format.is_audio(),
    ) {
        (false, true) => match follow_score(&a, &b, Side::A, params) {
            Some(f) => (a, f.rebarred.unwrap_or(b), Some(f.summary)),
            None => (a, b, None),
        },
        (true, false) => match follow_score(&b, &a, Side::B, params) {
            Some(f) => (f.rebarred.unwrap_or(a), b, Some(f.summary)),
            None => (a, b, None),
        },
        _ => (a, b, None),
    }
}

/// Compares two works: every shared melodic passage with its measures, chance figures,
/// commonness in the corpus (when one is given), harmonic confirmation and differences.
pub fn compare_works(
    a: Piece,
    b: Piece,
    settings: &CompareSettings,
    corpus: Option<CorpusRef<'_>>,
) -> Findings {
    let (a, b, synchronisation) = follow(a, b, settings.sync.as_ref());
    let comparison = compare(&a, &b, &settings.align);
    let (seq_a, seq_b) = (Sequence::from_piece(&a), Sequence::from_piece(&b));
    let null = null_model(&seq_a, &seq_b, &settings.align, &settings.null);
    let (corpus_summary, commonness) = match corpus {
        Some(c) => {
            let (summary, each) = crate::corpus::assess(
                &comparison.passages,
                &seq_a,
                &seq_b,
                c.index,
                c.path,
                &settings.align,
            );
            (Some(summary), each.into_iter().map(Some).collect())
        }
        None => (None, vec![None; comparison.passages.len()]),
    };
    let harmony = settings
        .harmony
        .as_ref()
        .map(|p| harmonic_evidence(&a, &b, p, &comparison.passages));
    let confirmed = |rank: usize| {
        harmony
            .as_ref()
            .is_some_and(|h| h.passages.iter().any(|x| x.confirms == Some(rank)))
    };
    let passages: Vec<Finding> = comparison
        .passages
        .into_iter()
        .zip(commonness)
        .map(|(passage, commonness)| {
            let mut evidence = vec![Evidence::Melody];
            if confirmed(passage.rank) {
                evidence.push(Evidence::Harmony);
            }
            Finding {
                significance: null.as_ref().map(|m| m.significance(passage.score)),
                commonness,
                evidence,
                differences: differences(&a, &b, &passage),
                passage,
            }
        })
        .collect();
    Findings {
        similarity: comparison.similarity,
        notes_a: comparison.notes_a,
        notes_b: comparison.notes_b,
        unmatched_a: comparison.unmatched_a,
        unmatched_b: comparison.unmatched_b,
        passages,
        null_model: null.map(|m| m.summary),
        corpus: corpus_summary,
        harmony,
        synchronisation,
        recurrences: interval_recurrences(&seq_a, &seq_b),
        settings: settings.clone(),
        a,
        b,
    }
}

/// Searches a corpus for a query's melody: candidates retrieved by shared figures, each
/// aligned in full as a comparison would, ranked by similarity (ties: the stronger top
/// passage, then the path); melodies sharing no passage are left out.
pub fn search(query: Piece, corpus: CorpusRef<'_>, settings: &SearchSettings) -> SearchFindings {
    let seq = Sequence::from_piece(&query);
    let pool = corpus.index.candidates(&seq, settings.candidates);
    let mut hits: Vec<Hit> = pool
        .par_iter()
        .filter_map(|&(m, _)| {
            let entry = corpus.index.melodies.get(m as usize)?;
            let piece = entry.to_piece();
            let result = compare(&query, &piece, &settings.align);
            (!result.passages.is_empty()).then(|| Hit {
                path: entry.path.clone(),
                title: entry.title.clone(),
                similarity: result.similarity,
                passages: result
                    .passages
                    .into_iter()
                    .map(|p| {
                        let found = differences(&query, &piece, &p);
                        Finding::melodic(p, found)
                    })
                    .collect(),
            })
        })
        .collect();
    hits.sort_by(|a, b| {
        b.similarity
            .total_cmp(&a.similarity)
            .then_with(|| {
                let top = |h: &Hit| h.passages.first().map_or(0, |p| p.passage.score);
                top(b).cmp(&top(a))
            })
            .then_with(|| a.path.cmp(&b.path))
    });
    hits.truncate(settings.top);
    SearchFindings {
        query,
        corpus: corpus.path.to_string(),
        corpus_melodies: corpus.index.melodies.len(),
        align: settings.align.clone(),
        hits,
    }
}

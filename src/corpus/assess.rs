//! What a corpus says about a comparison: how common each passage's figure is among the
//! corpus melodies, and the corpus-weighted similarity of the two melodies (Müllensiefen &
//! Pendzich 2009).

use super::index::mapped::Corpus;
use super::index::{figures, tokens};
use super::source::IndexSource;
use crate::align::{best_score, AlignParams};
use crate::compare::Passage;
use crate::features::{SeqNote, Sequence};
use serde::Serialize;

/// The reference corpus a comparison was weighed against.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CorpusSummary {
    /// The index file: path, SHA-256, size, format and figure length, melodies.
    #[serde(flatten)]
    pub source: IndexSource,
    /// Corpus-weighted similarity of the two melodies in [0, 1], rounded to 4 decimals: shared
    /// figures weighted by their rarity in the corpus (after Müllensiefen & Pendzich 2009;
    /// `docs/statistics.md`).
    pub weighted_similarity: f64,
}

/// How common a passage's figure is in a reference corpus.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Commonness {
    /// Melodies in the corpus.
    pub corpus_melodies: usize,
    /// Melodies containing the figure exactly (same intervals and rhythm).
    pub exact: usize,
    /// Melodies containing it within the alignment's tolerance.
    pub similar: usize,
}

/// How many melodies contain a figure (a passage of a melody): exactly (the same tokens in a
/// row) and within the alignment's tolerance (a local alignment scoring at least
/// `tolerance` times the figure's score against itself, among the `limit` best candidates).
pub fn commonness<C: Corpus + ?Sized>(
    corpus: &C,
    figure: &Sequence,
    params: &AlignParams,
    tolerance: f64,
    limit: usize,
) -> (usize, usize) {
    let toks = tokens(figure);
    if toks.len() < corpus.ngram() {
        return (0, 0);
    }
    let figs = figures(&toks, corpus.ngram());
    // Exact: melodies holding every figure, then checked for the whole run in order.
    let mut common: Option<Vec<u32>> = None;
    for f in &figs {
        let p = corpus.postings(*f);
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
            let seq = match corpus.melody(m as usize) {
                Some(e) => Sequence::from_piece(&e.to_piece()),
                None => return false,
            };
            tokens(&seq)
                .windows(toks.len())
                .any(|w| w == toks.as_slice())
        })
        .count();
    let own = best_score(figure, figure, params);
    let threshold = (f64::from(own) * tolerance).ceil() as i32;
    let similar = corpus
        .candidates(figure, limit)
        .into_iter()
        .filter(|&(m, _)| {
            let seq = match corpus.melody(m as usize) {
                Some(e) => Sequence::from_piece(&e.to_piece()),
                None => return false,
            };
            best_score(figure, &seq, params) >= threshold.max(1)
        })
        .count();
    (exact, similar.max(exact))
}

/// Corpus-weighted similarity of two melodies after Müllensiefen & Pendzich (2009):
/// Tversky's ratio model over their figure sets, each figure weighted by its IDF in this
/// corpus: σ = f(s∩t) / (f(s∩t) + α f(s∖t) + β f(t∖s)), with α = β = 0.5 (our choice).
pub fn weighted_similarity<C: Corpus + ?Sized>(corpus: &C, a: &Sequence, b: &Sequence) -> f64 {
    let set = |s: &Sequence| {
        let mut f = figures(&tokens(s), corpus.ngram());
        f.sort_unstable();
        f.dedup();
        f
    };
    let (sa, sb) = (set(a), set(b));
    let weight = |xs: &mut dyn Iterator<Item = &u64>| xs.map(|&f| corpus.idf(f)).sum::<f64>();
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

/// Share of a passage's own score a corpus melody must reach to count as containing the figure
/// "within the alignment's tolerance".
pub const SIMILAR_SHARE: f64 = 0.8;
/// Candidates aligned per figure when counting similar melodies.
pub const SIMILAR_CANDIDATES: usize = 500;

/// The commonness of every passage's figure (A's side of the passage is the figure), in the
/// passages' order, and the corpus summary with the corpus-weighted similarity of the two
/// melodies.
pub fn assess(
    passages: &[Passage],
    a: &Sequence,
    b: &Sequence,
    index: &dyn Corpus,
    source: &IndexSource,
    params: &AlignParams,
) -> (CorpusSummary, Vec<Commonness>) {
    let commonness = passages
        .iter()
        .map(|passage| {
            let [lo, hi] = passage.a.note_range;
            let figure = slice(a, lo, hi);
            let (exact, similar) =
                commonness(index, &figure, params, SIMILAR_SHARE, SIMILAR_CANDIDATES);
            Commonness {
                corpus_melodies: index.melody_count(),
                exact,
                similar,
            }
        })
        .collect();
    let summary = CorpusSummary {
        source: source.clone(),
        weighted_similarity: (weighted_similarity(index, a, b) * 1e4).round() / 1e4,
    };
    (summary, commonness)
}

/// Notes `lo..=hi` of a sequence as a sequence of their own (the first loses its interval and
/// rhythm context).
pub fn slice(seq: &Sequence, lo: usize, hi: usize) -> Sequence {
    let hi = hi.min(seq.len().saturating_sub(1));
    let mut notes: Vec<SeqNote> = seq.notes.get(lo..=hi).unwrap_or(&[]).to_vec();
    if let Some(first) = notes.first_mut() {
        first.interval = None;
        first.log_ioi_ratio = None;
    }
    Sequence { notes }
}

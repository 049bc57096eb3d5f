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
//! let a = read_file("demo/pierside-lamps.musicxml".as_ref(), &options)?;
//! let b = read_file("demo/millstream-boats.musicxml".as_ref(), &options)?;
//! let findings = collatio::pipeline::compare_works(a, b, &CompareSettings::default(), None);
//! println!("{} shared passages", findings.passages.len());
//! # Ok(()) }
//! ```

use crate::align::sync::SyncParams;
use crate::align::AlignParams;
use crate::align::{best_score, self_score};
use crate::compare::differences::differences;
use crate::compare::harmony::harmonic_evidence;
use crate::compare::pairing::{choose_pairing, single_line_each, single_pairing};
use crate::compare::recurrence::interval_recurrences;
use crate::compare::sync::{follow_score, SyncSummary};
use crate::compare::{compare, Relatedness, Side};
use crate::corpus::{Corpus, IndexSource, MelodyEntry};
use crate::features::Sequence;
use crate::findings::{CompareSettings, Evidence, Finding, Findings, Hit, SearchFindings};
use crate::progress::{NoProgress, Progress};
use crate::stats::chance::{chance_model, ChanceParams, NullChoice};
use crate::timeline::Piece;
use rayon::prelude::*;

/// A corpus index consulted by a comparison or a search, with the identity of the file it was
/// read from.
#[derive(Debug, Clone, Copy)]
pub struct CorpusRef<'a> {
    /// The index, in memory or read in place ([`crate::corpus::MappedIndex`]).
    pub index: &'a dyn Corpus,
    /// The index file: path, SHA-256 and build settings, for the record.
    pub source: &'a IndexSource,
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
    /// The chance figures of the hits: the query against a sample of the corpus (the corpus
    /// null); `null` other than automatic or off is not used in a search. Default automatic.
    pub chance: ChanceParams,
    /// Candidate melody lines of the query searched for (see [`crate::compare::pairing`]);
    /// each corpus melody keeps its strongest hit. Default 3.
    pub melody_candidates: usize,
}

impl Default for SearchSettings {
    fn default() -> Self {
        SearchSettings {
            align: AlignParams::default(),
            candidates: 100,
            top: 10,
            chance: ChanceParams::default(),
            melody_candidates: crate::compare::pairing::DEFAULT_CANDIDATES,
        }
    }
}

/// A sample of `count` melodies of a corpus, drawn with `seed` (all of them when the corpus is
/// smaller), as sequences: the reference melodies of the corpus null.
pub fn reference_melodies(index: &dyn Corpus, count: usize, seed: u64) -> Vec<Sequence> {
    use rand::seq::index::sample;
    use rand::SeedableRng;
    let total = index.melody_count();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let mut picked: Vec<usize> = sample(&mut rng, total, count.min(total)).into_vec();
    picked.sort_unstable();
    picked
        .par_iter()
        .filter_map(|&k| Some(Sequence::from_piece(&index.melody(k)?.to_piece())))
        .collect()
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
    compare_works_with(a, b, settings, corpus, &NoProgress)
}

/// [`compare_works`], announcing each step to `progress` (the findings are the same).
pub fn compare_works_with(
    a: Piece,
    b: Piece,
    settings: &CompareSettings,
    corpus: Option<CorpusRef<'_>>,
    progress: &dyn Progress,
) -> Findings {
    let (mut a, mut b) = (a, b);
    let single = single_line_each(&a, &b);
    let choice = (!single).then(|| {
        progress.step("pairing melody lines", None);
        choose_pairing(&mut a, &mut b, settings.melody_candidates, &settings.align)
    });
    // The strongest of several pairings is reported: its chance figures are multiplied by the
    // number of pairings checked (Bonferroni), so that the choice does not flatter them.
    let tested = choice.as_ref().map_or(1, Vec::len).max(1) as f64;
    if settings.sync.is_some() && a.provenance.format.is_audio() != b.provenance.format.is_audio() {
        progress.step("following the score", None);
    }
    let (a, b, synchronisation) = follow(a, b, settings.sync.as_ref());
    progress.step("aligning the melodies", None);
    let comparison = compare(&a, &b, &settings.align);
    let pairings =
        choice.unwrap_or_else(|| single_pairing(&a, &b, comparison.relatedness, &settings.align));
    let (seq_a, seq_b) = (Sequence::from_piece(&a), Sequence::from_piece(&b));
    progress.step("chance figures", None);
    let references = corpus.map(|c| {
        reference_melodies(
            c.index,
            settings.chance.references,
            settings.chance.shuffles.seed,
        )
    });
    let chance = chance_model(
        &seq_a,
        &seq_b,
        &settings.align,
        &settings.chance,
        references.as_deref(),
    );
    let (corpus_summary, commonness) = match corpus {
        Some(c) => {
            progress.step("commonness in the corpus", None);
            let (summary, each) = crate::corpus::assess(
                &comparison.passages,
                &seq_a,
                &seq_b,
                c.index,
                c.source,
                &settings.align,
            );
            (Some(summary), each.into_iter().map(Some).collect())
        }
        None => (None, vec![None; comparison.passages.len()]),
    };
    let harmony = settings.harmony.as_ref().map(|p| {
        progress.step("harmonic comparison", None);
        harmonic_evidence(&a, &b, p, &comparison.passages)
    });
    progress.step(
        "differences of the passages",
        Some(comparison.passages.len() as u64),
    );
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
            let differences = differences(&a, &b, &passage);
            progress.advance(1);
            Finding {
                significance: chance
                    .as_ref()
                    .and_then(|m| m.significance(passage.score))
                    .map(|s| s.for_tests(tested)),
                commonness,
                evidence,
                differences,
                passage,
            }
        })
        .collect();
    progress.step("recurring figures", None);
    let recurrences = interval_recurrences(&seq_a, &seq_b);
    Findings {
        relatedness: comparison.relatedness,
        coverage: comparison.coverage,
        notes_a: comparison.notes_a,
        notes_b: comparison.notes_b,
        unmatched_a: comparison.unmatched_a,
        unmatched_b: comparison.unmatched_b,
        search: comparison.search,
        passages,
        chance: chance.map(|m| m.summary),
        corpus: corpus_summary,
        harmony,
        synchronisation,
        pairings,
        recurrences,
        settings: settings.clone(),
        a,
        b,
    }
}

/// Searches a corpus for a query's melody: candidates retrieved by shared figures, each
/// aligned in full as a comparison would, ranked by relatedness (ties: the stronger top
/// passage, then the path); melodies sharing no passage are left out. When the query has
/// several candidate melody lines, the first `melody_candidates` are searched for in turn and
/// each corpus melody keeps its strongest hit (the higher relatedness, then the higher top
/// score, then the more melody-like line), its chance figures multiplied by the number of
/// lines searched (Bonferroni); every hit names the query line it came from.
pub fn search(query: Piece, corpus: CorpusRef<'_>, settings: &SearchSettings) -> SearchFindings {
    search_with(query, corpus, settings, &NoProgress)
}

/// [`search`], announcing each step to `progress` (the findings are the same).
pub fn search_with(
    query: Piece,
    corpus: CorpusRef<'_>,
    settings: &SearchSettings,
    progress: &dyn Progress,
) -> SearchFindings {
    let lines: Vec<_> = query
        .candidates
        .iter()
        .take(settings.melody_candidates.max(1))
        .cloned()
        .collect();
    if lines.len() <= 1 {
        return search_line(query, corpus, settings, progress);
    }
    let tests = lines.len() as f64;
    let mut first: Option<SearchFindings> = None;
    let mut best: std::collections::BTreeMap<String, Hit> = std::collections::BTreeMap::new();
    for line in &lines {
        let mut q = query.clone();
        q.melody.clone_from(&line.melody);
        q.selection = line.selection.clone();
        let found = search_line(q, corpus, settings, progress);
        for mut hit in found.hits.iter().cloned() {
            for p in &mut hit.passages {
                p.significance = p.significance.take().map(|s| s.for_tests(tests));
            }
            let stronger = |old: &Hit| {
                hit.relatedness
                    .value
                    .total_cmp(&old.relatedness.value)
                    .then(hit.relatedness.best_score.cmp(&old.relatedness.best_score))
                    .is_gt()
            };
            match best.get(&hit.path) {
                Some(old) if !stronger(old) => {}
                _ => {
                    best.insert(hit.path.clone(), hit);
                }
            }
        }
        first.get_or_insert(found);
    }
    let mut hits: Vec<Hit> = best.into_values().collect();
    hits.sort_by(|x, y| {
        y.relatedness
            .value
            .total_cmp(&x.relatedness.value)
            .then_with(|| y.relatedness.best_score.cmp(&x.relatedness.best_score))
            .then_with(|| x.path.cmp(&y.path))
    });
    hits.truncate(settings.top);
    let mut found = first.unwrap_or_else(|| search_line(query.clone(), corpus, settings, progress));
    found.query = query;
    found.hits = hits;
    found.query_lines = lines.iter().map(|l| l.label.clone()).collect();
    found
}

/// [`search`] for the query's melody as it stands.
fn search_line(
    query: Piece,
    corpus: CorpusRef<'_>,
    settings: &SearchSettings,
    progress: &dyn Progress,
) -> SearchFindings {
    let line = crate::compare::pairing::line_label(&query);
    let seq = Sequence::from_piece(&query);
    progress.step(&format!("chance figures of {line}"), None);
    let references = reference_melodies(
        corpus.index,
        settings.chance.references,
        settings.chance.shuffles.seed,
    );
    let chance_params = ChanceParams {
        null: match settings.chance.null {
            NullChoice::Off => NullChoice::Off,
            _ => NullChoice::Auto,
        },
        ..settings.chance.clone()
    };
    // The corpus null of the query; with a corpus too small for it, the general null.
    let chance = chance_model(
        &seq,
        &seq,
        &settings.align,
        &chance_params,
        Some(&references),
    );
    progress.step(&format!("candidates for {line}"), None);
    let pool = corpus.index.candidates(&seq, settings.candidates);
    progress.step(
        &format!("scanning candidates for {line}"),
        Some(pool.len() as u64),
    );
    let self_query = self_score(&seq, (0, seq.len().saturating_sub(1)), &settings.align);
    // Rank every candidate by relatedness from the scan alone; align in full, with passages
    // and differences, only the best until `top` share a passage.
    let mut ranked: Vec<(Relatedness, MelodyEntry)> = pool
        .par_iter()
        .filter_map(|&(m, _)| {
            let entry = corpus.index.melody(m as usize)?.into_owned();
            let other = Sequence::from_piece(&entry.to_piece());
            let best = best_score(&seq, &other, &settings.align);
            let own = self_score(&other, (0, other.len().saturating_sub(1)), &settings.align);
            progress.advance(1);
            (best >= settings.align.min_score)
                .then(|| (Relatedness::of(best, self_query, own), entry))
        })
        .collect();
    ranked.sort_by(|x, y| {
        y.0.value
            .total_cmp(&x.0.value)
            .then_with(|| y.0.best_score.cmp(&x.0.best_score))
            .then_with(|| x.1.path.cmp(&y.1.path))
            .then_with(|| x.1.part.cmp(&y.1.part))
    });
    // A file indexed through several lines is one hit, through its most related line.
    let mut seen = std::collections::BTreeSet::new();
    ranked.retain(|(_, entry)| seen.insert(entry.path.clone()));
    let mut hits: Vec<Hit> = Vec::new();
    progress.step(&format!("aligning the best matches for {line}"), None);
    for chunk in ranked.chunks(settings.top.max(1)) {
        if hits.len() >= settings.top {
            break;
        }
        let found: Vec<Hit> = chunk
            .par_iter()
            .filter_map(|(_, entry)| {
                let piece = entry.to_piece();
                let result = compare(&query, &piece, &settings.align);
                (!result.passages.is_empty()).then(|| Hit {
                    query_line: line.clone(),
                    path: entry.path.clone(),
                    corpus_line: entry.part.clone(),
                    title: entry.title.clone(),
                    relatedness: result.relatedness,
                    coverage: result.coverage,
                    passages: result
                        .passages
                        .into_iter()
                        .map(|p| {
                            let found = differences(&query, &piece, &p);
                            let significance = chance.as_ref().and_then(|c| {
                                c.significance_at(p.score, result.notes_a, result.notes_b)
                            });
                            Finding {
                                significance,
                                ..Finding::melodic(p, found)
                            }
                        })
                        .collect(),
                })
            })
            .collect();
        hits.extend(found);
    }
    hits.truncate(settings.top);
    SearchFindings {
        query,
        corpus: corpus.source.clone(),
        align: settings.align.clone(),
        chance: chance.map(|c| c.summary),
        query_lines: vec![line],
        hits,
    }
}

//! Relatedness on real variants: the fixed subset of the development data
//! (`tests/fixtures/relatedness/subset.json`, from `scripts/make_relatedness_sets.py`, music21
//! 10.5.1): tune families checked by hand — the same dance tune printed in Ryan's Mammoth
//! Collection (1883), O'Neill's "Music of Ireland" (1903) or Aird's Airs (1778–), and the same
//! hymn tune in several of Bach's chorale settings — among 600 unrelated tunes of the same
//! collections and the Essen folk songs.
//!
//! For each set: the family AUC (the chance that a pair of one family outscores a member
//! paired with an unrelated tune; Mann–Whitney, ties half) of the relatedness figure must be
//! at least 0.90, and that of −log E at most 0.02 below it (a chance figure that ranks related
//! pairs as well as the figure it accompanies); search over the subset with every member as
//! the query must reach a mean average precision of 0.85. The figures measured on the full
//! development sets are in `docs/relatedness.md`.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::corpus::{CorpusIndex, IndexSource, MelodyEntry};
use collatio::findings::CompareSettings;
use collatio::pipeline::{compare_works, search, CorpusRef, SearchSettings};
use collatio::stats::chance::{ChanceParams, NullChoice};
use collatio::timeline::Piece;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rayon::prelude::*;
use std::collections::BTreeMap;

/// Lowest family AUC of the relatedness figure (the project's floor for this subset).
const MIN_AUC: f64 = 0.90;
/// Largest shortfall of −log E's AUC below the relatedness figure's.
const MAX_E_SHORTFALL: f64 = 0.02;
/// Lowest mean average precision of search on the subset.
const MIN_MAP: f64 = 0.85;

struct Melody {
    set: String,
    source: String,
    family: Option<String>,
    piece: Piece,
}

fn melodies() -> Vec<Melody> {
    let (tunes, divisions) = common::subset();
    tunes
        .into_par_iter()
        .map(|t| Melody {
            piece: common::melody_piece(&t.events, divisions, t.meter.0, t.meter.1),
            set: t.set,
            source: t.source,
            family: t.family,
        })
        .collect()
}

/// Mann–Whitney AUC, ties counted half.
fn auc(related: &[f64], unrelated: &[f64]) -> f64 {
    let mut wins = 0.0;
    for r in related {
        for u in unrelated {
            wins += if r > u {
                1.0
            } else if r == u {
                0.5
            } else {
                0.0
            };
        }
    }
    wins / (related.len() * unrelated.len()) as f64
}

#[test]
fn relatedness_tells_tune_families_from_unrelated_tunes() {
    let all = melodies();
    let background: Vec<usize> = (0..all.len())
        .filter(|&i| all[i].family.is_none())
        .collect();
    let mut sets: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
    for (i, m) in all.iter().enumerate() {
        if m.family.is_some() {
            sets.entry(m.set.as_str()).or_default().push(i);
        }
    }
    assert_eq!(sets.len(), 2, "dance and chorales");
    let settings = CompareSettings {
        harmony: None,
        sync: None,
        ..Default::default()
    };
    let index = CorpusIndex::build(
        all.iter()
            .map(|m| MelodyEntry::from_piece(&m.piece, m.source.clone()))
            .collect(),
    );
    let family_of: BTreeMap<&str, Option<&str>> = all
        .iter()
        .map(|m| (m.source.as_str(), m.family.as_deref()))
        .collect();
    let mut report = String::new();
    let mut failures = Vec::new();
    for (set, members) in &sets {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2026);
        let mut pairs = Vec::new();
        for (k, &i) in members.iter().enumerate() {
            for &j in &members[k + 1..] {
                if all[i].family == all[j].family {
                    pairs.push((i, j, true));
                }
            }
            for &j in background.choose_multiple(&mut rng, 10) {
                pairs.push((i, j, false));
            }
        }
        let figures: Vec<(bool, f64, f64)> = pairs
            .par_iter()
            .map(|&(i, j, related)| {
                let f = compare_works(all[i].piece.clone(), all[j].piece.clone(), &settings, None);
                let e = f
                    .passages
                    .first()
                    .and_then(|p| p.significance.as_ref())
                    .map_or(0.0, |s| -s.e_value.max(1e-300).log10());
                (related, f.relatedness.value, e)
            })
            .collect();
        let pick = |related: bool, k: usize| -> Vec<f64> {
            figures
                .iter()
                .filter(|x| x.0 == related)
                .map(|x| if k == 0 { x.1 } else { x.2 })
                .collect()
        };
        let auc_r = auc(&pick(true, 0), &pick(false, 0));
        let auc_e = auc(&pick(true, 1), &pick(false, 1));
        // Search: every member as the query over the whole subset.
        let search_settings = SearchSettings {
            top: 20,
            chance: ChanceParams {
                null: NullChoice::Off,
                ..Default::default()
            },
            ..Default::default()
        };
        // The index has no file; its identity is built from empty bytes.
        let source = IndexSource::new("subset", &[], &index);
        let aps: Vec<f64> = members
            .par_iter()
            .map(|&q| {
                let family = all[q].family.as_deref();
                let relevant = members
                    .iter()
                    .filter(|&&j| j != q && all[j].family.as_deref() == family)
                    .count();
                let corpus = CorpusRef {
                    index: &index,
                    source: &source,
                };
                let found = search(all[q].piece.clone(), corpus, &search_settings);
                let (mut hits, mut sum, mut rank) = (0usize, 0.0, 0usize);
                for h in found.hits.iter().filter(|h| h.path != all[q].source) {
                    rank += 1;
                    if family_of.get(h.path.as_str()).copied().flatten() == family {
                        hits += 1;
                        sum += hits as f64 / rank as f64;
                    }
                }
                sum / relevant.max(1) as f64
            })
            .collect();
        let map = aps.iter().sum::<f64>() / aps.len() as f64;
        report.push_str(&format!(
            "{set}: {} pairs, AUC relatedness {auc_r:.4}, AUC -log E {auc_e:.4}, search MAP {map:.4}\n",
            figures.len()
        ));
        if auc_r < MIN_AUC {
            failures.push(format!("{set}: relatedness AUC {auc_r:.4} < {MIN_AUC}"));
        }
        if auc_e < auc_r - MAX_E_SHORTFALL {
            failures.push(format!(
                "{set}: -log E AUC {auc_e:.4} more than {MAX_E_SHORTFALL} below {auc_r:.4}"
            ));
        }
        if map < MIN_MAP {
            failures.push(format!("{set}: search MAP {map:.4} < {MIN_MAP}"));
        }
    }
    println!("{report}");
    assert!(failures.is_empty(), "{report}{}", failures.join("\n"));
}

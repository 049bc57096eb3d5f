//! Measures how well collatio's figures tell real variants of one tune from unrelated tunes of
//! the same idiom, on the development sets written by `scripts/make_relatedness_sets.py`
//! (see `docs/relatedness-data.md`).
//!
//! ```sh
//! cargo run --release --example relatedness -- target/relatedness/dance.json \
//!     target/relatedness/background.json
//! cargo run --release --example relatedness -- tests/fixtures/relatedness/subset.json
//! ```
//!
//! For each set (the `set` field of the family members): the family AUC of every figure
//! (related pairs: every pair within a family; unrelated pairs: each member against 10
//! background tunes drawn with a fixed seed), and the mean average precision of `search`
//! with each member as the query over the pool of all members and background tunes.
//! `ALIGN="gap_open=8,gap_extend=4"` overrides alignment parameters.
#![allow(clippy::unwrap_used, clippy::expect_used)]

#[path = "../tests/common/melody.rs"]
mod common;

use collatio::align::AlignParams;
use collatio::corpus::{Corpus, CorpusIndex, IndexSource, MelodyEntry};
use collatio::findings::Findings;
use collatio::pipeline::{search, CorpusRef, SearchSettings};
use collatio::timeline::Piece;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rayon::prelude::*;
use serde_json::Value;
use std::collections::BTreeMap;

/// One melody of the development data.
struct Melody {
    set: String,
    source: String,
    family: Option<String>,
    piece: Piece,
}

fn load(path: &str) -> Vec<Melody> {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e}"));
    let doc: Value = serde_json::from_str(&text).unwrap();
    let divisions = doc["divisions"].as_u64().unwrap() as u32;
    let list = doc["melodies"].as_array().unwrap();
    list.par_iter()
        .map(|m| {
            let meter = m["meter"].as_array().unwrap();
            let events: Vec<common::Event> = m["events"]
                .as_array()
                .unwrap()
                .iter()
                .map(|e| {
                    (
                        e[0].as_i64().map(|p| p as i32),
                        e[1].as_u64().unwrap() as u32,
                    )
                })
                .collect();
            let piece = common::melody_piece(
                &events,
                divisions,
                meter[0].as_u64().unwrap() as u32,
                meter[1].as_u64().unwrap() as u32,
            );
            Melody {
                set: m["set"].as_str().unwrap_or("background").to_string(),
                source: m["source"].as_str().unwrap().to_string(),
                family: m["family"].as_str().map(str::to_string),
                piece,
            }
        })
        .collect()
}

fn align_params() -> AlignParams {
    let mut p = AlignParams::default();
    if let Ok(spec) = std::env::var("ALIGN") {
        for kv in spec.split(',').filter(|s| !s.is_empty()) {
            let (k, v) = kv.split_once('=').unwrap();
            let v: i32 = v.parse().unwrap();
            match k {
                "pitch_match" => p.pitch_match = v,
                "pitch_near" => p.pitch_near = v,
                "pitch_mismatch" => p.pitch_mismatch = v,
                "interval_match" => p.interval_match = v,
                "interval_near" => p.interval_near = v,
                "interval_mismatch" => p.interval_mismatch = v,
                "rhythm_match" => p.rhythm_match = v,
                "rhythm_near" => p.rhythm_near = v,
                "rhythm_mismatch" => p.rhythm_mismatch = v,
                "metric_match" => p.metric_match = v,
                "gap_open" => p.gap_open = v,
                "gap_extend" => p.gap_extend = v,
                "fragment_penalty" => p.fragment_penalty = v,
                "max_fragments" => p.max_fragments = v as usize,
                "min_score" => p.min_score = v,
                _ => panic!("unknown parameter {k}"),
            }
        }
    }
    p
}

/// The figures of one comparison, by name.
fn figures(f: &Findings) -> Vec<(&'static str, f64)> {
    let top = f.passages.first();
    vec![
        ("relatedness", f.relatedness.value),
        ("coverage", f.coverage),
        ("top_score", top.map_or(0.0, |p| f64::from(p.passage.score))),
        (
            "-log10 E",
            top.and_then(|p| p.significance.as_ref())
                .map_or(0.0, |s| -s.e_value.max(1e-300).log10()),
        ),
    ]
}

/// Area under the ROC curve: the chance that a related pair outscores an unrelated one, ties
/// counted half (Mann–Whitney U / (n₁ n₀)).
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
    wins / (related.len() * unrelated.len()).max(1) as f64
}

fn compare_settings(align: &AlignParams) -> collatio::findings::CompareSettings {
    collatio::findings::CompareSettings {
        align: align.clone(),
        harmony: None,
        sync: None,
        ..Default::default()
    }
}

/// Scores of one pair for the quick figures: the best local score and both self scores.
#[derive(Clone, Copy)]
struct Raw {
    s: f64,
    saa: f64,
    sbb: f64,
    m: f64,
    n: f64,
}

/// A query, how many family-mates it has, and its candidates with their scores.
type QueryList = (usize, usize, Vec<(usize, Raw)>);

/// A retrieval variant: name, token kinds with their figure lengths, length-normalised.
type Variant = (&'static str, Vec<(u8, usize)>, bool);

/// Quick figures computed from raw scores, by name.
fn quick(r: &Raw) -> Vec<(&'static str, f64)> {
    vec![
        ("raw", r.s),
        ("/min self", r.s / r.saa.min(r.sbb).max(1.0)),
        ("/geo self", r.s / (r.saa * r.sbb).sqrt().max(1.0)),
        ("/max self", r.s / r.saa.max(r.sbb).max(1.0)),
        ("/sqrt(mn)", r.s / (r.m * r.n).sqrt().max(1.0)),
        ("-ln mn", r.s - 6.0 * (r.m * r.n).ln()),
    ]
}

fn quick_main(
    all: &[Melody],
    sets: &BTreeMap<String, Vec<usize>>,
    background: &[usize],
    align: &AlignParams,
    index: &CorpusIndex,
) {
    use collatio::align::best_score;
    use collatio::features::Sequence;
    let seqs: Vec<Sequence> = all
        .par_iter()
        .map(|m| Sequence::from_piece(&m.piece))
        .collect();
    let selfs: Vec<f64> = seqs
        .par_iter()
        .map(|q| f64::from(best_score(q, q, align)))
        .collect();
    let by_source: BTreeMap<&str, usize> = all
        .iter()
        .enumerate()
        .map(|(i, m)| (m.source.as_str(), i))
        .collect();
    let raw = |i: usize, j: usize| Raw {
        s: f64::from(best_score(&seqs[i], &seqs[j], align)),
        saa: selfs[i],
        sbb: selfs[j],
        m: seqs[i].len() as f64,
        n: seqs[j].len() as f64,
    };
    let candidates: usize = std::env::var("CANDIDATES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20);
    for (set, members) in sets {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2026);
        let mut pairs: Vec<(usize, usize, bool)> = Vec::new();
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
        let scored: Vec<(bool, Raw)> = pairs.par_iter().map(|&(i, j, r)| (r, raw(i, j))).collect();
        println!(
            "{set}: {} related, {} unrelated",
            scored.iter().filter(|x| x.0).count(),
            scored.iter().filter(|x| !x.0).count()
        );
        let names: Vec<&str> = quick(&scored[0].1).iter().map(|x| x.0).collect();
        // Search: the same candidates for every figure, reranked.
        let lists: Vec<QueryList> = members
            .par_iter()
            .map(|&q| {
                let relevant = members
                    .iter()
                    .filter(|&&j| j != q && all[j].family == all[q].family)
                    .count();
                let list: Vec<(usize, Raw)> = index
                    .candidates(&seqs[q], candidates + 1)
                    .iter()
                    .filter_map(|&(m, _)| {
                        by_source
                            .get(index.melodies[m as usize].path.as_str())
                            .copied()
                    })
                    .filter(|&j| j != q)
                    .map(|j| (j, raw(q, j)))
                    .collect();
                (q, relevant, list)
            })
            .collect();
        let recall: f64 = lists
            .iter()
            .map(|(q, rel, list)| {
                list.iter()
                    .filter(|(j, _)| all[*j].family == all[*q].family)
                    .count() as f64
                    / (*rel).max(1) as f64
            })
            .sum::<f64>()
            / lists.len() as f64;
        for (k, name) in names.iter().enumerate() {
            let rel: Vec<f64> = scored
                .iter()
                .filter(|s| s.0)
                .map(|s| quick(&s.1)[k].1)
                .collect();
            let unr: Vec<f64> = scored
                .iter()
                .filter(|s| !s.0)
                .map(|s| quick(&s.1)[k].1)
                .collect();
            let mut aps = Vec::new();
            for (q, relevant, list) in &lists {
                let mut ranked: Vec<(f64, usize)> =
                    list.iter().map(|(j, r)| (quick(r)[k].1, *j)).collect();
                ranked.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
                let (mut hits, mut sum) = (0usize, 0.0);
                for (rank, (_, j)) in ranked.iter().enumerate() {
                    if all[*j].family == all[*q].family {
                        hits += 1;
                        sum += hits as f64 / (rank + 1) as f64;
                    }
                }
                aps.push(sum / (*relevant).max(1) as f64);
            }
            println!(
                "  {name:<12} AUC {:.4}  MAP {:.4}",
                auc(&rel, &unr),
                aps.iter().sum::<f64>() / aps.len() as f64
            );
        }
        println!("  candidate recall {recall:.4} at {candidates}");
    }
}

/// Token kinds tried for retrieval.
fn toks(seq: &collatio::features::Sequence, kind: u8) -> Vec<u16> {
    if kind == 0 {
        // The index's own tokens: interval and rhythm class.
        return collatio::corpus::tokens(seq);
    }
    seq.notes
        .iter()
        .skip(1)
        .map(|n| {
            let interval = n.interval.unwrap_or(0).clamp(-12, 12) + 12;
            let rhythm = n
                .log_ioi_ratio
                .map_or(4, |r| ((r * 2.0).round().clamp(-4.0, 4.0) + 4.0) as i32);
            let coarse = {
                let i = n.interval.unwrap_or(0).clamp(-12, 12);
                let class = [0, 1, 1, 2, 2, 3, 3, 4, 5, 5, 6, 6, 7][i.unsigned_abs() as usize];
                (i.signum() * class + 7) as u16
            };
            match kind {
                2 => coarse,
                3 => coarse * 9 + rhythm as u16,
                _ => interval as u16,
            }
        })
        .collect()
}

fn grams(t: &[u16], n: usize) -> Vec<u64> {
    let mut f: Vec<u64> = t
        .windows(n)
        .map(|w| w.iter().fold(0u64, |acc, &x| (acc << 8) | u64::from(x)))
        .collect();
    f.sort_unstable();
    f.dedup();
    f
}

/// Recall of family-mates among the first `limits` candidates of several retrieval variants.
fn retrieval_main(all: &[Melody], sets: &BTreeMap<String, Vec<usize>>) {
    use collatio::features::Sequence;
    let seqs: Vec<Sequence> = all
        .par_iter()
        .map(|m| Sequence::from_piece(&m.piece))
        .collect();
    let variants: Vec<Variant> = vec![
        ("ir4", vec![(0, 4)], false),
        ("c4", vec![(2, 4)], false),
        ("c5", vec![(2, 5)], false),
        ("c6", vec![(2, 6)], false),
        ("cr4", vec![(3, 4)], false),
        ("ir4+c5", vec![(0, 4), (2, 5)], false),
        ("ir4+c6", vec![(0, 4), (2, 6)], false),
        ("i4+c5", vec![(1, 4), (2, 5)], false),
        ("ir4+i4+c5", vec![(0, 4), (1, 4), (2, 5)], false),
    ];
    for (name, kinds, norm) in variants {
        let figs: Vec<Vec<u64>> = seqs
            .par_iter()
            .map(|q| {
                let mut f = Vec::new();
                for (k, &(kind, n)) in kinds.iter().enumerate() {
                    f.extend(
                        grams(&toks(q, kind), n)
                            .into_iter()
                            .map(|x| x ^ ((k as u64) << 60)),
                    );
                }
                f
            })
            .collect();
        let mut postings: std::collections::HashMap<u64, Vec<u32>> =
            std::collections::HashMap::new();
        for (m, f) in figs.iter().enumerate() {
            for &x in f {
                postings.entry(x).or_default().push(m as u32);
            }
        }
        let total = all.len() as f64;
        for (set, members) in sets {
            let mut recall = [0.0f64; 3];
            for &q in members {
                let mut w = vec![0.0f64; all.len()];
                for x in &figs[q] {
                    if let Some(p) = postings.get(x) {
                        let idf = (total / p.len() as f64).ln();
                        for &m in p {
                            w[m as usize] += idf;
                        }
                    }
                }
                if norm {
                    for (m, v) in w.iter_mut().enumerate() {
                        *v /= (figs[m].len().max(1) as f64).sqrt();
                    }
                }
                let mut order: Vec<usize> =
                    (0..all.len()).filter(|&m| m != q && w[m] > 0.0).collect();
                order.sort_by(|&a, &b| w[b].total_cmp(&w[a]).then(a.cmp(&b)));
                let mates: Vec<usize> = members
                    .iter()
                    .copied()
                    .filter(|&j| j != q && all[j].family == all[q].family)
                    .collect();
                for (k, lim) in [20usize, 50, 200].iter().enumerate() {
                    let top = &order[..order.len().min(*lim)];
                    recall[k] += mates.iter().filter(|j| top.contains(j)).count() as f64
                        / mates.len().max(1) as f64;
                }
            }
            let n = members.len() as f64;
            println!(
                "{name:<14} {set:<9} recall@20 {:.3} @50 {:.3} @200 {:.3}",
                recall[0] / n,
                recall[1] / n,
                recall[2] / n
            );
        }
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let mut all: Vec<Melody> = Vec::new();
    for path in &args {
        all.extend(load(path));
    }
    let align = align_params();
    let settings = compare_settings(&align);
    let background: Vec<usize> = (0..all.len())
        .filter(|&i| all[i].family.is_none())
        .collect();
    let mut sets: BTreeMap<String, Vec<usize>> = BTreeMap::new();
    for (i, m) in all.iter().enumerate() {
        if m.family.is_some() {
            sets.entry(m.set.clone()).or_default().push(i);
        }
    }
    eprintln!(
        "{} melodies: {} background, sets {:?}",
        all.len(),
        background.len(),
        sets.iter().map(|(k, v)| (k, v.len())).collect::<Vec<_>>()
    );
    // The pool for search: every melody, in one index.
    let entries: Vec<MelodyEntry> = all
        .iter()
        .map(|m| MelodyEntry::from_piece(&m.piece, m.source.clone()))
        .collect();
    let index = CorpusIndex::build(entries);
    let family_of: BTreeMap<&str, Option<&str>> = all
        .iter()
        .map(|m| (m.source.as_str(), m.family.as_deref()))
        .collect();
    if std::env::var("RETRIEVAL").is_ok() {
        retrieval_main(&all, &sets);
        return;
    }
    if std::env::var("FULL").is_err() {
        quick_main(&all, &sets, &background, &align, &index);
        return;
    }
    let candidates: usize = std::env::var("CANDIDATES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20);
    for (set, members) in &sets {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2026);
        let mut pairs: Vec<(usize, usize, bool)> = Vec::new();
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
        let start = std::time::Instant::now();
        let scored: Vec<(bool, Vec<(&'static str, f64)>)> = pairs
            .par_iter()
            .map(|&(i, j, related)| {
                let f = collatio::pipeline::compare_works(
                    all[i].piece.clone(),
                    all[j].piece.clone(),
                    &settings,
                    None,
                );
                (related, figures(&f))
            })
            .collect();
        let secs = start.elapsed().as_secs_f64();
        let names: Vec<&str> = scored[0].1.iter().map(|x| x.0).collect();
        println!(
            "{set}: {} related, {} unrelated pairs ({secs:.1} s)",
            scored.iter().filter(|s| s.0).count(),
            scored.iter().filter(|s| !s.0).count()
        );
        for (k, name) in names.iter().enumerate() {
            let rel: Vec<f64> = scored.iter().filter(|s| s.0).map(|s| s.1[k].1).collect();
            let unr: Vec<f64> = scored.iter().filter(|s| !s.0).map(|s| s.1[k].1).collect();
            println!("  AUC {name:<12} {:.4}", auc(&rel, &unr));
        }
        // Search: mean average precision of each member's family-mates.
        let search_settings = SearchSettings {
            align: align.clone(),
            candidates,
            top: candidates,
            ..Default::default()
        };
        let start = std::time::Instant::now();
        // The pool has no index file; its identity is built from empty bytes.
        let source = IndexSource::new("pool", &[], &index);
        let aps: Vec<f64> = members
            .iter()
            .map(|&q| {
                let family = all[q].family.as_deref();
                let relevant = members
                    .iter()
                    .filter(|&&j| j != q && all[j].family.as_deref() == family)
                    .count();
                let found = search(
                    all[q].piece.clone(),
                    CorpusRef {
                        index: &index,
                        source: &source,
                    },
                    &search_settings,
                );
                let mut hits = 0usize;
                let mut sum = 0.0;
                let mut rank = 0usize;
                for h in &found.hits {
                    if h.path == all[q].source {
                        continue;
                    }
                    rank += 1;
                    if family_of.get(h.path.as_str()).copied().flatten() == family {
                        hits += 1;
                        sum += hits as f64 / rank as f64;
                    }
                }
                sum / relevant.max(1) as f64
            })
            .collect();
        println!(
            "  MAP search   {:.4}  ({} queries, {candidates} candidates, {:.3} s per query)",
            aps.iter().sum::<f64>() / aps.len() as f64,
            aps.len(),
            start.elapsed().as_secs_f64() / aps.len() as f64
        );
    }
}

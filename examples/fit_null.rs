//! Fits the length-corrected null of best local scores between unrelated real melodies
//! ([`collatio::stats::reference`]) for the default alignment parameters, on pairs drawn from
//! some collections of the development data, and checks its calibration on pairs drawn from
//! others (see `docs/statistics.md`).
//!
//! ```sh
//! .venv/bin/python scripts/make_relatedness_sets.py     # writes target/relatedness/
//! cargo run --release --example fit_null -- target/relatedness/background.json \
//!     --fit essenFolksong --test ryansMammoth:oneills1850 --pairs 4000
//! ```
//!
//! Pairs join two tunes of different collections when the option names two (`a:b`), else two
//! different tunes of one collection; pairs are drawn with a fixed seed. Prints the fitted
//! numbers as Rust constants and, for the test pairs, the shares of p-values under 0.05 and
//! 0.01 with the binomial 99% interval around each.
#![allow(clippy::unwrap_used, clippy::expect_used)]

#[path = "../tests/common/melody.rs"]
mod common;

use collatio::align::{best_score, AlignParams};
use collatio::features::Sequence;
use collatio::stats::reference::LengthCorrectedNull;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rayon::prelude::*;
use serde_json::Value;

fn load(path: &str) -> Vec<(String, Sequence)> {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e}"));
    let doc: Value = serde_json::from_str(&text).unwrap();
    let divisions = doc["divisions"].as_u64().unwrap() as u32;
    doc["melodies"]
        .as_array()
        .unwrap()
        .par_iter()
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
            (
                m["collection"].as_str().unwrap().to_string(),
                Sequence::from_piece(&piece),
            )
        })
        .collect()
}

/// `count` pairs as the option names them: `a:b` across two collections, `a` within one.
fn pairs(all: &[(String, Sequence)], spec: &str, count: usize, seed: u64) -> Vec<(usize, usize)> {
    let (first, second) = spec.split_once(':').unwrap_or((spec, spec));
    let pick = |name: &str| -> Vec<usize> {
        (0..all.len())
            .filter(|&i| name.split('+').any(|n| all[i].0 == n))
            .collect()
    };
    let (xs, ys) = (pick(first), pick(second));
    assert!(!xs.is_empty() && !ys.is_empty(), "no melodies for {spec}");
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::with_capacity(count);
    while out.len() < count {
        let (&i, &j) = (xs.choose(&mut rng).unwrap(), ys.choose(&mut rng).unwrap());
        if i != j {
            out.push((i, j));
        }
    }
    out
}

fn samples(
    all: &[(String, Sequence)],
    pairs: &[(usize, usize)],
    params: &AlignParams,
) -> Vec<(f64, usize, usize)> {
    pairs
        .par_iter()
        .map(|&(i, j)| {
            let (a, b) = (&all[i].1, &all[j].1);
            let s = f64::from(best_score(a, b, params));
            if std::env::var("ADAPT").is_ok_and(|v| v == "1") {
                let l = collatio::align::chance_lambda(a, b, params).unwrap_or(0.1);
                (s * l, a.len(), b.len())
            } else {
                (s, a.len(), b.len())
            }
        })
        .collect()
}

/// Calibration of the per-query reference null: `queries` melodies of `query_spec`, each
/// against `partners` unrelated melodies of `partner_spec`, each query's null fitted on its
/// scores against `refs` melodies of `ref_spec`.
fn reference_calibration(
    all: &[(String, Sequence)],
    query_spec: &str,
    partner_spec: &str,
    ref_spec: &str,
    params: &AlignParams,
) {
    let pick = |name: &str| -> Vec<usize> {
        (0..all.len())
            .filter(|&i| name.split('+').any(|n| all[i].0 == n))
            .collect()
    };
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(99);
    let queries: Vec<usize> = pick(query_spec)
        .choose_multiple(&mut rng, 200)
        .copied()
        .collect();
    let partners = pick(partner_spec);
    let refs = pick(ref_spec);
    let ps: Vec<f64> = queries
        .par_iter()
        .flat_map_iter(|&q| {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(q as u64);
            let sample: Vec<(f64, usize, usize)> = refs
                .choose_multiple(
                    &mut rng,
                    std::env::var("REFS")
                        .ok()
                        .and_then(|v| v.parse().ok())
                        .unwrap_or(100),
                )
                .filter(|&&r| r != q)
                .map(|&r| {
                    (
                        f64::from(best_score(&all[q].1, &all[r].1, params)),
                        all[q].1.len(),
                        all[r].1.len(),
                    )
                })
                .collect();
            let null = LengthCorrectedNull::fit(&sample).unwrap();
            let mates: Vec<usize> = partners
                .choose_multiple(&mut rng, 10)
                .copied()
                .filter(|&j| j != q)
                .collect();
            mates
                .into_iter()
                .map(|j| {
                    let s = f64::from(best_score(&all[q].1, &all[j].1, params));
                    null.p_value(s, all[q].1.len(), all[j].1.len())
                })
                .collect::<Vec<_>>()
        })
        .collect();
    let n = ps.len() as f64;
    for alpha in [0.05, 0.01] {
        let below = ps.iter().filter(|&&p| p < alpha).count() as f64 / n;
        let half = 2.576 * (alpha * (1.0 - alpha) / n).sqrt();
        println!(
            "reference null, queries {query_spec}, partners {partner_spec}, references {ref_spec}: {} pairs, p < {alpha}: {below:.4} (99% interval {:.4}–{:.4}){}",
            ps.len(),
            alpha - half,
            alpha + half,
            if (below - alpha).abs() <= half { "" } else { "  OUTSIDE" }
        );
    }
}

fn main() {
    if let Ok(spec) = std::env::var("REFERENCE") {
        let args: Vec<String> = std::env::args().skip(1).collect();
        let all = load(&args[0]);
        for triple in spec.split(',') {
            let parts: Vec<&str> = triple.split('/').collect();
            reference_calibration(&all, parts[0], parts[1], parts[2], &AlignParams::default());
        }
        return;
    }
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|k| args.get(k + 1))
            .cloned()
    };
    let path = args.first().expect("the melodies JSON");
    let fit_spec = value("--fit").unwrap_or_else(|| {
        "essenFolksong;ryansMammoth;oneills1850;bach;ryansMammoth:essenFolksong;oneills1850:bach".into()
    });
    let tests: Vec<String> = value("--test")
        .unwrap_or_else(|| "airdsAirs,miscFolk,airdsAirs:miscFolk,ryansMammoth:oneills1850".into())
        .split(',')
        .map(str::to_string)
        .collect();
    let count: usize = value("--pairs").map_or(6000, |v| v.parse().unwrap());
    let all = load(path);
    let params = AlignParams::default();
    let specs: Vec<&str> = fit_spec.split(';').collect();
    let fit_pairs: Vec<(usize, usize)> = specs
        .iter()
        .enumerate()
        .flat_map(|(k, spec)| pairs(&all, spec, count / specs.len(), 20_261_202 + k as u64))
        .collect();
    let null = LengthCorrectedNull::fit(&samples(&all, &fit_pairs, &params)).expect("a fit");
    println!("fit on {fit_spec}: {} pairs", null.pairs);
    println!("    intercept: {:?},", null.intercept);
    println!("    slope: {:?},", null.slope);
    println!("    lambda: {:?},", null.gumbel.lambda);
    println!("    mu: {:?},", null.gumbel.mu);
    for spec in tests {
        let test = samples(&all, &pairs(&all, &spec, count, 20_261_203), &params);
        let n = test.len() as f64;
        for alpha in [0.05, 0.01] {
            let below = test
                .iter()
                .filter(|&&(s, m, k)| null.p_value(s, m, k) < alpha)
                .count() as f64
                / n;
            let half = 2.576 * (alpha * (1.0 - alpha) / n).sqrt();
            println!(
                "test {spec}: p < {alpha}: {:.4} (99% interval {:.4}–{:.4}){}",
                below,
                alpha - half,
                alpha + half,
                if (below - alpha).abs() <= half {
                    ""
                } else {
                    "  OUTSIDE"
                }
            );
        }
    }
}

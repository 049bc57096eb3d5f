//! The null model: how strong is the best local alignment between unrelated melodies of the
//! same make-up as the two compared?
//!
//! Both melodies are shuffled keeping their adjacent pairs ([`super::shuffle`]); each pair of
//! shuffles is aligned with the same parameters (best score over all 12 transpositions, so
//! the search over transpositions is part of the null); a Gumbel distribution is fitted to
//! those maxima ([`super::gumbel`]); each passage gets an E-value and a p-value from it, and
//! an empirical p-value from the shuffles themselves. The generator is seeded (ChaCha8), the
//! shuffles are drawn in order and scored in parallel, and results are collected in order, so
//! the outcome is the same on every machine and every run.

use super::gumbel::Gumbel;
use super::shuffle::shuffle_keeping_runs;
use crate::align::{best_score, AlignParams};
use crate::compare::{Comparison, Significance};
use crate::features::Sequence;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::Serialize;

/// Parameters of the null model.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct NullParams {
    /// Shuffled pairs scored; 0 turns the null model off. Default 100.
    pub shuffles: usize,
    /// Seed of the random generator. Default 20261201.
    pub seed: u64,
    /// Length of the pitch runs the shuffles keep (2 = adjacent pairs, the classic
    /// Altschul–Erickson shuffle). Default 4: calibrated on unrelated real melodies (see
    /// `docs/statistics.md`).
    pub run_length: usize,
}

impl Default for NullParams {
    fn default() -> Self {
        NullParams {
            shuffles: 100,
            seed: 20_261_201,
            run_length: 4,
        }
    }
}

/// What the null model found, as the report states it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NullSummary {
    /// The method in one sentence.
    pub method: String,
    /// Shuffled pairs scored.
    pub shuffles: usize,
    /// Seed used.
    pub seed: u64,
    /// Mean best score of the shuffled pairs.
    pub mean: f64,
    /// Standard deviation of those scores.
    pub sd: f64,
    /// Highest score among the shuffles.
    pub max: i32,
    /// Fitted Gumbel, when the scores had spread.
    pub gumbel: Option<Gumbel>,
    /// Karlin–Altschul K for the two lengths, when fitted.
    pub k: Option<f64>,
    /// Length of the pitch runs the shuffles kept.
    pub run_length: usize,
}

/// The fitted null for one pair of melodies.
#[derive(Debug, Clone)]
pub struct NullModel {
    /// Best score of each shuffled pair, in draw order.
    pub scores: Vec<i32>,
    /// Summary for the report.
    pub summary: NullSummary,
}

impl NullModel {
    /// Scores `params.shuffles` shuffled pairs of `a` and `b` and fits the Gumbel.
    pub fn fit(a: &Sequence, b: &Sequence, align: &AlignParams, params: &NullParams) -> NullModel {
        let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
        let pairs: Vec<(Sequence, Sequence)> = (0..params.shuffles)
            .map(|_| {
                let sa = shuffle_keeping_runs(a, params.run_length, &mut rng);
                let sb = shuffle_keeping_runs(b, params.run_length, &mut rng);
                (sa, sb)
            })
            .collect();
        let scores: Vec<i32> = pairs
            .par_iter()
            .map(|(sa, sb)| best_score(sa, sb, align))
            .collect();
        let as_f64: Vec<f64> = scores.iter().map(|&s| f64::from(s)).collect();
        let n = as_f64.len().max(1) as f64;
        let mean = as_f64.iter().sum::<f64>() / n;
        let sd = if as_f64.len() > 1 {
            (as_f64.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
        } else {
            0.0
        };
        let gumbel = Gumbel::fit(&as_f64);
        NullModel {
            summary: NullSummary {
                method: format!(
                    "the pitches of both melodies shuffled keeping every run of {} \
                     consecutive pitches (the k-let form of Altschul & Erickson 1985), rhythm \
                     and metre left in place; each shuffled pair aligned with the same \
                     parameters, best score over all 12 transpositions; Gumbel distribution \
                     of maxima fitted by moments (Karlin & Altschul 1990)",
                    params.run_length
                ),
                shuffles: scores.len(),
                seed: params.seed,
                mean,
                sd,
                max: scores.iter().copied().max().unwrap_or(0),
                k: gumbel.map(|g| g.k(a.len(), b.len())),
                gumbel,
                run_length: params.run_length,
            },
            scores,
        }
    }

    /// E-value, fitted p-value and empirical p-value of a score.
    pub fn significance(&self, score: i32) -> Significance {
        let x = f64::from(score);
        let at_least = self.scores.iter().filter(|&&s| s >= score).count();
        let empirical_p = (at_least + 1) as f64 / (self.scores.len() + 1) as f64;
        match self.summary.gumbel {
            Some(g) => Significance {
                e_value: g.e_value(x),
                p_value: g.p_value(x),
                empirical_p,
            },
            // No spread among the shuffles (e.g. no shuffled pair aligns at all): only the
            // empirical value is meaningful; E is taken from it.
            None => Significance {
                e_value: -(1.0 - empirical_p).ln(),
                p_value: empirical_p,
                empirical_p,
            },
        }
    }
}

/// Fills in the significance of every passage of a comparison and its null summary.
pub fn assess(
    comparison: &mut Comparison,
    a: &Sequence,
    b: &Sequence,
    align: &AlignParams,
    params: &NullParams,
) {
    if params.shuffles == 0 || a.is_empty() || b.is_empty() {
        return;
    }
    let model = NullModel::fit(a, b, align, params);
    for passage in &mut comparison.passages {
        passage.significance = Some(model.significance(passage.score));
    }
    comparison.null_model = Some(model.summary);
}

//! The null model: how strong is the best local alignment between unrelated melodies of the
//! same make-up as the two compared?
//!
//! Both melodies are shuffled keeping their runs of `run_length` pitches
//! ([`super::shuffle`]); each pair of shuffles is aligned with the same parameters (best score over all 12 transpositions, so
//! the search over transpositions is part of the null); a Gumbel distribution is fitted to
//! those maxima ([`super::gumbel`]); each passage gets an E-value and a p-value from it, and
//! an empirical p-value from the shuffles themselves. The generator is seeded (ChaCha8), the
//! shuffles are drawn in order and scored in parallel, and results are collected in order, so
//! the outcome is the same on every machine and every run.

use super::gumbel::Gumbel;
use super::shuffle::shuffle_keeping_runs;
use super::significance::{NullKind, Significance};
use crate::align::{best_score, AlignParams};
use crate::features::Sequence;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::Serialize;

/// Parameters of the shuffle null model.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct NullParams {
    /// Shuffled pairs scored; 0 turns the shuffle null off. Default 100.
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

/// Fewest distinct shuffled orders of each melody on which an E-value may rest: with fewer,
/// the shuffles are mostly copies of the melody itself (a melody with no repeated figure of
/// three pitches has exactly one order under a shuffle that keeps runs of four), and their
/// scores say little about unrelated melodies.
pub const MIN_DISTINCT_DRAWS: usize = 50;

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
    /// Distinct pitch orders among the shuffles of A (the original order counts when drawn).
    /// Keeping runs of pitches can leave a melody without repeated figures little freedom:
    /// far fewer distinct orders than shuffles mean the null holds much of the melody itself.
    pub distinct_a: usize,
    /// Distinct pitch orders among the shuffles of B.
    pub distinct_b: usize,
}

impl NullSummary {
    /// Whether either melody's shuffles gave fewer distinct pitch orders than half the
    /// shuffles, so that the chance figures are conservative (see [`NullSummary::distinct_a`]).
    pub fn few_orders(&self) -> bool {
        self.shuffles > 0 && 2 * self.distinct_a.min(self.distinct_b) < self.shuffles
    }

    /// Whether either melody's shuffles gave fewer than [`MIN_DISTINCT_DRAWS`] distinct
    /// pitch orders: then no E-value rests on them.
    pub fn too_few_draws(&self) -> bool {
        self.distinct_a.min(self.distinct_b) < MIN_DISTINCT_DRAWS
    }
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
        let distinct = |pick: fn(&(Sequence, Sequence)) -> &Sequence| {
            let orders: std::collections::BTreeSet<Vec<i32>> = pairs
                .iter()
                .map(|pair| pick(pair).notes.iter().map(|n| n.pitch).collect())
                .collect();
            orders.len()
        };
        let (distinct_a, distinct_b) = (distinct(|p| &p.0), distinct(|p| &p.1));
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
                distinct_a,
                distinct_b,
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
                empirical_p: Some(empirical_p),
                null: NullKind::Shuffles,
            },
            // No spread among the shuffles (e.g. no shuffled pair aligns at all): only the
            // empirical value is meaningful; E is taken from it.
            None => Significance {
                e_value: -(1.0 - empirical_p).ln(),
                p_value: empirical_p,
                empirical_p: Some(empirical_p),
                null: NullKind::Shuffles,
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::shuffle::tests::seq;

    fn summary(a: &Sequence, b: &Sequence) -> NullSummary {
        let params = NullParams {
            shuffles: 40,
            ..NullParams::default()
        };
        NullModel::fit(a, b, &AlignParams::default(), &params).summary
    }

    #[test]
    fn a_melody_without_repeated_figures_has_one_order() {
        // Every run of three pitches occurs once, so the graph of the 4-let shuffle is a
        // simple path and its only Eulerian path is the melody itself (BEST theorem; common
        // practice for de Bruijn-type graphs).
        let rising: Vec<i32> = (0..30).map(|i| 48 + (i * 7) % 36).collect();
        let melody = seq(&rising);
        // A tune that keeps returning to the same few figures can be reordered many ways.
        let figures: Vec<i32> = [60, 62, 64, 62, 60, 64, 62, 60, 62, 64]
            .iter()
            .cycle()
            .take(40)
            .copied()
            .zip((0..40).map(|i: i32| (i % 7) % 3))
            .map(|(p, shift)| p + shift)
            .collect();
        let busy = seq(&figures);
        let s = summary(&melody, &busy);
        assert_eq!(s.distinct_a, 1);
        assert!(s.distinct_b > 20, "{}", s.distinct_b);
        assert!(s.few_orders());
        let s = summary(&busy, &busy);
        assert!(!s.few_orders(), "{} {}", s.distinct_a, s.distinct_b);
    }
}

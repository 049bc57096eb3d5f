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
//!
//! Long works (searched from seeds, [`crate::align::is_seeded`]) are sampled: each shuffled
//! pair is cut to a window of [`SAMPLED_WINDOW`] notes on each side, at a seeded random place,
//! aligned in full, and the fitted Gumbel location is moved to the works' own lengths by the
//! Karlin–Altschul relation E = K·m·n·e^(−λS) (Karlin & Altschul 1990): μ grows by
//! ln(m·n / (w_a·w_b)) / λ. The works' scores come from the seeded search, which never exceeds
//! the full search the null models, so the figures are conservative. No empirical p is given
//! then (the windows' scores are not the works').

use super::gumbel::Gumbel;
use super::shuffle::shuffle_keeping_runs;
use super::significance::{NullKind, Significance};
#[cfg(test)]
use crate::align::is_seeded;
use crate::align::{best_score, AlignParams};
use crate::features::Sequence;
use rand::Rng;
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

/// Mixed into the seed of the generator that places the sampled null's windows.
const WINDOW_SEED: u64 = 0x5749_4e44_4f57_5321;

/// A fingerprint of a shuffle's pitch order (SipHash with fixed keys, the same on every
/// machine), for counting distinct orders without keeping them.
fn pitch_order(seq: &Sequence) -> u64 {
    use std::hash::{Hash, Hasher};
    let mut hasher = std::collections::hash_map::DefaultHasher::new();
    for note in &seq.notes {
        note.pitch.hash(&mut hasher);
    }
    hasher.finish()
}

/// Notes of each side of a window of the sampled null for long works: 1,500 × 1,500 note
/// pairs, under the full search's limit, so each window is aligned in full.
pub const SAMPLED_WINDOW: usize = 1500;

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
    /// For long works, the notes of each shuffled melody's window that was aligned (the null
    /// is sampled; see the module documentation); `None` when whole shuffles were aligned.
    pub window: Option<usize>,
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
        let score = |x: &Sequence, y: &Sequence| best_score(x, y, align);
        NullModel::fit_sampled(a, b, params, align.seeds(a.len(), b.len()), &score)
    }

    /// [`NullModel::fit`], sampled in windows or not as asked, each shuffled pair (or window
    /// pair) scored by `score` (the tests compare the two forms on the full search).
    fn fit_sampled(
        a: &Sequence,
        b: &Sequence,
        params: &NullParams,
        sampled: bool,
        score: &(dyn Fn(&Sequence, &Sequence) -> i32 + Sync),
    ) -> NullModel {
        let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
        let window = |len: usize| {
            if sampled {
                len.min(SAMPLED_WINDOW)
            } else {
                len
            }
        };
        let (wa, wb) = (window(a.len()), window(b.len()));
        let cut = |seq: &Sequence, start: usize, len: usize| Sequence {
            notes: seq.notes[start..start + len].to_vec(),
        };
        // The shuffled pairs, kept whole or (sampled) only as their windows, with a fingerprint
        // of each shuffle's pitch order for counting distinct orders. Windows are placed by a
        // generator of their own, so that the shuffles are those of the whole-work null.
        let mut places = ChaCha8Rng::seed_from_u64(params.seed ^ WINDOW_SEED);
        let mut orders_a = std::collections::BTreeSet::new();
        let mut orders_b = std::collections::BTreeSet::new();
        let pairs: Vec<(Sequence, Sequence)> = (0..params.shuffles)
            .map(|_| {
                let sa = shuffle_keeping_runs(a, params.run_length, &mut rng);
                let sb = shuffle_keeping_runs(b, params.run_length, &mut rng);
                orders_a.insert(pitch_order(&sa));
                orders_b.insert(pitch_order(&sb));
                if sampled {
                    let ia = places.gen_range(0..=a.len() - wa);
                    let ib = places.gen_range(0..=b.len() - wb);
                    (cut(&sa, ia, wa), cut(&sb, ib, wb))
                } else {
                    (sa, sb)
                }
            })
            .collect();
        let scores: Vec<i32> = pairs.par_iter().map(|(sa, sb)| score(sa, sb)).collect();
        let (distinct_a, distinct_b) = (orders_a.len(), orders_b.len());
        let as_f64: Vec<f64> = scores.iter().map(|&s| f64::from(s)).collect();
        let n = as_f64.len().max(1) as f64;
        let mean = as_f64.iter().sum::<f64>() / n;
        let sd = if as_f64.len() > 1 {
            (as_f64.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
        } else {
            0.0
        };
        // Sampled: the location moved from the windows' search space to the works'.
        let grow = ((a.len() as f64 * b.len() as f64) / (wa as f64 * wb as f64)).ln();
        let gumbel = Gumbel::fit(&as_f64).map(|g| Gumbel {
            lambda: g.lambda,
            mu: g.mu + grow / g.lambda,
        });
        let sampling = if sampled {
            format!(
                "; the works are long, so each shuffled pair was cut to a window of {wa} and \
                 {wb} notes at a seeded random place, and the fitted location moved to the \
                 works' lengths by E = K·m·n·e^(−λS)"
            )
        } else {
            String::new()
        };
        NullModel {
            summary: NullSummary {
                method: format!(
                    "the pitches of both melodies shuffled keeping every run of {} \
                     consecutive pitches (the k-let form of Altschul & Erickson 1985), rhythm \
                     and metre left in place; each shuffled pair aligned with the same \
                     parameters, best score over all 12 transpositions; Gumbel distribution \
                     of maxima fitted by moments (Karlin & Altschul 1990){sampling}",
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
                window: sampled.then_some(wa.max(wb)),
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
                empirical_p: self.summary.window.is_none().then_some(empirical_p),
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
    use crate::features::SeqNote;
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

    /// A random-walk melody with intervals and rhythm (64-bit LCG, Knuth's MMIX constants).
    fn walk(len: usize, seed: u64) -> Sequence {
        let mut state = seed;
        let mut pitch = 67i32;
        let mut previous: Option<f64> = None;
        let notes = (0..len)
            .map(|i| {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                let next = (pitch + ((state >> 33) % 9) as i32 - 4).clamp(55, 84);
                let ioi = [0.5, 1.0, 1.0, 1.5][((state >> 40) % 4) as usize];
                let note = SeqNote {
                    pitch: next,
                    pitch_class: next.rem_euclid(12) as u8,
                    interval: (i > 0).then_some(next - pitch),
                    ioi,
                    log_ioi_ratio: previous.map(|p: f64| (ioi / p).log2()),
                    metric: crate::features::MetricLevel::Weak,
                };
                pitch = next;
                previous = Some(ioi);
                note
            })
            .collect();
        Sequence { notes }
    }

    // The sampled null of long works carries a fit on windows to the works' lengths by the
    // Karlin–Altschul relation E = K·m·n·e^(−λS) (Karlin & Altschul 1990): its location must
    // agree with the location fitted on whole shuffles of the same works, within the
    // sampling error of two fits of 60 maxima (about 3 points each here), and it gives no
    // empirical p.
    #[test]
    fn the_sampled_null_agrees_with_the_whole_null_by_the_length_relation() {
        let (a, b) = (walk(2100, 1), walk(2050, 2));
        assert!(is_seeded(a.len(), b.len()));
        let params = NullParams {
            shuffles: 60,
            ..NullParams::default()
        };
        let align = AlignParams::default();
        // Both forms on the full search (the works' own search is seeded, which never scores
        // above the full search: the sampled null is conservative for it).
        let full = |x: &Sequence, y: &Sequence| crate::align::best_score_full(x, y, &align);
        let whole = NullModel::fit_sampled(&a, &b, &params, false, &full);
        let sampled = NullModel::fit_sampled(&a, &b, &params, true, &full);
        assert_eq!(whole.summary.window, None);
        assert_eq!(sampled.summary.window, Some(SAMPLED_WINDOW));
        let (gw, gs) = (
            whole.summary.gumbel.unwrap(),
            sampled.summary.gumbel.unwrap(),
        );
        // Windows of 1,500 × 1,500 against 2,100 × 2,050: the location moves by
        // ln(4.3e6 / 2.25e6) / λ ≈ 0.65 / λ, about 12 points.
        println!("sampled {gs:?} whole {gw:?}");
        assert!((gs.mu - gw.mu).abs() <= 8.0, "{gs:?} {gw:?}");
        assert!((gs.lambda / gw.lambda - 1.0).abs() <= 0.35, "{gs:?} {gw:?}");
        assert!(sampled.significance(200).empirical_p.is_none());
        assert!(whole.significance(200).empirical_p.is_some());
        // The same shuffles (and so the same distinct orders) either way.
        assert_eq!(whole.summary.distinct_a, sampled.summary.distinct_a);
    }
}

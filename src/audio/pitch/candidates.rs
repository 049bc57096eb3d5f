//! The frame observations of pYIN (Mauch & Dixon 2014, ICASSP): instead of
//! YIN's one absolute threshold, a Beta(2, 18) prior over 100 thresholds `s = 0.01 … 1.00`.
//! For each threshold the dips of `d′` (YIN's equation 8) below it are candidates, the `r`-th
//! of them in order of lag drawn with a Boltzmann probability `∝ e^{−2r}`; summed over the
//! thresholds, every dip gets a probability of being the period. When no dip lies below a
//! threshold, `no_trough_prob` of its mass goes to the lowest dip. A dip's depth is the vertex
//! of the parabola through it and its neighbours, its period refined as in YIN's step 5.

use super::yin::{parabolic_minimum, parabolic_shift};
use super::PyinOptions;

/// Regularised incomplete beta function I_x(a, b) for positive integers a, b:
/// P(X ≥ a) for X ~ Binomial(a + b − 1, x) (Abramowitz & Stegun 26.5.24 with 6.6.4).
pub fn beta_cdf(x: f64, a: u32, b: u32) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let n = a + b - 1;
    let mut total = 0.0;
    for j in a..=n {
        total += binomial(n, j) * x.powi(j as i32) * (1.0 - x).powi((n - j) as i32);
    }
    total.clamp(0.0, 1.0)
}

/// The binomial coefficient `C(n, k)`, as a product of ratios.
fn binomial(n: u32, k: u32) -> f64 {
    let k = k.min(n - k);
    (0..k).fold(1.0, |acc, i| acc * f64::from(n - i) / f64::from(i + 1))
}

/// The prior mass of each threshold `s/n`, `s = 1 … n` (`n` = `n_thresholds`): the Beta(a, b)
/// probability of the interval `((s − 1)/n, s/n]`.
pub(super) fn threshold_prior(options: &PyinOptions) -> Vec<f64> {
    let n_thresholds = options.n_thresholds.max(1);
    let (a, b) = (options.beta.0.max(1), options.beta.1.max(1));
    (0..n_thresholds)
        .map(|i| {
            beta_cdf((i + 1) as f64 / n_thresholds as f64, a, b)
                - beta_cdf(i as f64 / n_thresholds as f64, a, b)
        })
        .collect()
}

/// One frame's pitch candidates: (f0 in Hz, probability).
type Candidates = Vec<(f64, f64)>;

/// The pYIN candidate distribution of one frame from its `d′` (see the module docs).
pub(super) fn frame_candidates(
    d: &[f64],
    min_lag: usize,
    max_lag: usize,
    sample_rate: u32,
    beta_probs: &[f64],
    options: &PyinOptions,
) -> Candidates {
    let window = &d[min_lag..=max_lag.min(d.len() - 1)];
    let n = window.len();
    if n < 2 {
        return Vec::new();
    }
    let (lo, hi) = window
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    if hi - lo < 1e-9 {
        // A flat d′ (digital silence): no dip, no candidate.
        return Vec::new();
    }
    // Dips: strict local minima (left strictly greater, right at least equal); the ends count
    // when they are below their one neighbour.
    let mut troughs: Vec<usize> = Vec::new();
    for i in 0..n {
        let left = if i == 0 { f64::INFINITY } else { window[i - 1] };
        let right = if i + 1 == n {
            f64::INFINITY
        } else {
            window[i + 1]
        };
        if window[i] < left && window[i] <= right {
            troughs.push(i);
        }
    }
    if troughs.is_empty() {
        return Vec::new();
    }
    // Depth of each dip, interpolated between lags (see the module docs).
    let height: Vec<f64> = troughs
        .iter()
        .map(|&i| parabolic_minimum(window, i))
        .collect();
    let n_thresholds = beta_probs.len();
    let lambda = options.boltzmann;
    let mut probs = vec![0.0f64; troughs.len()];
    let mut global_min = 0usize;
    for t in 0..troughs.len() {
        if height[t] < height[global_min] {
            global_min = t;
        }
    }
    let mut below_none = 0.0;
    // e^{−λ r} for every rank a dip can have.
    let decay: Vec<f64> = (0..=troughs.len())
        .map(|r| (-lambda * r as f64).exp())
        .collect();
    let first = 1.0 - (-lambda).exp();
    for (s, &mass) in beta_probs.iter().enumerate() {
        let threshold = (s + 1) as f64 / n_thresholds as f64;
        let count = height.iter().filter(|&&h| h < threshold).count();
        if count == 0 {
            below_none += mass;
            continue;
        }
        // Boltzmann pmf over ranks 0 … count−1: (1 − e^{−λ}) e^{−λ r} / (1 − e^{−λ count}).
        let norm = mass * first / (1.0 - decay[count]);
        let mut rank = 0usize;
        for (t, &h) in height.iter().enumerate() {
            if h < threshold {
                probs[t] += norm * decay[rank];
                rank += 1;
            }
        }
    }
    probs[global_min] += options.no_trough_prob * below_none;
    let sr = f64::from(sample_rate);
    troughs
        .iter()
        .zip(probs)
        .filter(|(_, p)| *p > 0.0)
        .map(|(&i, p)| {
            let period = (min_lag + i) as f64 + parabolic_shift(window, i);
            (sr / period.max(1.0), p)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn beta_2_18_cdf() {
        // Beta(2, 18): mean 0.1; I_x(2,18) = 1 − (1−x)^19 − 19x(1−x)^18 (binomial form).
        let x: f64 = 0.1;
        let expected = 1.0 - (1.0 - x).powi(19) - 19.0 * x * (1.0 - x).powi(18);
        assert!((beta_cdf(x, 2, 18) - expected).abs() < 1e-12);
        assert_eq!(beta_cdf(0.0, 2, 18), 0.0);
        assert_eq!(beta_cdf(1.0, 2, 18), 1.0);
    }
}

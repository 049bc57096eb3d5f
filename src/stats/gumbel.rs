//! The extreme-value (Gumbel) distribution of local alignment maxima.
//!
//! Karlin & Altschul (1990): the best local alignment score S of unrelated sequences follows
//! P(S ≥ x) ≈ 1 − exp(−K m n e^(−λx)), and the expected number of distinct alignments scoring
//! at least x is E = K m n e^(−λx). For gapped scores λ and K have no closed form; they are
//! estimated from scores of shuffled sequences by the method of moments:
//! λ = π / (s √6), μ = mean − γ / λ (γ = 0.5772…, Euler's constant), so that
//! E = e^(−λ (x − μ)) and K = e^(λμ) / (m n).
//!
//! # Deviations
//! Tails of gapped scores deviate from the Gumbel form for long sequences (Wolfsheimer,
//! Burghardt & Hartmann 2007); with a few hundred shuffles the fit is only as good as its
//! sample. An empirical p-value from the shuffles is reported beside the fitted one.

use serde::Serialize;

/// Euler–Mascheroni constant.
const EULER_GAMMA: f64 = 0.577_215_664_901_532_9;

/// A fitted Gumbel distribution of maxima.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Gumbel {
    /// Scale parameter λ (per score point).
    pub lambda: f64,
    /// Location μ (score points): the mode of the maxima.
    pub mu: f64,
}

impl Gumbel {
    /// Fits by moments; `None` for fewer than two samples or no spread.
    pub fn fit(samples: &[f64]) -> Option<Gumbel> {
        if samples.len() < 2 {
            return None;
        }
        let n = samples.len() as f64;
        let mean = samples.iter().sum::<f64>() / n;
        let variance = samples.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
        let sd = variance.sqrt();
        if !(sd > 0.0 && sd.is_finite()) {
            return None;
        }
        let lambda = std::f64::consts::PI / (sd * 6f64.sqrt());
        Some(Gumbel {
            lambda,
            mu: mean - EULER_GAMMA / lambda,
        })
    }

    /// Expected number of unrelated alignments scoring at least `x`: e^(−λ (x − μ)).
    pub fn e_value(&self, x: f64) -> f64 {
        (-self.lambda * (x - self.mu)).exp()
    }

    /// Probability that the best unrelated alignment scores at least `x`: 1 − exp(−E).
    pub fn p_value(&self, x: f64) -> f64 {
        -(-self.e_value(x)).exp_m1()
    }

    /// Karlin–Altschul K for a search space of m × n: e^(λμ) / (m n).
    pub fn k(&self, m: usize, n: usize) -> f64 {
        (self.lambda * self.mu).exp() / (m.max(1) as f64 * n.max(1) as f64)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    /// Samples drawn from a known Gumbel (inverse transform: x = μ − ln(−ln u) / λ) give back
    /// its parameters (the moment estimators are consistent).
    #[test]
    fn moment_fit_recovers_known_parameters() {
        let (lambda, mu) = (0.25, 40.0);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let samples: Vec<f64> = (0..20_000)
            .map(|_| {
                let u: f64 = rng.gen_range(1e-12..1.0);
                mu - (-u.ln()).ln() / lambda
            })
            .collect();
        let fit = Gumbel::fit(&samples).unwrap();
        assert!((fit.lambda - lambda).abs() / lambda < 0.03, "{fit:?}");
        assert!((fit.mu - mu).abs() < 0.2, "{fit:?}");
        // At the mode, E = 1 and p = 1 − 1/e.
        assert!((fit.p_value(fit.mu) - (1.0 - (-1.0f64).exp())).abs() < 1e-12);
    }

    #[test]
    fn degenerate_samples_do_not_fit() {
        assert!(Gumbel::fit(&[3.0, 3.0, 3.0]).is_none());
        assert!(Gumbel::fit(&[1.0]).is_none());
    }
}

//! A null model fitted on real melodies: how strong the best local alignment between two
//! unrelated real melodies of given lengths tends to be, for one scoring system.
//!
//! Method (Pearson 1998, "Empirical statistical estimates for sequence similarity searches",
//! *J. Mol. Biol.* 276:71–84; the extreme-value form of Karlin & Altschul 1990): over many
//! pairs of unrelated melodies, the best local score S of a pair of lengths m and n grows with
//! ln(m·n); a least-squares line S ≈ a + b·ln(m·n) removes that trend, and the residuals
//! follow an extreme-value (Gumbel) distribution whose scale 1/λ and mode μ are fitted by
//! moments (λ = π / (s√6), μ = mean − γ/λ, γ = 0.5772…). For a score S between melodies of
//! lengths m and n:
//!
//! - the expected number of unrelated pairs of these lengths whose best score reaches S is
//!   E = exp(−λ (S − a − b·ln(m·n) − μ)),
//! - the probability that the best score of one unrelated pair reaches S is p = 1 − exp(−E).
//!
//! With b = 1/λ this is exactly Karlin & Altschul's E = K m n e^(−λS); fitting b freely takes up
//! the edge effects and the gaps that make real local scores grow more slowly with length
//! (Altschul & Gish 1996). The fit holds for the scoring system it was made with: other
//! alignment parameters need another fit, or the shuffle null ([`super::null`]).

use super::gumbel::Gumbel;
use serde::Serialize;

/// A length-corrected extreme-value null of best local alignment scores.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LengthCorrectedNull {
    /// Intercept a of the score trend, points.
    pub intercept: f64,
    /// Slope b of the score trend per unit of ln(m·n), points.
    pub slope: f64,
    /// The Gumbel distribution of the residuals (λ per point, μ in points).
    pub gumbel: Gumbel,
    /// Pairs of melodies the fit used.
    pub pairs: usize,
}

impl LengthCorrectedNull {
    /// Fits the null to `(score, m, n)` samples: best scores of unrelated pairs with their
    /// lengths in notes. `None` with fewer than 50 samples or without spread in the
    /// residuals.
    pub fn fit(samples: &[(f64, usize, usize)]) -> Option<LengthCorrectedNull> {
        if samples.len() < 50 {
            return None;
        }
        let xs: Vec<f64> = samples
            .iter()
            .map(|&(_, m, n)| (m.max(1) as f64 * n.max(1) as f64).ln())
            .collect();
        let ys: Vec<f64> = samples.iter().map(|s| s.0).collect();
        let count = xs.len() as f64;
        let mean_x = xs.iter().sum::<f64>() / count;
        let mean_y = ys.iter().sum::<f64>() / count;
        let sxx: f64 = xs.iter().map(|x| (x - mean_x).powi(2)).sum();
        let sxy: f64 = xs
            .iter()
            .zip(&ys)
            .map(|(x, y)| (x - mean_x) * (y - mean_y))
            .sum();
        let slope = if sxx > 0.0 { sxy / sxx } else { 0.0 };
        let intercept = mean_y - slope * mean_x;
        let residuals: Vec<f64> = xs
            .iter()
            .zip(&ys)
            .map(|(x, y)| y - intercept - slope * x)
            .collect();
        let gumbel = Gumbel::fit(&residuals)?;
        Some(LengthCorrectedNull {
            intercept,
            slope,
            gumbel,
            pairs: samples.len(),
        })
    }

    /// The expected number of unrelated pairs of lengths `m` and `n` whose best score reaches
    /// `score`.
    pub fn e_value(&self, score: f64, m: usize, n: usize) -> f64 {
        let trend = self.intercept + self.slope * (m.max(1) as f64 * n.max(1) as f64).ln();
        (-self.gumbel.lambda * (score - trend - self.gumbel.mu)).exp()
    }

    /// The probability that one unrelated pair of lengths `m` and `n` scores at least
    /// `score`: 1 − exp(−E).
    pub fn p_value(&self, score: f64, m: usize, n: usize) -> f64 {
        -(-self.e_value(score, m, n)).exp_m1()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    /// Samples drawn from the model itself give back its parameters (common practice for
    /// checking an estimator).
    #[test]
    fn the_fit_recovers_the_model_it_samples() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let (a, b, lambda, mu) = (12.0, 9.0, 0.08, 4.0);
        let samples: Vec<(f64, usize, usize)> = (0..20_000)
            .map(|_| {
                let m = rng.gen_range(20..400);
                let n = rng.gen_range(20..400);
                let u: f64 = rng.gen_range(1e-12..1.0);
                // Inverse of the Gumbel distribution function F(x) = exp(−e^(−λ(x−μ))).
                let residual = mu - (-u.ln()).ln() / lambda;
                (a + b * ((m * n) as f64).ln() + residual, m, n)
            })
            .collect();
        let fit = LengthCorrectedNull::fit(&samples).unwrap();
        assert!((fit.slope - b).abs() < 0.3, "{fit:?}");
        assert!((fit.gumbel.lambda - lambda).abs() < 0.004, "{fit:?}");
        // The location as a whole (intercept and mode together) at a typical length.
        let at =
            |f: &LengthCorrectedNull| f.intercept + f.gumbel.mu + f.slope * (100.0f64 * 100.0).ln();
        let want = a + mu + b * (100.0f64 * 100.0).ln();
        assert!((at(&fit) - want).abs() < 0.5, "{} {want}", at(&fit));
        // p of the model's own median is one half.
        let median = want - (std::f64::consts::LN_2.ln()) / lambda;
        assert!((fit.p_value(median, 100, 100) - 0.5).abs() < 0.02);
    }
}

//! The YIN front end (de Cheveigné & Kawahara 2002, *JASA* 111(4)): the difference function
//! of a centred frame over the pairs of samples `τ` apart within it (the shrinking window of
//! the paper's equation 2), computed for all lags at once through the expansion of
//! equation 7 with one real FFT and one inverse FFT; the cumulative mean normalised
//! difference `d′` (equation 8); the absolute threshold (step 4) and parabolic interpolation
//! (step 5) of plain YIN. The form of the difference function and the deviations from the
//! paper are set out in the [parent module](super)'s docs.

use super::PyinOptions;
use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use std::sync::Arc;

/// The YIN front end: computes the cumulative mean normalised difference of one frame with a
/// reusable FFT plan (see the module docs for the form of the difference function).
pub struct Yin {
    frame_length: usize,
    max_lag: usize,
    size: usize,
    forward: Arc<dyn RealToComplex<f32>>,
    inverse: Arc<dyn ComplexToReal<f32>>,
    buf_frame: Vec<f32>,
    spec_frame: Vec<Complex<f32>>,
    scratch_fwd: Vec<Complex<f32>>,
    scratch_inv: Vec<Complex<f32>>,
    correlation: Vec<f32>,
    prefix: Vec<f64>,
    difference: Vec<f64>,
}

impl std::fmt::Debug for Yin {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Yin")
            .field("frame_length", &self.frame_length)
            .field("max_lag", &self.max_lag)
            .finish()
    }
}

impl Yin {
    /// Plans for frames of `frame_length` samples and lags `0 ..= max_lag` (the FFT size is
    /// the smallest `2^a·3^b·5^c` ≥ `frame_length + max_lag`, so the circular correlation
    /// equals the linear one at every lag used).
    pub fn new(frame_length: usize, max_lag: usize) -> Yin {
        let max_lag = max_lag.max(2);
        let frame_length = frame_length.max(max_lag + 2);
        let size = smooth_fft_size(frame_length + max_lag);
        let mut planner = RealFftPlanner::<f32>::new();
        let forward = planner.plan_fft_forward(size);
        let inverse = planner.plan_fft_inverse(size);
        Yin {
            frame_length,
            max_lag,
            size,
            buf_frame: forward.make_input_vec(),
            spec_frame: forward.make_output_vec(),
            scratch_fwd: forward.make_scratch_vec(),
            scratch_inv: inverse.make_scratch_vec(),
            correlation: inverse.make_output_vec(),
            prefix: Vec::with_capacity(frame_length + 1),
            difference: vec![0.0; max_lag + 1],
            forward,
            inverse,
        }
    }

    /// Samples a frame holds.
    pub fn frame_length(&self) -> usize {
        self.frame_length
    }

    /// Cumulative mean normalised difference `d′(τ)`, τ = 0 ..= max_lag, of `frame`
    /// (at most [`Yin::frame_length`] samples, the rest ignored), into `out`. A shorter frame
    /// — one clipped at the start or end of the signal — is analysed at its own length, so
    /// that no pair of samples compared lies outside the signal; only a frame shorter than
    /// twice the longest lag is zero-padded to that length, so that every lag still compares
    /// at least as many pairs as the lag itself.
    pub fn cmndf(&mut self, frame: &[f32], out: &mut Vec<f64>) {
        let (max_lag, size) = (self.max_lag, self.size);
        let len = frame.len().max(2 * max_lag).min(self.frame_length);
        for (i, slot) in self.buf_frame.iter_mut().enumerate() {
            *slot = if i < len {
                frame.get(i).copied().unwrap_or(0.0)
            } else {
                0.0
            };
        }
        // Energies as prefix sums of squares (f64 to keep the differences exact enough).
        self.prefix.clear();
        self.prefix.push(0.0f64);
        let mut acc = 0.0f64;
        for &x in &self.buf_frame[..len] {
            acc += f64::from(x) * f64::from(x);
            self.prefix.push(acc);
        }
        let ok_a = self
            .forward
            .process_with_scratch(
                &mut self.buf_frame,
                &mut self.spec_frame,
                &mut self.scratch_fwd,
            )
            .is_ok();
        // Autocorrelation r(τ) = Σ_j x_j x_{j+τ}  ⇔  R = |X|².
        for b in self.spec_frame.iter_mut() {
            *b = Complex::new(b.norm_sqr(), 0.0);
        }
        let ok_c = self
            .inverse
            .process_with_scratch(
                &mut self.spec_frame,
                &mut self.correlation,
                &mut self.scratch_inv,
            )
            .is_ok();
        out.clear();
        out.resize(max_lag + 1, 1.0);
        if !(ok_a && ok_c) {
            return;
        }
        let scale = 1.0 / size as f64;
        let prefix = &self.prefix;
        let total = prefix[len];
        for tau in 0..=max_lag.min(len - 1) {
            // Σ_{j<L−τ} x_j² + Σ_{j≥τ} x_j² − 2 r(τ); rounding can make tiny values negative.
            let energies = prefix[len - tau] + (total - prefix[tau]);
            let r = f64::from(self.correlation[tau]) * scale;
            // Per pair, scaled to the whole frame: L − τ pairs are summed at lag τ.
            let pairs = len as f64 / (len - tau) as f64;
            self.difference[tau] = (energies - 2.0 * r).max(0.0) * pairs;
        }
        // Equation 8.
        out[0] = 1.0;
        let mut running = 0.0f64;
        for (tau, (o, d)) in out.iter_mut().zip(&self.difference).enumerate().skip(1) {
            running += d;
            *o = if running > 0.0 {
                d * tau as f64 / running
            } else {
                1.0
            };
        }
    }
}

/// The smallest `2^a · 3^b · 5^c` at least `n`: a size rustfft transforms about as fast per
/// point as a power of two (mixed radix), often much smaller than the next power of two.
fn smooth_fft_size(n: usize) -> usize {
    let mut size = n.max(1);
    loop {
        let mut m = size;
        for p in [2, 3, 5] {
            while m % p == 0 {
                m /= p;
            }
        }
        if m == 1 {
            return size;
        }
        size += 1;
    }
}

/// The frame of `length` samples centred on sample `centre`, clipped to the signal (shorter
/// than `length` near either end; empty past the end).
pub(super) fn centred_frame(signal: &[f32], centre: usize, length: usize) -> &[f32] {
    let start = centre.saturating_sub(length / 2).min(signal.len());
    let end = (centre + length - length / 2).min(signal.len()).max(start);
    &signal[start..end]
}

/// Parabolic interpolation of the minimum at index `i` of `y` (step 5 of YIN): the offset of
/// the vertex of the parabola through `(i−1, i, i+1)`, within ±1.
pub(super) fn parabolic_shift(y: &[f64], i: usize) -> f64 {
    if i == 0 || i + 1 >= y.len() {
        return 0.0;
    }
    let (a, b, c) = (y[i - 1], y[i], y[i + 1]);
    let denominator = a - 2.0 * b + c;
    if denominator.abs() < 1e-12 {
        return 0.0;
    }
    (0.5 * (a - c) / denominator).clamp(-1.0, 1.0)
}

/// Value at the vertex of the parabola through `(i−1, i, i+1)` of `y` (the interpolated depth
/// of a dip), between 0 and `y[i]`.
pub(super) fn parabolic_minimum(y: &[f64], i: usize) -> f64 {
    if i == 0 || i + 1 >= y.len() {
        return y.get(i).copied().unwrap_or(1.0);
    }
    let (a, b, c) = (y[i - 1], y[i], y[i + 1]);
    let curvature = a - 2.0 * b + c;
    if curvature <= 1e-12 {
        return b;
    }
    (b - (a - c) * (a - c) / (8.0 * curvature)).clamp(0.0, b)
}

/// Lag range used for `fmin`..`fmax`: `floor(sr / fmax) ..= ceil(sr / fmin)`.
pub(super) fn lag_range(sample_rate: u32, fmin: f64, fmax: f64) -> (usize, usize) {
    let sr = f64::from(sample_rate);
    let fmin = fmin.max(1.0);
    let fmax = fmax.max(fmin * 1.01).min(sr / 2.0);
    let min_lag = ((sr / fmax).floor() as usize).max(2);
    let max_lag = ((sr / fmin).ceil() as usize).max(min_lag + 2);
    (min_lag, max_lag)
}

/// Plain YIN (steps 1–5 of de Cheveigné & Kawahara 2002): f0 in Hz per frame (0 where no dip
/// falls below `threshold` — the paper's step 4 then takes the global minimum; here such a
/// frame is reported unvoiced). Frames as in [`crate::audio`].
pub fn yin(
    signal: &[f32],
    sample_rate: u32,
    hop_length: usize,
    options: &PyinOptions,
    threshold: f64,
) -> Vec<f64> {
    let (min_lag, max_lag) = lag_range(sample_rate, options.fmin, options.fmax);
    let mut analyser = Yin::new(options.frame_length, max_lag);
    let hop = hop_length.max(1);
    let n_frames = 1 + signal.len() / hop;
    let mut d = Vec::new();
    let mut f0 = Vec::with_capacity(n_frames);
    for k in 0..n_frames {
        let frame = centred_frame(signal, k * hop, analyser.frame_length());
        analyser.cmndf(frame, &mut d);
        let mut found = 0.0;
        for tau in min_lag..max_lag {
            let dip = d[tau] < d[tau - 1] && d[tau] <= d[tau + 1];
            if dip && parabolic_minimum(&d, tau) < threshold {
                let period = tau as f64 + parabolic_shift(&d, tau);
                if period > 0.0 {
                    found = f64::from(sample_rate) / period;
                }
                break;
            }
        }
        f0.push(found);
    }
    f0
}

#[cfg(test)]
mod tests {
    use super::*;

    use crate::audio::test_signals::sine;

    #[test]
    fn fft_sizes_are_5_smooth_and_big_enough() {
        // 2304 = 2^8 · 3^2 and 2250 = 2 · 3^2 · 5^3: the smallest such sizes at or above.
        assert_eq!(smooth_fft_size(2258), 2304);
        assert_eq!(smooth_fft_size(2249), 2250);
        assert_eq!(smooth_fft_size(2048), 2048);
        assert_eq!(smooth_fft_size(0), 1);
    }

    #[test]
    fn frames_are_clipped_to_the_signal() {
        let x: Vec<f32> = (0..100).map(|i| i as f32).collect();
        assert_eq!(centred_frame(&x, 0, 10), &x[0..5]);
        assert_eq!(centred_frame(&x, 50, 10), &x[45..55]);
        assert_eq!(centred_frame(&x, 98, 10), &x[93..100]);
        assert!(centred_frame(&x, 200, 10).is_empty());
    }

    #[test]
    fn a_clipped_frame_is_analysed_at_its_own_length() {
        // Half a frame of a 441 Hz sine (period 50 samples at 22,050 Hz): as the clipped first
        // frame of a recording, its difference function dips to ~0 at the period; zero-padded
        // to the full length it would not.
        let x: Vec<f32> = sine(441.0, 0.05).into_iter().take(950).collect();
        assert_eq!(x.len(), 950);
        let mut yin = Yin::new(1900, 358);
        let mut d = Vec::new();
        yin.cmndf(&x, &mut d);
        assert!(d[50] < 1e-3, "d'(50) = {}", d[50]);
        let mut padded = x.clone();
        padded.resize(1900, 0.0);
        yin.cmndf(&padded, &mut d);
        assert!(d[50] > 1e-2, "zero-padded d'(50) = {}", d[50]);
    }

    /// The difference function straight from its definition (the mean squared difference
    /// over the pairs of samples `τ` apart within the frame, times the frame length), the
    /// obviously-correct reference.
    fn naive_cmndf(x: &[f32], len: usize, max_lag: usize) -> Vec<f64> {
        let d: Vec<f64> = (0..=max_lag)
            .map(|tau| {
                let pairs = len.saturating_sub(tau);
                let sum: f64 = (0..pairs)
                    .map(|j| {
                        let a = f64::from(x.get(j).copied().unwrap_or(0.0));
                        let b = f64::from(x.get(j + tau).copied().unwrap_or(0.0));
                        (a - b) * (a - b)
                    })
                    .sum();
                sum * len as f64 / pairs.max(1) as f64
            })
            .collect();
        let mut out = vec![1.0; max_lag + 1];
        let mut running = 0.0;
        for tau in 1..=max_lag {
            running += d[tau];
            out[tau] = if running > 0.0 {
                d[tau] * tau as f64 / running
            } else {
                1.0
            };
        }
        out
    }

    #[test]
    fn fft_difference_matches_the_definition() {
        let mut seed = 99u64;
        for (w, max_lag) in [
            (16usize, 8usize),
            (64, 40),
            (100, 77),
            (1024, 338),
            (1690, 358),
            (2048, 358),
        ] {
            let x: Vec<f32> = (0..w)
                .map(|_| {
                    seed = seed
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    ((seed >> 33) as f32 / (1u64 << 31) as f32) - 0.5
                })
                .collect();
            let mut yin = Yin::new(w, max_lag);
            let mut got = Vec::new();
            yin.cmndf(&x, &mut got);
            let expected = naive_cmndf(&x, w, max_lag);
            for (tau, (g, e)) in got.iter().zip(&expected).enumerate() {
                assert!(
                    (g - e).abs() < 1e-3,
                    "W {w}: first difference at lag {tau}: {g} vs {e}"
                );
            }
        }
    }
}

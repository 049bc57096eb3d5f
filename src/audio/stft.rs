//! Short-time Fourier transform with a periodic Hann window.
//!
//! Frame `k` covers samples `k·hop − n_fft/2 .. k·hop + n_fft/2` (centred frames; samples
//! outside the signal are zero, like librosa's `center=True, pad_mode="constant"`), so a signal
//! of `n` samples has `1 + n / hop` frames. The FFT plan, window and buffers are built once in
//! [`Stft::new`] and reused for every frame (the planner habit of RustFFT); the real-input FFT
//! is realfft's, which runs on rustfft.
//!
//! Output per frame: the power spectrum |X(k)|², bins `0 ..= n_fft/2`, bin `k` at
//! `k · sample_rate / n_fft` Hz, unnormalised (a full-scale sine of amplitude A gives a peak of
//! about (A · n_fft / 4)² with the Hann window).

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use std::sync::Arc;

/// A reusable STFT analyser.
pub struct Stft {
    n_fft: usize,
    hop_length: usize,
    window: Vec<f32>,
    fft: Arc<dyn RealToComplex<f32>>,
    input: Vec<f32>,
    output: Vec<Complex<f32>>,
    scratch: Vec<Complex<f32>>,
    power: Vec<f32>,
}

impl std::fmt::Debug for Stft {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Stft")
            .field("n_fft", &self.n_fft)
            .field("hop_length", &self.hop_length)
            .finish()
    }
}

/// Periodic Hann window of length `n`: w[i] = 0.5 − 0.5 cos(2π i / n) (the DFT-even form used
/// for spectral analysis, Harris 1978).
pub fn hann(n: usize) -> Vec<f32> {
    (0..n)
        .map(|i| (0.5 - 0.5 * (2.0 * std::f64::consts::PI * i as f64 / n as f64).cos()) as f32)
        .collect()
}

/// Fills `out` with the samples of `signal` from `start` (negative before the signal; zero
/// outside it) times `window`, and zeros after the window's length (zero padding when `out` is
/// longer than the window).
pub(crate) fn windowed_frame(signal: &[f32], start: isize, window: &[f32], out: &mut [f32]) {
    for (i, slot) in out.iter_mut().enumerate() {
        let at = start + i as isize;
        let sample = if at >= 0 {
            signal.get(at as usize).copied().unwrap_or(0.0)
        } else {
            0.0
        };
        *slot = window.get(i).map_or(0.0, |w| sample * w);
    }
}

impl Stft {
    /// Plans an STFT of `n_fft` samples (≥ 2; 2048 ≈ 93 ms at 22,050 Hz) every `hop_length`
    /// samples (≥ 1).
    pub fn new(n_fft: usize, hop_length: usize) -> Stft {
        let n_fft = n_fft.max(2);
        let mut planner = RealFftPlanner::<f32>::new();
        let fft = planner.plan_fft_forward(n_fft);
        let input = fft.make_input_vec();
        let output = fft.make_output_vec();
        let scratch = fft.make_scratch_vec();
        Stft {
            n_fft,
            hop_length: hop_length.max(1),
            window: hann(n_fft),
            fft,
            input,
            output,
            scratch,
            power: vec![0.0; n_fft / 2 + 1],
        }
    }

    /// FFT size in samples.
    pub fn n_fft(&self) -> usize {
        self.n_fft
    }

    /// Frame advance in samples.
    pub fn hop_length(&self) -> usize {
        self.hop_length
    }

    /// Number of frequency bins, `n_fft / 2 + 1`.
    pub fn n_bins(&self) -> usize {
        self.n_fft / 2 + 1
    }

    /// Number of frames for a signal of `len` samples: `1 + len / hop_length`.
    pub fn n_frames(&self, len: usize) -> usize {
        1 + len / self.hop_length
    }

    /// Power spectrum |X|² of frame `k` of `signal`, bins `0 ..= n_fft/2`.
    pub fn power_frame(&mut self, signal: &[f32], k: usize) -> &[f32] {
        let start = (k * self.hop_length) as isize - (self.n_fft / 2) as isize;
        windowed_frame(signal, start, &self.window, &mut self.input);
        if self
            .fft
            .process_with_scratch(&mut self.input, &mut self.output, &mut self.scratch)
            .is_err()
        {
            // Only possible with buffers of the wrong length, which `new` rules out.
            self.power.iter_mut().for_each(|p| *p = 0.0);
            return &self.power;
        }
        for (p, c) in self.power.iter_mut().zip(&self.output) {
            *p = c.norm_sqr();
        }
        &self.power
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Naive O(n²) DFT power spectrum, the obviously-correct reference.
    fn naive_power(frame: &[f64]) -> Vec<f64> {
        let n = frame.len();
        (0..=n / 2)
            .map(|k| {
                let (mut re, mut im) = (0.0, 0.0);
                for (t, x) in frame.iter().enumerate() {
                    let a = -2.0 * std::f64::consts::PI * (k * t) as f64 / n as f64;
                    re += x * a.cos();
                    im += x * a.sin();
                }
                re * re + im * im
            })
            .collect()
    }

    #[test]
    fn matches_a_direct_dft_over_sizes() {
        let mut seed = 12345u64;
        for n_fft in [8usize, 16, 30, 64, 100, 256] {
            let signal: Vec<f32> = (0..3 * n_fft)
                .map(|_| {
                    seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1);
                    ((seed >> 33) as f32 / (1u64 << 31) as f32) - 0.5
                })
                .collect();
            let mut stft = Stft::new(n_fft, n_fft / 4);
            let window = hann(n_fft);
            for k in 0..stft.n_frames(signal.len()) {
                let start = (k * stft.hop_length()) as isize - (n_fft / 2) as isize;
                let frame: Vec<f64> = (0..n_fft)
                    .map(|i| {
                        let at = start + i as isize;
                        let x = if at >= 0 {
                            signal.get(at as usize).copied().unwrap_or(0.0)
                        } else {
                            0.0
                        };
                        f64::from(x * window[i])
                    })
                    .collect();
                let expected = naive_power(&frame);
                let got = stft.power_frame(&signal, k).to_vec();
                for (i, (g, e)) in got.iter().zip(&expected).enumerate() {
                    assert!(
                        (f64::from(*g) - e).abs() <= 1e-3 * (1.0 + e.abs()),
                        "n_fft {n_fft} frame {k}: first difference at bin {i}: {g} vs {e}"
                    );
                }
            }
        }
    }
}

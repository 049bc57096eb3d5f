//! Spectral peaks and the pitch salience function of Salamon & Gómez (2012), section II-A/B.
//!
//! In: a mono signal and a frame index. Out: the frame's sinusoidal peaks (frequency in Hz,
//! linear amplitude) and its salience over 10-cent pitch bins, and the salience function's
//! own peaks (pitch in cents above `fmin`, salience).
//!
//! 1. **Spectrum.** A periodic Hann window of `window_length` samples centred on sample
//!    `k · hop_length` (zero outside the signal, as in [`crate::audio::stft`]), zero-padded to
//!    `n_fft`, one real FFT. Magnitudes are scaled by `2 / Σ w` so a sine of amplitude `A`
//!    peaks at about `A`.
//! 2. **Equal-loudness weighting** (optional). Salamon & Gómez filter the signal with an
//!    equal-loudness filter first; here each peak's amplitude is multiplied by the A-weighting
//!    curve of IEC 61672-1 (normalised to 1 at 1 kHz), the standard closed-form approximation
//!    of the inverted 40-phon equal-loudness contour (ISO 226).
//! 3. **Peaks.** Local maxima of the magnitude up to `max_peak_hz` (5 kHz in the paper),
//!    refined by quadratic interpolation of the log magnitude of the peak bin and its two
//!    neighbours (Smith & Serra 1987): offset `p = ½ (a − c) / (a − 2b + c)` bins, log
//!    amplitude `b − ¼ (a − c) p`. Peaks more than γ = `peak_threshold_db` below the frame's
//!    strongest are dropped, and so are side lobes: peaks within 3 bins of the unpadded window
//!    of a peak 26 dB stronger (the Hann window's first side lobe is 31.5 dB down at 2.5 bins,
//!    inside the paper's γ of 40 dB).
//! 4. **Salience** (their equation 3): for 10-cent bins `b` from `fmin`,
//!    `S(b) = Σ_h Σ_i E(a_i) · G(b, h, f_i) · a_i^β`, where `G = cos²(δ π / 2) · α^(h−1)` when
//!    `δ = |B(f_i / h) − b| / 10 ≤ 1` (bins of 10 cents, so within a semitone) and 0
//!    otherwise, `h = 1 … n_harmonics`, and `E(a_i) = 1` when the peak is less than γ dB below
//!    the frame's strongest peak, else 0.
//! 5. **Salience peaks.** Local maxima of `S` refined by parabolic interpolation, at least
//!    `min_salience_contrast` times the frame's median salience; at most
//!    `max_salience_peaks` per frame, strongest first.
//!
//! # Deviations
//! - A-weighting of peak amplitudes instead of the paper's time-domain equal-loudness filter
//!   (a Yule–Walker IIR plus a 150 Hz high-pass); both attenuate the bass.
//! - Quadratic interpolation of the zero-padded log spectrum instead of phase-vocoder
//!   frequency refinement; with the default 2× zero padding the error stays within a cent
//!   for a Hann window (checked in the tests).
//! - Salience peaks must stand `min_salience_contrast` times above the frame's median
//!   salience (collatio's addition), so that noise, whose salience is nearly flat, has none.
//! - Frames below an absolute floor (`min_peak_amplitude`) have no peaks, so digital silence
//!   has no salience.

use super::MelodyOptions;
use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use std::sync::Arc;

/// Resolution of the precomputed cos² kernels: fractional bin positions per bin (0.1 cent at
/// 10-cent bins).
const KERNEL_STEPS: usize = 100;

/// Amplitude ratio above which a nearby weaker peak is taken for a side lobe (26 dB).
const SIDE_LOBE_RATIO: f64 = 20.0;

/// A sinusoidal peak of one frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpectralPeak {
    /// Frequency in Hz (interpolated).
    pub hz: f64,
    /// Linear amplitude (a sine of amplitude `A` gives about `A`), after the loudness weight.
    pub amplitude: f64,
}

/// A peak of the salience function.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SaliencePeak {
    /// Pitch in cents above `fmin` (interpolated).
    pub cents: f32,
    /// Salience (sum of weighted amplitudes, linear).
    pub salience: f32,
}

/// The planned analysis: FFT, window, tables and buffers, built once and reused per frame.
pub struct SalienceAnalyser {
    window: Vec<f32>,
    hop_length: usize,
    n_fft: usize,
    sample_rate: f64,
    fft: Arc<dyn RealToComplex<f32>>,
    input: Vec<f32>,
    output: Vec<Complex<f32>>,
    scratch: Vec<Complex<f32>>,
    magnitude: Vec<f32>,
    scale: f32,
    max_bin: usize,
    floor: f32,
    gamma: f32,
    weighting: f64,
    fmin: f64,
    bins_per_semitone: f64,
    n_bins: usize,
    /// `log2(h)` in bins, per harmonic.
    harmonic_offsets: Vec<f64>,
    /// `α^(h−1)` per harmonic.
    harmonic_weights: Vec<f64>,
    beta: f64,
    /// `G` without the harmonic weight, for a harmonic falling at bin `c + q / KERNEL_STEPS`
    /// (integer `c`): kernel `q` holds the weights of bins `c − width ..= c + width + 1`.
    kernels: Vec<f32>,
    kernel_len: usize,
    max_salience_peaks: usize,
    contrast: f32,
    sorted: Vec<f32>,
    peaks: Vec<SpectralPeak>,
    keep: Vec<bool>,
    salience: Vec<f32>,
}

impl std::fmt::Debug for SalienceAnalyser {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SalienceAnalyser")
            .field("window_length", &self.window.len())
            .field("n_fft", &self.n_fft)
            .field("n_bins", &self.n_bins)
            .finish()
    }
}

/// A-weighting gain (IEC 61672-1) at `hz`, linear, 1 at 1 kHz.
pub fn a_weighting(hz: f64) -> f64 {
    fn r(f: f64) -> f64 {
        let f2 = f * f;
        12194.0f64.powi(2) * f2 * f2
            / ((f2 + 20.6f64.powi(2))
                * ((f2 + 107.7f64.powi(2)) * (f2 + 737.9f64.powi(2))).sqrt()
                * (f2 + 12194.0f64.powi(2)))
    }
    r(hz) / r(1000.0)
}

impl SalienceAnalyser {
    /// Plans the analysis of a signal at `sample_rate` Hz with `options` (window, FFT size,
    /// peak and salience parameters; see [`MelodyOptions`]).
    pub fn new(sample_rate: u32, options: &MelodyOptions) -> SalienceAnalyser {
        let window_length = options.window_length.max(4);
        let n_fft = options.n_fft.max(window_length);
        let mut planner = RealFftPlanner::<f32>::new();
        let fft = planner.plan_fft_forward(n_fft);
        let window = crate::audio::stft::hann(window_length);
        let sum: f32 = window.iter().sum();
        let sample_rate = f64::from(sample_rate.max(1));
        let nyquist_bin = n_fft / 2;
        let max_bin = ((options.max_peak_hz / sample_rate * n_fft as f64) as usize)
            .min(nyquist_bin.saturating_sub(1));
        let bins_per_semitone = options.bins_per_semitone.max(1) as f64;
        let fmin = options.fmin.max(1.0);
        let n_bins = ((12.0 * bins_per_semitone * (options.fmax.max(fmin) / fmin).log2()).round()
            as usize)
            .max(1);
        let n_harmonics = options.n_harmonics.max(1);
        let width = options.bins_per_semitone.max(1);
        SalienceAnalyser {
            hop_length: options.hop_length.max(1),
            n_fft,
            sample_rate,
            input: fft.make_input_vec(),
            output: fft.make_output_vec(),
            scratch: fft.make_scratch_vec(),
            fft,
            magnitude: vec![0.0; nyquist_bin + 1],
            scale: if sum > 0.0 { 2.0 / sum } else { 1.0 },
            window,
            max_bin,
            floor: options.min_peak_amplitude as f32,
            gamma: 10f32.powf(-(options.peak_threshold_db as f32) / 20.0),
            weighting: options.loudness_weighting,
            fmin,
            bins_per_semitone,
            n_bins,
            harmonic_offsets: (1..=n_harmonics)
                .map(|h| 12.0 * bins_per_semitone * (h as f64).log2())
                .collect(),
            harmonic_weights: (0..n_harmonics)
                .map(|h| options.alpha.powi(h as i32))
                .collect(),
            beta: options.beta,
            kernels: (0..KERNEL_STEPS)
                .flat_map(|q| {
                    let offset = q as f64 / KERNEL_STEPS as f64;
                    (0..2 * width + 2).map(move |j| {
                        let delta = ((j as f64 - width as f64 - offset) / width as f64).abs();
                        if delta <= 1.0 {
                            (delta * std::f64::consts::FRAC_PI_2).cos().powi(2) as f32
                        } else {
                            0.0
                        }
                    })
                })
                .collect(),
            kernel_len: 2 * width + 2,
            max_salience_peaks: options.max_salience_peaks.max(1),
            contrast: options.min_salience_contrast as f32,
            sorted: Vec::with_capacity(n_bins),
            peaks: Vec::new(),
            keep: Vec::new(),
            salience: vec![0.0; n_bins],
        }
    }

    /// Number of salience bins (600 for 55–1760 Hz at 10 cents).
    pub fn n_bins(&self) -> usize {
        self.n_bins
    }

    /// Number of frames of a signal of `len` samples: `1 + len / hop_length`.
    pub fn n_frames(&self, len: usize) -> usize {
        1 + len / self.hop_length
    }

    /// Sinusoidal peaks of frame `k` (steps 1–3 of the module docs), strongest first is not
    /// guaranteed: they are in order of frequency.
    pub fn spectral_peaks(&mut self, signal: &[f32], k: usize) -> &[SpectralPeak] {
        self.peaks.clear();
        let half = self.window.len() / 2;
        let start = (k * self.hop_length) as isize - half as isize;
        crate::audio::stft::windowed_frame(signal, start, &self.window, &mut self.input);
        if self
            .fft
            .process_with_scratch(&mut self.input, &mut self.output, &mut self.scratch)
            .is_err()
        {
            // Only with buffers of the wrong length, which `new` rules out.
            return &self.peaks;
        }
        let mut top = 0.0f32;
        // Only the bins up to `max_bin + 1` are looked at.
        let used = (self.max_bin + 2).min(self.magnitude.len());
        for (m, c) in self.magnitude[..used].iter_mut().zip(&self.output) {
            *m = c.norm_sqr().sqrt() * self.scale;
        }
        for m in &self.magnitude[1..=self.max_bin] {
            top = top.max(*m);
        }
        if top < self.floor {
            return &self.peaks;
        }
        // The γ threshold is applied after weighting (below); unweighted peaks far below the
        // frame maximum cannot pass it, because the weight is at most ≈ 1.3.
        let coarse = top * self.gamma * 0.5;
        let bin_hz = self.sample_rate / self.n_fft as f64;
        let m = &self.magnitude;
        for b in 2..=self.max_bin {
            let v = m[b];
            if v <= coarse || v <= m[b - 1] || v < m[b + 1] {
                continue;
            }
            let (la, lb, lc) = (
                f64::from(m[b - 1].max(1e-20)).ln(),
                f64::from(v).ln(),
                f64::from(m[b + 1].max(1e-20)).ln(),
            );
            let denominator = la - 2.0 * lb + lc;
            let p = if denominator < 0.0 {
                (0.5 * (la - lc) / denominator).clamp(-0.5, 0.5)
            } else {
                0.0
            };
            let hz = (b as f64 + p) * bin_hz;
            let mut amplitude = (lb - 0.25 * (la - lc) * p).exp();
            if self.weighting != 0.0 {
                amplitude *= a_weighting(hz).powf(self.weighting);
            }
            self.peaks.push(SpectralPeak { hz, amplitude });
        }
        let strongest = self.peaks.iter().map(|p| p.amplitude).fold(0.0, f64::max);
        let threshold = strongest * f64::from(self.gamma);
        self.peaks.retain(|p| p.amplitude >= threshold);
        // Side lobes: the Hann window's first side lobe lies 2.5 bins (of the unpadded window)
        // from its main lobe, 31.5 dB down; a peak within 3 such bins of one 26 dB (20×)
        // stronger is taken for one.
        let reach = 3.0 * self.sample_rate / self.window.len() as f64;
        let peaks = &self.peaks;
        self.keep.clear();
        self.keep.extend((0..peaks.len()).map(|i| {
            let (f, a) = (peaks[i].hz, peaks[i].amplitude);
            let near = |j: &usize| (peaks[*j].hz - f).abs() <= reach;
            let louder = |j: usize| peaks[j].amplitude >= SIDE_LOBE_RATIO * a;
            !((i + 1..peaks.len()).take_while(near).any(louder)
                || (0..i).rev().take_while(near).any(louder))
        }));
        let mut flags = self.keep.iter();
        self.peaks.retain(|_| flags.next().copied().unwrap_or(true));
        &self.peaks
    }

    /// Salience of frame `k` over the pitch bins (step 4), bin `b` at
    /// `fmin · 2^(b / (12 · bins_per_semitone))` Hz.
    pub fn salience_frame(&mut self, signal: &[f32], k: usize) -> &[f32] {
        self.spectral_peaks(signal, k);
        self.salience.iter_mut().for_each(|s| *s = 0.0);
        let width = self.bins_per_semitone;
        let (n_bins, len) = (self.n_bins, self.kernel_len);
        let last = n_bins as f64 - 1.0;
        let log_fmin = self.fmin.log2();
        for peak in &self.peaks {
            let bin = 12.0 * width * (peak.hz.log2() - log_fmin);
            let energy = if self.beta == 1.0 {
                peak.amplitude
            } else {
                peak.amplitude.powf(self.beta)
            };
            for (offset, weight) in self.harmonic_offsets.iter().zip(&self.harmonic_weights) {
                let centre = bin - offset;
                if centre < -width {
                    break;
                }
                if centre > last + width {
                    continue;
                }
                let floor = centre.floor();
                let q = (((centre - floor) * KERNEL_STEPS as f64) as usize).min(KERNEL_STEPS - 1);
                // Bin of the kernel's first weight, and the part of the kernel inside the bins.
                let first = floor as isize - width as isize;
                let skip = (-first).max(0) as usize;
                let take = (n_bins as isize - first).clamp(0, len as isize) as usize;
                if skip >= take {
                    continue;
                }
                let gain = (weight * energy) as f32;
                let kernel = self.kernels.get(q * len + skip..q * len + take);
                let bins = self
                    .salience
                    .get_mut((first + skip as isize) as usize..(first + take as isize) as usize);
                if let (Some(kernel), Some(bins)) = (kernel, bins) {
                    for (s, g) in bins.iter_mut().zip(kernel) {
                        *s += gain * g;
                    }
                }
            }
        }
        &self.salience
    }

    /// Peaks of the salience of frame `k` (step 5), appended to `out` strongest first.
    pub fn salience_peaks(&mut self, signal: &[f32], k: usize, out: &mut Vec<SaliencePeak>) {
        let start = out.len();
        let step = 100.0 / self.bins_per_semitone as f32;
        self.salience_frame(signal, k);
        self.sorted.clear();
        self.sorted.extend_from_slice(&self.salience);
        let n = self.sorted.len();
        let median = if n > 0 {
            *self.sorted.select_nth_unstable_by(n / 2, f32::total_cmp).1
        } else {
            0.0
        };
        let floor = (self.contrast * median).max(f32::MIN_POSITIVE);
        let s = &self.salience;
        for b in 0..n {
            let v = s[b];
            let left = if b > 0 { s[b - 1] } else { 0.0 };
            let right = if b + 1 < n { s[b + 1] } else { 0.0 };
            if v < floor || v <= left || v < right {
                continue;
            }
            let denominator = left - 2.0 * v + right;
            let p = if denominator < 0.0 {
                (0.5 * (left - right) / denominator).clamp(-0.5, 0.5)
            } else {
                0.0
            };
            out.push(SaliencePeak {
                cents: (b as f32 + p) * step,
                salience: v - 0.25 * (left - right) * p,
            });
        }
        let frame = &mut out[start..];
        frame.sort_by(|a, b| b.salience.total_cmp(&a.salience));
        out.truncate(start + self.max_salience_peaks.min(out.len() - start));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::audio::test_signals::sine;

    fn harmonic(hz: f64, seconds: f64, partials: usize) -> Vec<f32> {
        let mut out = vec![0.0f32; (seconds * 22_050.0) as usize];
        for p in 1..=partials {
            for (o, s) in out.iter_mut().zip(sine(hz * p as f64, seconds)) {
                *o += s / p as f32;
            }
        }
        out
    }

    #[test]
    fn a_weighting_matches_the_standard_table() {
        // IEC 61672-1 table 3: A-weighting at 100 Hz −19.1 dB, 1 kHz 0 dB, 4 kHz +1.0 dB.
        let db = |f: f64| 20.0 * a_weighting(f).log10();
        assert!((db(100.0) + 19.1).abs() < 0.1);
        assert!(db(1000.0).abs() < 1e-9);
        assert!((db(4000.0) - 1.0).abs() < 0.1);
    }

    #[test]
    fn peak_frequency_within_a_cent() {
        let options = MelodyOptions::default();
        let mut analyser = SalienceAnalyser::new(22_050, &options);
        let signal = sine(441.7, 1.0);
        let peaks = analyser.spectral_peaks(&signal, 20).to_vec();
        assert_eq!(peaks.len(), 1, "{peaks:?}");
        assert!((1200.0 * (peaks[0].hz / 441.7).log2()).abs() < 1.0);
    }

    /// Equation 3 of Salamon & Gómez (2012) written out directly, per bin, per harmonic, per
    /// peak, as the reference for the fast summation.
    fn naive_salience(peaks: &[SpectralPeak], o: &MelodyOptions, n_bins: usize) -> Vec<f64> {
        (0..n_bins)
            .map(|b| {
                let mut s = 0.0;
                for h in 1..=o.n_harmonics {
                    for p in peaks {
                        let bin = 120.0 * (p.hz / h as f64 / o.fmin).log2();
                        let delta = (bin - b as f64).abs() / 10.0;
                        if delta <= 1.0 {
                            s += (delta * std::f64::consts::FRAC_PI_2).cos().powi(2)
                                * o.alpha.powi(h as i32 - 1)
                                * p.amplitude.powf(o.beta);
                        }
                    }
                }
                s
            })
            .collect()
    }

    #[test]
    fn salience_matches_equation_3() {
        let options = MelodyOptions::default();
        let mut analyser = SalienceAnalyser::new(22_050, &options);
        let mut signal = harmonic(196.0, 1.0, 8);
        for (o, s) in signal.iter_mut().zip(harmonic(311.1, 1.0, 5)) {
            *o += 0.5 * s;
        }
        for k in [5usize, 20, 40] {
            let peaks = analyser.spectral_peaks(&signal, k).to_vec();
            let expected = naive_salience(&peaks, &options, analyser.n_bins());
            let got = analyser.salience_frame(&signal, k).to_vec();
            let top = expected.iter().copied().fold(0.0, f64::max);
            for (b, (g, e)) in got.iter().zip(&expected).enumerate() {
                assert!(
                    (f64::from(*g) - e).abs() <= 2e-3 * top,
                    "frame {k}: first difference at bin {b}: {g} vs {e}"
                );
            }
        }
    }

    #[test]
    fn strongest_salience_peak_is_the_fundamental() {
        let options = MelodyOptions::default();
        let mut analyser = SalienceAnalyser::new(22_050, &options);
        let signal = harmonic(220.0, 1.0, 10);
        let mut peaks = Vec::new();
        analyser.salience_peaks(&signal, 20, &mut peaks);
        let hz = options.fmin * 2f64.powf(f64::from(peaks[0].cents) / 1200.0);
        assert!((1200.0 * (hz / 220.0).log2()).abs() < 5.0, "{hz}");
    }

    #[test]
    fn silence_has_no_peaks() {
        let options = MelodyOptions::default();
        let mut analyser = SalienceAnalyser::new(22_050, &options);
        let mut peaks = Vec::new();
        analyser.salience_peaks(&vec![0.0; 10_000], 3, &mut peaks);
        assert!(peaks.is_empty());
    }
}

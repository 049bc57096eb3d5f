//! Tuning estimation and chroma (pitch-class profile) from the STFT.
//!
//! - **Tuning**: spectral peaks found by parabolic interpolation of the power spectrum
//!   (quadratic interpolation of a peak and its two neighbours, Smith & Serra 1987), between
//!   150 and 4000 Hz, above 0.1 × the frame maximum; peaks at least as strong as the median
//!   peak vote with their deviation from the equal-tempered grid (A4 = 440 Hz) into a histogram
//!   of 0.01-semitone bins over [−0.5, 0.5); the tuning is the left edge of the fullest bin, in
//!   fractions of a semitone. The same recipe as librosa's `estimate_tuning`, so the two agree.
//! - **Chroma**: the power spectrum is projected onto 12 pitch classes with D. P. W. Ellis's
//!   chroma filter bank (`chromagram_E`, 2007; also librosa's `filters.chroma`): for every FFT
//!   bin a Gaussian bump over the 12 classes, centred on the bin's pitch class, with a width of
//!   half the bin's width in chroma bins (at least one); each bin's weights have unit L2 norm and
//!   are scaled by a Gaussian over octaves centred on octave 5 (C5 ≈ 523 Hz) with a standard
//!   deviation of 2 octaves. Each frame is then divided by its maximum (L∞ norm). Row 0 is C.
//!
//! Conventions: frames and times as in [`crate::audio`]; chroma values in [0, 1].

use serde::Serialize;

/// Pitch class profile per frame.
#[derive(Debug, Clone, Serialize)]
pub struct Chroma {
    /// Estimated tuning in fractions of a semitone relative to A4 = 440 Hz (−0.5 ..< 0.5).
    pub tuning: f64,
    /// Frame advance in seconds.
    pub hop_seconds: f64,
    /// One row of 12 values per frame, pitch class 0 = C; each frame's maximum is 1 (or all 0).
    pub frames: Vec<[f32; 12]>,
}

/// Lower edge of the frequency range searched for tuning peaks, Hz.
const TUNING_FMIN: f64 = 150.0;
/// Upper edge of the frequency range searched for tuning peaks, Hz.
const TUNING_FMAX: f64 = 4000.0;
/// Peaks below this fraction of the frame maximum are ignored.
const TUNING_THRESHOLD: f32 = 0.1;
/// Histogram resolution in semitones.
const TUNING_RESOLUTION: f64 = 0.01;

/// Collects spectral peaks frame by frame for [`TuningEstimator::estimate`].
#[derive(Debug, Clone, Default)]
pub struct TuningEstimator {
    /// (frequency in Hz, interpolated peak power)
    peaks: Vec<(f64, f32)>,
}

impl TuningEstimator {
    /// Adds the peaks of one power spectrum (`n_fft / 2 + 1` bins) at `sample_rate` Hz.
    pub fn push(&mut self, power: &[f32], sample_rate: u32, n_fft: usize) {
        let n = power.len();
        if n < 3 {
            return;
        }
        let max = power.iter().copied().fold(0.0f32, f32::max);
        if max <= 0.0 {
            return;
        }
        let reference = TUNING_THRESHOLD * max;
        let bin_hz = f64::from(sample_rate) / n_fft as f64;
        let fmax = TUNING_FMAX.min(f64::from(sample_rate) / 2.0);
        for i in 1..n - 1 {
            let f = i as f64 * bin_hz;
            if f < TUNING_FMIN || f >= fmax {
                continue;
            }
            let (a, b, c) = (power[i - 1], power[i], power[i + 1]);
            // Local maximum of the thresholded spectrum: strictly above the left neighbour,
            // at least the right one.
            let left = if a > reference { a } else { 0.0 };
            let right = if c > reference { c } else { 0.0 };
            if b <= reference || b <= left || b < right {
                continue;
            }
            let curvature = 2.0 * b - a - c;
            let slope = 0.5 * (c - a);
            let shift = if curvature.abs() > f32::MIN_POSITIVE {
                slope / curvature
            } else {
                0.0
            };
            let magnitude = b + 0.5 * slope * shift;
            self.peaks
                .push(((i as f64 + f64::from(shift)) * bin_hz, magnitude));
        }
    }

    /// The tuning deviation in fractions of a semitone, −0.5 ..< 0.5 (0 with no peaks).
    pub fn estimate(&self) -> f64 {
        if self.peaks.is_empty() {
            return 0.0;
        }
        let mut magnitudes: Vec<f32> = self.peaks.iter().map(|p| p.1).collect();
        magnitudes.sort_by(f32::total_cmp);
        let m = magnitudes.len();
        let median = if m % 2 == 1 {
            magnitudes[m / 2]
        } else {
            0.5 * (magnitudes[m / 2 - 1] + magnitudes[m / 2])
        };
        let n_bins = (1.0 / TUNING_RESOLUTION).ceil() as usize;
        let mut counts = vec![0usize; n_bins];
        for &(f, mag) in &self.peaks {
            if mag < median || f <= 0.0 {
                continue;
            }
            // Deviation from the nearest equal-tempered pitch (A4 = 440 Hz), in semitones.
            let semis = 12.0 * (f / (440.0 / 16.0)).log2();
            let mut residual = semis.rem_euclid(1.0);
            if residual >= 0.5 {
                residual -= 1.0;
            }
            let bin = (((residual + 0.5) / TUNING_RESOLUTION).floor() as usize).min(n_bins - 1);
            counts[bin] += 1;
        }
        let best = counts
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.cmp(b.1).then(b.0.cmp(&a.0)))
            .map_or(0, |(i, _)| i);
        -0.5 + best as f64 * TUNING_RESOLUTION
    }
}

/// Ellis's chroma filter bank: `12 × (n_fft/2 + 1)` weights, row 0 = C, for a tuning offset in
/// fractions of a semitone. See the module docs for the shape of the weights.
pub fn chroma_filter_bank(sample_rate: u32, n_fft: usize, tuning: f64) -> Vec<[f32; 12]> {
    const N_CHROMA: f64 = 12.0;
    const CENTRE_OCTAVE: f64 = 5.0;
    const OCTAVE_WIDTH: f64 = 2.0;
    let a440 = 440.0 * 2f64.powf(tuning / N_CHROMA);
    // Fractional chroma bin of every FFT bin (bin 0 gets a value 1.5 octaves below bin 1).
    let mut position = vec![0.0f64; n_fft];
    for (k, p) in position.iter_mut().enumerate().skip(1) {
        let f = k as f64 * f64::from(sample_rate) / n_fft as f64;
        *p = N_CHROMA * (f / (a440 / 16.0)).log2();
    }
    if n_fft > 1 {
        position[0] = position[1] - 1.5 * N_CHROMA;
    }
    let width: Vec<f64> = (0..n_fft)
        .map(|k| {
            if k + 1 < n_fft {
                (position[k + 1] - position[k]).max(1.0)
            } else {
                1.0
            }
        })
        .collect();
    let half = (N_CHROMA / 2.0).round();
    let n_bins = n_fft / 2 + 1;
    let mut bank = vec![[0f32; 12]; n_bins];
    for (k, column) in bank.iter_mut().enumerate() {
        let mut weights = [0f64; 12];
        for (c, w) in weights.iter_mut().enumerate() {
            // Distance from chroma c, wrapped into −6 .. 6 (c counted from A, as the
            // positions are; the roll to C happens below).
            let d = (position[k] - c as f64 + half + 10.0 * N_CHROMA).rem_euclid(N_CHROMA) - half;
            *w = (-0.5 * (2.0 * d / width[k]).powi(2)).exp();
        }
        let norm = weights.iter().map(|w| w * w).sum::<f64>().sqrt();
        let octave = position[k] / N_CHROMA;
        let scale = (-0.5 * ((octave - CENTRE_OCTAVE) / OCTAVE_WIDTH).powi(2)).exp();
        for (c, slot) in column.iter_mut().enumerate() {
            // Row c of the output is C + c semitones = A + (c + 3).
            let from = (c + 3) % 12;
            let w = if norm > 0.0 {
                weights[from] / norm
            } else {
                0.0
            };
            *slot = (w * scale) as f32;
        }
    }
    bank
}

/// Chroma of every frame: the filter bank applied to the power spectrum, each frame divided by
/// its maximum.
pub fn chroma_stft(
    stft: &mut super::stft::Stft,
    samples: &[f32],
    sample_rate: u32,
    tuning: f64,
) -> Chroma {
    let bank = chroma_filter_bank(sample_rate, stft.n_fft(), tuning);
    let n_frames = stft.n_frames(samples.len());
    let mut frames = Vec::with_capacity(n_frames);
    for k in 0..n_frames {
        let power = stft.power_frame(samples, k);
        let mut acc = [0f64; 12];
        for (p, column) in power.iter().zip(&bank) {
            if *p == 0.0 {
                continue;
            }
            for c in 0..12 {
                acc[c] += f64::from(column[c]) * f64::from(*p);
            }
        }
        let max = acc.iter().copied().fold(0.0f64, f64::max);
        let mut row = [0f32; 12];
        if max > f64::from(f32::MIN_POSITIVE) {
            for c in 0..12 {
                row[c] = (acc[c] / max) as f32;
            }
        }
        frames.push(row);
    }
    Chroma {
        tuning,
        hop_seconds: stft.hop_length() as f64 / f64::from(sample_rate),
        frames,
    }
}

/// Beat-synchronous chroma: the mean of the frames between consecutive beats (Bartsch &
/// Wakefield 2005; Ellis & Poliner 2007 use it for cover songs). Segment boundaries are frame
/// 0, the frame of every beat (`floor(t / hop_seconds)`, clipped to the frames) and the end,
/// duplicates removed, as librosa's `util.sync(..., aggregate=mean, pad=True)` takes them; one
/// output row per segment.
pub fn beat_synchronous(frames: &[[f32; 12]], hop_seconds: f64, beats: &[f64]) -> Vec<[f32; 12]> {
    let n = frames.len();
    if n == 0 || hop_seconds <= 0.0 {
        return Vec::new();
    }
    let mut bounds: Vec<usize> = vec![0, n];
    bounds.extend(
        beats
            .iter()
            .filter(|t| t.is_finite())
            .map(|t| ((t / hop_seconds).floor().max(0.0) as usize).min(n)),
    );
    bounds.sort_unstable();
    bounds.dedup();
    bounds
        .windows(2)
        .map(|w| {
            let mut mean = [0f32; 12];
            for frame in &frames[w[0]..w[1]] {
                for (m, v) in mean.iter_mut().zip(frame) {
                    *m += *v;
                }
            }
            let count = (w[1] - w[0]) as f32;
            mean.map(|m| m / count)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    use crate::audio::test_signals::sine;

    #[test]
    fn a_sine_lights_its_pitch_class_and_tuning() {
        // A4 = 440 Hz (ISO 16) → pitch class 9 (A); 25 cents sharp → tuning +0.25 semitone.
        for (hz, class, tuning) in [
            (440.0, 9usize, 0.0),
            (440.0 * 2f64.powf(0.25 / 12.0), 9, 0.25),
        ] {
            let signal = sine(hz, 1.0);
            let mut stft = super::super::stft::Stft::new(2048, 512);
            let mut estimator = TuningEstimator::default();
            for k in 0..stft.n_frames(signal.len()) {
                let p = stft.power_frame(&signal, k).to_vec();
                estimator.push(&p, 22_050, 2048);
            }
            let t = estimator.estimate();
            // Parabolic interpolation of a Hann-windowed power peak is biased by a few cents
            // toward the nearest bin centre (librosa's estimator shares the bias), hence the
            // 4-cent tolerance.
            assert!((t - tuning).abs() <= 0.04, "tuning {t} for {hz} Hz");
            let chroma = chroma_stft(&mut stft, &signal, 22_050, t);
            let middle = chroma.frames[chroma.frames.len() / 2];
            let best = (0..12).max_by(|a, b| middle[*a].total_cmp(&middle[*b]));
            assert_eq!(best, Some(class));
        }
    }
}

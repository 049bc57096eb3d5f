//! Monophonic f0 estimation: YIN and probabilistic YIN (pYIN).
//!
//! **YIN** (de Cheveigné & Kawahara 2002, *JASA* 111(4)). Frame `k` holds the `L` samples
//! centred on its time (`k · hop`; `L` = `frame_length`, 1900 by default). The difference
//! function `d(τ) = L/(L−τ) · Σ_{j=0}^{L−1−τ} (x_j − x_{j+τ})²` takes every pair of samples
//! `τ` apart within the frame — the integration window shrinks with the lag, as in the
//! autocorrelation of the paper's equation 2 (and librosa 0.11's `yin`), so that the pairs
//! compared are centred on the frame's time at every lag — and scales the sum by the number of
//! pairs, so that it does not fall with the lag by itself (for white noise `d′` stays near 1
//! instead of dipping at the longest lag, which would voice noise at `fmin`). It is computed
//! for all lags at once through the expansion `d(τ) = Σ_{j<L−τ} x_j² + Σ_{j≥τ} x_j² − 2 r(τ)`
//! (equation 7 for this window), the energies from a running sum and the autocorrelation
//! `r(τ)` from one real FFT and one inverse FFT of `|X|²` (size: the smallest `2^a·3^b·5^c` ≥
//! `L + τ_max`, 2304 by default, so no circular wrap-around reaches the lags used). The cumulative mean normalised difference
//! (equation 8) is `d′(0) = 1`, `d′(τ) = d(τ) / ((1/τ) Σ_{j=1}^{τ} d(j))`. Plain YIN takes the
//! first dip of `d′` below an absolute threshold (step 4, 0.1 by default), refines it by
//! parabolic interpolation (step 5) and reports `f0 = sample_rate / τ`.
//!
//! **pYIN** (Mauch & Dixon 2014, ICASSP). Instead of one threshold, a Beta(2, 18) prior over
//! 100 thresholds `s = 0.01 … 1.00`: for each threshold the dips of `d′` below it are
//! candidates, the `r`-th of them (in order of lag) drawn with a Boltzmann probability
//! `∝ e^{−2r}`; summing over thresholds gives every dip a probability of being the period. When
//! no dip lies below a threshold, 1% of that threshold's mass (`no_trough_prob`) goes to the
//! lowest dip. The candidates become observations of a hidden Markov model over pitch bins
//! 0.1 semitone wide from `fmin` to `fmax`, each bin with a voiced and an unvoiced state: a
//! voiced state is observed with the probability of the candidates falling in its bin, every
//! unvoiced state with `(1 − Σ candidates) / n_bins`. Transitions: pitch moves by at most
//! `max_transition_rate` octaves per second (35.92, i.e. ±5 semitones per 23 ms frame) with
//! triangular weights, rows normalised; voicing switches with probability 0.01. The Viterbi
//! path gives voicing and pitch per frame. These defaults are those librosa documents for its
//! `pyin`.
//!
//! # Deviations
//! - The frame is 1900 samples (≈ 86 ms) rather than librosa's 2048, so that one FFT of 2304
//!   points serves; the frame is centred as librosa's is. Frame lengths from 1850 to 2000
//!   gave the same accuracy on the rendered fixtures (`tests/audio_reference.rs`); 1690
//!   lost two violin frames. The difference function is scaled per pair (above), where
//!   librosa's expansion instead keeps the energy of the last `τ` samples.
//! - Frames at the ends of the signal are clipped to it instead of zero-padded, so that no
//!   pair of samples compared lies outside the recording.
//! - A dip's depth, compared with the thresholds, is the vertex of the parabola through it and
//!   its neighbours rather than the sampled value: at short periods (a C7 is 10.5 samples at
//!   22,050 Hz) the sampled lags miss the true minimum of `d′` by up to half a sample and YIN
//!   would otherwise prefer the octave below, whose period falls nearer a whole lag.
//! - Candidates falling into one pitch bin add their probabilities (librosa keeps the last).
//! - The reported f0 of a voiced frame is that frame's own (parabolically refined) candidate in
//!   the decoded bin, the strongest if several, else the bin centre. This keeps sub-bin
//!   precision (the bins are 10 cents wide).
//! - Frames below an RMS floor (`min_rms`, −80 dBFS) and frames with a flat `d′` get no
//!   candidates, so digital silence is unvoiced.
//! - Viterbi runs in the log domain over the banded transition matrix; voiced states whose
//!   observation probability is zero are never on a path and are skipped. The unvoiced
//!   targets, which all share one observation, take the better of the stay and switch source
//!   per bin and then one banded max-plus convolution with the (concave) log triangular
//!   weights; its maximisers are monotone, so a divide and conquer over the targets finds them
//!   exactly in `O(n log n)` rather than `O(n · band)` per frame.

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use serde::Serialize;
use std::sync::Arc;

/// Parameters of [`pyin`] (and the shared YIN front end).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PyinOptions {
    /// Lowest f0 in Hz. Default 61.735 (B1, a semitone below C2).
    pub fmin: f64,
    /// Highest f0 in Hz. Default 2217.461 (C♯7, a semitone above C7).
    pub fmax: f64,
    /// Length `L` of the frame analysed by YIN, in samples, centred on the frame's time.
    /// Default 1900 (≈ 86 ms at 22,050 Hz): with the longest lag for the default `fmin`
    /// (358 samples) one FFT of 2304 points gives the autocorrelation without wrap-around.
    pub frame_length: usize,
    /// Number of thresholds of the prior. Default 100.
    pub n_thresholds: usize,
    /// Beta prior shape parameters (integers). Default (2, 18): mean threshold 0.1.
    pub beta: (u32, u32),
    /// Boltzmann parameter of the prior over the order of dips. Default 2.
    pub boltzmann: f64,
    /// Pitch bin width in semitones. Default 0.1.
    pub resolution: f64,
    /// Largest pitch change in octaves per second. Default 35.92.
    pub max_transition_rate: f64,
    /// Probability of switching between voiced and unvoiced per frame. Default 0.01.
    pub switch_prob: f64,
    /// Share of a threshold's prior mass given to the lowest dip when no dip is below it.
    /// Default 0.01.
    pub no_trough_prob: f64,
    /// Frames quieter than this RMS (full scale = 1) get no pitch candidates. Default 1e-4
    /// (−80 dBFS): below any recorded melody, above the dither of digital silence.
    pub min_rms: f64,
}

impl Default for PyinOptions {
    fn default() -> Self {
        PyinOptions {
            fmin: 61.735,
            fmax: 2217.461,
            frame_length: 1900,
            n_thresholds: 100,
            beta: (2, 18),
            boltzmann: 2.0,
            resolution: 0.1,
            max_transition_rate: 35.92,
            switch_prob: 0.01,
            no_trough_prob: 0.01,
            min_rms: 1e-4,
        }
    }
}

/// f0 per frame.
#[derive(Debug, Clone, Default, Serialize)]
pub struct PitchTrack {
    /// Frame advance in seconds.
    pub hop_seconds: f64,
    /// f0 in Hz per frame; 0 when unvoiced.
    pub f0: Vec<f64>,
    /// Whether each frame is voiced (on the Viterbi path's voiced layer).
    pub voiced: Vec<bool>,
    /// Probability that each frame is voiced (sum of its candidates' probabilities), 0 … 1.
    pub voiced_prob: Vec<f32>,
    /// Every frame's f0 candidates as (Hz, probability), strongest per pitch bin.
    #[serde(skip)]
    pub candidates: Vec<Vec<(f32, f32)>>,
}

impl PitchTrack {
    /// Time in seconds of frame `k`.
    pub fn time(&self, k: usize) -> f64 {
        k as f64 * self.hop_seconds
    }

    /// f0 of frame `k` in cents above `reference_hz` (e.g. 10 Hz for mir_eval's convention);
    /// `None` when unvoiced.
    pub fn cents(&self, k: usize, reference_hz: f64) -> Option<f64> {
        let f = *self.f0.get(k)?;
        (f > 0.0).then(|| 1200.0 * (f / reference_hz).log2())
    }
}

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
fn centred_frame(signal: &[f32], centre: usize, length: usize) -> &[f32] {
    let start = centre.saturating_sub(length / 2).min(signal.len());
    let end = (centre + length - length / 2).min(signal.len()).max(start);
    &signal[start..end]
}

/// Parabolic interpolation of the minimum at index `i` of `y` (step 5 of YIN): the offset of
/// the vertex of the parabola through `(i−1, i, i+1)`, within ±1.
fn parabolic_shift(y: &[f64], i: usize) -> f64 {
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
fn parabolic_minimum(y: &[f64], i: usize) -> f64 {
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
fn lag_range(sample_rate: u32, fmin: f64, fmax: f64) -> (usize, usize) {
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

fn binomial(n: u32, k: u32) -> f64 {
    let k = k.min(n - k);
    (0..k).fold(1.0, |acc, i| acc * f64::from(n - i) / f64::from(i + 1))
}

/// One frame's pitch candidates: (f0 in Hz, probability).
type Candidates = Vec<(f64, f64)>;

/// The pYIN candidate distribution of one frame from its `d′` (see the module docs).
fn frame_candidates(
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

/// pYIN f0 tracking (see the module docs). `hop_length` in samples; frames as in
/// [`crate::audio`]. Returns one value per frame, `1 + len / hop_length` frames.
pub fn pyin(
    signal: &[f32],
    sample_rate: u32,
    hop_length: usize,
    options: &PyinOptions,
) -> PitchTrack {
    let hop = hop_length.max(1);
    let sr = f64::from(sample_rate);
    let (min_lag, max_lag) = lag_range(sample_rate, options.fmin, options.fmax);
    let fmin = sr / max_lag as f64;
    let fmin = fmin.max(options.fmin);
    let fmax = (sr / min_lag as f64).min(options.fmax.max(fmin * 1.01));
    let mut analyser = Yin::new(options.frame_length, max_lag);
    let n_frames = 1 + signal.len() / hop;

    let n_thresholds = options.n_thresholds.max(1);
    let (a, b) = (options.beta.0.max(1), options.beta.1.max(1));
    let beta_probs: Vec<f64> = (0..n_thresholds)
        .map(|i| {
            beta_cdf((i + 1) as f64 / n_thresholds as f64, a, b)
                - beta_cdf(i as f64 / n_thresholds as f64, a, b)
        })
        .collect();

    let resolution = options.resolution.clamp(0.01, 1.0);
    let bins_per_semitone = (1.0 / resolution).ceil();
    let n_bins = ((12.0 * bins_per_semitone * (fmax / fmin).log2()).floor() as usize + 1).max(2);
    let bin_of = |f: f64| -> usize {
        let x = (12.0 * bins_per_semitone * (f / fmin).log2()).round();
        x.clamp(0.0, (n_bins - 1) as f64) as usize
    };

    // Observations: per frame a few (bin, probability, f0) candidates.
    let mut candidates: Vec<Vec<(usize, f64, f64)>> = Vec::with_capacity(n_frames);
    let mut voiced_prob = Vec::with_capacity(n_frames);
    let mut d = Vec::new();
    for k in 0..n_frames {
        let frame = centred_frame(signal, k * hop, analyser.frame_length());
        let energy = frame.iter().map(|x| f64::from(*x).powi(2)).sum::<f64>();
        let rms = (energy / frame.len().max(1) as f64).sqrt();
        let found = if rms < options.min_rms {
            Vec::new()
        } else {
            analyser.cmndf(frame, &mut d);
            frame_candidates(&d, min_lag, max_lag, sample_rate, &beta_probs, options)
        };
        let mut per_bin: Vec<(usize, f64, f64)> = Vec::with_capacity(found.len());
        for (f, p) in found {
            let bin = bin_of(f);
            match per_bin.iter_mut().find(|c| c.0 == bin) {
                Some(c) => {
                    if p > c.1 {
                        c.2 = f;
                    }
                    c.1 += p;
                }
                None => per_bin.push((bin, p, f)),
            }
        }
        let total: f64 = per_bin.iter().map(|c| c.1).sum();
        voiced_prob.push(total.clamp(0.0, 1.0) as f32);
        candidates.push(per_bin);
    }

    let max_semitones = (options.max_transition_rate * 12.0 * hop as f64 / sr).round();
    let half_width = (max_semitones * bins_per_semitone) as usize / 2;
    let states = viterbi(&candidates, &voiced_prob, n_bins, half_width, options);

    let mut f0 = Vec::with_capacity(n_frames);
    let mut voiced = Vec::with_capacity(n_frames);
    for (k, &(is_voiced, bin)) in states.iter().enumerate() {
        voiced.push(is_voiced);
        if !is_voiced {
            f0.push(0.0);
            continue;
        }
        let centre = fmin * 2f64.powf(bin as f64 / (12.0 * bins_per_semitone));
        let own = candidates[k].iter().find(|c| c.0 == bin).map(|c| c.2);
        f0.push(own.unwrap_or(centre));
    }
    let candidates = candidates
        .iter()
        .map(|frame| frame.iter().map(|c| (c.2 as f32, c.1 as f32)).collect())
        .collect();
    PitchTrack {
        hop_seconds: hop as f64 / sr,
        f0,
        voiced,
        voiced_prob,
        candidates,
    }
}

/// Banded max-plus convolution from the left: for every target `j`,
/// `out[j] = max_{i ∈ [j − h, j]} source[i] + w[j − i]` with `h = w.len() − 1`, and `arg[j]`
/// the leftmost maximising `i`.
///
/// `w` must be concave (the log of the triangular transition weights is). Then the matrix
/// `source[i] + w[j − i]` is inverse-Monge on its band and the leftmost maximiser is
/// non-decreasing in `j` (the row-maxima property behind SMAWK, Aggarwal et al. 1987), so a
/// divide and conquer over the rows — the middle row by a scan, the halves within the bounds it
/// sets — needs `O((n + h) log n)` evaluations instead of `n · h`.
fn band_max_left(
    source: &[f32],
    w: &[f32],
    out: &mut [f32],
    arg: &mut [u32],
    stack: &mut Vec<[usize; 4]>,
) {
    let n = source.len();
    if n == 0 || w.is_empty() {
        return;
    }
    let h = w.len() - 1;
    stack.clear();
    stack.push([0, n - 1, 0, n - 1]);
    while let Some([jlo, jhi, ilo, ihi]) = stack.pop() {
        let j = jlo + (jhi - jlo) / 2;
        let mut lo = ilo.max(j.saturating_sub(h));
        let mut hi = ihi.min(j);
        if lo > hi {
            // Unreachable in exact arithmetic; fall back to the whole band.
            lo = j.saturating_sub(h);
            hi = j;
        }
        let mut best = f32::NEG_INFINITY;
        let mut best_i = lo;
        let kernel = w[j - hi..=j - lo].iter().rev();
        for (i, (s, k)) in (lo..=hi).zip(source[lo..=hi].iter().zip(kernel)) {
            let c = s + k;
            let win = c > best;
            best = if win { c } else { best };
            best_i = if win { i } else { best_i };
        }
        out[j] = best;
        arg[j] = best_i as u32;
        if j > jlo {
            stack.push([jlo, j - 1, ilo, best_i]);
        }
        if j < jhi {
            stack.push([j + 1, jhi, best_i, ihi]);
        }
    }
}

/// Banded max-plus convolution over `|i − j| ≤ h` with a symmetric concave kernel `w`
/// (`w[d]` for distance `d`): `out[j] = max_i source[i] + w[|i − j|]`, `arg[j]` a maximiser.
/// Two one-sided passes of [`band_max_left`], the second on the reversed arrays.
struct BandMax {
    reversed: Vec<f32>,
    left: Vec<f32>,
    left_arg: Vec<u32>,
    right: Vec<f32>,
    right_arg: Vec<u32>,
    stack: Vec<[usize; 4]>,
}

impl BandMax {
    fn new(n: usize) -> BandMax {
        BandMax {
            reversed: vec![0.0; n],
            left: vec![0.0; n],
            left_arg: vec![0; n],
            right: vec![0.0; n],
            right_arg: vec![0; n],
            stack: Vec::new(),
        }
    }

    fn run(&mut self, source: &[f32], w: &[f32], out: &mut [f32], arg: &mut [u32]) {
        let n = source.len();
        band_max_left(
            source,
            w,
            &mut self.left,
            &mut self.left_arg,
            &mut self.stack,
        );
        for (r, s) in self.reversed.iter_mut().zip(source.iter().rev()) {
            *r = *s;
        }
        band_max_left(
            &self.reversed,
            w,
            &mut self.right,
            &mut self.right_arg,
            &mut self.stack,
        );
        for j in 0..n {
            let (l, r) = (self.left[j], self.right[n - 1 - j]);
            if r > l {
                out[j] = r;
                arg[j] = (n - 1) as u32 - self.right_arg[n - 1 - j];
            } else {
                out[j] = l;
                arg[j] = self.left_arg[j];
            }
        }
    }
}

/// Viterbi decoding of the pYIN HMM: per frame (voiced?, pitch bin).
fn viterbi(
    candidates: &[Vec<(usize, f64, f64)>],
    voiced_prob: &[f32],
    n_bins: usize,
    half_width: usize,
    options: &PyinOptions,
) -> Vec<(bool, usize)> {
    let n_frames = candidates.len();
    if n_frames == 0 {
        return Vec::new();
    }
    const NEG: f32 = f32::NEG_INFINITY;
    // Triangular transition weights over |Δbin| ≤ half_width (scipy's symmetric `triang`
    // window of width 2h+1: 1 − d/(h+1)), rows normalised over the bins that exist.
    let h = half_width;
    let log_w: Vec<f32> = (0..=h)
        .map(|d| (1.0 - d as f64 / (h as f64 + 1.0)).ln() as f32)
        .collect();
    let row_log_norm: Vec<f32> = (0..n_bins)
        .map(|i| {
            let lo = i.saturating_sub(h);
            let hi = (i + h).min(n_bins - 1);
            let sum: f64 = (lo..=hi)
                .map(|j| 1.0 - i.abs_diff(j) as f64 / (h as f64 + 1.0))
                .sum();
            sum.ln() as f32
        })
        .collect();
    let p = options.switch_prob.clamp(1e-9, 1.0 - 1e-9);
    let log_stay = (1.0 - p).ln() as f32;
    let log_switch = p.ln() as f32;
    let n = n_bins;

    // Scores: voiced layer [0, n), unvoiced layer [n, 2n). Back-pointers: source state index.
    // Uniform initial distribution over all 2n states (as librosa's pyin), times the first
    // frame's observations.
    let mut score = vec![NEG; 2 * n];
    let log_init = (1.0 / (2 * n) as f64).ln() as f32;
    let first_u = ((1.0 - f64::from(voiced_prob[0])).max(1e-30) / n as f64).ln() as f32;
    for s in score[n..].iter_mut() {
        *s = log_init + first_u;
    }
    for &(j, prob, _) in &candidates[0] {
        if prob > 0.0 && j < n {
            score[j] = log_init + prob.min(1.0).ln() as f32;
        }
    }
    let mut back: Vec<u16> = vec![0; n_frames * 2 * n];
    let mut source = vec![NEG; 2 * n];
    let mut next = vec![NEG; 2 * n];
    let mut arg = vec![0u16; 2 * n];
    let mut arg_wide = vec![0u32; n];
    let mut merged = vec![NEG; n];
    let mut layer = vec![0u32; n];
    let mut band = BandMax::new(n);
    for t in 1..n_frames {
        // Fold the row normalisation into the source scores.
        for i in 0..n {
            source[i] = score[i] - row_log_norm[i];
            source[n + i] = score[n + i] - row_log_norm[i];
        }
        // Unvoiced targets: from unvoiced (stay) and voiced (switch) sources within the band.
        // Both layers share the triangular kernel, so the better of the two per source bin is
        // convolved once.
        for i in 0..n {
            let stay = source[n + i] + log_stay;
            let switch = source[i] + log_switch;
            if switch > stay {
                merged[i] = switch;
                layer[i] = 0;
            } else {
                merged[i] = stay;
                layer[i] = n as u32;
            }
        }
        band.run(&merged, &log_w, &mut next[n..], &mut arg_wide);
        for (a, wide) in arg[n..].iter_mut().zip(arg_wide.iter()) {
            let i = *wide as usize;
            *a = (layer[i] + *wide) as u16;
        }
        let log_unvoiced = ((1.0 - f64::from(voiced_prob[t])).max(1e-30) / n as f64).ln() as f32;
        for v in next[n..].iter_mut() {
            *v += log_unvoiced;
        }
        // Voiced targets: only bins with a candidate.
        next[..n].fill(NEG);
        for &(j, prob, _) in &candidates[t] {
            if prob <= 0.0 {
                continue;
            }
            let lo = j.saturating_sub(h);
            let hi = (j + h).min(n - 1);
            let mut best = NEG;
            let mut best_i = n + j;
            for i in lo..=hi {
                let w = log_w[i.abs_diff(j)];
                let cv = source[i] + w + log_stay;
                if cv > best {
                    best = cv;
                    best_i = i;
                }
                let cu = source[n + i] + w + log_switch;
                if cu > best {
                    best = cu;
                    best_i = n + i;
                }
            }
            next[j] = best + prob.min(1.0).ln() as f32;
            arg[j] = best_i as u16;
        }
        // Keep scores near 0 so f32 keeps its precision over long files.
        let max = next.iter().copied().fold(NEG, f32::max);
        let offset = if max.is_finite() { max } else { 0.0 };
        for (s, v) in score.iter_mut().zip(&next) {
            *s = v - offset;
        }
        back[t * 2 * n..(t + 1) * 2 * n].copy_from_slice(&arg);
    }
    // Trace back from the best final state.
    let mut state = score
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1).then(b.0.cmp(&a.0)))
        .map_or(n, |(i, _)| i);
    let mut path = vec![(false, 0usize); n_frames];
    for t in (0..n_frames).rev() {
        path[t] = (state < n, state % n);
        if t > 0 {
            state = usize::from(back[t * 2 * n + state]);
        }
    }
    path
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

    #[test]
    fn band_max_matches_a_direct_scan() {
        let mut seed = 7u64;
        let mut random = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 40) as f32 / (1u64 << 24) as f32
        };
        for (n, h) in [
            (1usize, 0usize),
            (2, 1),
            (7, 3),
            (50, 50),
            (300, 50),
            (620, 50),
            (97, 5),
        ] {
            // The log triangular kernel of the HMM (concave).
            let w: Vec<f32> = (0..=h)
                .map(|d| (1.0 - d as f64 / (h as f64 + 1.0)).ln() as f32)
                .collect();
            for round in 0..20 {
                // Smooth and rough sources, some with steep slopes.
                let source: Vec<f32> = (0..n)
                    .map(|i| {
                        let x = i as f32 / n as f32;
                        match round % 3 {
                            0 => -30.0 * random(),
                            1 => -40.0 * (x - random()).abs(),
                            _ => -5.0 * random() - 60.0 * x * x,
                        }
                    })
                    .collect();
                let mut out = vec![0.0; n];
                let mut arg = vec![0u32; n];
                BandMax::new(n).run(&source, &w, &mut out, &mut arg);
                for j in 0..n {
                    let lo = j.saturating_sub(h);
                    let hi = (j + h).min(n - 1);
                    let expected = (lo..=hi)
                        .map(|i| source[i] + w[i.abs_diff(j)])
                        .fold(f32::NEG_INFINITY, f32::max);
                    let i = arg[j] as usize;
                    assert!(
                        out[j] == expected && source[i] + w[i.abs_diff(j)] == expected,
                        "n {n} h {h} round {round}: first difference at {j}: {} vs {expected}",
                        out[j]
                    );
                }
            }
        }
    }

    #[test]
    fn beta_2_18_cdf() {
        // Beta(2, 18): mean 0.1; I_x(2,18) = 1 − (1−x)^19 − 19x(1−x)^18 (binomial form).
        let x: f64 = 0.1;
        let expected = 1.0 - (1.0 - x).powi(19) - 19.0 * x * (1.0 - x).powi(18);
        assert!((beta_cdf(x, 2, 18) - expected).abs() < 1e-12);
        assert_eq!(beta_cdf(0.0, 2, 18), 0.0);
        assert_eq!(beta_cdf(1.0, 2, 18), 1.0);
    }

    #[test]
    fn yin_and_pyin_find_a4() {
        // A4 = 440 Hz (ISO 16).
        let s = sine(440.0, 1.0);
        let opts = PyinOptions::default();
        let f = yin(&s, 22_050, 512, &opts, 0.1);
        let mid = f[f.len() / 2];
        assert!((1200.0 * (mid / 440.0).log2()).abs() < 5.0, "yin {mid}");
        let track = pyin(&s, 22_050, 512, &opts);
        let mid = track.f0[track.f0.len() / 2];
        assert!(track.voiced[track.f0.len() / 2]);
        assert!((1200.0 * (mid / 440.0).log2()).abs() < 5.0, "pyin {mid}");
    }

    #[test]
    fn silence_is_unvoiced() {
        let track = pyin(&vec![0.0; 22_050], 22_050, 512, &PyinOptions::default());
        assert!(track.voiced.iter().all(|v| !v));
    }
}

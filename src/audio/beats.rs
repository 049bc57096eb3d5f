//! Onset strength, tempo and beats.
//!
//! - **Onset strength**: log-compressed spectral flux (Klapuri 1999; Dixon 2006): each
//!   frame's magnitude spectrum is compressed as `ln(1 + 100 · a)` with `a` the magnitude in
//!   units of a full-scale sine's peak, and the positive differences from the previous frame are
//!   averaged over the bins up to 8 kHz. One value per STFT frame, first frame 0.
//! - **Beat envelope** ([`beat_envelope`]): the onset strength in units of its standard
//!   deviation plus a pulse at every transcribed note onset, so that legato note changes,
//!   which barely move the spectral flux, still mark time.
//! - **Tempo**: the autocorrelation `A` of the (mean-removed) envelope, weighted by a
//!   log-Gaussian tempo prior `W(τ) = exp(−½ (log2(τ / τ0) / σ)²)` with `τ0 = 0.5 s` (120
//!   bpm) and `σ = 1.4` octaves (Ellis 2007, *J. New Music Research* 36(1), §3.1), or
//!   centred on the user's `tempo_hint` with `σ = 0.35` octaves. Each beat period `τ`
//!   between 0.25 and 2 s (and within a third of a hint's period) that the envelope holds at
//!   least twice scores `W(τ) · (A(τ) + max(½ A(2τ) + ¼ A(4τ), ½ A(3τ)))`, the multiples
//!   taken as the largest `A` within one frame: like Ellis's duple and triple sums, the
//!   periods of two and four (or three) beats confirm a beat, which the spacing of a
//!   syncopated figure (1.5 beats in a dotted rhythm, often the single strongest lag of a
//!   melody) does not get. The best lag is refined by parabolic interpolation.
//!   *Deviation*: Ellis adds the prior-weighted values at the multiples; here the prior weighs
//!   the candidate period once, so a period's multiples do not pull the estimate towards
//!   faster tempos.
//! - **Beats**: Ellis's dynamic programme (§3.2): `C(t) = O(t) + max_{τ} { α · F(t − τ, p) +
//!   C(τ) }` over predecessors `τ ∈ [t − 2p, t − p/2]`, with `F(Δ, p) = −(ln(Δ / p))²`, the
//!   onset strength `O` divided by its standard deviation, `p` the beat period in frames and
//!   `α` the tightness (default 100). The last beat is the best-scoring frame among those whose
//!   score is within the top of the final period; beats are traced back from it. Beats before
//!   the first and after the last strong onset (half the mean onset strength) are dropped.
//!
//! Times in seconds from the start of the analysed signal; frames as in [`crate::audio`].

use serde::Serialize;

/// Beat tracking parameters.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BeatOptions {
    /// Centre of the tempo prior in beats per minute. Default 120 (τ0 = 0.5 s).
    pub prior_bpm: f64,
    /// Width of the tempo prior in octaves. Default 1.4.
    pub prior_octaves: f64,
    /// Tightness α of the DP: how strongly beats keep the period. Default 100.
    pub tightness: f64,
    /// A tempo to use instead of estimating one, in bpm. Default none.
    pub tempo_bpm: Option<f64>,
    /// A tempo the user expects, in bpm: the centre of the tempo prior instead of
    /// `prior_bpm`, the estimate still coming from the recording. Default none.
    pub tempo_hint: Option<f64>,
    /// Width of the tempo prior in octaves around a `tempo_hint`. Default 0.35 (a weight of
    /// ½ a third faster or slower than the hint, 0.02 at twice or half): the user knows the
    /// metrical level, which the recording alone leaves open.
    pub hint_octaves: f64,
    /// Height of a transcribed note's onset in the beat envelope, in standard deviations of
    /// the onset strength ([`beat_envelope`]). Default 2.
    pub note_weight: f64,
}

impl Default for BeatOptions {
    fn default() -> Self {
        BeatOptions {
            prior_bpm: 120.0,
            prior_octaves: 1.4,
            tightness: 100.0,
            tempo_bpm: None,
            tempo_hint: None,
            hint_octaves: 0.35,
            note_weight: 2.0,
        }
    }
}

/// Tempo and beats.
#[derive(Debug, Clone, Default, Serialize)]
pub struct BeatTrack {
    /// Estimated (or given) tempo in beats per minute; 0 when none.
    pub tempo_bpm: f64,
    /// Beat times in seconds, increasing.
    pub beats: Vec<f64>,
}

/// Upper frequency of the flux sum, Hz.
const FLUX_FMAX: f64 = 8000.0;

/// Computes the onset strength frame by frame from power spectra.
#[derive(Debug, Clone, Default)]
pub struct OnsetStrength {
    previous: Vec<f32>,
    current: Vec<f32>,
    /// One value per frame pushed.
    pub values: Vec<f32>,
}

impl OnsetStrength {
    /// Adds one power spectrum (`n_fft / 2 + 1` bins) at `sample_rate` Hz.
    pub fn push(&mut self, power: &[f32], sample_rate: u32, n_fft: usize) {
        let top = ((FLUX_FMAX * n_fft as f64 / f64::from(sample_rate)) as usize + 1)
            .min(power.len())
            .max(1);
        // Magnitude relative to a full-scale sine's Hann-windowed peak (n_fft / 4).
        let scale = 4.0 / n_fft as f32;
        self.current.clear();
        self.current.extend(
            power[..top]
                .iter()
                .map(|p| (1.0 + 100.0 * p.sqrt() * scale).ln()),
        );
        let value = if self.previous.len() == self.current.len() {
            self.current
                .iter()
                .zip(&self.previous)
                .map(|(c, p)| (c - p).max(0.0))
                .sum::<f32>()
                / top as f32
        } else {
            0.0
        };
        self.values.push(value);
        std::mem::swap(&mut self.previous, &mut self.current);
    }
}

/// The envelope the beat tracker follows: the spectral-flux onset strength in units of its
/// standard deviation, plus a pulse of height `note_weight` (same units) times the note's
/// confidence at the frame of every transcribed note onset, spread over ±1 frame as
/// (½, 1, ½). Onsets found from the pitch track (as Collins 2005, *ISMIR*, proposed for
/// non-percussive sounds — cited from memory) mark the legato note changes of bowed strings
/// and voices that leave the spectral flux nearly flat; on percussive recordings they fall
/// on flux peaks that are there anyway.
pub fn beat_envelope(onset: &[f32], notes: &[(usize, f32)], note_weight: f64) -> Vec<f32> {
    let n = onset.len();
    let mean = onset.iter().map(|v| f64::from(*v)).sum::<f64>() / n.max(1) as f64;
    let std = (onset
        .iter()
        .map(|v| (f64::from(*v) - mean).powi(2))
        .sum::<f64>()
        / n.max(1) as f64)
        .sqrt();
    let scale = if std > 0.0 { 1.0 / std } else { 0.0 };
    let mut envelope: Vec<f32> = onset
        .iter()
        .map(|v| (f64::from(*v) * scale) as f32)
        .collect();
    for &(frame, confidence) in notes {
        let height = note_weight * f64::from(confidence.clamp(0.0, 1.0));
        for (offset, share) in [(-1isize, 0.5), (0, 1.0), (1, 0.5)] {
            let at = frame as isize + offset;
            if let Some(v) = usize::try_from(at).ok().and_then(|at| envelope.get_mut(at)) {
                *v += (height * share) as f32;
            }
        }
    }
    envelope
}

/// Estimates the beat period in frames from the onset strength (see the module docs).
pub fn estimate_period(onset: &[f32], frame_rate: f64, options: &BeatOptions) -> Option<f64> {
    if let Some(bpm) = options.tempo_bpm.filter(|b| *b > 0.0) {
        return Some(60.0 * frame_rate / bpm);
    }
    let n = onset.len();
    let hint = options.tempo_hint.filter(|b| b.is_finite() && *b > 0.0);
    // Beat periods from 0.25 to 2 s (240 to 30 bpm), widened to a third either side of a
    // hint outside that range.
    let hinted = hint.map(|bpm| 60.0 / bpm);
    let shortest = hinted.map_or(0.25, |p| (0.75 * p).min(0.25));
    let longest = hinted.map_or(2.0, |p| (1.33 * p).max(2.0));
    let min_lag = (shortest * frame_rate).floor().max(1.0) as usize;
    // A period is only seen when the envelope holds at least two of it (three beats).
    let max_lag = ((longest * frame_rate).ceil() as usize).min(n.saturating_sub(1) / 2);
    if max_lag <= min_lag + 1 {
        return None;
    }
    let mean = onset.iter().map(|v| f64::from(*v)).sum::<f64>() / n as f64;
    let centred: Vec<f64> = onset.iter().map(|v| f64::from(*v) - mean).collect();
    let (centre_bpm, sigma) = match hint {
        Some(bpm) => (bpm, options.hint_octaves),
        None => (options.prior_bpm, options.prior_octaves),
    };
    let tau0 = 60.0 / centre_bpm.max(1.0);
    let sigma = sigma.max(0.05);
    // Autocorrelation up to four times the longest beat period.
    let top = (4 * max_lag + 1).min(n - 1);
    let acf: Vec<f64> = (0..=top)
        .map(|lag| {
            (0..n - lag)
                .map(|t| centred[t] * centred[t + lag])
                .sum::<f64>()
                / (n - lag) as f64
        })
        .collect();
    // The strongest autocorrelation within one frame of `lag` (0 beyond the signal).
    let near = |lag: usize| {
        (lag.saturating_sub(1)..=lag + 1)
            .filter_map(|l| acf.get(l).copied())
            .fold(0.0f64, f64::max)
    };
    // Prior-weighted periodicity with its metrical multiples (after Ellis's duple and triple
    // sums, 2007 §3.1): a beat period is confirmed by the periods of two and four beats (or
    // of three), which the spacing of a syncopated figure is not.
    let scores: Vec<f64> = (0..=max_lag)
        .map(|lag| {
            if lag < min_lag {
                return f64::NEG_INFINITY;
            }
            let seconds = lag as f64 / frame_rate;
            let w = (-0.5 * ((seconds / tau0).log2() / sigma).powi(2)).exp();
            let duple = 0.5 * near(2 * lag) + 0.25 * near(4 * lag);
            let triple = 0.5 * near(3 * lag);
            w * (acf[lag] + duple.max(triple))
        })
        .collect();
    let (best, score) = scores
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1).then(b.0.cmp(&a.0)))
        .map(|(i, v)| (i, *v))?;
    if !score.is_finite() || score <= 0.0 {
        return None;
    }
    let mut period = best as f64;
    if best > min_lag && best < max_lag {
        let (a, b, c) = (scores[best - 1], scores[best], scores[best + 1]);
        let den = a - 2.0 * b + c;
        if den.abs() > 1e-12 {
            period += (0.5 * (a - c) / den).clamp(-0.5, 0.5);
        }
    }
    Some(period)
}

/// Tracks beats in an onset-strength envelope of frames `hop_length` samples apart.
pub fn track_beats(
    onset: &[f32],
    sample_rate: u32,
    hop_length: usize,
    options: &BeatOptions,
) -> BeatTrack {
    let frame_rate = f64::from(sample_rate) / hop_length.max(1) as f64;
    let Some(period) = estimate_period(onset, frame_rate, options) else {
        return BeatTrack::default();
    };
    let n = onset.len();
    let mean = onset.iter().map(|v| f64::from(*v)).sum::<f64>() / n.max(1) as f64;
    let var = onset
        .iter()
        .map(|v| (f64::from(*v) - mean).powi(2))
        .sum::<f64>()
        / n.max(1) as f64;
    let std = var.sqrt();
    if std <= 0.0 || period < 1.0 {
        return BeatTrack::default();
    }
    let o: Vec<f64> = onset.iter().map(|v| f64::from(*v) / std).collect();
    let alpha = options.tightness;
    let lo = (period / 2.0).round().max(1.0) as usize;
    let hi = (2.0 * period).round().max(lo as f64 + 1.0) as usize;
    // Penalty per distance, precomputed.
    let penalty: Vec<f64> = (0..=hi)
        .map(|d| {
            if d == 0 {
                f64::NEG_INFINITY
            } else {
                -alpha * (d as f64 / period).ln().powi(2)
            }
        })
        .collect();
    let mut score = vec![0.0f64; n];
    let mut back: Vec<Option<usize>> = vec![None; n];
    for t in 0..n {
        let mut best = f64::NEG_INFINITY;
        let mut from = None;
        if t >= lo {
            let start = t.saturating_sub(hi);
            for tau in start..=t - lo {
                let c = score[tau] + penalty[t - tau];
                if c > best {
                    best = c;
                    from = Some(tau);
                }
            }
        }
        if best > 0.0 {
            score[t] = o[t] + best;
            back[t] = from;
        } else {
            score[t] = o[t];
        }
    }
    // Last beat: the best score within the final period.
    let tail_start = n.saturating_sub(period.round() as usize + 1);
    let Some(mut t) = (tail_start..n).max_by(|a, b| score[*a].total_cmp(&score[*b]).then(b.cmp(a)))
    else {
        return BeatTrack::default();
    };
    let mut frames = vec![t];
    while let Some(prev) = back[t] {
        frames.push(prev);
        t = prev;
    }
    frames.reverse();
    // Trim beats outside the span of strong onsets.
    let strong = 0.5 * mean;
    let first = onset.iter().position(|v| f64::from(*v) > strong);
    let last = onset.iter().rposition(|v| f64::from(*v) > strong);
    if let (Some(first), Some(last)) = (first, last) {
        let margin = (period / 4.0).round() as usize;
        frames.retain(|&f| f + margin >= first && f <= last + margin);
    }
    BeatTrack {
        tempo_bpm: 60.0 * frame_rate / period,
        beats: frames.iter().map(|&f| f as f64 / frame_rate).collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FRAME_RATE: f64 = 22_050.0 / 512.0;

    /// An onset envelope with unit impulses at frames `at`, repeated every `cycle` frames
    /// for `frames` frames.
    fn clicks(at: &[usize], cycle: usize, frames: usize) -> Vec<f32> {
        let mut onset = vec![0.0f32; frames];
        for start in (0..frames).step_by(cycle) {
            for k in at {
                if let Some(v) = onset.get_mut(start + k) {
                    *v = 1.0;
                }
            }
        }
        onset
    }

    fn bpm(onset: &[f32], options: &BeatOptions) -> f64 {
        60.0 * FRAME_RATE / estimate_period(onset, FRAME_RATE, options).unwrap()
    }

    #[test]
    fn note_onsets_add_pulses_in_standard_deviations() {
        // Flux alternating 0 and 2 has mean 1 and standard deviation 1.
        let onset: Vec<f32> = (0..10)
            .map(|k| if k % 2 == 0 { 0.0 } else { 2.0 })
            .collect();
        let envelope = beat_envelope(&onset, &[(4, 0.5), (9, 1.0)], 2.0);
        let expected = [0.0, 2.0, 0.0, 2.5, 1.0, 2.5, 0.0, 2.0, 1.0, 4.0];
        for (k, (got, want)) in envelope.iter().zip(expected).enumerate() {
            assert!((got - want).abs() < 1e-6, "frame {k}: {got} vs {want}");
        }
        // A flat envelope stays zero apart from the pulses.
        let flat = beat_envelope(&[0.3; 5], &[(0, 1.0)], 2.0);
        assert_eq!(flat, vec![2.0, 1.0, 0.0, 0.0, 0.0]);
    }

    #[test]
    fn a_tempo_hint_chooses_the_metrical_level() {
        // Clicks every 18 frames support 143.6 bpm and 71.8 bpm equally well; the prior
        // around 120 takes the faster, a hint of 70 the slower.
        let onset = clicks(&[0], 18, 1300);
        let got = bpm(&onset, &BeatOptions::default());
        assert!((got - 143.6).abs() < 2.0, "{got}");
        let hinted = BeatOptions {
            tempo_hint: Some(70.0),
            ..BeatOptions::default()
        };
        let got = bpm(&onset, &hinted);
        assert!((got - 71.8).abs() < 2.0, "{got}");
    }

    #[test]
    fn a_hint_beyond_the_usual_range_is_searched() {
        // Clicks every 9 frames (287 bpm): outside the 30–240 bpm search, the unhinted
        // estimate takes the half tempo; a hint of 290 finds the clicks' own rate.
        let onset = clicks(&[0], 9, 1300);
        let got = bpm(&onset, &BeatOptions::default());
        assert!((got - 143.6).abs() < 2.0, "{got}");
        let hinted = BeatOptions {
            tempo_hint: Some(290.0),
            ..BeatOptions::default()
        };
        let got = bpm(&onset, &hinted);
        assert!((got - 287.1).abs() < 4.0, "{got}");
    }

    #[test]
    fn clicks_at_100_bpm() {
        // An impulse train at 100 bpm (0.6 s) on frames of 512 samples at 22,050 Hz.
        let frame_rate = 22_050.0 / 512.0;
        let n = (12.0 * frame_rate) as usize;
        let mut onset = vec![0.0f32; n];
        let mut t: f64 = 0.3;
        while t < 12.0 {
            let k = (t * frame_rate).round() as usize;
            if k < n {
                onset[k] = 1.0;
            }
            t += 0.6;
        }
        let track = track_beats(&onset, 22_050, 512, &BeatOptions::default());
        assert!((track.tempo_bpm - 100.0).abs() < 3.0, "{}", track.tempo_bpm);
        assert!(track.beats.len() >= 18);
        for b in &track.beats {
            let phase = ((b - 0.3) / 0.6).round() * 0.6 + 0.3;
            assert!((b - phase).abs() < 0.03, "beat {b}");
        }
    }
}

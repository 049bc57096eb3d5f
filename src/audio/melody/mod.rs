//! Predominant melody of polyphonic audio: the pitch of the main melody line in a mix of
//! melody and accompaniment, frame by frame, with where the extractor was unsure.
//!
//! In: a mono signal and its sample rate. Out: a [`MelodyTrack`], whose
//! [`PitchTrack`] has the same frames as [`super::pitch::pyin`]'s
//! (frame `k` centred on sample `k · hop_length`, f0 0 Hz when no melody sounds), so that
//! [`super::notes::transcribe`] makes notes of it unchanged.
//!
//! Method: Salamon & Gómez (2012), "Melody extraction from polyphonic music signals using
//! pitch contour characteristics", *IEEE Trans. Audio, Speech, and Language Processing*
//! 20(6), 1759–1770:
//! 1. [`salience`]: spectral peaks, and a pitch salience function over 10-cent bins from
//!    55 to 1760 Hz by harmonic summation of the peaks' amplitudes (their equation 3).
//! 2. `contours`: the salience peaks grouped into pitch contours by continuity in time and
//!    pitch; contour characteristics (pitch and salience mean and deviation, vibrato).
//! 3. Voicing detection (contours of low mean salience dropped), octave-error and
//!    pitch-outlier removal against a smoothed melody pitch mean, and in each frame the
//!    remaining contour of greatest total salience.
//!
//! Then, collatio's own: a confidence per frame and the spans where the extractor was unsure
//! (see [`UnsureReasons`]): frames are unsure when the chosen contour's mean salience lies
//! near the voicing threshold, when another remaining contour at a different pitch has
//! nearly as much total salience, when an octave (or twelfth) duplicate that was the more
//! salient of the pair was dropped for lying farther from the melody pitch mean, or (with no
//! melody chosen) when a contour just below the voicing threshold was dropped. Unsure frames
//! less than `min_unsure_seconds` apart are merged and shorter spans are not reported. On
//! the five test arrangements raw pitch accuracy is 0.39–0.81 inside these spans against
//! 0.87–0.95 outside them, except on one piece (0.91 against 0.94).
//!
//! ```
//! use collatio::audio::melody::{predominant_melody, MelodyOptions};
//! // One second of a harmonic tone at A3 (220 Hz) over a quieter C2 (65.4 Hz).
//! let sr = 22_050.0_f64;
//! let signal: Vec<f32> = (0..22_050)
//!     .map(|n| {
//!         let t = n as f64 / sr;
//!         let tone = |hz: f64, amp: f64| -> f64 {
//!             (1..=6).map(|h| amp / h as f64 * (2.0 * std::f64::consts::PI * hz * h as f64 * t).sin()).sum()
//!         };
//!         (tone(220.0, 0.3) + tone(65.4, 0.1)) as f32
//!     })
//!     .collect();
//! let melody = predominant_melody(&signal, 22_050, &MelodyOptions::default());
//! let middle = melody.track.f0[20];
//! assert!((1200.0 * (middle / 220.0).log2()).abs() < 30.0);
//! ```
//!
//! # Deviations from the paper
//! - Frames every 512 samples at 22,050 Hz (23.2 ms, the frames of the rest of the audio
//!   analysis) with a 2048-sample window (93 ms), instead of 2.9 ms and 46 ms at 44.1 kHz;
//!   pitch continuity is still 80 cents per frame and the gap tolerance 100 ms.
//! - τ⁺ = 0.6 instead of 0.9. With eight times fewer frames, 0.9 leaves about one strong
//!   peak per frame, so contours only form along the frame maxima and voicing detection then
//!   drops a third of a solo melody (raw pitch accuracy 0.40–0.62 on the monophonic test
//!   renders); 0.6 was chosen on the test renders of `tests/audio_melody.rs` (0.5 and 0.7
//!   do worse there).
//! - Octave duplicates: the one with less salience over the overlap is dropped when it has
//!   less than `octave_salience_ratio` (0.8) of the other's salience; only closer calls go
//!   to the melody pitch mean as in the paper (whose pitch mean, at our frame rate, is pulled
//!   towards long partial lines of the accompaniment). Pairs a twelfth apart (frequency ratio
//!   3, a strong third harmonic, as of a clarinet) are treated like octave pairs but decided
//!   by the pitch mean alone. Duplicates must overlap for at least half of the shorter
//!   contour; the paper states no minimum.
//! - See [`salience`] for the equal-loudness weighting, the peak refinement, side lobes and
//!   the salience contrast that keeps noise out.

mod contours;
pub mod salience;

use super::pitch::PitchTrack;
use contours::{Contour, PeakFrames};
use serde::{Deserialize, Serialize};

/// Every parameter of [`predominant_melody`]; `Default` gives the documented defaults (the
/// paper's values where it gives one). Lengths in samples are at the signal's sample rate;
/// the defaults are meant for 22,050 Hz.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct MelodyOptions {
    /// Frame advance in samples. Default 512 (≈ 23.2 ms; `AnalysisOptions::hop_length`).
    pub hop_length: usize,
    /// Analysis window (Hann) in samples. Default 2048 (≈ 93 ms).
    pub window_length: usize,
    /// FFT size in samples (the window zero-padded). Default 4096 (2× zero padding).
    pub n_fft: usize,
    /// Equal-loudness weighting of peak amplitudes: the A-weighting gain raised to this power
    /// (0 = none, 1 = full A-weighting, 0.5 = half its decibels). Default 1.
    pub loudness_weighting: f64,
    /// Highest spectral peak used, Hz. Default 5000.
    pub max_peak_hz: f64,
    /// Peaks more than this many dB below the frame's strongest peak are ignored (γ).
    /// Default 40.
    pub peak_threshold_db: f64,
    /// Frames whose spectrum stays below this amplitude (full-scale sine = 1) have no peaks.
    /// Default 1e-4 (−80 dBFS).
    pub min_peak_amplitude: f64,
    /// Salience peaks below this multiple of the frame's median salience are dropped: the
    /// salience of noise is nearly flat (its peaks reach about 1.5 times the median), that of
    /// a pitched sound is not. Default 2.5.
    pub min_salience_contrast: f64,
    /// Harmonics summed per peak (N_h). Default 20.
    pub n_harmonics: usize,
    /// Harmonic weighting: the `h`-th harmonic counts `alpha^(h−1)`. Default 0.8.
    pub alpha: f64,
    /// Magnitude compression: amplitudes enter as `a^beta`. Default 1.
    pub beta: f64,
    /// Lowest pitch of the salience function, Hz. Default 55 (A1).
    pub fmin: f64,
    /// Highest pitch of the salience function, Hz. Default 1760 (A6).
    pub fmax: f64,
    /// Salience bins per semitone. Default 10 (10-cent bins).
    pub bins_per_semitone: usize,
    /// Most salience peaks kept per frame, strongest first. Default 24.
    pub max_salience_peaks: usize,
    /// Salience peaks below this fraction of the frame's strongest are weak (τ⁺). Default 0.6
    /// (the paper's 0.9 suits its 2.9 ms hop; see the module docs).
    pub tau_plus: f64,
    /// Salience peaks below `μ − tau_sigma · σ` over all frames are weak (τ_σ). Default 0.9.
    pub tau_sigma: f64,
    /// Largest pitch step between consecutive frames of a contour, cents. Default 80.
    pub continuity_cents: f64,
    /// Longest run of weak peaks inside a contour, seconds. Default 0.1.
    pub max_gap_seconds: f64,
    /// Shortest contour kept, seconds. Default 0.05 (≈ 2 frames).
    pub min_contour_seconds: f64,
    /// Vibrato rate range, Hz. Default (5, 8).
    pub vibrato_hz: (f64, f64),
    /// Voicing threshold `μ̄ − voicing_lambda · σ̄` over contour mean saliences (λ_v).
    /// Default 0.2.
    pub voicing_lambda: f64,
    /// Rounds of octave-error and outlier removal. Default 3.
    pub octave_iterations: usize,
    /// Length of the moving average of the melody pitch mean, seconds. Default 5.
    pub pitch_mean_seconds: f64,
    /// Two contours an octave apart within this many cents are octave duplicates. Default 50.
    pub octave_tolerance_cents: f64,
    /// Of two octave duplicates, the one with less salience over their overlap is dropped
    /// when it has less than this fraction of the other's; otherwise the one farther from
    /// the melody pitch mean. Default 0.9.
    pub octave_salience_ratio: f64,
    /// Contours farther than this from the melody pitch mean are outliers, cents. Default
    /// 1200 (one octave).
    pub outlier_cents: f64,
    /// A competing contour whose total salience is at least this fraction of the chosen
    /// one's makes a frame unsure. Default 0.8.
    pub competitor_ratio: f64,
    /// An octave or twelfth duplicate dropped for lying farther from the melody pitch mean
    /// although its salience over the overlap was at least this fraction of the kept one's
    /// makes its frames unsure. Default 1 (the decision went against the salience).
    pub octave_doubt_ratio: f64,
    /// Width of the doubtful band around the voicing threshold, in σ̄ on either side.
    /// Default 0.5.
    pub voicing_doubt_band: f64,
    /// Unsure frames closer than this are merged; shorter spans are not reported. Seconds.
    /// Default 0.1.
    pub min_unsure_seconds: f64,
}

impl Default for MelodyOptions {
    fn default() -> Self {
        MelodyOptions {
            hop_length: 512,
            window_length: 2048,
            n_fft: 4096,
            loudness_weighting: 1.0,
            max_peak_hz: 5000.0,
            peak_threshold_db: 40.0,
            min_peak_amplitude: 1e-4,
            min_salience_contrast: 2.5,
            n_harmonics: 20,
            alpha: 0.8,
            beta: 1.0,
            fmin: 55.0,
            fmax: 1760.0,
            bins_per_semitone: 10,
            max_salience_peaks: 24,
            tau_plus: 0.6,
            tau_sigma: 0.9,
            continuity_cents: 80.0,
            max_gap_seconds: 0.1,
            min_contour_seconds: 0.05,
            vibrato_hz: (5.0, 8.0),
            voicing_lambda: 0.2,
            octave_iterations: 3,
            pitch_mean_seconds: 5.0,
            octave_tolerance_cents: 50.0,
            octave_salience_ratio: 0.8,
            outlier_cents: 1200.0,
            competitor_ratio: 0.8,
            octave_doubt_ratio: 1.0,
            voicing_doubt_band: 0.5,
            min_unsure_seconds: 0.1,
        }
    }
}

/// Why a span was marked unsure (any combination).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct UnsureReasons {
    /// The chosen contour's mean salience lies within `voicing_doubt_band` σ̄ above the voicing
    /// threshold, or below it (kept for its vibrato).
    pub low_salience: bool,
    /// Another remaining contour at a different pitch had at least `competitor_ratio` of the
    /// chosen contour's total salience.
    pub competing_contour: bool,
    /// An octave or twelfth duplicate with at least `octave_doubt_ratio` of the kept
    /// contour's salience was dropped for lying farther from the melody pitch mean.
    pub octave: bool,
    /// No melody was chosen, but a contour dropped by voicing detection lay within
    /// `voicing_doubt_band` σ̄ below the threshold.
    pub voicing: bool,
}

impl UnsureReasons {
    fn any(&self) -> bool {
        self.low_salience || self.competing_contour || self.octave || self.voicing
    }

    fn merge(&mut self, other: UnsureReasons) {
        self.low_salience |= other.low_salience;
        self.competing_contour |= other.competing_contour;
        self.octave |= other.octave;
        self.voicing |= other.voicing;
    }
}

/// Counts of contours at each stage, for the report.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct ContourCounts {
    /// Contours created (at least `min_contour_seconds` long).
    pub created: usize,
    /// Contours that passed voicing detection.
    pub voiced: usize,
    /// Contours left after octave-error and outlier removal.
    pub melodic: usize,
}

/// The result of [`predominant_melody`].
#[derive(Debug, Clone, Serialize)]
pub struct MelodyTrack {
    /// f0 per frame (0 Hz where no melody was found), voicing, and a confidence per frame in
    /// `voiced_prob` (0 … 1: the chosen pitch's salience relative to the 90th percentile of
    /// the chosen saliences, capped at 1, times its share of the salience of it and its
    /// strongest competitor; 0 when unvoiced). `candidates` holds the pitches of the melodic
    /// contours present in each frame, with their share of those contours' salience (summing to
    /// 1 in a frame that has any).
    pub track: PitchTrack,
    /// Salience of the chosen pitch per frame (linear, 0 when unvoiced).
    pub salience: Vec<f32>,
    /// Time spans `[start, end)` in seconds where the extractor was unsure, in time order.
    pub unsure: Vec<(f64, f64)>,
    /// Why, for each span of `unsure`.
    pub unsure_reasons: Vec<UnsureReasons>,
    /// The voicing threshold on contour mean salience (linear salience units).
    pub voicing_threshold: f64,
    /// How many contours each stage kept.
    pub contours: ContourCounts,
}

/// Extracts the predominant melody of a mono signal at `sample_rate` Hz (see the module docs
/// for the method). Deterministic; memory linear in the signal's length (at most
/// `max_salience_peaks` peaks per frame are kept). A signal without a melody (silence, noise)
/// gives an all-unvoiced track.
pub fn predominant_melody(
    samples: &[f32],
    sample_rate: u32,
    options: &MelodyOptions,
) -> MelodyTrack {
    let hop = options.hop_length.max(1);
    let hop_seconds = hop as f64 / f64::from(sample_rate.max(1));
    let mut analyser = salience::SalienceAnalyser::new(sample_rate, options);
    let n_frames = analyser.n_frames(samples.len());
    let mut frames = PeakFrames {
        offsets: Vec::with_capacity(n_frames + 1),
        peaks: Vec::new(),
    };
    frames.offsets.push(0);
    for k in 0..n_frames {
        analyser.salience_peaks(samples, k, &mut frames.peaks);
        frames.offsets.push(frames.peaks.len());
    }
    let min_len = (options.min_contour_seconds / hop_seconds).round().max(1.0) as usize;
    let mut all = contours::create_contours(&frames, options, hop_seconds);
    all.retain(|c| c.cents.len() >= min_len);
    contours::characterise(&mut all, options, hop_seconds);
    let (threshold, spread, voiced) = contours::voicing(&all, options);
    let mut keep = voiced.clone();
    let choices = contours::remove_octave_errors(&all, &mut keep, n_frames, options, hop_seconds);
    let counts = ContourCounts {
        created: all.len(),
        voiced: voiced.iter().filter(|v| **v).count(),
        melodic: keep.iter().filter(|v| **v).count(),
    };
    let selection = select(&all, &keep, n_frames, options);

    // Per-frame reasons for doubt.
    let band = options.voicing_doubt_band * spread;
    let mut doubt = vec![UnsureReasons::default(); n_frames];
    for (k, chosen) in selection.chosen.iter().enumerate() {
        let Some(i) = *chosen else { continue };
        let c = &all[i];
        doubt[k].low_salience = c.salience_mean < threshold + band;
        if let Some(j) = selection.runner_up[k] {
            doubt[k].competing_contour =
                all[j].salience_total >= options.competitor_ratio * c.salience_total;
        }
    }
    for choice in &choices {
        if choice.dropped_salience >= options.octave_doubt_ratio * choice.kept_salience {
            let range = choice.from.min(n_frames)..choice.to.min(n_frames);
            for (d, chosen) in doubt[range.clone()]
                .iter_mut()
                .zip(&selection.chosen[range])
            {
                d.octave |= chosen.is_some();
            }
        }
    }
    for (c, v) in all.iter().zip(&voiced) {
        if !*v && c.salience_mean >= threshold - band {
            let range = c.start.min(n_frames)..c.end().min(n_frames);
            for (d, chosen) in doubt[range.clone()]
                .iter_mut()
                .zip(&selection.chosen[range])
            {
                d.voicing |= chosen.is_none();
            }
        }
    }
    let (unsure, unsure_reasons) = spans(&doubt, hop_seconds, options.min_unsure_seconds);

    // The pitch track.
    let mut chosen_saliences: Vec<f32> = selection
        .salience
        .iter()
        .copied()
        .filter(|s| *s > 0.0)
        .collect();
    chosen_saliences.sort_by(f32::total_cmp);
    let reference = chosen_saliences
        .get(chosen_saliences.len() * 9 / 10)
        .copied()
        .unwrap_or(1.0)
        .max(f32::MIN_POSITIVE);
    let mut track = PitchTrack {
        hop_seconds,
        f0: vec![0.0; n_frames],
        voiced: vec![false; n_frames],
        voiced_prob: vec![0.0; n_frames],
        candidates: vec![Vec::new(); n_frames],
    };
    let hz = |cents: f32| options.fmin * 2f64.powf(f64::from(cents) / 1200.0);
    for k in 0..n_frames {
        let Some(i) = selection.chosen[k] else {
            continue;
        };
        let Some((cents, s)) = all[i].at(k) else {
            continue;
        };
        track.f0[k] = hz(cents);
        track.voiced[k] = true;
        let competitor = selection.runner_up[k]
            .and_then(|j| all[j].at(k))
            .map_or(0.0, |(_, x)| x);
        track.voiced_prob[k] =
            (s / reference).min(1.0) * s / (s + competitor).max(f32::MIN_POSITIVE);
    }
    for (c, _) in all.iter().zip(&keep).filter(|(_, k)| **k) {
        for (i, (cents, s)) in c.cents.iter().zip(&c.salience).enumerate() {
            if let Some(list) = track.candidates.get_mut(c.start + i) {
                list.push((hz(*cents) as f32, *s));
            }
        }
    }
    for list in track.candidates.iter_mut() {
        let total: f32 = list.iter().map(|(_, s)| *s).sum();
        for (_, s) in list.iter_mut() {
            *s = if total > 0.0 { *s / total } else { 0.0 };
        }
        list.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.total_cmp(&b.0)));
    }
    MelodyTrack {
        track,
        salience: selection.salience,
        unsure,
        unsure_reasons,
        voicing_threshold: threshold,
        contours: counts,
    }
}

/// Step 6 of the method: per frame, the remaining contour of greatest total salience, and the
/// strongest other remaining contour more than `continuity_cents` away from it.
struct Selection {
    chosen: Vec<Option<usize>>,
    runner_up: Vec<Option<usize>>,
    salience: Vec<f32>,
}

fn select(all: &[Contour], keep: &[bool], n_frames: usize, options: &MelodyOptions) -> Selection {
    let mut chosen: Vec<Option<usize>> = vec![None; n_frames];
    let better = |a: usize, b: Option<usize>| {
        b.is_none_or(|b| all[a].salience_total > all[b].salience_total)
    };
    for (i, c) in all.iter().enumerate() {
        if !keep[i] {
            continue;
        }
        let range = c.start.min(n_frames)..c.end().min(n_frames);
        for slot in &mut chosen[range] {
            if better(i, *slot) {
                *slot = Some(i);
            }
        }
    }
    let mut runner_up: Vec<Option<usize>> = vec![None; n_frames];
    for (i, c) in all.iter().enumerate() {
        if !keep[i] {
            continue;
        }
        for k in c.start..c.end().min(n_frames) {
            let Some(best) = chosen[k] else { continue };
            if best == i {
                continue;
            }
            let far = match (c.at(k), all[best].at(k)) {
                (Some((p, _)), Some((q, _))) => f64::from((p - q).abs()) > options.continuity_cents,
                _ => false,
            };
            if far && better(i, runner_up[k]) {
                runner_up[k] = Some(i);
            }
        }
    }
    let salience = (0..n_frames)
        .map(|k| chosen[k].and_then(|i| all[i].at(k)).map_or(0.0, |(_, s)| s))
        .collect();
    Selection {
        chosen,
        runner_up,
        salience,
    }
}

/// Merges unsure frames closer than `min_seconds` into spans and keeps spans at least
/// `min_seconds` long. A run of frames `a ..= b` spans `[a · hop, (b + 1) · hop)`.
fn spans(
    doubt: &[UnsureReasons],
    hop_seconds: f64,
    min_seconds: f64,
) -> (Vec<(f64, f64)>, Vec<UnsureReasons>) {
    let max_gap = (min_seconds / hop_seconds).round() as usize;
    let mut runs: Vec<(usize, usize, UnsureReasons)> = Vec::new();
    for (k, d) in doubt.iter().enumerate() {
        if !d.any() {
            continue;
        }
        match runs.last_mut() {
            Some((_, end, reasons)) if k - *end <= max_gap + 1 => {
                *end = k;
                reasons.merge(*d);
            }
            _ => runs.push((k, k, *d)),
        }
    }
    runs.into_iter()
        .map(|(a, b, r)| ((a as f64 * hop_seconds, (b + 1) as f64 * hop_seconds), r))
        .filter(|((s, e), _)| e - s >= min_seconds - 1e-9)
        .unzip()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spans_merge_close_frames_and_drop_short_ones() {
        let hop = 0.02;
        let mut doubt = vec![UnsureReasons::default(); 40];
        for k in [2usize, 3, 6, 7, 8] {
            doubt[k].competing_contour = true;
        }
        doubt[30].octave = true;
        let (s, r) = spans(&doubt, hop, 0.1);
        assert_eq!(s.len(), 1);
        assert!((s[0].0 - 0.04).abs() < 1e-9 && (s[0].1 - 0.18).abs() < 1e-9);
        assert!(r[0].competing_contour && !r[0].octave);
    }

    #[test]
    fn odd_input_does_not_panic() {
        let mut signal = crate::audio::test_signals::sine(440.0, 0.5);
        signal[1000] = f32::NAN;
        signal[2000] = f32::INFINITY;
        for rate in [0u32, 1, 8_000, 22_050, 192_000] {
            let m = predominant_melody(&signal, rate, &MelodyOptions::default());
            assert_eq!(m.track.f0.len(), m.track.voiced.len());
        }
        let tiny = MelodyOptions {
            hop_length: 0,
            window_length: 0,
            n_fft: 0,
            n_harmonics: 0,
            bins_per_semitone: 0,
            max_salience_peaks: 0,
            fmin: -5.0,
            fmax: 0.0,
            ..MelodyOptions::default()
        };
        let m = predominant_melody(&signal, 22_050, &tiny);
        assert_eq!(m.track.f0.len(), m.track.voiced_prob.len());
    }

    #[test]
    fn empty_and_silent_input_give_no_melody() {
        for signal in [Vec::new(), vec![0.0f32; 22_050]] {
            let m = predominant_melody(&signal, 22_050, &MelodyOptions::default());
            assert_eq!(m.track.f0.len(), 1 + signal.len() / 512);
            assert!(m.track.f0.iter().all(|f| *f == 0.0));
            assert!(m.unsure.is_empty());
        }
    }
}

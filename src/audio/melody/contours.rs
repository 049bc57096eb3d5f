//! Pitch contours and the choice of the melodic ones: Salamon & Gómez (2012), sections II-C
//! (contour creation), II-D (characteristics) and II-E (melody selection).
//!
//! In: the salience peaks of every frame. Out: the contours with their characteristics, the
//! outcome of voicing detection and octave-error removal, and per frame the chosen pitch.
//!
//! 1. **Peak filtering.** A frame's peaks below `tau_plus` × its strongest peak, and then
//!    peaks below `μ − tau_sigma · σ` of the salience of all remaining peaks of the
//!    recording, go to the set S⁻ of weak peaks; the others form S⁺.
//! 2. **Peak streaming.** Repeatedly the strongest unused S⁺ peak starts a contour, which is
//!    tracked forward and then backward in time: in the next frame, the unused S⁺ peak closest
//!    in pitch within `continuity_cents`; failing that the closest S⁻ peak, for at most
//!    `max_gap_seconds` in a row; trailing S⁻ peaks are trimmed. Peaks taken are used up.
//! 3. **Characteristics.** Pitch mean and standard deviation (cents), salience mean, total and
//!    standard deviation, length, and vibrato: a peak of the contour's detrended pitch
//!    spectrum between `vibrato_hz.0` and `vibrato_hz.1` that is the strongest between 2 and
//!    20 Hz and has an extent (peak to peak) of at least 20 cents.
//! 4. **Voicing.** With `μ̄` and `σ̄` the mean and standard deviation of the contours' mean
//!    saliences, contours whose mean salience is below `μ̄ − voicing_lambda · σ̄` are dropped
//!    unless they have vibrato.
//! 5. **Octave errors and pitch outliers**, `octave_iterations` times: the melody pitch mean
//!    `P̄(t)` is the total-salience-weighted mean pitch of the contours present in each frame,
//!    smoothed over `pitch_mean_seconds`; of two contours that overlap for at least half of
//!    the shorter one and lie an octave apart (within `octave_tolerance_cents`, averaged over
//!    the overlap), the one with less salience over the overlap is dropped when it has less
//!    than `octave_salience_ratio` of the other's, otherwise the one farther from `P̄`; pairs
//!    a twelfth apart (ratio 3) lose the one farther from `P̄`. `P̄` is recomputed and
//!    contours whose mean distance from it exceeds `outlier_cents` are dropped.
//! 6. **Selection.** In each frame, the pitch of the remaining contour with the greatest total
//!    salience.
//!
//! Pitches are cents above the salience function's `fmin`.

use super::salience::SaliencePeak;
use super::MelodyOptions;

/// Salience peaks of all frames (frame `k` holds `peaks[offsets[k] .. offsets[k + 1]]`).
#[derive(Debug, Clone, Default)]
pub(crate) struct PeakFrames {
    pub offsets: Vec<usize>,
    pub peaks: Vec<SaliencePeak>,
}

impl PeakFrames {
    pub fn n_frames(&self) -> usize {
        self.offsets.len().saturating_sub(1)
    }

    fn range(&self, k: usize) -> std::ops::Range<usize> {
        self.offsets[k]..self.offsets[k + 1]
    }
}

/// One pitch contour and its characteristics (step 3).
#[derive(Debug, Clone, Default)]
pub(crate) struct Contour {
    /// First frame.
    pub start: usize,
    /// Pitch per frame, cents above `fmin`.
    pub cents: Vec<f32>,
    /// Salience per frame.
    pub salience: Vec<f32>,
    pub pitch_mean: f64,
    pub pitch_deviation: f64,
    pub salience_mean: f64,
    pub salience_total: f64,
    pub vibrato: bool,
}

impl Contour {
    pub fn end(&self) -> usize {
        self.start + self.cents.len()
    }

    pub fn at(&self, k: usize) -> Option<(f32, f32)> {
        let i = k.checked_sub(self.start)?;
        Some((*self.cents.get(i)?, *self.salience.get(i)?))
    }
}

/// An octave and a fifth (frequency ratio 3), in cents: 1200 · log2(3).
const TWELFTH_CENTS: f64 = 1901.955;

/// Peak state during streaming.
#[derive(Clone, Copy, PartialEq)]
enum State {
    Weak,
    Strong,
    Used,
}

fn mean_std(values: impl Iterator<Item = f64> + Clone) -> (f64, f64) {
    let n = values.clone().count();
    if n == 0 {
        return (0.0, 0.0);
    }
    let mean = values.clone().sum::<f64>() / n as f64;
    let var = values.map(|v| (v - mean) * (v - mean)).sum::<f64>() / n as f64;
    (mean, var.sqrt())
}

/// Steps 1 and 2: the contours of a recording, in order of creation (strongest seed first).
pub(crate) fn create_contours(
    frames: &PeakFrames,
    options: &MelodyOptions,
    hop_seconds: f64,
) -> Vec<Contour> {
    let n_frames = frames.n_frames();
    let mut state = vec![State::Weak; frames.peaks.len()];
    for k in 0..n_frames {
        let range = frames.range(k);
        let top = frames.peaks[range.clone()]
            .iter()
            .map(|p| p.salience)
            .fold(0.0f32, f32::max);
        for i in range {
            if f64::from(frames.peaks[i].salience) >= options.tau_plus * f64::from(top) {
                state[i] = State::Strong;
            }
        }
    }
    let strong = || {
        state
            .iter()
            .zip(&frames.peaks)
            .filter(|(s, _)| **s == State::Strong)
            .map(|(_, p)| f64::from(p.salience))
    };
    let (mean, std) = mean_std(strong());
    let floor = mean - options.tau_sigma * std;
    for (s, p) in state.iter_mut().zip(&frames.peaks) {
        if *s == State::Strong && f64::from(p.salience) < floor {
            *s = State::Weak;
        }
    }
    let mut frame_of = vec![0usize; frames.peaks.len()];
    for k in 0..n_frames {
        for i in frames.range(k) {
            frame_of[i] = k;
        }
    }
    let mut order: Vec<usize> = (0..frames.peaks.len())
        .filter(|i| state[*i] == State::Strong)
        .collect();
    order.sort_by(|a, b| {
        frames.peaks[*b]
            .salience
            .total_cmp(&frames.peaks[*a].salience)
            .then(a.cmp(b))
    });
    let max_gap = (options.max_gap_seconds / hop_seconds).round().max(0.0) as usize;
    let mut contours = Vec::new();
    for seed in order {
        if state[seed] != State::Strong {
            continue;
        }
        let k0 = frame_of[seed];
        let forward = track(frames, &state, k0, seed, true, options, max_gap);
        let backward = track(frames, &state, k0, seed, false, options, max_gap);
        // One peak per frame, in consecutive frames.
        let start = k0 - backward.len();
        let mut indices: Vec<usize> = backward.into_iter().rev().collect();
        indices.push(seed);
        indices.extend(forward);
        for i in &indices {
            state[*i] = State::Used;
        }
        contours.push(Contour {
            start,
            cents: indices.iter().map(|i| frames.peaks[*i].cents).collect(),
            salience: indices.iter().map(|i| frames.peaks[*i].salience).collect(),
            ..Contour::default()
        });
    }
    contours
}

/// Follows a contour from the peak `seed` in frame `k0`, forward or backward; returns the
/// peaks taken, nearest frame first, with trailing weak peaks trimmed.
fn track(
    frames: &PeakFrames,
    state: &[State],
    k0: usize,
    seed: usize,
    forward: bool,
    options: &MelodyOptions,
    max_gap: usize,
) -> Vec<usize> {
    let mut taken: Vec<(usize, bool)> = Vec::new();
    let mut last = frames.peaks[seed].cents;
    let mut gap = 0usize;
    let mut k = k0;
    loop {
        let next = if forward { k + 1 } else { k.wrapping_sub(1) };
        if next >= frames.n_frames() {
            break;
        }
        k = next;
        let mut best: [Option<(usize, f32)>; 2] = [None, None];
        for i in frames.range(k) {
            let class = match state[i] {
                State::Strong => 0,
                State::Weak => 1,
                State::Used => continue,
            };
            let distance = (frames.peaks[i].cents - last).abs();
            if f64::from(distance) > options.continuity_cents {
                continue;
            }
            if best[class].is_none_or(|(_, d)| distance < d) {
                best[class] = Some((i, distance));
            }
        }
        if let Some((i, _)) = best[0] {
            taken.push((i, true));
            gap = 0;
        } else if let Some((i, _)) = best[1] {
            gap += 1;
            if gap > max_gap {
                break;
            }
            taken.push((i, false));
        } else {
            break;
        }
        if let Some((i, _)) = taken.last() {
            last = frames.peaks[*i].cents;
        }
    }
    while taken.last().is_some_and(|(_, strong)| !strong) {
        taken.pop();
    }
    taken.into_iter().map(|(i, _)| i).collect()
}

/// Step 3: fills in each contour's characteristics.
pub(crate) fn characterise(contours: &mut [Contour], options: &MelodyOptions, hop_seconds: f64) {
    for c in contours.iter_mut() {
        let (pm, ps) = mean_std(c.cents.iter().map(|v| f64::from(*v)));
        let (sm, _) = mean_std(c.salience.iter().map(|v| f64::from(*v)));
        c.pitch_mean = pm;
        c.pitch_deviation = ps;
        c.salience_mean = sm;
        c.salience_total = c.salience.iter().map(|v| f64::from(*v)).sum();
        c.vibrato = has_vibrato(&c.cents, options.vibrato_hz, hop_seconds);
    }
}

/// Vibrato test of step 3 on a pitch series (cents) sampled every `hop_seconds`.
fn has_vibrato(cents: &[f32], band: (f64, f64), hop_seconds: f64) -> bool {
    let n = cents.len();
    // At least two cycles of the slowest vibrato.
    if hop_seconds <= 0.0 || (n as f64) * hop_seconds < 2.0 / band.0.max(0.1) {
        return false;
    }
    // Remove the least-squares line.
    let xs: Vec<f64> = (0..n).map(|i| i as f64).collect();
    let ys: Vec<f64> = cents.iter().map(|c| f64::from(*c)).collect();
    let mx = xs.iter().sum::<f64>() / n as f64;
    let my = ys.iter().sum::<f64>() / n as f64;
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let slope = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    let residual: Vec<f64> = xs
        .iter()
        .zip(&ys)
        .map(|(x, y)| y - my - slope * (x - mx))
        .collect();
    // Amplitude spectrum (cents) on a 0.25 Hz grid from 2 to 20 Hz, by direct DFT.
    let nyquist = 0.5 / hop_seconds;
    let (mut best_in, mut best_all) = (0.0f64, 0.0f64);
    let mut f = 2.0;
    while f <= 20.0f64.min(nyquist) {
        let w = 2.0 * std::f64::consts::PI * f * hop_seconds;
        let (mut re, mut im) = (0.0, 0.0);
        for (i, r) in residual.iter().enumerate() {
            re += r * (w * i as f64).cos();
            im -= r * (w * i as f64).sin();
        }
        let amplitude = 2.0 * (re * re + im * im).sqrt() / n as f64;
        best_all = best_all.max(amplitude);
        if f >= band.0 && f <= band.1 {
            best_in = best_in.max(amplitude);
        }
        f += 0.25;
    }
    best_in >= best_all && 2.0 * best_in >= 20.0
}

/// Step 4: the voicing threshold `μ̄ − λ σ̄` over the contours' mean saliences, and whether
/// each contour passes it (or has vibrato).
pub(crate) fn voicing(contours: &[Contour], options: &MelodyOptions) -> (f64, f64, Vec<bool>) {
    let (mean, std) = mean_std(contours.iter().map(|c| c.salience_mean));
    let threshold = mean - options.voicing_lambda * std;
    let keep = contours
        .iter()
        .map(|c| c.salience_mean >= threshold || c.vibrato)
        .collect();
    (threshold, std, keep)
}

/// The melody pitch mean `P̄(t)` of step 5 over the kept contours, one value per frame
/// (`None` when no contour is kept at all).
pub(crate) fn pitch_mean(
    contours: &[Contour],
    keep: &[bool],
    n_frames: usize,
    window_frames: usize,
) -> Vec<Option<f64>> {
    let mut num = vec![0.0f64; n_frames];
    let mut den = vec![0.0f64; n_frames];
    for (c, _) in contours.iter().zip(keep).filter(|(_, k)| **k) {
        for (i, p) in c.cents.iter().enumerate() {
            if let (Some(n), Some(d)) = (num.get_mut(c.start + i), den.get_mut(c.start + i)) {
                *n += c.salience_total * f64::from(*p);
                *d += c.salience_total;
            }
        }
    }
    // Centred moving sums (a moving average of the weighted mean's numerator and denominator).
    let half = window_frames / 2;
    let mut prefix_n = vec![0.0f64; n_frames + 1];
    let mut prefix_d = vec![0.0f64; n_frames + 1];
    for k in 0..n_frames {
        prefix_n[k + 1] = prefix_n[k] + num[k];
        prefix_d[k + 1] = prefix_d[k] + den[k];
    }
    let mut out: Vec<Option<f64>> = (0..n_frames)
        .map(|k| {
            let a = k.saturating_sub(half);
            let b = (k + half + 1).min(n_frames);
            let d = prefix_d[b] - prefix_d[a];
            (d > 0.0).then(|| (prefix_n[b] - prefix_n[a]) / d)
        })
        .collect();
    // Frames far from any contour take the nearest value (forward, then backward).
    let mut last = None;
    for v in out.iter_mut() {
        if v.is_some() {
            last = *v;
        } else {
            *v = last;
        }
    }
    let mut next = None;
    for v in out.iter_mut().rev() {
        if v.is_some() {
            next = *v;
        } else {
            *v = next;
        }
    }
    out
}

fn distance_from_mean(c: &Contour, mean: &[Option<f64>], from: usize, to: usize) -> f64 {
    let mut sum = 0.0;
    let mut n = 0usize;
    for k in from..to {
        if let (Some((p, _)), Some(Some(m))) = (c.at(k), mean.get(k)) {
            sum += f64::from(p) - m;
            n += 1;
        }
    }
    if n == 0 {
        0.0
    } else {
        (sum / n as f64).abs()
    }
}

/// An octave pair resolved in step 5: frames `[from, to)`, the salience of the dropped and of
/// the kept contour summed over those frames.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct OctaveChoice {
    pub from: usize,
    pub to: usize,
    pub dropped_salience: f64,
    pub kept_salience: f64,
}

/// Step 5: drops octave duplicates and pitch outliers from `keep`; returns the octave pairs
/// resolved.
pub(crate) fn remove_octave_errors(
    contours: &[Contour],
    keep: &mut [bool],
    n_frames: usize,
    options: &MelodyOptions,
    hop_seconds: f64,
) -> Vec<OctaveChoice> {
    let window = ((options.pitch_mean_seconds / hop_seconds).round() as usize).max(1);
    let mut order: Vec<usize> = (0..contours.len()).collect();
    order.sort_by_key(|i| (contours[*i].start, *i));
    let mut choices = Vec::new();
    for _ in 0..options.octave_iterations {
        let mean = pitch_mean(contours, keep, n_frames, window);
        for (x, &i) in order.iter().enumerate() {
            for &j in &order[x + 1..] {
                let (a, b) = (&contours[i], &contours[j]);
                if b.start >= a.end() {
                    break;
                }
                if !keep[i] || !keep[j] {
                    continue;
                }
                let from = b.start;
                let to = a.end().min(b.end());
                let shorter = a.cents.len().min(b.cents.len());
                if to <= from || 2 * (to - from) < shorter {
                    continue;
                }
                let (mut diff, mut sa, mut sb) = (0.0, 0.0, 0.0);
                for k in from..to {
                    if let (Some((pa, xa)), Some((pb, xb))) = (a.at(k), b.at(k)) {
                        diff += f64::from(pa - pb);
                        sa += f64::from(xa);
                        sb += f64::from(xb);
                    }
                }
                let diff = (diff / (to - from) as f64).abs();
                let octave = (diff - 1200.0).abs() <= options.octave_tolerance_cents;
                let twelfth = (diff - TWELFTH_CENTS).abs() <= options.octave_tolerance_cents;
                if !octave && !twelfth {
                    continue;
                }
                let da = distance_from_mean(a, &mean, from, to);
                let db = distance_from_mean(b, &mean, from, to);
                let drop_a = if octave && sa.min(sb) < options.octave_salience_ratio * sa.max(sb) {
                    sa < sb
                } else {
                    da > db
                };
                let (drop, kept_salience, dropped_salience) =
                    if drop_a { (i, sb, sa) } else { (j, sa, sb) };
                keep[drop] = false;
                choices.push(OctaveChoice {
                    from,
                    to,
                    dropped_salience,
                    kept_salience,
                });
            }
        }
        let mean = pitch_mean(contours, keep, n_frames, window);
        for (c, k) in contours.iter().zip(keep.iter_mut()) {
            if *k && distance_from_mean(c, &mean, c.start, c.end()) > options.outlier_cents {
                *k = false;
            }
        }
    }
    choices
}

#[cfg(test)]
mod tests {
    use super::*;

    fn frames(per_frame: &[Vec<(f32, f32)>]) -> PeakFrames {
        let mut out = PeakFrames::default();
        out.offsets.push(0);
        for f in per_frame {
            for (cents, salience) in f {
                out.peaks.push(SaliencePeak {
                    cents: *cents,
                    salience: *salience,
                });
            }
            out.offsets.push(out.peaks.len());
        }
        out
    }

    #[test]
    fn streaming_follows_continuity_and_bridges_short_gaps() {
        let options = MelodyOptions::default();
        let hop = 512.0 / 22_050.0;
        // A line at 2400 cents gliding 30 cents per frame, with a weak peak in frame 3 and a
        // far-away strong peak in every frame.
        let mut per_frame = Vec::new();
        for k in 0..8 {
            let line = 2400.0 + 30.0 * k as f32;
            let s = if k == 3 { 0.2 } else { 1.0 };
            per_frame.push(vec![(line, s), (4000.0, 1.0)]);
        }
        let f = frames(&per_frame);
        let contours = create_contours(&f, &options, hop);
        let line = contours
            .iter()
            .find(|c| (c.cents[0] - 2400.0).abs() < 1.0)
            .unwrap();
        assert_eq!(line.start, 0);
        assert_eq!(line.cents.len(), 8, "{line:?}");
        assert!(contours.iter().all(|c| c.end() <= 8));
    }

    #[test]
    fn vibrato_is_found_in_a_6_hz_wobble() {
        let hop = 512.0 / 22_050.0;
        let wobble: Vec<f32> = (0..40)
            .map(|i| {
                3000.0 + 40.0 * (2.0 * std::f32::consts::PI * 6.0 * i as f32 * hop as f32).sin()
            })
            .collect();
        assert!(has_vibrato(&wobble, (5.0, 8.0), hop));
        let flat = vec![3000.0f32; 40];
        assert!(!has_vibrato(&flat, (5.0, 8.0), hop));
    }
}

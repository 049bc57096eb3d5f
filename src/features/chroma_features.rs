//! Chroma sequences prepared for comparison, and the optimal transposition index.
//!
//! - **Features.** Frames of a [`ChromaLayer`] are averaged over a window of `window` frames
//!   every `step` frames (a moving average that also lowers the frame rate), compressed by
//!   `log(1 + 10 · x)` so that weak pitch classes count (logarithmic compression as in
//!   Müller's chroma variants, 2015, §3.1.2), and scaled to unit Euclidean length; a silent
//!   frame stays all zero. The cosine of two such frames is their dot product.
//! - **Optimal transposition index** (OTI, Serrà, Gómez, Herrera & Serra 2008, "Transposing
//!   chroma representations to a common key"): each sequence's global profile is the sum of
//!   its frames, divided by its maximum; the OTI is the circular shift of B's profile with the
//!   largest dot product with A's. B's pitch classes minus the OTI are A's, so a B performed a
//!   minor third higher has OTI 3.

use crate::timeline::ChromaLayer;

/// A chroma sequence ready for comparison: unit-length frames on a fixed step or a beat grid.
#[derive(Debug, Clone)]
pub struct ChromaFeatures {
    /// Seconds between frames (the mean spacing for frames on a beat grid).
    pub hop_seconds: f64,
    /// Time of each frame in seconds: the middle of the stretch it averages (for fixed-time
    /// frames, the centre of the full window, even where the signal's ends clip it).
    pub times: Vec<f64>,
    /// Unit-length (or all-zero) 12-bin frames; pitch class 0 is C.
    pub frames: Vec<[f32; 12]>,
    /// Onset activity per frame: the largest onset peak ([`onset_peaks`]) in the window, then
    /// scaled so that the 95th percentile of the sounding frames is 1 and capped at 1 (all 0
    /// when the layer has no onsets).
    pub onsets: Vec<f32>,
}

impl ChromaFeatures {
    /// Averages `window` frames every `step` frames of `layer`, compresses and normalises.
    pub fn from_layer(layer: &ChromaLayer, step: usize, window: usize) -> ChromaFeatures {
        let step = step.max(1);
        let window = window.max(1);
        let n = layer.frames.len();
        let peaks = onset_peaks(&layer.onsets);
        let mut features = ChromaFeatures::empty(layer.hop_seconds * step as f64);
        for k in 0..n.div_ceil(step) {
            // Window centred on the output frame's own time, k · step input frames.
            let lo = (k * step).saturating_sub(window / 2);
            let hi = (lo + window).min(n);
            features.push(layer, &peaks, lo, hi, (k * step) as f64 * layer.hop_seconds);
        }
        features.finish()
    }

    /// Features on the layer's beat grid ([`ChromaLayer::beats`]: a score's quarter notes, a
    /// recording's tracked beats): every beat is split into `per_beat` equal parts, and frame
    /// `k` averages the layer's frames over `window` parts around part `k` (one part: the
    /// part itself; two: from the middle of the part before to the middle of the next, and so
    /// on). Beat-synchronous chroma, as Serrà et al. (2009) compare it, makes a state a
    /// stretch of musical time whatever the tempo. `None` when the layer lists fewer than
    /// three beats.
    pub fn on_beats(layer: &ChromaLayer, per_beat: usize, window: usize) -> Option<ChromaFeatures> {
        if layer.beats.len() < 3 || layer.hop_seconds <= 0.0 {
            return None;
        }
        let per_beat = per_beat.max(1);
        let end = layer.seconds();
        let mut grid: Vec<f64> = Vec::with_capacity(layer.beats.len() * per_beat);
        for pair in layer.beats.windows(2) {
            let length = pair[1] - pair[0];
            grid.extend((0..per_beat).map(|j| pair[0] + length * j as f64 / per_beat as f64));
        }
        if let Some(last) = layer.beats.last() {
            grid.push(*last);
        }
        grid.retain(|t| *t < end - 1e-9);
        if grid.len() < 3 {
            return None;
        }
        let window = window.max(1);
        let frame_of =
            |t: f64| ((t / layer.hop_seconds).round().max(0.0) as usize).min(layer.frames.len());
        // Each part's start and end; the last part ends with the layer.
        let edge = |k: usize| grid.get(k).copied().unwrap_or(end);
        let parts = grid.len();
        let mut features = ChromaFeatures::empty(0.0);
        let peaks = onset_peaks(&layer.onsets);
        for k in 0..parts {
            let (lo_t, hi_t) = if window % 2 == 1 {
                let half = window / 2;
                (
                    edge(k.saturating_sub(half)),
                    edge((k + 1 + half).min(parts)),
                )
            } else {
                let half = window / 2;
                let start = |i: usize| 0.5 * (edge(i) + edge(i + 1));
                let lo = if k >= half { start(k - half) } else { edge(0) };
                let hi = if k + half < parts {
                    start(k + half)
                } else {
                    end
                };
                (lo, hi.max(lo))
            };
            let (lo, hi) = (frame_of(lo_t), frame_of(hi_t).max(frame_of(lo_t) + 1));
            features.push(
                layer,
                &peaks,
                lo,
                hi.min(layer.frames.len()),
                0.5 * (lo_t + hi_t),
            );
        }
        let n = features.times.len();
        features.hop_seconds = if n > 1 {
            (features.times[n - 1] - features.times[0]) / (n - 1) as f64
        } else {
            layer.hop_seconds
        };
        Some(features.finish())
    }

    fn empty(hop_seconds: f64) -> ChromaFeatures {
        ChromaFeatures {
            hop_seconds,
            times: Vec::new(),
            frames: Vec::new(),
            onsets: Vec::new(),
        }
    }

    /// Appends the compressed, normalised mean of the layer's frames `lo..hi` at `time`.
    fn push(&mut self, layer: &ChromaLayer, peaks: &[f32], lo: usize, hi: usize, time: f64) {
        let hi = hi.min(layer.frames.len());
        let lo = lo.min(hi);
        let mut sum = [0f32; 12];
        for frame in &layer.frames[lo..hi] {
            for (s, v) in sum.iter_mut().zip(frame) {
                *s += *v;
            }
        }
        let mut out = [0f32; 12];
        let scale = 1.0 / (hi - lo).max(1) as f32;
        for (o, s) in out.iter_mut().zip(&sum) {
            *o = (1.0 + 10.0 * s * scale).ln();
        }
        normalise(&mut out);
        self.frames.push(out);
        self.times.push(time);
        let onset = peaks
            .get(lo..hi.min(peaks.len()))
            .unwrap_or(&[])
            .iter()
            .copied()
            .fold(0.0f32, f32::max);
        self.onsets.push(onset);
    }

    fn finish(mut self) -> ChromaFeatures {
        scale_onsets(&mut self.onsets);
        self
    }

    /// Number of frames.
    pub fn len(&self) -> usize {
        self.frames.len()
    }

    /// Whether there are no frames.
    pub fn is_empty(&self) -> bool {
        self.frames.is_empty()
    }

    /// The same sequence with every frame's pitch classes moved down by `shift` semitones
    /// (class `c` takes the value of class `c + shift`), undoing a transposition up by
    /// `shift`.
    pub fn rotated(&self, shift: i32) -> ChromaFeatures {
        let s = shift.rem_euclid(12) as usize;
        ChromaFeatures {
            hop_seconds: self.hop_seconds,
            times: self.times.clone(),
            onsets: self.onsets.clone(),
            frames: self
                .frames
                .iter()
                .map(|f| {
                    let mut out = [0f32; 12];
                    for (c, o) in out.iter_mut().enumerate() {
                        *o = f[(c + s) % 12];
                    }
                    out
                })
                .collect(),
        }
    }

    /// The global profile: the sum of all frames divided by its maximum.
    pub fn profile(&self) -> [f32; 12] {
        let mut sum = [0f32; 12];
        for frame in &self.frames {
            for (s, v) in sum.iter_mut().zip(frame) {
                *s += *v;
            }
        }
        let max = sum.iter().copied().fold(0.0f32, f32::max);
        if max > 0.0 {
            for s in &mut sum {
                *s /= max;
            }
        }
        sum
    }
}

/// Frames on each side of the local mean subtracted from onset values (≈ 0.5 s at the
/// 23.2 ms analysis hop).
const ONSET_MEAN_RADIUS: usize = 21;

/// Onset peaks: each value less the mean of its neighbourhood (±0.5 s), negative parts set to
/// zero, as onset detectors pick peaks from a detection function (Bello et al. 2005), so that
/// a recording's ever-present flux and a score's bare note starts become comparable.
fn onset_peaks(values: &[f32]) -> Vec<f32> {
    let n = values.len();
    let mut prefix = vec![0f64; n + 1];
    for (k, v) in values.iter().enumerate() {
        prefix[k + 1] = prefix[k] + f64::from(*v);
    }
    (0..n)
        .map(|k| {
            let lo = k.saturating_sub(ONSET_MEAN_RADIUS);
            let hi = (k + ONSET_MEAN_RADIUS + 1).min(n);
            let mean = (prefix[hi] - prefix[lo]) / (hi - lo) as f64;
            (f64::from(values[k]) - mean).max(0.0) as f32
        })
        .collect()
}

/// Scales onset values so that the 95th percentile of the positive ones is 1, capped at 1.
fn scale_onsets(onsets: &mut [f32]) {
    let mut positive: Vec<f32> = onsets.iter().copied().filter(|v| *v > 0.0).collect();
    if positive.is_empty() {
        return;
    }
    positive.sort_by(f32::total_cmp);
    let reference = positive[((positive.len() - 1) as f64 * 0.95) as usize];
    if reference > 0.0 {
        for v in onsets.iter_mut() {
            *v = (*v / reference).min(1.0);
        }
    }
}

/// Scales a frame to unit Euclidean length (leaves an all-zero frame as it is).
pub fn normalise(frame: &mut [f32; 12]) {
    let norm = frame.iter().map(|v| v * v).sum::<f32>().sqrt();
    if norm > 0.0 {
        for v in frame.iter_mut() {
            *v /= norm;
        }
    }
}

/// Dot product of two frames.
pub fn dot(a: &[f32; 12], b: &[f32; 12]) -> f32 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Transposition indices of B against A, best first, with the dot product of the global
/// profiles under each (Serrà et al. 2008). Index `k` means B sounds `k` semitones above A
/// (mod 12). Ties go to the smaller index, so the order is deterministic.
pub fn transposition_ranking(a: &ChromaFeatures, b: &ChromaFeatures) -> Vec<(i32, f32)> {
    let pa = a.profile();
    let pb = b.profile();
    let mut ranking: Vec<(i32, f32)> = (0..12)
        .map(|k| {
            let value = (0..12).map(|c| pa[c] * pb[(c + k) % 12]).sum::<f32>();
            (k as i32, value)
        })
        .collect();
    ranking.sort_by(|x, y| y.1.total_cmp(&x.1).then(x.0.cmp(&y.0)));
    ranking
}

/// The optimal transposition index of B against A (0 … 11): B sounds this many semitones
/// above A, modulo the octave.
pub fn optimal_transposition(a: &ChromaFeatures, b: &ChromaFeatures) -> i32 {
    transposition_ranking(a, b).first().map_or(0, |x| x.0)
}

/// Folds a transposition index 0 … 11 to the nearest signed shift, −5 … +6 semitones.
pub fn signed_shift(index: i32) -> i32 {
    let k = index.rem_euclid(12);
    if k > 6 {
        k - 12
    } else {
        k
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn layer(frames: Vec<[f32; 12]>) -> ChromaLayer {
        ChromaLayer {
            hop_seconds: 0.1,
            tuning: 0.0,
            source: crate::timeline::ChromaSource::Notes,
            frames,
            onsets: Vec::new(),
            beats: Vec::new(),
        }
    }

    fn triad(root: usize) -> [f32; 12] {
        // A major triad: root, major third, perfect fifth (common practice).
        let mut f = [0f32; 12];
        for s in [0, 4, 7] {
            f[(root + s) % 12] = 1.0;
        }
        f
    }

    #[test]
    fn the_oti_undoes_a_transposition() {
        // I–IV–V–I in C, and the same a minor third higher (Eb): OTI 3.
        let c: Vec<[f32; 12]> = [0, 5, 7, 0].iter().map(|r| triad(*r)).collect();
        let eb: Vec<[f32; 12]> = [3, 8, 10, 3].iter().map(|r| triad(*r)).collect();
        let a = ChromaFeatures::from_layer(&layer(c), 1, 1);
        let b = ChromaFeatures::from_layer(&layer(eb), 1, 1);
        assert_eq!(optimal_transposition(&a, &b), 3);
        let back = b.rotated(3);
        for (x, y) in a.frames.iter().zip(&back.frames) {
            assert!((dot(x, y) - 1.0).abs() < 1e-5);
        }
        assert_eq!(signed_shift(3), 3);
        assert_eq!(signed_shift(9), -3);
    }

    #[test]
    fn beat_synchronous_features_do_not_depend_on_the_tempo() {
        // I–IV–V–I in C, one chord per four quarters, at 120 bpm and at 80 bpm (quarters of
        // 0.5 s and 0.75 s; frames of 0.1 s): on the beat grid both give the same frames.
        let at_tempo = |quarter: f64| {
            let chord_frames = (4.0 * quarter / 0.1).round() as usize;
            let mut l = layer(
                [0, 5, 7, 0]
                    .iter()
                    .flat_map(|r| std::iter::repeat_n(triad(*r), chord_frames))
                    .collect(),
            );
            l.beats = (0..=16).map(|k| k as f64 * quarter).collect();
            ChromaFeatures::on_beats(&l, 2, 1).unwrap()
        };
        let (fast, slow) = (at_tempo(0.5), at_tempo(0.75));
        assert_eq!(fast.len(), 32);
        assert_eq!(slow.len(), 32);
        for (k, (x, y)) in fast.frames.iter().zip(&slow.frames).enumerate() {
            assert!((dot(x, y) - 1.0).abs() < 1e-5, "frame {k}");
        }
        // Frame times are the middles of the half quarters.
        assert!((slow.times[3] - 3.5 * 0.375).abs() < 1e-9);
        assert!((slow.hop_seconds - 0.375).abs() < 1e-9);
        // Fewer than three quarters: no grid.
        let mut short = layer(vec![triad(0); 10]);
        short.beats = vec![0.0, 0.5];
        assert!(ChromaFeatures::on_beats(&short, 2, 2).is_none());
    }

    #[test]
    fn features_are_unit_length_and_silence_stays_zero() {
        let mut frames = vec![triad(2); 10];
        frames.extend(vec![[0f32; 12]; 10]);
        let f = ChromaFeatures::from_layer(&layer(frames), 2, 2);
        assert_eq!(f.len(), 10);
        assert!((f.hop_seconds - 0.2).abs() < 1e-12);
        assert!((dot(&f.frames[0], &f.frames[0]) - 1.0).abs() < 1e-5);
        assert_eq!(f.frames[9], [0f32; 12]);
    }
}

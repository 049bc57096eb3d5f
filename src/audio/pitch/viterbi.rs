//! Viterbi decoding of the pYIN hidden Markov model (Mauch & Dixon 2014, ICASSP) over pitch
//! bins from `fmin` to `fmax`, each with a voiced and an unvoiced state: pitch moves by at most
//! `max_transition_rate` octaves per second with triangular weights, rows normalised; voicing
//! switches with probability `switch_prob`. Decoding runs in the log domain over the banded
//! transition matrix and skips voiced states without a candidate. The unvoiced layer, whose
//! states share one observation, takes the better of the stay and switch source per bin and
//! then one banded max-plus convolution with the concave log weights ([`BandMax`]), whose
//! maximisers are monotone (the row-maxima property behind SMAWK, Aggarwal et al. 1987).

use super::PyinOptions;

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

/// Log of probability 0: the score of a state that no path reaches.
const NEG: f32 = f32::NEG_INFINITY;

/// The log transition weights of the pYIN HMM.
struct Transitions {
    /// Largest pitch move per frame, in bins.
    h: usize,
    /// Log triangular weight per distance `0 ..= h` in bins.
    log_w: Vec<f32>,
    /// Log of each source bin's sum of weights over the bins that exist (its row norm).
    row_log_norm: Vec<f32>,
    /// Log probability of keeping the voicing.
    log_stay: f32,
    /// Log probability of switching between voiced and unvoiced.
    log_switch: f32,
}

impl Transitions {
    fn new(n_bins: usize, half_width: usize, switch_prob: f64) -> Transitions {
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
        let p = switch_prob.clamp(1e-9, 1.0 - 1e-9);
        let log_stay = (1.0 - p).ln() as f32;
        let log_switch = p.ln() as f32;
        Transitions {
            h,
            log_w,
            row_log_norm,
            log_stay,
            log_switch,
        }
    }
}

/// Log observation probability of each of the `n` unvoiced states, in a frame whose candidates
/// sum to `voiced_prob`: `(1 − voiced_prob) / n`.
fn log_unvoiced(voiced_prob: f32, n: usize) -> f32 {
    ((1.0 - f64::from(voiced_prob)).max(1e-30) / n as f64).ln() as f32
}

/// Scores of the first frame, voiced layer `[0, n)` and unvoiced layer `[n, 2n)`: a uniform
/// initial distribution over all 2n states (as librosa's pyin), times the frame's observations.
fn initial_scores(first: &[(usize, f64, f64)], voiced_prob: f32, n: usize) -> Vec<f32> {
    let mut score = vec![NEG; 2 * n];
    let log_init = (1.0 / (2 * n) as f64).ln() as f32;
    let first_u = log_unvoiced(voiced_prob, n);
    for s in score[n..].iter_mut() {
        *s = log_init + first_u;
    }
    for &(j, prob, _) in first {
        if prob > 0.0 && j < n {
            score[j] = log_init + prob.min(1.0).ln() as f32;
        }
    }
    score
}

/// One step of the decoder, from a frame's scores to the next's, with its working buffers.
struct Step {
    n: usize,
    /// The previous frame's scores with the row normalisation folded in.
    source: Vec<f32>,
    /// The scores being computed.
    next: Vec<f32>,
    /// Back-pointers: the source state of each target state.
    arg: Vec<u16>,
    arg_wide: Vec<u32>,
    /// Per source bin, the better of its voiced (switch) and unvoiced (stay) state.
    merged: Vec<f32>,
    /// Per source bin, the offset of the layer `merged` took (0 voiced, `n` unvoiced).
    layer: Vec<u32>,
    band: BandMax,
}

impl Step {
    fn new(n: usize) -> Step {
        Step {
            n,
            source: vec![NEG; 2 * n],
            next: vec![NEG; 2 * n],
            arg: vec![0u16; 2 * n],
            arg_wide: vec![0u32; n],
            merged: vec![NEG; n],
            layer: vec![0u32; n],
            band: BandMax::new(n),
        }
    }

    /// Replaces `score` by the next frame's scores (shifted so that the best is 0), given that
    /// frame's voiced candidates and voicing probability; the back-pointers are left in `arg`.
    fn advance(
        &mut self,
        score: &mut [f32],
        transitions: &Transitions,
        candidates: &[(usize, f64, f64)],
        voiced_prob: f32,
    ) {
        let n = self.n;
        // Fold the row normalisation into the source scores.
        for i in 0..n {
            self.source[i] = score[i] - transitions.row_log_norm[i];
            self.source[n + i] = score[n + i] - transitions.row_log_norm[i];
        }
        self.unvoiced_targets(transitions, voiced_prob);
        self.voiced_targets(transitions, candidates);
        // Keep scores near 0 so f32 keeps its precision over long files.
        let max = self.next.iter().copied().fold(NEG, f32::max);
        let offset = if max.is_finite() { max } else { 0.0 };
        for (s, v) in score.iter_mut().zip(&self.next) {
            *s = v - offset;
        }
    }

    /// Unvoiced targets: from unvoiced (stay) and voiced (switch) sources within the band.
    /// Both layers share the triangular kernel, so the better of the two per source bin is
    /// convolved once.
    fn unvoiced_targets(&mut self, transitions: &Transitions, voiced_prob: f32) {
        let n = self.n;
        for i in 0..n {
            let stay = self.source[n + i] + transitions.log_stay;
            let switch = self.source[i] + transitions.log_switch;
            if switch > stay {
                self.merged[i] = switch;
                self.layer[i] = 0;
            } else {
                self.merged[i] = stay;
                self.layer[i] = n as u32;
            }
        }
        self.band.run(
            &self.merged,
            &transitions.log_w,
            &mut self.next[n..],
            &mut self.arg_wide,
        );
        for (a, wide) in self.arg[n..].iter_mut().zip(self.arg_wide.iter()) {
            let i = *wide as usize;
            *a = (self.layer[i] + *wide) as u16;
        }
        let log_unvoiced = log_unvoiced(voiced_prob, n);
        for v in self.next[n..].iter_mut() {
            *v += log_unvoiced;
        }
    }

    /// Voiced targets: only bins with a candidate.
    fn voiced_targets(&mut self, transitions: &Transitions, candidates: &[(usize, f64, f64)]) {
        let (n, h) = (self.n, transitions.h);
        let (log_w, source) = (&transitions.log_w, &self.source);
        self.next[..n].fill(NEG);
        for &(j, prob, _) in candidates {
            if prob <= 0.0 {
                continue;
            }
            let lo = j.saturating_sub(h);
            let hi = (j + h).min(n - 1);
            let mut best = NEG;
            let mut best_i = n + j;
            for i in lo..=hi {
                let w = log_w[i.abs_diff(j)];
                let cv = source[i] + w + transitions.log_stay;
                if cv > best {
                    best = cv;
                    best_i = i;
                }
                let cu = source[n + i] + w + transitions.log_switch;
                if cu > best {
                    best = cu;
                    best_i = n + i;
                }
            }
            self.next[j] = best + prob.min(1.0).ln() as f32;
            self.arg[j] = best_i as u16;
        }
    }
}

/// The path back from the best final state through the back-pointers (`2n` per frame).
fn trace_back(score: &[f32], back: &[u16], n_frames: usize, n: usize) -> Vec<(bool, usize)> {
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

/// Viterbi decoding of the pYIN HMM: per frame (voiced?, pitch bin).
pub(super) fn viterbi(
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
    let n = n_bins;
    let transitions = Transitions::new(n, half_width, options.switch_prob);
    // Scores: voiced layer [0, n), unvoiced layer [n, 2n). Back-pointers: source state index.
    let mut score = initial_scores(&candidates[0], voiced_prob[0], n);
    let mut back: Vec<u16> = vec![0; n_frames * 2 * n];
    let mut step = Step::new(n);
    for t in 1..n_frames {
        step.advance(&mut score, &transitions, &candidates[t], voiced_prob[t]);
        back[t * 2 * n..(t + 1) * 2 * n].copy_from_slice(&step.arg);
    }
    trace_back(&score, &back, n_frames, n)
}

#[cfg(test)]
mod tests {
    use super::*;

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
}

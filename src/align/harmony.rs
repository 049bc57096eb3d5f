//! Harmonic comparison of two chroma sequences: cross recurrence and the Qmax local alignment.
//!
//! Method (Serrà, Serra & Andrzejak 2009, "Cross recurrence quantification for cover song
//! identification", New Journal of Physics 11):
//! 1. Both chromagrams become beat-synchronous [`ChromaFeatures`] (`per_beat` frames per
//!    beat of each piece — a score's quarter note, a recording's tracked beat — each
//!    averaging `beat_window` of them; fixed-time frames of `step` analysis frames averaged
//!    over `window` when a piece has no beat grid); B is moved into A's key by the optimal transposition index (Serrà et al. 2008); the two best
//!    indices are tried and the stronger result kept.
//! 2. Delay embedding: the state at frame `i` is the concatenation of frames `i, i + τ, …,
//!    i + (m − 1)τ`, so that a state is a short progression rather than one chord.
//! 3. Binary cross recurrence plot: `R(i, j) = 1` when B's state `j` is among the `κ` nearest
//!    (fraction of all states) of A's state `i` and A's state `i` among the `κ` nearest of
//!    B's state `j` (mutual nearest neighbours, Euclidean distance).
//! 4. Qmax: `Q(i, j) = max(Q(i−1, j−1), Q(i−2, j−1), Q(i−1, j−2)) + 1` when `R(i, j) = 1`, else
//!    `max(0, Q(p) − γ(R(p)))` over the same three predecessors `p`, with `γ = γo` after a
//!    recurrence (a gap opens) and `γe` otherwise. The three steps let the tempo ratio of the
//!    two performances lie anywhere between 1/2 and 2, so a global tempo change does not
//!    matter. The largest `Q` ends the best shared progression; the traceback gives its span
//!    in both pieces.
//! 5. Several passages by declumping, as for melodies: once a passage is reported, the
//!    rectangle of frames it spans in both pieces is closed and the next one is sought.
//! 6. Significance: the columns of the recurrence plot are shuffled in blocks of `block`
//!    frames (B's states keep their short-range order and their neighbour sets, but lose their
//!    long-range order), `shuffles` times with a seeded generator; a passage's empirical
//!    p-value is `(1 + #{shuffled Qmax ≥ Q}) / (shuffles + 1)`.
//!
//! Serrà et al. (2009) used κ = 0.1, γo = 5 and γe = 0.5 to rank whole songs; to place
//! passages, collatio uses a sparser plot and a dearer gap (κ = 0.07, γe = 2) plus an absolute
//! floor on the similarity of recurrent states (mean cosine 0.7), which keep a path from
//! wandering through unrelated music on chance recurrences. These values, the frame rate and
//! the embedding (m = 8 half-beat frames, τ = 1, so a state spans four beats) were
//! chosen on the arrangement fixtures (`tests/arrangements.rs`): the shared progression of two
//! arrangements is found with its bars, and every passage reported between the other pairs
//! lies on a chord progression they share.

use crate::features::chroma_features::{transposition_ranking, ChromaFeatures};
use crate::timeline::ChromaLayer;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

/// Transposition indices tried, best profile match first (a transposed copy over another
/// accompaniment may rank its true key second by the global profiles).
const TRANSPOSITIONS_TRIED: usize = 2;

/// Parameters of the harmonic comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonyParams {
    /// Feature frames per beat when both pieces list their beats
    /// ([`crate::timeline::ChromaLayer::beats`]): beat-synchronous features. Default 2; 0
    /// uses fixed-time frames (`step`, `window`) instead.
    pub per_beat: usize,
    /// Feature frames (parts of a beat) averaged into one, on the beat grid. Default 2
    /// (one beat).
    pub beat_window: usize,
    /// Analysis frames per feature frame without a beat grid. Default 8 (≈ 0.19 s at the
    /// 23.2 ms analysis hop).
    pub step: usize,
    /// Analysis frames averaged into one feature frame without a beat grid. Default 32
    /// (≈ 0.74 s).
    pub window: usize,
    /// Embedding dimension m (feature frames per state). Default 8.
    pub embedding: usize,
    /// Embedding delay τ in feature frames. Default 1.
    pub delay: usize,
    /// Fraction of nearest neighbours counted as recurrent, κ. Default 0.07 (chosen on the
    /// arrangement fixtures, checked on the demo's scores: `docs/harmony.md`).
    pub neighbours: f64,
    /// Lowest mean cosine similarity of the frames of two states for them to count as
    /// recurrent, whatever their rank. Default 0.7.
    pub min_similarity: f32,
    /// Penalty for opening a gap, γo. Default 5.
    pub gap_open: f32,
    /// Penalty for extending a gap, γe. Default 2.
    pub gap_extend: f32,
    /// Shortest passage reported, in seconds of A. Default 6.
    pub min_seconds: f64,
    /// Largest empirical p-value reported. Default 0.05.
    pub max_p: f64,
    /// Most passages reported. Default 10.
    pub max_passages: usize,
    /// Shuffled recurrence plots for the empirical p-value. Default 99.
    pub shuffles: usize,
    /// Columns shuffled together. Default 16 feature frames (≈ 3 s).
    pub block: usize,
    /// Seed of the shuffles. Default 20261202.
    pub seed: u64,
    /// Largest recurrence plot, in cells; longer inputs use a coarser `step` (memory about
    /// 16 bytes a cell). Default 4 M (two recordings of about six minutes at the default
    /// step).
    pub max_cells: usize,
}

impl Default for HarmonyParams {
    fn default() -> Self {
        HarmonyParams {
            per_beat: 2,
            beat_window: 2,
            step: 8,
            window: 32,
            embedding: 8,
            delay: 1,
            neighbours: 0.07,
            min_similarity: 0.7,
            gap_open: 5.0,
            gap_extend: 2.0,
            min_seconds: 6.0,
            max_p: 0.05,
            max_passages: 10,
            shuffles: 99,
            block: 16,
            seed: 20_261_202,
            max_cells: 4_000_000,
        }
    }
}

/// One shared harmonic passage.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicMatch {
    /// Start and end in A, seconds of A's timeline.
    pub a_seconds: [f64; 2],
    /// Start and end in B, seconds of B's timeline.
    pub b_seconds: [f64; 2],
    /// The Qmax value of the passage (recurrent states on the path, less gap penalties).
    pub score: f32,
    /// Recurrent states on the path.
    pub recurrences: usize,
    /// Mean cosine similarity of the aligned (transposed) chroma frames on the path.
    pub similarity: f64,
    /// Empirical p-value from the shuffled recurrence plots.
    pub empirical_p: f64,
    /// B's duration of the passage over A's (above 1 when B is slower).
    pub duration_ratio: f64,
    /// The path as (A seconds, B seconds) of its states, in order.
    pub path: Vec<[f64; 2]>,
}

/// The result of a harmonic comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicComparison {
    /// B's key relative to A's by the optimal transposition index, folded to −5 … +6
    /// semitones.
    pub transposition_semitones: i32,
    /// Whether the features were beat-synchronous (on both pieces' beats) rather
    /// than fixed-time frames.
    pub beat_synchronous: bool,
    /// Seconds between feature frames in A (the mean on a beat grid).
    pub frame_seconds: f64,
    /// Seconds of chroma averaged into each feature frame, in A and in B: passage edges are
    /// no sharper than about half of it.
    pub window_seconds: [f64; 2],
    /// Share of all cells of the recurrence plot that are recurrent.
    pub recurrence_rate: f64,
    /// The largest Qmax among the shuffled plots (the level a passage must pass to reach the
    /// smallest p-value).
    pub null_max: f32,
    /// Shared passages, strongest first.
    pub matches: Vec<HarmonicMatch>,
}

/// A binary cross recurrence plot, rows = A's states, columns = B's states.
struct Plot {
    rows: usize,
    cols: usize,
    cells: Vec<bool>,
}

impl Plot {
    fn at(&self, i: usize, j: usize) -> bool {
        self.cells[i * self.cols + j]
    }
}

/// Compares the harmony of two pieces (see the module documentation).
pub fn compare_harmony(
    a: &ChromaLayer,
    b: &ChromaLayer,
    params: &HarmonyParams,
) -> HarmonicComparison {
    let (fa, fb, window_frames, beat_synchronous) = features(a, b, params);
    // The candidate index whose plot holds the higher Qmax; only that one is tested
    // against the shuffles.
    let m = params.embedding.max(1);
    let tau = params.delay.max(1);
    let span = (m - 1) * tau;
    let mut chosen: Option<(i32, f32, Option<Plot>)> = None;
    for (index, _) in transposition_ranking(&fa, &fb)
        .into_iter()
        .take(TRANSPOSITIONS_TRIED)
    {
        let (value, plot) = if fa.len() > span + 1 && fb.len() > span + 1 {
            let plot = recurrence_plot(&fa, &fb.rotated(index), m, tau, params);
            let value = qmax_kernel(&plot.cells, None, plot.rows, plot.cols, params, None)
                .map_or(0.0, |b| b.1);
            (value, Some(plot))
        } else {
            (0.0, None)
        };
        if chosen.as_ref().is_none_or(|(_, v, _)| value > *v) {
            chosen = Some((index, value, plot));
        }
    }
    let (index, plot) = chosen.map_or((0, None), |(i, _, p)| (i, p));
    let mut found = compare_at(&fa, &fb.rotated(index), index, plot, window_frames, params);
    found.beat_synchronous = beat_synchronous;
    found
}

/// Both pieces' features: on their beat grids when both have one long enough for a
/// state and the plot stays under `max_cells`, else on fixed-time frames; with the frames
/// each averages and whether they are beat-synchronous.
fn features(
    a: &ChromaLayer,
    b: &ChromaLayer,
    params: &HarmonyParams,
) -> (ChromaFeatures, ChromaFeatures, f64, bool) {
    if params.per_beat > 0 {
        let on_beats = |layer| ChromaFeatures::on_beats(layer, params.per_beat, params.beat_window);
        let state = (params.embedding.max(1) - 1) * params.delay.max(1) + 1;
        if let (Some(fa), Some(fb)) = (on_beats(a), on_beats(b)) {
            if fa.len() > state
                && fb.len() > state
                && fa.len().saturating_mul(fb.len()) <= params.max_cells.max(1)
            {
                return (fa, fb, params.beat_window.max(1) as f64, true);
            }
        }
    }
    let step = coarse_enough(a, b, params);
    let window = params.window.max(step);
    (
        ChromaFeatures::from_layer(a, step, window),
        ChromaFeatures::from_layer(b, step, window),
        window as f64 / step as f64,
        false,
    )
}

/// Time at a fractional frame index, interpolated between frame times (extrapolated by
/// `hop` past the last).
fn time_at(times: &[f64], hop: f64, index: f64) -> f64 {
    let Some(&last) = times.last() else {
        return index * hop;
    };
    let k = index.floor().max(0.0) as usize;
    let fraction = index - k as f64;
    match (times.get(k), times.get(k + 1)) {
        (Some(t0), Some(t1)) => t0 + fraction * (t1 - t0),
        _ => last + (index - (times.len() - 1) as f64) * hop,
    }
}

/// The step that keeps the plot under `max_cells`.
fn coarse_enough(a: &ChromaLayer, b: &ChromaLayer, params: &HarmonyParams) -> usize {
    let mut step = params.step.max(1);
    while (a.frames.len() / step) * (b.frames.len() / step) > params.max_cells.max(1) {
        step *= 2;
    }
    step
}

/// The passages of A against B already moved by `index`, on the plot computed for it.
fn compare_at(
    fa: &ChromaFeatures,
    fb: &ChromaFeatures,
    index: i32,
    plot: Option<Plot>,
    window_frames: f64,
    params: &HarmonyParams,
) -> HarmonicComparison {
    let hop = fa.hop_seconds;
    let empty = HarmonicComparison {
        transposition_semitones: crate::features::chroma_features::signed_shift(index),
        beat_synchronous: false,
        frame_seconds: hop,
        window_seconds: [hop * window_frames, fb.hop_seconds * window_frames],
        recurrence_rate: 0.0,
        null_max: 0.0,
        matches: Vec::new(),
    };
    let span = (params.embedding.max(1) - 1) * params.delay.max(1);
    let Some(plot) = plot else {
        return empty;
    };
    let recurrent = plot.cells.iter().filter(|c| **c).count();
    let null = null_maxima(&plot, params);
    let null_max = null.iter().copied().fold(0.0f32, f32::max);
    let mut blocked = vec![false; plot.rows * plot.cols];
    let mut matches = Vec::new();
    while matches.len() < params.max_passages {
        let q = qmax(&plot, &blocked, params);
        let Some((end, score)) = q.best else { break };
        if score <= 0.0 {
            break;
        }
        let path = traceback(&plot, &blocked, &q.values, end, params);
        let (Some(first), Some(last)) = (path.first().copied(), path.last().copied()) else {
            break;
        };
        for i in first.0..=last.0 {
            for j in first.1..=last.1 {
                blocked[i * plot.cols + j] = true;
            }
        }
        // From the middle of the first matching state to the middle of the last: a state
        // spans frames `i ..= i + span` (each timed at the middle of what it averages), and
        // one that only half overlaps the shared stretch can still count as recurrent, so its
        // edges would overstate the passage.
        let centre = span as f64 / 2.0;
        let a_time = |i: usize| time_at(&fa.times, fa.hop_seconds, i as f64 + centre);
        let b_time = |j: usize| time_at(&fb.times, fb.hop_seconds, j as f64 + centre);
        let a_seconds = [a_time(first.0), a_time(last.0)];
        let b_seconds = [b_time(first.1), b_time(last.1)];
        let exceed = null.iter().filter(|x| **x >= score).count();
        let empirical_p = (1 + exceed) as f64 / (null.len() + 1) as f64;
        if a_seconds[1] - a_seconds[0] < params.min_seconds || empirical_p > params.max_p {
            // The strongest remaining passage fails; weaker ones would fail the p-value
            // too, but a short strong one may hide a longer one: keep looking while the
            // score still passes the null.
            if empirical_p > params.max_p {
                break;
            }
            continue;
        }
        let similarity = path
            .iter()
            .map(|&(i, j)| {
                f64::from(crate::features::chroma_features::dot(
                    &fa.frames[i],
                    &fb.frames[j],
                ))
            })
            .sum::<f64>()
            / path.len() as f64;
        let recurrences = path.iter().filter(|&&(i, j)| plot.at(i, j)).count();
        let length_a = (a_seconds[1] - a_seconds[0]).max(1e-9);
        let length_b = b_seconds[1] - b_seconds[0];
        matches.push(HarmonicMatch {
            a_seconds,
            b_seconds,
            score,
            recurrences,
            similarity,
            empirical_p,
            duration_ratio: length_b / length_a,
            path: path
                .iter()
                .map(|&(i, j)| {
                    [
                        time_at(&fa.times, fa.hop_seconds, i as f64),
                        time_at(&fb.times, fb.hop_seconds, j as f64),
                    ]
                })
                .collect(),
        });
    }
    HarmonicComparison {
        recurrence_rate: recurrent as f64 / (plot.rows * plot.cols).max(1) as f64,
        null_max,
        matches,
        ..empty
    }
}

/// The mutual-nearest-neighbour cross recurrence plot of the delay-embedded sequences.
fn recurrence_plot(
    fa: &ChromaFeatures,
    fb: &ChromaFeatures,
    m: usize,
    tau: usize,
    params: &HarmonyParams,
) -> Plot {
    let kappa = params.neighbours;
    // Unit frames: squared distance 2 − 2 cos, so a mean cosine c over m frames is a summed
    // squared distance of m (2 − 2c).
    let absolute = m as f32 * (2.0 - 2.0 * params.min_similarity);
    let span = (m - 1) * tau;
    let rows = fa.len() - span;
    let cols = fb.len() - span;
    let (na, nb) = (fa.len(), fb.len());
    // Squared distance of single frames: |a|² + |b|² − 2 a·b.
    let norm = |f: &[f32; 12]| f.iter().map(|v| v * v).sum::<f32>();
    let norms_a: Vec<f32> = fa.frames.iter().map(norm).collect();
    let norms_b: Vec<f32> = fb.frames.iter().map(norm).collect();
    let mut single = vec![0f32; na * nb];
    for i in 0..na {
        let row = &mut single[i * nb..(i + 1) * nb];
        for (j, cell) in row.iter_mut().enumerate() {
            *cell = (norms_a[i] + norms_b[j]
                - 2.0 * crate::features::chroma_features::dot(&fa.frames[i], &fb.frames[j]))
            .max(0.0);
        }
    }
    // Embedded distance: the sum over the m delayed frame pairs.
    let mut distance = vec![0f32; rows * cols];
    for i in 0..rows {
        for j in 0..cols {
            let mut d = 0.0;
            for k in 0..m {
                d += single[(i + k * tau) * nb + j + k * tau];
            }
            distance[i * cols + j] = d;
        }
    }
    let rank_a = ((kappa * cols as f64).round() as usize).clamp(1, cols);
    let rank_b = ((kappa * rows as f64).round() as usize).clamp(1, rows);
    let mut scratch = Vec::with_capacity(rows.max(cols));
    let row_limit: Vec<f32> = (0..rows)
        .map(|i| {
            kth(
                &mut scratch,
                distance[i * cols..(i + 1) * cols].iter().copied(),
                rank_a,
            )
        })
        .collect();
    let col_limit: Vec<f32> = (0..cols)
        .map(|j| {
            kth(
                &mut scratch,
                (0..rows).map(|i| distance[i * cols + j]),
                rank_b,
            )
        })
        .collect();
    let cells = (0..rows * cols)
        .map(|c| {
            let d = distance[c];
            d <= row_limit[c / cols] && d <= col_limit[c % cols] && d <= absolute
        })
        .collect();
    Plot { rows, cols, cells }
}

/// The k-th smallest (1-based) of the values.
fn kth(scratch: &mut Vec<f32>, values: impl Iterator<Item = f32>, k: usize) -> f32 {
    scratch.clear();
    scratch.extend(values);
    if scratch.is_empty() {
        return 0.0;
    }
    let k = k.clamp(1, scratch.len()) - 1;
    let (_, value, _) = scratch.select_nth_unstable_by(k, f32::total_cmp);
    *value
}

struct QResult {
    values: Vec<f32>,
    best: Option<((usize, usize), f32)>,
}

/// The Qmax matrix, with closed cells treated as non-recurrent and reset to 0.
fn qmax(plot: &Plot, blocked: &[bool], params: &HarmonyParams) -> QResult {
    let open: Vec<bool> = plot
        .cells
        .iter()
        .zip(blocked)
        .map(|(c, b)| *c && !*b)
        .collect();
    let mut values = vec![0f32; plot.rows * plot.cols];
    let best = qmax_kernel(
        &open,
        Some(blocked),
        plot.rows,
        plot.cols,
        params,
        Some(&mut values),
    );
    QResult { values, best }
}

/// The Qmax recursion over a plot given as recurrent flags (`rows × cols`, row-major), with
/// `closed` cells held at 0; returns the best cell and value, and fills `values` when given.
/// Three rolling rows padded with two zero columns in front: a missing predecessor then acts
/// as a non-recurrent cell of value 0, which is what the recursion's `max(0, …)` gives it.
fn qmax_kernel(
    recurrent: &[bool],
    closed: Option<&[bool]>,
    rows: usize,
    cols: usize,
    params: &HarmonyParams,
    mut values: Option<&mut Vec<f32>>,
) -> Option<((usize, usize), f32)> {
    let (go, ge) = (params.gap_open, params.gap_extend);
    let width = cols + 2;
    let mut q = [vec![0f32; width], vec![0f32; width], vec![0f32; width]];
    // Gap penalty of leaving each cell of the two previous rows (γo after a recurrence).
    let mut g = [vec![ge; width], vec![ge; width], vec![ge; width]];
    let mut best: Option<((usize, usize), f32)> = None;
    let mut best_value = 0f32;
    for i in 0..rows {
        let (cur, prev, prev2) = (i % 3, (i + 2) % 3, (i + 1) % 3);
        let row = &recurrent[i * cols..(i + 1) * cols];
        let shut = closed.map(|c| &c[i * cols..(i + 1) * cols]);
        let mut q_cur = std::mem::take(&mut q[cur]);
        let mut g_cur = std::mem::take(&mut g[cur]);
        {
            let (q1, q2, g1, g2) = (&q[prev], &q[prev2], &g[prev], &g[prev2]);
            for j in 0..cols {
                let k = j + 2;
                let value = if shut.is_some_and(|s| s[j]) {
                    0.0
                } else if row[j] {
                    q1[k - 1].max(q2[k - 1]).max(q1[k - 2]) + 1.0
                } else {
                    (q1[k - 1] - g1[k - 1])
                        .max(q2[k - 1] - g2[k - 1])
                        .max(q1[k - 2] - g1[k - 2])
                        .max(0.0)
                };
                q_cur[k] = value;
                g_cur[k] = if row[j] { go } else { ge };
                if value > best_value {
                    best_value = value;
                    best = Some(((i, j), value));
                }
            }
        }
        if let Some(v) = values.as_deref_mut() {
            v[i * cols..(i + 1) * cols].copy_from_slice(&q_cur[2..]);
        }
        q[cur] = q_cur;
        g[cur] = g_cur;
    }
    best
}

/// The predecessors of a cell: diagonal, two rows back, two columns back.
fn predecessors(i: usize, j: usize) -> [Option<(usize, usize)>; 3] {
    [
        (i >= 1 && j >= 1).then(|| (i - 1, j - 1)),
        (i >= 2 && j >= 1).then(|| (i - 2, j - 1)),
        (i >= 1 && j >= 2).then(|| (i - 1, j - 2)),
    ]
}

fn recurrent(plot: &Plot, blocked: &[bool], i: usize, j: usize) -> bool {
    !blocked[i * plot.cols + j] && plot.at(i, j)
}

/// The path ending at `end`, followed back through the predecessor that produced each value
/// until the value falls to zero; trimmed to start and end on recurrent cells.
fn traceback(
    plot: &Plot,
    blocked: &[bool],
    q: &[f32],
    end: (usize, usize),
    params: &HarmonyParams,
) -> Vec<(usize, usize)> {
    let cols = plot.cols;
    let mut path = vec![end];
    let (mut i, mut j) = end;
    loop {
        let here = q[i * cols + j];
        if here <= 0.0 {
            break;
        }
        let is_recurrent = recurrent(plot, blocked, i, j);
        let mut next = None;
        for (pi, pj) in predecessors(i, j).into_iter().flatten() {
            let before = q[pi * cols + pj];
            let expected = if is_recurrent {
                before + 1.0
            } else if recurrent(plot, blocked, pi, pj) {
                before - params.gap_open
            } else {
                before - params.gap_extend
            };
            if before > 0.0 && (expected - here).abs() < 1e-4 {
                next = Some((pi, pj));
                break;
            }
        }
        match next {
            Some(p) => {
                path.push(p);
                (i, j) = p;
            }
            None => break,
        }
    }
    path.reverse();
    while path.len() > 1
        && path
            .first()
            .is_some_and(|&(i, j)| !recurrent(plot, blocked, i, j))
    {
        path.remove(0);
    }
    path
}

/// Qmax of block-shuffled copies of the plot (columns moved in blocks), for the empirical
/// p-value.
fn null_maxima(plot: &Plot, params: &HarmonyParams) -> Vec<f32> {
    let block = params.block.max(1);
    let n_blocks = plot.cols.div_ceil(block);
    let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
    let mut order: Vec<usize> = (0..n_blocks).collect();
    let mut shuffled = vec![false; plot.cells.len()];
    (0..params.shuffles)
        .map(|_| {
            order.shuffle(&mut rng);
            let columns: Vec<usize> = order
                .iter()
                .flat_map(|b| (b * block)..((b + 1) * block).min(plot.cols))
                .collect();
            for i in 0..plot.rows {
                let from = &plot.cells[i * plot.cols..(i + 1) * plot.cols];
                let to = &mut shuffled[i * plot.cols..(i + 1) * plot.cols];
                for (t, &j) in to.iter_mut().zip(&columns) {
                    *t = from[j];
                }
            }
            qmax_kernel(&shuffled, None, plot.rows, plot.cols, params, None).map_or(0.0, |b| b.1)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn triad(root: usize, minor: bool) -> [f32; 12] {
        // Major and minor triads (common practice): root, third (4 or 3), fifth (7).
        let mut f = [0f32; 12];
        for s in [0, if minor { 3 } else { 4 }, 7] {
            f[(root + s) % 12] = 1.0;
        }
        f
    }

    /// A chromagram of one chord per `frames_per_chord` frames.
    fn progression(chords: &[(usize, bool)], frames_per_chord: usize) -> ChromaLayer {
        let frames = chords
            .iter()
            .flat_map(|&(r, m)| std::iter::repeat_n(triad(r, m), frames_per_chord))
            .collect();
        ChromaLayer {
            hop_seconds: 512.0 / 22_050.0,
            tuning: 0.0,
            source: crate::timeline::ChromaSource::Notes,
            frames,
            onsets: Vec::new(),
            beats: Vec::new(),
        }
    }

    /// A deterministic pseudo-random chord sequence (a linear congruential generator).
    fn chords(seed: u64, n: usize) -> Vec<(usize, bool)> {
        let mut x = seed;
        (0..n)
            .map(|_| {
                x = x
                    .wrapping_mul(6_364_136_223_846_793_005)
                    .wrapping_add(1_442_695_040_888_963_407);
                (((x >> 33) % 12) as usize, (x >> 20) % 2 == 1)
            })
            .collect()
    }

    #[test]
    fn a_shared_progression_is_found_transposed_and_slower() {
        // A: 16 random chords, then a 16-chord progression, then 16 random chords.
        // B: 12 other chords, then the same progression a major second higher and 1.25×
        // slower (tempo), then 12 others.
        let shared = chords(7, 16);
        let mut a_chords = chords(1, 16);
        a_chords.extend(&shared);
        a_chords.extend(chords(2, 16));
        let mut b_before = chords(3, 12);
        let moved: Vec<(usize, bool)> = shared.iter().map(|&(r, m)| ((r + 2) % 12, m)).collect();
        let a = progression(&a_chords, 40);
        let mut frames = progression(&b_before, 50).frames;
        frames.extend(progression(&moved, 50).frames);
        b_before = chords(4, 12);
        frames.extend(progression(&b_before, 50).frames);
        let b = ChromaLayer {
            frames,
            ..a.clone()
        };
        let result = compare_harmony(&a, &b, &HarmonyParams::default());
        let best = &result.matches[0];
        let hop = 512.0 / 22_050.0;
        // Shared span in A: chords 16..32 of 40 frames; in B: chords 12..28 of 50 frames.
        let (a0, a1) = (16.0 * 40.0 * hop, 32.0 * 40.0 * hop);
        let (b0, b1) = (12.0 * 50.0 * hop, 28.0 * 50.0 * hop);
        assert_eq!(result.transposition_semitones, 2);
        assert!((best.a_seconds[0] - a0).abs() < 2.0, "{best:?}");
        assert!((best.a_seconds[1] - a1).abs() < 2.0, "{best:?}");
        assert!((best.b_seconds[0] - b0).abs() < 2.5, "{best:?}");
        assert!((best.b_seconds[1] - b1).abs() < 2.5, "{best:?}");
        assert!(
            (best.duration_ratio - 1.25).abs() < 0.1,
            "{}",
            best.duration_ratio
        );
        assert!(best.empirical_p <= 0.01);
    }

    #[test]
    fn unrelated_progressions_share_nothing() {
        let a = progression(&chords(11, 48), 40);
        let b = progression(&chords(12, 48), 40);
        let result = compare_harmony(&a, &b, &HarmonyParams::default());
        assert!(result.matches.is_empty(), "{:?}", result.matches);
    }

    #[test]
    fn empty_and_tiny_inputs_give_no_passages() {
        let empty = progression(&[], 1);
        let tiny = progression(&chords(1, 2), 3);
        for (a, b) in [(&empty, &empty), (&empty, &tiny), (&tiny, &tiny)] {
            assert!(compare_harmony(a, b, &HarmonyParams::default())
                .matches
                .is_empty());
        }
    }
}

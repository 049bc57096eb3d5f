//! Score-to-recording alignment by dynamic time warping on chroma.
//!
//! Method: dynamic time warping (Sakoe & Chiba 1978) of the recording's chroma against the
//! chroma derived from the score's notes, in the subsequence form (Müller 2015, *Fundamentals
//! of Music Processing*, §7.2.3) so that a recording may cover only part of the score: the
//! path must run through the whole recording, but may start and end anywhere in the score.
//!
//! - **Features**: [`ChromaFeatures`] with `step` analysis frames per feature frame (default 2,
//!   ≈ 46 ms) averaged over `window` frames (default 4); the cost of a pair of frames is
//!   `1 − cos`. A silent frame against a sounding one costs 1, two silent frames cost 0.
//! - **Key**: the recording is moved into the score's key by the optimal transposition index
//!   (Serrà et al. 2008); the two best indices are tried and the cheaper path kept, so a
//!   recording in another key (or a transposed playback) still aligns.
//! - **Steps**: (1, 1), (1, 0) and (0, 1), each adding the cost of the cell it reaches.
//! - **Speed and memory**: multiscale (after Salvador & Chan 2007 and Müller, Mattes & Kurth
//!   2006): the path is first found on features `coarse` times coarser, then refined inside a
//!   band of `radius` fine frames around it, so time and memory grow with the length, not its
//!   square.
//! - **Does the recording perform the score?** The mean cost of the path is compared with the
//!   mean cost of all pairs of frames (what an unrelated pairing costs): a `cost_ratio` below
//!   `max_cost_ratio` (default 0.6) says that the recording follows the score.

use crate::features::chroma_features::{dot, signed_shift, transposition_ranking, ChromaFeatures};
use crate::timeline::ChromaLayer;
use serde::Serialize;

/// Silence added before and after the score, seconds, for a recording's lead-in and ending.
const PAD_SECONDS: f64 = 2.0;

/// Largest first-pass cost matrix, cells (16 MB of accumulated costs).
const MAX_COARSE_CELLS: usize = 4_000_000;

/// Parameters of the alignment.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SyncParams {
    /// Analysis frames per feature frame. Default 2 (≈ 46 ms).
    pub step: usize,
    /// Analysis frames averaged into one feature frame. Default 4 (≈ 93 ms).
    pub window: usize,
    /// Coarsening factor of the first pass. Default 8.
    pub coarse: usize,
    /// Half-width of the refinement band, in fine frames. Default 12.
    pub radius: usize,
    /// Weight of the onset term of the cost. Default 0.5.
    pub onset_weight: f32,
    /// Largest path-to-average cost ratio at which the recording counts as performing the
    /// score. Default 0.6.
    pub max_cost_ratio: f64,
}

impl Default for SyncParams {
    fn default() -> Self {
        SyncParams {
            step: 2,
            window: 4,
            coarse: 8,
            radius: 12,
            onset_weight: 0.5,
            max_cost_ratio: 0.6,
        }
    }
}

/// A warping path from a recording onto a score.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Synchronisation {
    /// The recording's key relative to the score's, by the optimal transposition index, folded
    /// to −5 … +6 semitones.
    pub transposition_semitones: i32,
    /// Seconds between feature frames.
    pub frame_seconds: f64,
    /// Mean chroma cost (1 − cosine) along the path.
    pub path_cost: f64,
    /// Mean chroma cost over all pairs of frames.
    pub average_cost: f64,
    /// `path_cost / average_cost`: low when the recording follows the score.
    pub cost_ratio: f64,
    /// Whether the recording performs the score (`cost_ratio ≤ max_cost_ratio`).
    pub follows: bool,
    /// The part of the score the recording covers, in seconds of the score.
    pub score_span: [f64; 2],
    /// The path as (score seconds, recording seconds), both non-decreasing.
    pub path: Vec<[f64; 2]>,
}

impl Synchronisation {
    /// The recording time (seconds) at a score time, interpolated along the path; `None`
    /// outside the covered span.
    pub fn recording_time(&self, score_seconds: f64) -> Option<f64> {
        interpolate(&self.path, score_seconds, 0, 1)
    }

    /// The score time (seconds) at a recording time, interpolated along the path; `None`
    /// outside the recording.
    pub fn score_time(&self, recording_seconds: f64) -> Option<f64> {
        interpolate(&self.path, recording_seconds, 1, 0)
    }
}

/// The value of coordinate `to` where coordinate `from` of the path equals `x`, interpolated
/// linearly between the path's points. Where the path holds `from` still while `to` moves on
/// (one frame of one side against several of the other), the first point of the run counts:
/// an event starting in that frame starts when the run begins.
fn interpolate(path: &[[f64; 2]], x: f64, from: usize, to: usize) -> Option<f64> {
    let mut points: Vec<(f64, f64)> = Vec::new();
    for p in path {
        if points.last().is_none_or(|last| p[from] > last.0) {
            points.push((p[from], p[to]));
        }
    }
    let first = points.first()?;
    let last = points.last()?;
    if x < first.0 - 1e-9 || x > last.0 + 1e-9 {
        return None;
    }
    let i = points.partition_point(|p| p.0 <= x);
    if i == 0 {
        return Some(first.1);
    }
    let (x0, y0) = points[i - 1];
    match points.get(i) {
        Some(&(x1, y1)) if x1 > x0 => Some(y0 + (y1 - y0) * (x - x0) / (x1 - x0)),
        _ => Some(y0),
    }
}

/// Aligns a recording's chroma to a score's (see the module documentation). `None` when
/// either has fewer than two feature frames.
pub fn synchronise(
    score: &ChromaLayer,
    recording: &ChromaLayer,
    params: &SyncParams,
) -> Option<Synchronisation> {
    let step = params.step.max(1);
    let mut fs = ChromaFeatures::from_layer(score, step, params.window.max(step));
    let fr = ChromaFeatures::from_layer(recording, step, params.window.max(step));
    if fs.len() < 2 || fr.len() < 2 {
        return None;
    }
    // Silence before and after the score, where a recording's lead-in and ending can go.
    let pad = (PAD_SECONDS / fs.hop_seconds).round() as usize;
    let score_frames = fs.len();
    fs.frames.splice(0..0, std::iter::repeat_n([0f32; 12], pad));
    fs.frames.extend(std::iter::repeat_n([0f32; 12], pad));
    fs.onsets.splice(0..0, std::iter::repeat_n(0f32, pad));
    fs.onsets.extend(std::iter::repeat_n(0f32, pad));
    let mut best: Option<Synchronisation> = None;
    for (index, _) in transposition_ranking(&fs, &fr).into_iter().take(2) {
        let rotated = fr.rotated(index);
        let mut result = align_features(&fs, &rotated, signed_shift(index), params);
        let offset = pad as f64 * fs.hop_seconds;
        for point in &mut result.path {
            point[0] -= offset;
        }
        let end = score_frames as f64 * fs.hop_seconds;
        result.score_span = result.score_span.map(|t| (t - offset).clamp(0.0, end));
        if best
            .as_ref()
            .is_none_or(|b| result.cost_ratio < b.cost_ratio)
        {
            best = Some(result);
        }
    }
    best
}

fn align_features(
    score: &ChromaFeatures,
    recording: &ChromaFeatures,
    transposition: i32,
    params: &SyncParams,
) -> Synchronisation {
    let hop = score.hop_seconds;
    let w = params.onset_weight;
    let cost = |i: usize, j: usize| pair_cost(recording, i, score, j, w);
    // Coarser still when the first pass would hold more than MAX_COARSE_CELLS cells (hours of
    // music), so memory stays bounded.
    let mut factor = params.coarse.max(1);
    while (recording.len() / factor) * (score.len() / factor) > MAX_COARSE_CELLS {
        factor *= 2;
    }
    let path = if factor > 1 && recording.len() >= 4 * factor && score.len() >= 4 * factor {
        let coarse_r = coarsen(recording, factor);
        let coarse_s = coarsen(score, factor);
        let coarse_cost = |i: usize, j: usize| pair_cost(&coarse_r, i, &coarse_s, j, w);
        let full: Vec<(usize, usize)> = vec![(0, coarse_s.len()); coarse_r.len()];
        let coarse_path = subsequence_dtw(&full, coarse_cost);
        let band = refine_band(
            &coarse_path,
            factor,
            params.radius,
            recording.len(),
            score.len(),
        );
        subsequence_dtw(&band, cost)
    } else {
        let full: Vec<(usize, usize)> = vec![(0, score.len()); recording.len()];
        subsequence_dtw(&full, cost)
    };
    let path_cost = path
        .iter()
        .map(|&(i, j)| f64::from(cell_cost(&recording.frames[i], &score.frames[j])))
        .sum::<f64>()
        / path.len().max(1) as f64;
    let average_cost = average_cost(score, recording);
    let cost_ratio = if average_cost > 0.0 {
        path_cost / average_cost
    } else {
        1.0
    };
    let score_span = [
        path.first().map_or(0.0, |p| p.1 as f64 * hop),
        path.last().map_or(0.0, |p| (p.1 + 1) as f64 * hop),
    ];
    Synchronisation {
        transposition_semitones: transposition,
        frame_seconds: hop,
        path_cost,
        average_cost,
        cost_ratio,
        follows: cost_ratio <= params.max_cost_ratio,
        score_span,
        path: path
            .iter()
            .map(|&(i, j)| [j as f64 * hop, i as f64 * hop])
            .collect(),
    }
}

/// The cost of recording frame `i` against score frame `j`: the chroma cost plus `w` times
/// the difference of their onset activity (after the onset-enriched features of Ewert,
/// Müller & Grosche 2009, which sharpen the timing that chroma alone leaves vague).
fn pair_cost(r: &ChromaFeatures, i: usize, s: &ChromaFeatures, j: usize, w: f32) -> f32 {
    let chroma = cell_cost(&r.frames[i], &s.frames[j]);
    let onset = match (r.onsets.get(i), s.onsets.get(j)) {
        (Some(a), Some(b)) => (a - b).abs(),
        _ => 0.0,
    };
    chroma + w * onset
}

/// `1 − cos` of two unit-length (or zero) frames; 0 for two silent frames.
fn cell_cost(a: &[f32; 12], b: &[f32; 12]) -> f32 {
    let silent_a = a.iter().all(|v| *v == 0.0);
    let silent_b = b.iter().all(|v| *v == 0.0);
    if silent_a && silent_b {
        0.0
    } else {
        1.0 - dot(a, b)
    }
}

/// Mean cost over all pairs: with the mean frames `ā`, `b̄` and silent shares, the mean cosine
/// is `ā · b̄`, so no pair has to be visited.
fn average_cost(a: &ChromaFeatures, b: &ChromaFeatures) -> f64 {
    let mean = |f: &ChromaFeatures| {
        let mut m = [0f64; 12];
        let mut silent = 0usize;
        for frame in &f.frames {
            if frame.iter().all(|v| *v == 0.0) {
                silent += 1;
            }
            for (s, v) in m.iter_mut().zip(frame) {
                *s += f64::from(*v);
            }
        }
        let n = f.frames.len().max(1) as f64;
        (m.map(|s| s / n), silent as f64 / n)
    };
    let (ma, sa) = mean(a);
    let (mb, sb) = mean(b);
    let cosine: f64 = ma.iter().zip(&mb).map(|(x, y)| x * y).sum();
    // Pairs of two silent frames cost 0; every other pair 1 − cos (cos = 0 with silence).
    1.0 - cosine - sa * sb
}

/// Averages `factor` frames into one and renormalises.
fn coarsen(f: &ChromaFeatures, factor: usize) -> ChromaFeatures {
    let frames = f
        .frames
        .chunks(factor)
        .map(|chunk| {
            let mut sum = [0f32; 12];
            for frame in chunk {
                for (s, v) in sum.iter_mut().zip(frame) {
                    *s += *v;
                }
            }
            crate::features::chroma_features::normalise(&mut sum);
            sum
        })
        .collect();
    let onsets = f
        .onsets
        .chunks(factor)
        .map(|chunk| chunk.iter().copied().fold(0.0f32, f32::max))
        .collect();
    ChromaFeatures {
        hop_seconds: f.hop_seconds * factor as f64,
        times: f.times.iter().step_by(factor.max(1)).copied().collect(),
        frames,
        onsets,
    }
}

/// Per fine row, the column range `[lo, hi)` covering the coarse path's cells scaled up and
/// widened by `radius` in both directions.
fn refine_band(
    coarse: &[(usize, usize)],
    factor: usize,
    radius: usize,
    rows: usize,
    cols: usize,
) -> Vec<(usize, usize)> {
    let mut band = vec![(usize::MAX, 0usize); rows];
    for &(ci, cj) in coarse {
        let r0 = (ci * factor).saturating_sub(radius);
        let r1 = ((ci + 1) * factor + radius).min(rows);
        let c0 = (cj * factor).saturating_sub(radius);
        let c1 = ((cj + 1) * factor + radius).min(cols);
        for range in band.iter_mut().take(r1).skip(r0) {
            range.0 = range.0.min(c0);
            range.1 = range.1.max(c1);
        }
    }
    // Rows the coarse path does not reach (none in practice) get the whole width.
    for range in &mut band {
        if range.0 >= range.1 {
            *range = (0, cols);
        }
    }
    band
}

/// A step of the warping path: the cell it comes from and the cell it passes, if any.
type Move = ((usize, usize), Option<(usize, usize)>);

/// Subsequence DTW over the cells `band[i].0 .. band[i].1` of each row `i` (rows = recording,
/// columns = score): free start in row 0 and free end in the last row. Steps (1, 1), (2, 1)
/// and (1, 2), the latter two also paying for the cell they pass, so the local tempo ratio
/// stays between 1/2 and 2 and no stretch of either side is skipped or held still. Returns the
/// path as (row, column) pairs from the first row to the last, passed cells included.
fn subsequence_dtw(
    band: &[(usize, usize)],
    cost: impl Fn(usize, usize) -> f32,
) -> Vec<(usize, usize)> {
    let rows = band.len();
    if rows == 0 {
        return Vec::new();
    }
    let mut acc: Vec<Vec<f32>> = Vec::with_capacity(rows);
    let at = |acc: &Vec<Vec<f32>>, i: usize, j: usize| -> f32 {
        let (lo, hi) = band[i];
        if j >= lo && j < hi {
            acc[i][j - lo]
        } else {
            f32::INFINITY
        }
    };
    // The three ways into (i, j): (predecessor, cell passed on the way).
    let moves = |i: usize, j: usize| -> [Option<Move>; 3] {
        [
            (i >= 1 && j >= 1).then(|| ((i - 1, j - 1), None)),
            (i >= 2 && j >= 1).then(|| ((i - 2, j - 1), Some((i - 1, j)))),
            (i >= 1 && j >= 2).then(|| ((i - 1, j - 2), Some((i, j - 1)))),
        ]
    };
    // Symmetric weights (Sakoe & Chiba 1978): every path from corner to corner carries the
    // same total weight (rows + columns), so no direction of warping is cheaper than another.
    // A diagonal step weighs its cell twice; a (2, 1) or (1, 2) step weighs the passed cell
    // twice and its own cell once.
    let via = |acc: &Vec<Vec<f32>>, step: Move| -> f32 {
        let ((pi, pj), passed) = step;
        at(acc, pi, pj) + passed.map_or(0.0, |(qi, qj)| 2.0 * cost(qi, qj))
    };
    let own = |c: f32, step: Move| -> f32 {
        if step.1.is_some() {
            c
        } else {
            2.0 * c
        }
    };
    for (i, &(lo, hi)) in band.iter().enumerate() {
        let mut row = vec![f32::INFINITY; hi.saturating_sub(lo)];
        acc.push(Vec::new());
        for j in lo..hi {
            let c = cost(i, j);
            row[j - lo] = if i == 0 {
                c
            } else {
                moves(i, j)
                    .into_iter()
                    .flatten()
                    .map(|m| via(&acc, m) + own(c, m))
                    .fold(f32::INFINITY, f32::min)
            };
        }
        acc[i] = row;
    }
    // Free end: the cheapest reachable cell of the last row.
    let (lo, _) = band[rows - 1];
    let Some(end) = acc[rows - 1]
        .iter()
        .enumerate()
        .filter(|x| x.1.is_finite())
        .min_by(|x, y| x.1.total_cmp(y.1).then(x.0.cmp(&y.0)))
        .map(|(k, _)| lo + k)
    else {
        return Vec::new();
    };
    let mut path = vec![(rows - 1, end)];
    let (mut i, mut j) = (rows - 1, end);
    while i > 0 {
        let here = at(&acc, i, j);
        let c = cost(i, j);
        let mut chosen = None;
        for m in moves(i, j).into_iter().flatten() {
            let value = via(&acc, m) + own(c, m);
            if value.is_finite() && (value - here).abs() <= 1e-3 * here.abs().max(1.0) {
                chosen = Some(m);
                break;
            }
        }
        let Some(((pi, pj), passed)) = chosen else {
            break;
        };
        if let Some(cell) = passed {
            path.push(cell);
        }
        path.push((pi, pj));
        (i, j) = (pi, pj);
    }
    path.reverse();
    path
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chord_frames(roots: &[usize], frames_each: &[usize]) -> Vec<[f32; 12]> {
        // Major triads (common practice: root, major third, fifth).
        roots
            .iter()
            .zip(frames_each)
            .flat_map(|(&r, &n)| {
                let mut f = [0f32; 12];
                for s in [0, 4, 7] {
                    f[(r + s) % 12] = 1.0;
                }
                std::iter::repeat_n(f, n)
            })
            .collect()
    }

    fn layer(frames: Vec<[f32; 12]>) -> ChromaLayer {
        ChromaLayer {
            hop_seconds: 0.05,
            tuning: 0.0,
            source: crate::timeline::ChromaSource::Notes,
            frames,
            onsets: Vec::new(),
            beats: Vec::new(),
        }
    }

    #[test]
    fn a_slower_transposed_excerpt_is_located_in_the_score() {
        // Score: 24 chords of 20 frames (1 s each). Recording: chords 8..16, each lasting
        // 1.25 s (tempo 0.8), a minor third higher.
        let roots = [
            0, 5, 7, 0, 9, 2, 7, 0, 4, 9, 2, 7, 5, 0, 7, 9, 11, 4, 9, 2, 5, 7, 0, 3,
        ];
        let score = layer(chord_frames(&roots, &[20; 24]));
        let excerpt: Vec<usize> = roots[8..16].iter().map(|r| (r + 3) % 12).collect();
        let recording = layer(chord_frames(&excerpt, &[25; 8]));
        let sync = synchronise(
            &score,
            &recording,
            &SyncParams {
                step: 1,
                window: 1,
                ..SyncParams::default()
            },
        )
        .unwrap();
        assert_eq!(sync.transposition_semitones, 3);
        assert!(sync.follows, "{}", sync.cost_ratio);
        assert!(
            (sync.score_span[0] - 8.0).abs() < 0.15,
            "{:?}",
            sync.score_span
        );
        // The last chord lasts 1 s in the score: the free end may fall anywhere in it, as
        // every end there costs the same.
        assert!(
            sync.score_span[1] >= 15.0 && sync.score_span[1] <= 16.1,
            "{:?}",
            sync.score_span
        );
        // Chord k of the excerpt starts at 1.25·k s of the recording and 8 + k s of the score.
        for k in 1..8 {
            let t = sync.recording_time(8.0 + k as f64).unwrap();
            assert!((t - 1.25 * k as f64).abs() < 0.1, "chord {k}: {t}");
        }
    }

    #[test]
    fn unrelated_material_does_not_follow() {
        let score = layer(chord_frames(&[0, 5, 7, 0, 9, 2, 7, 0], &[40; 8]));
        // Noise-like frames: every frame a different pitch-class set.
        let frames: Vec<[f32; 12]> = (0..300)
            .map(|k| {
                let mut f = [0f32; 12];
                f[(k * 5) % 12] = 1.0;
                f[(k * 7 + 1) % 12] = 0.5;
                f
            })
            .collect();
        let sync = synchronise(&score, &layer(frames), &SyncParams::default()).unwrap();
        assert!(!sync.follows, "{}", sync.cost_ratio);
    }
}

//! Evaluation measures as mir_eval defines them (Raffel et al. 2014, "mir_eval: a transparent
//! implementation of common MIR metrics", ISMIR), re-implemented so that tests need no Python.
//! `tests/audio_eval_golden.rs` checks each against mir_eval's own output on the same arrays.
//!
//! Conventions (mir_eval's): pitch in cents above 10 Hz (`1200 · log2(f / 10)`), 0 for no
//! pitch; voicing as weights 0 … 1 (here 0 or 1); beat and onset times in seconds.

/// Cents above 10 Hz (mir_eval's `hz2cents` base), 0 for 0 Hz or below.
pub fn hz_to_cents(hz: f64) -> f64 {
    if hz > 0.0 {
        1200.0 * (hz / 10.0).log2()
    } else {
        0.0
    }
}

/// Raw pitch accuracy (mir_eval `melody.raw_pitch_accuracy`): the share of reference-voiced
/// frames whose estimated pitch is within `cent_tolerance` (50 by default) of the reference,
/// counting only frames where both pitches are non-zero in the numerator. Arrays are
/// frame-aligned; `ref_voicing` weights frames.
pub fn raw_pitch_accuracy(
    ref_voicing: &[f64],
    ref_cent: &[f64],
    est_cent: &[f64],
    cent_tolerance: f64,
) -> f64 {
    pitch_accuracy(ref_voicing, ref_cent, est_cent, cent_tolerance, false)
}

/// Raw chroma accuracy (mir_eval `melody.raw_chroma_accuracy`): as raw pitch accuracy with
/// octave errors forgiven (the difference is folded to the nearest octave).
pub fn raw_chroma_accuracy(
    ref_voicing: &[f64],
    ref_cent: &[f64],
    est_cent: &[f64],
    cent_tolerance: f64,
) -> f64 {
    pitch_accuracy(ref_voicing, ref_cent, est_cent, cent_tolerance, true)
}

fn pitch_accuracy(
    ref_voicing: &[f64],
    ref_cent: &[f64],
    est_cent: &[f64],
    tolerance: f64,
    fold: bool,
) -> f64 {
    let total: f64 = ref_voicing.iter().sum();
    if total == 0.0 {
        return 0.0;
    }
    let mut correct = 0.0;
    for ((v, r), e) in ref_voicing.iter().zip(ref_cent).zip(est_cent) {
        if *r == 0.0 || *e == 0.0 {
            continue;
        }
        let mut diff = (r - e).abs();
        if fold {
            diff = (diff - 1200.0 * (diff / 1200.0 + 0.5).floor()).abs();
        }
        if diff < tolerance {
            correct += v;
        }
    }
    correct / total
}

/// Size of a maximum bipartite matching given as adjacency lists (left → right), by
/// augmenting paths (Kuhn's algorithm; mir_eval uses Hopcroft–Karp, which finds a matching of
/// the same size).
pub fn max_matching(adjacency: &[Vec<usize>], n_right: usize) -> usize {
    let mut match_right: Vec<Option<usize>> = vec![None; n_right];
    let mut count = 0;
    for left in 0..adjacency.len() {
        let mut seen = vec![false; n_right];
        if augment(left, adjacency, &mut match_right, &mut seen) {
            count += 1;
        }
    }
    count
}

fn augment(
    left: usize,
    adjacency: &[Vec<usize>],
    match_right: &mut [Option<usize>],
    seen: &mut [bool],
) -> bool {
    let Some(neighbours) = adjacency.get(left) else {
        return false;
    };
    for &v in neighbours {
        if v >= seen.len() || seen[v] {
            continue;
        }
        seen[v] = true;
        let free = match match_right[v] {
            None => true,
            Some(w) => augment(w, adjacency, match_right, seen),
        };
        if free {
            match_right[v] = Some(left);
            return true;
        }
    }
    false
}

/// Precision, recall and F-measure (β = 1).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Prf {
    /// Matched / estimated.
    pub precision: f64,
    /// Matched / reference.
    pub recall: f64,
    /// Harmonic mean of precision and recall (0 when both are 0).
    pub f_measure: f64,
}

fn prf(matched: usize, n_ref: usize, n_est: usize) -> Prf {
    let precision = if n_est > 0 {
        matched as f64 / n_est as f64
    } else {
        0.0
    };
    let recall = if n_ref > 0 {
        matched as f64 / n_ref as f64
    } else {
        0.0
    };
    let f_measure = if precision + recall > 0.0 {
        2.0 * precision * recall / (precision + recall)
    } else {
        0.0
    };
    Prf {
        precision,
        recall,
        f_measure,
    }
}

/// Rounds to 4 decimals as mir_eval does before comparing distances with tolerances.
fn round4(x: f64) -> f64 {
    (x * 1e4).round() / 1e4
}

/// Note transcription precision, recall and F-measure without offsets (mir_eval
/// `transcription.precision_recall_f1_overlap` with `offset_ratio=None`): a reference and an
/// estimated note match when their onsets differ by at most `onset_tolerance` seconds (0.05)
/// and their pitches by at most `pitch_tolerance` cents (50); each note matches at most once
/// (maximum bipartite matching). Notes are (onset seconds, pitch Hz).
pub fn transcription_prf(
    reference: &[(f64, f64)],
    estimated: &[(f64, f64)],
    onset_tolerance: f64,
    pitch_tolerance: f64,
) -> Prf {
    let adjacency: Vec<Vec<usize>> = reference
        .iter()
        .map(|(r_on, r_hz)| {
            estimated
                .iter()
                .enumerate()
                .filter(|(_, (e_on, e_hz))| {
                    let onset = round4((r_on - e_on).abs());
                    let cents = round4((1200.0 * (r_hz.log2() - e_hz.log2())).abs());
                    onset <= onset_tolerance && cents <= pitch_tolerance
                })
                .map(|(j, _)| j)
                .collect()
        })
        .collect();
    let matched = max_matching(&adjacency, estimated.len());
    prf(matched, reference.len(), estimated.len())
}

/// Beat F-measure (mir_eval `beat.f_measure`): beats match within `window` seconds (0.07),
/// one to one. mir_eval's `beat.evaluate` also drops beats before 5 s first; this function,
/// like `beat.f_measure` itself, does not.
pub fn beat_f_measure(reference: &[f64], estimated: &[f64], window: f64) -> f64 {
    if reference.is_empty() || estimated.is_empty() {
        return 0.0;
    }
    let adjacency: Vec<Vec<usize>> = reference
        .iter()
        .map(|r| {
            estimated
                .iter()
                .enumerate()
                .filter(|(_, e)| (r - *e).abs() <= window)
                .map(|(j, _)| j)
                .collect()
        })
        .collect();
    let matched = max_matching(&adjacency, estimated.len());
    prf(matched, reference.len(), estimated.len()).f_measure
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matching_needs_augmenting_paths() {
        // Left 0 can take 0 or 1, left 1 only 0: greedy would match 1; the maximum is 2.
        assert_eq!(max_matching(&[vec![0, 1], vec![0]], 2), 2);
        assert_eq!(max_matching(&[vec![0], vec![0], vec![0]], 1), 1);
        assert_eq!(max_matching(&[vec![], vec![1]], 2), 1);
    }

    #[test]
    fn pitch_accuracy_by_hand() {
        // Frames: correct, 40 cents off, an octave off, unvoiced reference, estimate silent.
        let v = [1.0, 1.0, 1.0, 0.0, 1.0];
        let r = [5000.0, 5000.0, 5000.0, 0.0, 5000.0];
        let e = [5000.0, 5040.0, 6200.0, 5000.0, 0.0];
        assert!((raw_pitch_accuracy(&v, &r, &e, 50.0) - 0.5).abs() < 1e-12);
        assert!((raw_chroma_accuracy(&v, &r, &e, 50.0) - 0.75).abs() < 1e-12);
    }
}

//! Shuffles of a melody that keep its adjacent pairs (Altschul & Erickson 1985).
//!
//! The melody's pitches are a walk on a multigraph whose vertices are pitches and whose edges
//! are the steps from one note to the next. A uniformly random Eulerian path of that graph from
//! the first note's pitch to the last note's is a new order of the pitches that keeps exactly
//! the multiset of intervals between adjacent notes and the distribution of pitches. The
//! rhythm stays where it was: inter-onset intervals and metric positions belong to the time
//! slots of the melody, not to its pitches, so the shuffled melody has the same rhythm, the
//! same metre and the same interval and pitch distributions as the original, and only the order
//! of its pitches is new.
//!
//! The random path is drawn as the BEST theorem suggests and Altschul & Erickson describe: a
//! random arborescence of "last exit" edges towards the final vertex (drawn here with Wilson's
//! loop-erased random walk, 1996), then every other exit of each vertex in random order before
//! its last exit.

use crate::features::{SeqNote, Sequence};
use rand::seq::SliceRandom;
use rand::Rng;

/// A doublet-preserving shuffle of `sequence`, drawn with `rng` (see the module
/// documentation); the same as [`shuffle_keeping_runs`] with runs of two notes.
pub fn shuffle_keeping_pairs<R: Rng>(sequence: &Sequence, rng: &mut R) -> Sequence {
    shuffle_keeping_runs(sequence, 2, rng)
}

/// A shuffle of the pitches of `sequence` that keeps every run of `k` consecutive pitches
/// (k = 2: adjacent pairs, so every interval; k = 3: every pair of consecutive intervals),
/// the first and last k − 1 pitches, and the rhythm and metre in place. This is the k-let
/// generalisation of Altschul & Erickson (1985): an Eulerian path on the graph whose vertices
/// are runs of k − 1 pitches and whose edges are the runs of k.
pub fn shuffle_keeping_runs<R: Rng>(sequence: &Sequence, k: usize, rng: &mut R) -> Sequence {
    let notes = &sequence.notes;
    let k = k.max(2);
    if notes.len() < k + 1 {
        return sequence.clone();
    }
    let pitches: Vec<i32> = notes.iter().map(|n| n.pitch).collect();
    // Vertices: distinct runs of k − 1 pitches, numbered in sorted order for determinism.
    let mut runs: Vec<&[i32]> = pitches.windows(k - 1).collect();
    runs.sort_unstable();
    runs.dedup();
    let vertex = |i: usize| runs.binary_search(&&pitches[i..i + k - 1]).unwrap_or(0);
    let count = runs.len();
    // Out-edges per vertex: (target vertex, index of the note the edge adds).
    let mut out: Vec<Vec<(usize, usize)>> = vec![Vec::new(); count];
    for i in k - 1..notes.len() {
        out[vertex(i + 1 - k)].push((vertex(i + 2 - k), i));
    }
    let start = vertex(0);
    let end = vertex(notes.len() + 1 - k);

    // Wilson's algorithm: a random arborescence of last-exit edges rooted at `end`.
    let mut in_tree = vec![false; count];
    in_tree[end] = true;
    let mut last_exit: Vec<Option<usize>> = vec![None; count];
    for v in 0..count {
        if out[v].is_empty() {
            continue;
        }
        let mut u = v;
        while !in_tree[u] {
            let k = rng.gen_range(0..out[u].len());
            last_exit[u] = Some(k);
            u = out[u][k].0;
        }
        let mut u = v;
        while !in_tree[u] {
            in_tree[u] = true;
            match last_exit[u] {
                Some(k) => u = out[u][k].0,
                None => break,
            }
        }
    }
    // Exit order: the other edges at random, the last exit last.
    for (v, edges) in out.iter_mut().enumerate() {
        match (v != end).then_some(last_exit[v]).flatten() {
            Some(k) => {
                let last = edges.remove(k);
                edges.shuffle(rng);
                edges.push(last);
            }
            None => edges.shuffle(rng),
        }
    }
    // Walk.
    let mut order: Vec<usize> = (0..k - 1).collect();
    let mut next = vec![0usize; count];
    let mut at = start;
    while let Some(&(target, note)) = out[at].get(next[at]) {
        next[at] += 1;
        order.push(note);
        at = target;
    }
    if order.len() != notes.len() {
        // Cannot happen for a walk graph; keep the original rather than a partial melody.
        return sequence.clone();
    }
    repitch(notes, &order)
}

/// The melody with the pitches of `order` placed into its time slots; intervals recomputed,
/// rhythm and metre unchanged.
fn repitch(notes: &[SeqNote], order: &[usize]) -> Sequence {
    let mut out: Vec<SeqNote> = notes.to_vec();
    for (k, &i) in order.iter().enumerate() {
        out[k].pitch = notes[i].pitch;
        out[k].pitch_class = notes[i].pitch_class;
        out[k].interval = k.checked_sub(1).map(|p| notes[i].pitch - out[p].pitch);
    }
    Sequence { notes: out }
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;
    use crate::features::MetricLevel;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    /// A melody of these pitches with a repeating rhythm (1, 2, 3 beats), for the tests of
    /// this module and of the null model.
    pub(in crate::stats) fn seq(pitches: &[i32]) -> Sequence {
        let notes = pitches
            .iter()
            .enumerate()
            .map(|(i, &p)| SeqNote {
                pitch: p,
                pitch_class: p.rem_euclid(12) as u8,
                interval: None,
                ioi: 1.0 + (i % 3) as f64,
                log_ioi_ratio: None,
                metric: MetricLevel::Weak,
            })
            .collect();
        Sequence { notes }
    }

    fn pairs(s: &Sequence) -> Vec<(i32, i32)> {
        let mut p: Vec<(i32, i32)> = s
            .notes
            .windows(2)
            .map(|w| (w[0].pitch, w[1].pitch))
            .collect();
        p.sort_unstable();
        p
    }

    #[test]
    fn keeps_adjacent_pairs_first_and_last() {
        // The opening of "Twinkle, Twinkle" (public domain), as MIDI pitches.
        let original = seq(&[60, 60, 67, 67, 69, 69, 67, 65, 65, 64, 64, 62, 62, 60]);
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        let mut changed = 0;
        for _ in 0..50 {
            let s = shuffle_keeping_pairs(&original, &mut rng);
            assert_eq!(pairs(&s), pairs(&original));
            assert_eq!(s.notes[0].pitch, 60);
            assert_eq!(s.notes.last().map(|n| n.pitch), Some(60));
            if s.notes.iter().map(|n| n.pitch).collect::<Vec<_>>()
                != original.notes.iter().map(|n| n.pitch).collect::<Vec<_>>()
            {
                changed += 1;
            }
        }
        // The sequence has several Eulerian paths; shuffles must find others.
        assert!(changed > 10, "only {changed} of 50 shuffles differ");
    }

    #[test]
    fn same_seed_same_shuffle() {
        let original = seq(&[62, 64, 66, 64, 62, 64, 66, 67, 69, 67, 66, 64, 62]);
        let a = shuffle_keeping_pairs(&original, &mut ChaCha8Rng::seed_from_u64(3));
        let b = shuffle_keeping_pairs(&original, &mut ChaCha8Rng::seed_from_u64(3));
        assert_eq!(a.notes, b.notes);
    }
}

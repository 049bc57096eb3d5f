//! The substitution function: how much evidence one aligned pair of notes gives.
//!
//! A pair (a_i, b_j) under a transposition of `t` semitones (b = a + t) scores the sum of
//! - a pitch term on pitch classes: equal (the tune's note), one semitone off (near miss), or
//!   other;
//! - an interval term on the step into each note: equal interval, same direction within two
//!   semitones, or other;
//! - a rhythm term on log2 inter-onset ratios (tempo-free): equal within a tolerance, within a
//!   factor of two, or other;
//! - a metric term: same metric level.
//!
//! Fragmentation and consolidation (Mongeau & Sankoff 1990): one note against two or three
//! consecutive notes of one pitch (as when different lyrics split a note), scored as one pair
//! whose rhythm uses the summed inter-onset interval, minus a small penalty per extra note.
//! As in Mongeau & Sankoff, the repeated notes must fill the one note's time: in tempo-free
//! terms, the group's inter-onset ratio to the note before it must equal the single note's
//! (within the "same rhythm" tolerance); otherwise the move is not allowed.

use super::AlignParams;
use crate::features::{SeqNote, Sequence};

/// Log-ratio tolerance for "the same rhythm": 0.1 in log2 is about 7% (a dotted rhythm against
/// a plain one differs by 0.58).
const RHYTHM_SAME: f64 = 0.1;
/// Log-ratio tolerance for "similar rhythm": within a factor of two.
const RHYTHM_NEAR: f64 = 1.0;
/// Both tolerances are inclusive; this slack keeps them so against rounding in the logarithms
/// (log2 3 − log2 1.5 comes out a hair under or over 1).
const RHYTHM_SLACK: f64 = 1e-9;
/// Code for "no previous note" in the interval table.
const NONE_CODE: usize = 0;
/// Intervals beyond two octaves share one code.
const MAX_INTERVAL: i32 = 24;

/// Precomputed per-note codes and lookup tables for one pair of sequences.
#[derive(Debug, Clone)]
pub(crate) struct Scorer {
    pub a: Coded,
    pub b: Coded,
    /// pitch term by (pc_b − pc_a − t) mod 12
    pitch: [i32; 12],
    /// interval term by (code_a, code_b), row-major
    interval: Vec<i32>,
    interval_codes: usize,
    /// rhythm terms: same, similar, other
    rhythm_match: i32,
    rhythm_near: i32,
    rhythm_mismatch: i32,
    metric_match: i32,
    fragment_penalty: i32,
    /// Longest fragmentation considered (2 or 3).
    pub max_fragments: usize,
}

/// A sequence as small integer codes, plus what fragmentation needs.
#[derive(Debug, Clone, Default)]
pub(crate) struct Coded {
    pub pc: Vec<u8>,
    pub interval: Vec<u16>,
    pub metric: Vec<u8>,
    /// Number of consecutive notes of equal pitch ending at each note (1 = no repeat).
    pub run: Vec<u8>,
    /// Prefix sums of inter-onset intervals (length n + 1).
    pub ioi_prefix: Vec<f64>,
    pub log_ratio: Vec<Option<f64>>,
    /// For k = 2 and 3 (index k − 2): the log2 inter-onset ratio of the group of the k notes
    /// ending at each note ([`Coded::group_log_ratio`]), computed once per note rather than once
    /// per cell and transposition.
    pub group_ratio: [Vec<Option<f64>>; 2],
}

fn interval_code(interval: Option<i32>) -> u16 {
    match interval {
        None => NONE_CODE as u16,
        Some(i) => (i.clamp(-MAX_INTERVAL, MAX_INTERVAL) + MAX_INTERVAL + 1) as u16,
    }
}

impl Coded {
    fn new(seq: &Sequence) -> Coded {
        let n = seq.notes.len();
        let mut out = Coded {
            pc: Vec::with_capacity(n),
            interval: Vec::with_capacity(n),
            metric: Vec::with_capacity(n),
            run: Vec::with_capacity(n),
            ioi_prefix: Vec::with_capacity(n + 1),
            log_ratio: Vec::with_capacity(n),
            group_ratio: [Vec::new(), Vec::new()],
        };
        out.ioi_prefix.push(0.0);
        let mut previous: Option<&SeqNote> = None;
        let mut run = 0u8;
        for note in &seq.notes {
            out.pc.push(note.pitch_class);
            out.interval.push(interval_code(note.interval));
            out.metric.push(note.metric as u8);
            run = match previous {
                Some(p) if p.pitch == note.pitch => run.saturating_add(1),
                _ => 1,
            };
            out.run.push(run);
            let total = out.ioi_prefix.last().copied().unwrap_or(0.0) + note.ioi;
            out.ioi_prefix.push(total);
            out.log_ratio.push(note.log_ioi_ratio);
            previous = Some(note);
        }
        for k in 2..=3 {
            out.group_ratio[k - 2] = (0..n)
                .map(|last| {
                    (last + 1 >= k)
                        .then(|| out.group_log_ratio(last + 1 - k, last))
                        .flatten()
                })
                .collect();
        }
        out
    }

    pub fn len(&self) -> usize {
        self.pc.len()
    }

    /// log2 of the summed IOI of notes `first..=last` over the IOI of the note before `first`.
    fn group_log_ratio(&self, first: usize, last: usize) -> Option<f64> {
        let before = first.checked_sub(1)?;
        let group = self.ioi_prefix[last + 1] - self.ioi_prefix[first];
        let prev = self.ioi_prefix[first] - self.ioi_prefix[before];
        (group > 0.0 && prev > 0.0).then(|| (group / prev).log2())
    }
}

/// Whether two log ratios differ by at most `tolerance`.
#[inline(always)]
fn within(x: f64, y: f64, tolerance: f64) -> bool {
    (x - y).abs() <= tolerance + RHYTHM_SLACK
}

/// Whether a group of repeated notes fills the time of the single note it stands for: equal
/// inter-onset ratios to the preceding note, or no preceding note to compare with.
fn durations_agree(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (Some(x), Some(y)) => within(x, y, RHYTHM_SAME),
        _ => true,
    }
}

fn interval_term(params: &AlignParams, a: Option<i32>, b: Option<i32>) -> i32 {
    match (a, b) {
        (Some(x), Some(y)) if x == y => params.interval_match,
        (Some(x), Some(y)) if x.signum() == y.signum() && (x - y).abs() <= 2 => {
            params.interval_near
        }
        (Some(_), Some(_)) => params.interval_mismatch,
        _ => 0,
    }
}

impl Scorer {
    pub fn new(a: &Sequence, b: &Sequence, params: &AlignParams) -> Scorer {
        let mut pitch = [params.pitch_mismatch; 12];
        pitch[0] = params.pitch_match;
        pitch[1] = params.pitch_near;
        pitch[11] = params.pitch_near;

        let interval_codes = (2 * MAX_INTERVAL + 2) as usize;
        let decode_interval = |c: usize| (c != NONE_CODE).then(|| c as i32 - MAX_INTERVAL - 1);
        let mut interval = vec![0; interval_codes * interval_codes];
        for ca in 0..interval_codes {
            for cb in 0..interval_codes {
                interval[ca * interval_codes + cb] =
                    interval_term(params, decode_interval(ca), decode_interval(cb));
            }
        }
        Scorer {
            a: Coded::new(a),
            b: Coded::new(b),
            pitch,
            interval,
            interval_codes,
            rhythm_match: params.rhythm_match,
            rhythm_near: params.rhythm_near,
            rhythm_mismatch: params.rhythm_mismatch,
            metric_match: params.metric_match,
            fragment_penalty: params.fragment_penalty,
            max_fragments: params.max_fragments.clamp(1, 3),
        }
    }

    /// The part of the pair score that does not depend on the transposition.
    #[inline(always)]
    pub fn context(&self, i: usize, j: usize) -> i32 {
        let a = &self.a;
        let b = &self.b;
        self.interval[a.interval[i] as usize * self.interval_codes + b.interval[j] as usize]
            + self.rhythm_of(a.log_ratio[i], b.log_ratio[j])
            + if a.metric[i] == b.metric[j] {
                self.metric_match
            } else {
                0
            }
    }

    /// Pitch term of a pair under transposition `t` (b = a + t semitones).
    #[inline(always)]
    pub fn pitch(&self, i: usize, j: usize, t: u8) -> i32 {
        let d = (self.b.pc[j] + 24 - self.a.pc[i] - t) % 12;
        self.pitch[d as usize]
    }

    /// Pitch term of a_i against any note of pitch class `pc` under `t`.
    #[inline(always)]
    pub fn pitch_by_class(&self, i: usize, pc: u8, t: u8) -> i32 {
        self.pitch[((pc + 24 - self.a.pc[i] - t) % 12) as usize]
    }

    /// Full score of the pair (i, j) under `t`.
    #[inline(always)]
    pub fn pair(&self, i: usize, j: usize, t: u8) -> i32 {
        self.pitch(i, j, t) + self.context(i, j)
    }

    /// Rhythm term of two log2 inter-onset ratios, compared as they are (0 without both).
    #[inline(always)]
    fn rhythm_of(&self, x: Option<f64>, y: Option<f64>) -> i32 {
        match (x, y) {
            (Some(x), Some(y)) if within(x, y, RHYTHM_SAME) => self.rhythm_match,
            (Some(x), Some(y)) if within(x, y, RHYTHM_NEAR) => self.rhythm_near,
            (Some(_), Some(_)) => self.rhythm_mismatch,
            _ => 0,
        }
    }

    /// One note a_i against the `k` notes b_{j−k+1..=j} of one pitch (fragmentation), or
    /// `None` when those notes are not repeats of one pitch.
    pub fn fragment(&self, i: usize, j: usize, k: usize, t: u8) -> Option<i32> {
        let first = (j + 1).checked_sub(k)?;
        Some(self.pitch(i, first, t) + self.fragment_context(i, j, k)?)
    }

    /// The part of [`Scorer::fragment`] that does not depend on the transposition (all but the
    /// pitch term of a_i against b_{j−k+1}).
    #[inline(always)]
    pub fn fragment_context(&self, i: usize, j: usize, k: usize) -> Option<i32> {
        if !(2..=3).contains(&k) || (self.b.run[j] as usize) < k {
            return None;
        }
        let first = j + 1 - k;
        let group = self.b.group_ratio[k - 2][j];
        if !durations_agree(self.a.log_ratio[i], group) {
            return None;
        }
        let rhythm = self.rhythm_of(self.a.log_ratio[i], group);
        let interval = self.interval
            [self.a.interval[i] as usize * self.interval_codes + self.b.interval[first] as usize];
        let metric = if self.a.metric[i] == self.b.metric[first] {
            self.metric_match
        } else {
            0
        };
        Some(interval + rhythm + metric - self.fragment_penalty * (k as i32 - 1))
    }

    /// The `k` notes a_{i−k+1..=i} of one pitch against one note b_j (consolidation).
    pub fn consolidate(&self, i: usize, j: usize, k: usize, t: u8) -> Option<i32> {
        let first = (i + 1).checked_sub(k)?;
        Some(self.pitch(first, j, t) + self.consolidate_context(i, j, k)?)
    }

    /// The part of [`Scorer::consolidate`] that does not depend on the transposition (all but
    /// the pitch term of a_{i−k+1} against b_j).
    #[inline(always)]
    pub fn consolidate_context(&self, i: usize, j: usize, k: usize) -> Option<i32> {
        if !(2..=3).contains(&k) || (self.a.run[i] as usize) < k {
            return None;
        }
        let first = i + 1 - k;
        let group = self.a.group_ratio[k - 2][i];
        if !durations_agree(group, self.b.log_ratio[j]) {
            return None;
        }
        let rhythm = self.rhythm_of(group, self.b.log_ratio[j]);
        let interval = self.interval
            [self.a.interval[first] as usize * self.interval_codes + self.b.interval[j] as usize];
        let metric = if self.a.metric[first] == self.b.metric[j] {
            self.metric_match
        } else {
            0
        };
        Some(interval + rhythm + metric - self.fragment_penalty * (k as i32 - 1))
    }
}

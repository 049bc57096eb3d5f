//! The scan of [`super::scan`] restricted to a diagonal band of cells, for one transposition:
//! banded local alignment (Chao, Pearson & Miller 1992), used by the seeded search of long
//! works ([`super::seeded`]) on the neighbourhood of each group of seeds.
//!
//! The recurrence is the scan's (Smith & Waterman 1981; Gotoh 1982; Mongeau & Sankoff 1990);
//! cells outside the band read as H = 0 and E = F = minus infinity, so a best score found in
//! the band is the best local score of the paths that stay in it. Memory is four rows of the
//! band's width; time is rows × width.

use super::scan::{pack, unpack, Blocked, Hit, NEG};
use super::score::Scorer;
use super::AlignParams;

/// A parallelogram of cells under one transposition: A's notes `rows.0..=rows.1` and, in row
/// i, B's notes `i + diagonals.0 ..= i + diagonals.1` (clipped to B).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub(crate) struct Band {
    /// Transposition from A to B, semitones modulo 12.
    pub t: u8,
    /// First and last note of A (inclusive).
    pub rows: (usize, usize),
    /// Lowest and highest diagonal `j − i` (inclusive).
    pub diagonals: (i64, i64),
}

impl Band {
    /// Diagonals in the band.
    pub fn width(&self) -> usize {
        (self.diagonals.1 - self.diagonals.0 + 1).max(0) as usize
    }

    /// Cells of the band (an upper bound: clipping to B is not counted).
    pub fn cells(&self) -> u64 {
        (self.rows.1 + 1 - self.rows.0) as u64 * self.width() as u64
    }
}

/// The best local alignment inside `band` avoiding `blocked`, with the cell where its path
/// began (`None` when no cell scores above zero).
pub(crate) fn scan_band(
    scorer: &Scorer,
    params: &AlignParams,
    band: &Band,
    blocked: &Blocked,
) -> Option<Hit> {
    let n = scorer.a.len();
    let m = scorer.b.len() as i64;
    let w = band.width();
    if n == 0 || m == 0 || w == 0 || band.rows.0 > band.rows.1 || band.rows.0 >= n {
        return None;
    }
    let (open, extend) = (params.gap_open, params.gap_extend);
    let max_k = scorer.max_fragments;
    let t = band.t;
    // Row r (relative to the band's first row) lives in slot r % 4; index k is diagonal
    // diagonals.0 + k. The neighbours of (r, k): left (r, k − 1), up (r − 1, k + 1),
    // diagonal (r − 1, k), fragmentation of f notes (r − 1, k + 1 − f), consolidation of c
    // notes (r − c, k − 1 + c).
    let mut h = vec![0i32; 4 * w];
    let mut origin = vec![0u64; 4 * w];
    let mut f = vec![NEG; 2 * w];
    let mut f_origin = vec![0u64; 2 * w];
    let mut mask = vec![false; w];
    let mut best: Option<Hit> = None;
    let last_row = band.rows.1.min(n - 1);
    for ai in band.rows.0..=last_row {
        let r = ai - band.rows.0;
        let cur = (r % 4) * w;
        let prev = ((r + 3) % 4) * w;
        let (f_cur, f_prev) = if r % 2 == 0 { (0, w) } else { (w, 0) };
        let row_blocked = block_mask(blocked, ai, band, &mut mask);
        let read = |slot_row: usize, k: isize, h: &[i32]| -> i32 {
            if k < 0 || k as usize >= w {
                0
            } else {
                h[((slot_row) % 4) * w + k as usize]
            }
        };
        let mut e = NEG;
        let mut e_origin = 0u64;
        for k in 0..w {
            let bj = ai as i64 + band.diagonals.0 + k as i64;
            let here = cur + k;
            if bj < 0 || bj >= m || (row_blocked && mask[k]) {
                h[here] = 0;
                f[f_cur + k] = NEG;
                e = NEG;
                continue;
            }
            let bj = bj as usize;
            let ki = k as isize;
            // Gap in A (b_j unmatched), from the left.
            let left = if k > 0 { h[cur + k - 1] } else { 0 };
            let left_origin = if k > 0 { origin[cur + k - 1] } else { 0 };
            if left - open >= e - extend {
                e = left - open;
                e_origin = left_origin;
            } else {
                e -= extend;
            }
            // Gap in B (a_i unmatched), from above.
            let (above, above_origin, f_above) = if r > 0 && k + 1 < w {
                (h[prev + k + 1], origin[prev + k + 1], f[f_prev + k + 1])
            } else {
                (0, 0, NEG)
            };
            if above - open >= f_above - extend {
                f[f_cur + k] = above - open;
                f_origin[f_cur + k] = above_origin;
            } else {
                f[f_cur + k] = f_above - extend;
                f_origin[f_cur + k] = if r > 0 && k + 1 < w {
                    f_origin[f_prev + k + 1]
                } else {
                    0
                };
            }
            // The diagonal.
            let diag = if r > 0 { h[prev + k] } else { 0 };
            let mut value = diag + scorer.pair(ai, bj, t);
            let mut from = if diag > 0 {
                origin[prev + k]
            } else {
                pack(ai, bj)
            };
            if e > value {
                value = e;
                from = e_origin;
            }
            if f[f_cur + k] > value {
                value = f[f_cur + k];
                from = f_origin[f_cur + k];
            }
            // Fragmentation: a_i against b_{j−c+1..=j}.
            let run_b = usize::from(scorer.b.run[bj]).min(max_k).min(bj + 1);
            for c in 2..=run_b {
                if let Some(s) = scorer.fragment(ai, bj, c, t) {
                    let at = ki + 1 - c as isize;
                    let before = if r > 0 { read(r + 3, at, &h) } else { 0 };
                    if before + s > value {
                        value = before + s;
                        from = if before > 0 {
                            origin[prev + at as usize]
                        } else {
                            pack(ai, bj + 1 - c)
                        };
                    }
                }
            }
            // Consolidation: a_{i−c+1..=i} against b_j.
            let run_a = usize::from(scorer.a.run[ai]).min(max_k).min(ai + 1);
            for c in 2..=run_a {
                if let Some(s) = scorer.consolidate(ai, bj, c, t) {
                    let at = ki - 1 + c as isize;
                    let before = if r >= c && bj > 0 {
                        read(r + 4 - c, at, &h)
                    } else {
                        0
                    };
                    if before + s > value {
                        value = before + s;
                        from = if before > 0 {
                            origin[((r + 4 - c) % 4) * w + at as usize]
                        } else {
                            pack(ai + 1 - c, bj)
                        };
                    }
                }
            }
            if value > 0 {
                h[here] = value;
                origin[here] = from;
                if best.is_none_or(|b| value > b.score) {
                    best = Some(Hit {
                        score: value,
                        start: unpack(from),
                        end: (ai, bj),
                    });
                }
            } else {
                h[here] = 0;
            }
        }
    }
    best
}

/// Marks the cells of row `ai` of the band inside a blocked rectangle; false when none is.
fn block_mask(blocked: &Blocked, ai: usize, band: &Band, mask: &mut [bool]) -> bool {
    let mut any = false;
    for &((a0, a1), (b0, b1)) in &blocked.rects {
        if ai < a0 || ai > a1 {
            continue;
        }
        if !any {
            mask.fill(false);
            any = true;
        }
        let first = ai as i64 + band.diagonals.0;
        let lo = (b0 as i64 - first).max(0);
        let hi = (b1 as i64 - first).min(mask.len() as i64 - 1);
        for cell in mask
            .iter_mut()
            .take((hi + 1).max(0) as usize)
            .skip(lo as usize)
        {
            *cell = true;
        }
    }
    any
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::align::scan;
    use crate::align::testing::melody;

    // A band that covers every diagonal is the whole matrix: the banded scan must give the
    // full scan's best score, end and start, under every transposition (the definition of the
    // recurrence; Chao, Pearson & Miller 1992).
    #[test]
    fn a_band_over_every_diagonal_is_the_full_scan() {
        let params = AlignParams::default();
        for seed in 1..6u64 {
            let a = melody(70, seed);
            let mut b = melody(50, seed + 100);
            // Share a stretch with a split note so that the moves off the diagonal are used.
            b.notes.splice(10..10, a.notes[20..45].iter().copied());
            let scorer = Scorer::new(&a, &b, &params);
            for t in 0..12u8 {
                let band = Band {
                    t,
                    rows: (0, a.len() - 1),
                    diagonals: (-(a.len() as i64), b.len() as i64),
                };
                let full = scan::scan(&scorer, &params, t, &Blocked::default());
                let banded = scan_band(&scorer, &params, &band, &Blocked::default());
                assert_eq!(
                    banded.map(|h| h.score),
                    full.map(|h| h.score),
                    "seed {seed} t {t}"
                );
                if let (Some(x), Some(y)) = (banded, full) {
                    assert_eq!(x.end, y.end, "seed {seed} t {t}");
                    assert_eq!(x.start, y.start, "seed {seed} t {t}");
                }
            }
        }
    }

    // Blocked rectangles are honoured as in the full scan.
    #[test]
    fn blocked_cells_are_left_out_as_in_the_full_scan() {
        let params = AlignParams::default();
        let a = melody(80, 7);
        let b = a.clone();
        let scorer = Scorer::new(&a, &b, &params);
        let blocked = Blocked {
            rects: vec![((10, 40), (5, 45)), ((60, 70), (0, 79))],
        };
        let band = Band {
            t: 0,
            rows: (0, 79),
            diagonals: (-80, 80),
        };
        let full = scan::scan(&scorer, &params, 0, &blocked);
        let banded = scan_band(&scorer, &params, &band, &blocked);
        assert_eq!(banded, full);
    }

    // A narrow band finds a passage that stays near its diagonal, and nothing far from it.
    #[test]
    fn a_narrow_band_sees_only_its_own_diagonals() {
        let params = AlignParams::default();
        let a = melody(200, 3);
        let mut b = melody(200, 4);
        b.notes[120..150].copy_from_slice(&a.notes[30..60]);
        let scorer = Scorer::new(&a, &b, &params);
        let near = Band {
            t: 0,
            rows: (20, 70),
            diagonals: (80, 100),
        };
        let hit = scan_band(&scorer, &params, &near, &Blocked::default()).unwrap();
        assert!(hit.score >= 30 * 10, "{hit:?}");
        assert_eq!(hit.end.1 - hit.end.0, 90);
        let far = Band {
            t: 0,
            rows: (20, 70),
            diagonals: (-20, 20),
        };
        let other = scan_band(&scorer, &params, &far, &Blocked::default());
        assert!(other.is_none_or(|h| h.score < hit.score / 3), "{other:?}");
    }
}

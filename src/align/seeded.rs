//! Seeded local alignment for long works, where the full scan of every cell under twelve
//! transpositions would take minutes: the seed-and-extend scheme of database search (BLAST:
//! Altschul, Gish, Miller, Myers & Lipman 1990; the two-hit rule of Altschul et al. 1997),
//! on melodic intervals.
//!
//! 1. **Seeds.** Each melody is read as its distinct-pitch skeleton (a repeated note joins the
//!    note before it, so that a note split by different lyrics does not break a seed). A seed
//!    is a run of `k` consecutive skeleton intervals, in semitones, that occurs in both works;
//!    it fixes the transposition (B's first seed note minus A's, modulo 12). `k` starts at
//!    [`MIN_SEED`] intervals and grows until the seed pairs fit [`SEED_PAIR_BUDGET`]; a figure
//!    so common that it alone would pair more than [`MAX_SEED_PAIRS_PER_FIGURE`] times is
//!    thinned to the pairs near the works' proportional diagonal (database search masks such
//!    low-complexity words; here they may be the whole of two works that follow each other).
//! 2. **Two hits.** Seeds of one transposition on nearby diagonals (within
//!    [`DIAGONAL_BUCKET`]) and no more than [`CHAIN_GAP`] notes apart are chained; a chain
//!    of at least two seeds (overlapping seeds count: five or more agreeing intervals in a
//!    row make two) marks a neighbourhood worth aligning.
//! 3. **Banded alignment.** Each neighbourhood, widened by [`ROW_MARGIN`] notes and
//!    [`DIAGONAL_MARGIN`] diagonals, is aligned with the full recurrence inside that band
//!    ([`super::band`]); passages are found and declumped there as in the full search, then
//!    merged across neighbourhoods, strongest first, none overlapping another in both works.
//!
//! A passage with no run of agreeing intervals long enough to seed it is not found: the
//! search is exact inside the bands, not over the whole matrix. Outputs say when it was used.

use super::band::{scan_band, Band};
use super::scan::{Blocked, Hit};
use super::score::Scorer;
use super::{span, trace, AlignParams, Alignment};
use crate::features::Sequence;
use rayon::prelude::*;
use serde::Serialize;

/// Fewest skeleton intervals in a seed.
pub const MIN_SEED: usize = 4;
/// Most skeleton intervals in a seed (the length grows to this at most).
pub const MAX_SEED: usize = 10;
/// Most seed pairs (hits) gathered for one seed length; past it the length grows.
pub const SEED_PAIR_BUDGET: u64 = 4_000_000;
/// Most cells the bands of one seed length may hold; past it the length grows (about a
/// second of banded alignment on one laptop core).
pub const BAND_CELL_BUDGET: u64 = 60_000_000;
/// A figure that alone would pair more often than this is thinned: each of its occurrences
/// in A is paired only with the [`THINNED_PARTNERS`] occurrences in B on either side of its
/// proportional place, which keeps the diagonal of two works that follow each other (a work
/// against itself, a trill against a trill) and drops the rest.
pub const MAX_SEED_PAIRS_PER_FIGURE: u64 = 20_000;
/// Occurrences of a thinned figure in B paired with each of its occurrences in A, on each
/// side of its proportional place.
pub const THINNED_PARTNERS: usize = 2;
/// Width of the diagonal buckets that chain seeds, in notes.
pub const DIAGONAL_BUCKET: i64 = 16;
/// Most notes of A between chained seeds.
pub const CHAIN_GAP: usize = 48;
/// Notes of A added before and after a chain's seeds.
pub const ROW_MARGIN: usize = 32;
/// Diagonals added on each side of a chain's seeds.
pub const DIAGONAL_MARGIN: i64 = 16;
/// Widest band a merge of neighbourhoods may make; wider ones stay apart.
pub const MAX_BAND_WIDTH: usize = 256;

/// How the passages of a pair were searched for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SearchMethod {
    /// Every cell under every transposition (the full local alignment).
    Full,
    /// Seeded: bands around runs of agreeing intervals (see [`crate::align::seeded`]).
    Seeded {
        /// Skeleton intervals per seed.
        seed_intervals: usize,
        /// Seed pairs found.
        seed_pairs: u64,
        /// Figures too common to pair every occurrence, paired only near the works'
        /// proportional diagonal.
        thinned_figures: usize,
        /// Bands aligned.
        bands: usize,
        /// Cells aligned in the bands.
        cells: u64,
        /// Cells of the full matrix under all twelve transpositions.
        full_cells: u64,
    },
}

impl SearchMethod {
    /// One line in words for reports.
    pub fn describe(&self) -> String {
        match *self {
            SearchMethod::Full => "full local alignment of every note pair under all 12 \
                                   transpositions"
                .to_string(),
            SearchMethod::Seeded {
                seed_intervals,
                bands,
                cells,
                full_cells,
                thinned_figures,
                ..
            } => format!(
                "seeded search for long works: {bands} neighbourhood{} where figures of \
                 {seed_intervals} intervals recur in both works (two close together, or {} \
                 intervals in a row) were aligned in full inside diagonal bands, {:.2}% of \
                 the cells of a full alignment{}; a passage without such figures is not found \
                 (--full-search aligns every note pair)",
                if bands == 1 { "" } else { "s" },
                seed_intervals + 1,
                100.0 * cells as f64 / full_cells.max(1) as f64,
                match thinned_figures {
                    0 => String::new(),
                    1 => "; one figure too common to pair everywhere was paired only near \
                          the works' proportional diagonal"
                        .to_string(),
                    n => format!(
                        "; {n} figures too common to pair everywhere were paired only near \
                         the works' proportional diagonal"
                    ),
                }
            ),
        }
    }
}

/// The distinct-pitch skeleton of a melody: the note index where each new pitch starts, and
/// the interval into it (semitones, clamped to ±31).
struct Skeleton {
    index: Vec<usize>,
    interval: Vec<i8>,
}

impl Skeleton {
    fn of(seq: &Sequence) -> Skeleton {
        let mut index = Vec::new();
        let mut interval = Vec::new();
        let mut last: Option<i32> = None;
        for (i, note) in seq.notes.iter().enumerate() {
            if last == Some(note.pitch) {
                continue;
            }
            interval.push(last.map_or(0, |p| (note.pitch - p).clamp(-31, 31) as i8));
            index.push(i);
            last = Some(note.pitch);
        }
        Skeleton { index, interval }
    }

    /// The figures of `k` intervals, packed, with the skeleton position of their first note,
    /// sorted by figure then position.
    fn figures(&self, k: usize) -> Vec<Figure> {
        let len = self.interval.len();
        if len <= k {
            return Vec::new();
        }
        let mut out: Vec<Figure> = (0..len - k)
            .map(|r| {
                let key = self.interval[r + 1..=r + k]
                    .iter()
                    .fold(0u64, |acc, &x| (acc << 6) | u64::from((x + 32) as u8));
                (key, r as u32)
            })
            .collect();
        out.sort_unstable();
        out
    }
}

/// A packed figure and the skeleton position of its first note.
type Figure = (u64, u32);

/// Runs of equal figures in two sorted figure lists, as (range in A, range in B).
fn shared_runs<'x>(
    fa: &'x [Figure],
    fb: &'x [Figure],
) -> impl Iterator<Item = (&'x [Figure], &'x [Figure])> + 'x {
    let (mut x, mut y) = (0usize, 0usize);
    std::iter::from_fn(move || {
        while x < fa.len() && y < fb.len() {
            let (ka, kb) = (fa[x].0, fb[y].0);
            if ka < kb {
                x += 1;
            } else if kb < ka {
                y += 1;
            } else {
                let x1 = x + fa[x..].iter().take_while(|f| f.0 == ka).count();
                let y1 = y + fb[y..].iter().take_while(|f| f.0 == ka).count();
                let run = (&fa[x..x1], &fb[y..y1]);
                x = x1;
                y = y1;
                return Some(run);
            }
        }
        None
    })
}

/// One seed pair: transposition, diagonal bucket, A's first note, A's last note, B's first
/// note (note indices).
type Seed = (u8, i64, usize, usize, usize);

/// The seeds of a pair made of `k` intervals, sorted, and the figures thinned; `None` when
/// they would exceed [`SEED_PAIR_BUDGET`] and `k` may still grow.
fn seeds(
    sa: &Skeleton,
    sb: &Skeleton,
    a: &Sequence,
    b: &Sequence,
    k: usize,
) -> Option<(Vec<Seed>, usize)> {
    let (fa, fb) = (sa.figures(k), sb.figures(k));
    // Counted first, so that a seed length with too many pairs costs no allocation.
    let pairs: u64 = shared_runs(&fa, &fb)
        .map(|(ra, rb)| {
            let all = ra.len() as u64 * rb.len() as u64;
            if all > MAX_SEED_PAIRS_PER_FIGURE {
                ra.len() as u64 * 2 * THINNED_PARTNERS as u64
            } else {
                all
            }
        })
        .sum();
    if pairs > SEED_PAIR_BUDGET && k < MAX_SEED {
        return None;
    }
    let mut out: Vec<Seed> = Vec::new();
    let mut thinned = 0usize;
    // Proportional place of a skeleton position of A in B's skeleton.
    let scale = sb.index.len() as f64 / sa.index.len().max(1) as f64;
    for (ra, rb) in shared_runs(&fa, &fb) {
        let common = ra.len() as u64 * rb.len() as u64 > MAX_SEED_PAIRS_PER_FIGURE;
        thinned += usize::from(common);
        for &(_, ra_pos) in ra {
            let i = sa.index[ra_pos as usize];
            let i_last = sa.index[ra_pos as usize + k];
            // A figure too common to pair every occurrence is paired only with the
            // occurrences of B nearest its proportional place (B's run is sorted by place).
            let partners: &[Figure] = if common {
                let target = (f64::from(ra_pos) * scale) as u32;
                let at = rb.partition_point(|f| f.1 < target);
                &rb[at.saturating_sub(THINNED_PARTNERS)..(at + THINNED_PARTNERS).min(rb.len())]
            } else {
                rb
            };
            for &(_, rb_pos) in partners {
                let j = sb.index[rb_pos as usize];
                let t = (b.notes[j].pitch_class + 24 - a.notes[i].pitch_class) % 12;
                let d = j as i64 - i as i64;
                out.push((t, d.div_euclid(DIAGONAL_BUCKET), i, i_last, j));
            }
        }
        if out.len() as u64 > SEED_PAIR_BUDGET {
            break;
        }
    }
    out.sort_unstable();
    Some((out, thinned))
}

/// The bands to align: chains of two or more seeds, widened and merged.
fn bands(seeds: &[Seed], n: usize) -> Vec<Band> {
    let mut raw: Vec<Band> = Vec::new();
    let mut start = 0usize;
    while start < seeds.len() {
        let (t, bucket, _, _, _) = seeds[start];
        let mut end = start + 1;
        let mut reach = seeds[start].3;
        while end < seeds.len()
            && seeds[end].0 == t
            && seeds[end].1 == bucket
            && seeds[end].2 <= reach + CHAIN_GAP
        {
            reach = reach.max(seeds[end].3);
            end += 1;
        }
        if end - start >= 2 {
            let chain = &seeds[start..end];
            let first = chain.iter().map(|s| s.2).min().unwrap_or(0);
            let last = chain.iter().map(|s| s.3).max().unwrap_or(0);
            let d_lo = chain
                .iter()
                .map(|s| s.4 as i64 - s.2 as i64)
                .min()
                .unwrap_or(0);
            let d_hi = chain
                .iter()
                .map(|s| s.4 as i64 - s.2 as i64)
                .max()
                .unwrap_or(0);
            raw.push(Band {
                t,
                rows: (
                    first.saturating_sub(ROW_MARGIN),
                    (last + ROW_MARGIN).min(n.saturating_sub(1)),
                ),
                diagonals: (d_lo - DIAGONAL_MARGIN, d_hi + DIAGONAL_MARGIN),
            });
        }
        start = end;
    }
    merge(raw)
}

/// Merges bands of one transposition that overlap in rows and diagonals, while the merged
/// band stays within [`MAX_BAND_WIDTH`] diagonals.
fn merge(mut raw: Vec<Band>) -> Vec<Band> {
    raw.sort_unstable_by_key(|b| (b.t, b.rows.0, b.diagonals.0, b.rows.1, b.diagonals.1));
    let mut out: Vec<Band> = Vec::new();
    for band in raw {
        let joined = out.iter_mut().rev().take(8).find(|o| {
            o.t == band.t
                && band.rows.0 <= o.rows.1 + 1
                && band.diagonals.0 <= o.diagonals.1 + 1
                && o.diagonals.0 <= band.diagonals.1 + 1
                && (o.diagonals.1.max(band.diagonals.1) - o.diagonals.0.min(band.diagonals.0) + 1)
                    as usize
                    <= MAX_BAND_WIDTH
        });
        match joined {
            Some(o) => {
                o.rows.1 = o.rows.1.max(band.rows.1);
                o.diagonals = (
                    o.diagonals.0.min(band.diagonals.0),
                    o.diagonals.1.max(band.diagonals.1),
                );
            }
            None => out.push(band),
        }
    }
    out
}

/// The bands of a pair and how they were found: the shortest seed from [`MIN_SEED`] whose
/// seed pairs and bands fit [`SEED_PAIR_BUDGET`] and [`BAND_CELL_BUDGET`] (or [`MAX_SEED`]).
fn plan(a: &Sequence, b: &Sequence) -> (Vec<Band>, SearchMethod) {
    let (sa, sb) = (Skeleton::of(a), Skeleton::of(b));
    let mut k = MIN_SEED;
    loop {
        let Some((seeds, thinned)) = seeds(&sa, &sb, a, b, k) else {
            k += 1;
            continue;
        };
        let bands = bands(&seeds, a.len());
        let cells: u64 = bands.iter().map(Band::cells).sum();
        if cells > BAND_CELL_BUDGET && k < MAX_SEED {
            k += 1;
            continue;
        }
        let method = SearchMethod::Seeded {
            seed_intervals: k,
            seed_pairs: seeds.len() as u64,
            thinned_figures: thinned,
            bands: bands.len(),
            cells,
            full_cells: 12 * a.len() as u64 * b.len() as u64,
        };
        return (bands, method);
    }
}

/// The best local score found in the bands (0 when none scores above zero): the seeded
/// counterpart of [`super::best_score`].
pub fn best_seeded(a: &Sequence, b: &Sequence, params: &AlignParams) -> i32 {
    let (bands, _) = plan(a, b);
    let scorer = Scorer::new(a, b, params);
    bands
        .par_iter()
        .map(|band| scan_band(&scorer, params, band, &Blocked::default()).map_or(0, |h| h.score))
        .max()
        .unwrap_or(0)
}

/// The passages found in the bands, strongest first and none overlapping another in both
/// works, the best local score found, and the method's record: the seeded counterpart of
/// [`super::align_scored`].
pub fn align_seeded(
    a: &Sequence,
    b: &Sequence,
    params: &AlignParams,
) -> (Vec<Alignment>, i32, SearchMethod) {
    let (bands, method) = plan(a, b);
    let scorer = Scorer::new(a, b, params);
    let found: Vec<(Vec<Alignment>, i32)> = bands
        .par_iter()
        .map(|band| passages_in(&scorer, params, band))
        .collect();
    let best = found.iter().map(|f| f.1).max().unwrap_or(0);
    let mut all: Vec<Alignment> = found.into_iter().flat_map(|f| f.0).collect();
    all.sort_by(|x, y| {
        y.score
            .cmp(&x.score)
            .then(x.a_range.cmp(&y.a_range))
            .then(x.b_range.cmp(&y.b_range))
            .then(x.transposition.cmp(&y.transposition))
    });
    let mut out: Vec<Alignment> = Vec::new();
    for al in all {
        if out.len() >= params.max_passages {
            break;
        }
        let overlaps = |o: &Alignment| {
            al.a_range.0 <= o.a_range.1
                && o.a_range.0 <= al.a_range.1
                && al.b_range.0 <= o.b_range.1
                && o.b_range.0 <= al.b_range.1
        };
        if !out.iter().any(overlaps) {
            out.push(al);
        }
    }
    (out, best, method)
}

/// The passages of one band, found and declumped as in the full search, with the band's best
/// score.
fn passages_in(scorer: &Scorer, params: &AlignParams, band: &Band) -> (Vec<Alignment>, i32) {
    let mut blocked = Blocked::default();
    let mut out = Vec::new();
    let mut best = 0;
    for _ in 0..params.max_passages {
        let Some(hit): Option<Hit> = scan_band(scorer, params, band, &blocked) else {
            break;
        };
        best = best.max(hit.score);
        if hit.score < params.min_score {
            break;
        }
        let (steps, score) = trace::trace(scorer, params, band.t, &blocked, &hit);
        let a_range = span(&steps, true).unwrap_or((hit.start.0, hit.end.0));
        let b_range = span(&steps, false).unwrap_or((hit.start.1, hit.end.1));
        blocked.rects.push((
            (hit.start.0.min(a_range.0), hit.end.0.max(a_range.1)),
            (hit.start.1.min(b_range.0), hit.end.1.max(b_range.1)),
        ));
        if a_range.1 - a_range.0 + 1 >= params.min_notes
            && b_range.1 - b_range.0 + 1 >= params.min_notes
        {
            out.push(Alignment {
                transposition: band.t,
                score,
                a_range,
                b_range,
                steps,
            });
        }
    }
    (out, best)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::align::{is_seeded, self_score};
    use crate::features::{MetricLevel, SeqNote};

    /// A trill of `len` notes: two pitches a tone apart, alternating, one rhythm.
    fn trill(len: usize) -> Sequence {
        let notes = (0..len)
            .map(|i| {
                let pitch = 60 + 2 * (i % 2) as i32;
                SeqNote {
                    pitch,
                    pitch_class: pitch.rem_euclid(12) as u8,
                    interval: (i > 0).then_some(if i % 2 == 1 { 2 } else { -2 }),
                    ioi: 0.5,
                    log_ioi_ratio: (i > 0).then_some(0.0),
                    metric: MetricLevel::Weak,
                }
            })
            .collect();
        Sequence { notes }
    }

    // A long work made of one figure against itself: every figure is too common to pair
    // everywhere, and thinning to the proportional diagonal must still find the whole work,
    // with the score of the work aligned with itself (by definition the best there is).
    #[test]
    fn a_work_of_one_figure_against_itself_is_found_whole() {
        let a = trill(2100);
        assert!(is_seeded(a.len(), a.len()));
        let params = AlignParams::default();
        let (found, best, method) = align_seeded(&a, &a, &params);
        let SearchMethod::Seeded {
            thinned_figures, ..
        } = method
        else {
            panic!("{method:?}");
        };
        assert!(thinned_figures > 0);
        let whole = self_score(&a, (0, a.len() - 1), &params);
        assert_eq!(best, whole);
        assert_eq!(found[0].a_range, (0, a.len() - 1));
        assert_eq!(found[0].b_range, (0, a.len() - 1));
    }
}

//! Spacing of the staves: where each event of a bar goes and how wide the bar is, which
//! accidentals it prints, how many bars go on a system, and how much room a staff needs above
//! and below its lines.

use std::collections::BTreeMap;
use std::ops::Range;

use super::{bottom_line, diatonic, SP};
use crate::report::notation::{StaffView, ViewBar};
use crate::report::pdf::text::{width_mm, Face};

/// Height of the three text rows under a staff (lyric, degree, interval), mm.
pub(super) const TEXT_ROWS: f32 = 3.0 * 3.3 + 1.0;
/// Height of the chord-symbol row above a staff, mm.
pub(super) const CHORD_ROW: f32 = 3.5;

/// Horizontal layout of one bar: the x of each event (mm from the bar's left edge), the
/// natural width and the accidentals it prints.
pub(super) struct BarLayout {
    /// The x of each event, mm from the bar's left edge.
    pub xs: Vec<f32>,
    /// Natural width, mm.
    pub width: f32,
    /// Accidental to print per event (see [`bar_accidentals`]).
    pub accidentals: Vec<Option<i32>>,
}

/// Natural width of one event in staff spaces, by its length (after the usual engraving
/// habit of spacing by a slowly growing function of duration).
fn event_space(ticks: i64, res: i64) -> f32 {
    let q = ticks as f32 / res.max(1) as f32;
    2.0 + 1.5 * (1.0 + 2.0 * q).log2()
}

/// Lays out every bar of a staff.
pub(super) fn layout_bars(view: &StaffView) -> Vec<BarLayout> {
    view.bars.iter().map(|b| layout_bar(view, b)).collect()
}

/// Lays out one bar: room for accidentals and grace notes before a note, the note's own
/// space by its length, widened to fit its lyric.
fn layout_bar(view: &StaffView, bar: &ViewBar) -> BarLayout {
    let accidentals = bar_accidentals(view, bar);
    let mut xs = Vec::with_capacity(bar.events.len());
    let mut x = 1.6 * SP;
    for (k, ev) in bar.events.iter().enumerate() {
        let acc = accidentals.get(k).copied().flatten().is_some();
        let grace = bar
            .graces
            .iter()
            .any(|g| g.start == ev.start && ev.note.is_some());
        if acc {
            x += 1.3 * SP;
        }
        if grace {
            x += 2.2 * SP;
        }
        xs.push(x);
        let mut w = event_space(ev.ticks, view.resolution) * SP;
        // Room for the lyric and the degree under the note.
        if let Some(n) = ev.note.and_then(|i| view.notes.get(i)) {
            if !ev.tie_stop {
                if let Some(l) = &n.lyric {
                    w = w.max(width_mm(l, Face::SerifItalic, 7.2) + 1.0);
                }
            }
        }
        x += w;
    }
    BarLayout {
        xs,
        width: x + 0.4 * SP,
        accidentals,
    }
}

/// Alteration of each letter under a key signature.
fn key_alters(fifths: i32) -> [i32; 7] {
    let mut alters = [0; 7];
    // Order of sharps F C G D A E B; of flats B E A D G C F (as step indices).
    const SHARP_ORDER: [usize; 7] = [3, 0, 4, 1, 5, 2, 6];
    const FLAT_ORDER: [usize; 7] = [6, 2, 5, 1, 4, 0, 3];
    let n = fifths.unsigned_abs().min(7) as usize;
    if fifths > 0 {
        for &s in &SHARP_ORDER[..n] {
            alters[s] = 1;
        }
    } else {
        for &s in &FLAT_ORDER[..n] {
            alters[s] = -1;
        }
    }
    alters
}

/// Accidentals to print per event: the alteration when it differs from what the key signature
/// and earlier notes of the bar leave in force (accidentals hold to the end of the bar).
fn bar_accidentals(view: &StaffView, bar: &ViewBar) -> Vec<Option<i32>> {
    let key = key_alters(view.key_fifths);
    let mut state: BTreeMap<(i32, i32), i32> = BTreeMap::new();
    bar.events
        .iter()
        .map(|ev| {
            let n = ev.note.and_then(|i| view.notes.get(i))?;
            if ev.tie_stop {
                return None;
            }
            let s = n.spelling;
            let alter = s.alter.round() as i32;
            let slot = (s.step.index(), s.octave);
            let current = state
                .get(&slot)
                .copied()
                .unwrap_or(key[s.step.index() as usize]);
            state.insert(slot, alter);
            (current != alter).then_some(alter)
        })
        .collect()
}

/// Width of the clef and key signature at the head of a system, mm (the time signature
/// comes after it).
pub(super) fn prefix_width(view: &StaffView) -> f32 {
    4.2 * SP + view.key_fifths.unsigned_abs() as f32 * 1.1 * SP + 1.0 * SP
}

/// How the bars of both works are shared among systems.
pub(super) struct SystemPlan {
    /// Number of systems.
    pub systems: usize,
    /// Bars of A per system.
    ka: usize,
    /// Bars of B per system.
    kb: usize,
    /// Bars of A and of B laid out (possibly 0).
    len_a: usize,
    len_b: usize,
}

impl SystemPlan {
    /// Bars per system: the most whose natural width fits `avail` mm, on the side with more
    /// bars, balanced so that the last system is not much shorter than the others.
    pub fn new(lay_a: &[BarLayout], lay_b: &[BarLayout], avail: f32) -> SystemPlan {
        let na = lay_a.len().max(1);
        let nb = lay_b.len().max(1);
        let fits = |k: usize| {
            let systems = na.max(nb).div_ceil(k);
            let ka = na.div_ceil(systems);
            let kb = nb.div_ceil(systems);
            // A little compression is allowed before a bar moves to the next system.
            widest(lay_a, ka) <= avail * 1.15 && widest(lay_b, kb) <= avail * 1.15
        };
        let mut per = na.max(nb).min(6);
        while per > 1 && !fits(per) {
            per -= 1;
        }
        // Balance the systems: 8 bars at most 3 a system are 3 + 3 + 2, at 4 they are 4 + 4.
        let systems = na.max(nb).div_ceil(per.max(1));
        SystemPlan {
            systems,
            ka: na.div_ceil(systems),
            kb: nb.div_ceil(systems),
            len_a: lay_a.len(),
            len_b: lay_b.len(),
        }
    }

    /// The bars of A and of B on system `sys`, within the bars laid out: a side whose bars
    /// are used up before the other's (one far longer than the other) gets an empty range.
    pub fn bars(&self, sys: usize) -> (Range<usize>, Range<usize>) {
        let range = |per: usize, len: usize| (sys * per).min(len)..((sys + 1) * per).min(len);
        (range(self.ka, self.len_a), range(self.kb, self.len_b))
    }
}

/// Natural width of the widest system when `per` bars go on each, mm.
fn widest(lay: &[BarLayout], per: usize) -> f32 {
    lay.chunks(per.max(1))
        .map(|c| c.iter().map(|l| l.width).sum::<f32>())
        .fold(0.0f32, f32::max)
}

/// Vertical room of one staff, mm: the space its notes need above the top line and below the
/// bottom line.
#[derive(Debug, Clone, Copy)]
pub(super) struct Room {
    /// Space above the top line.
    pub above: f32,
    /// Space below the bottom line, before the text rows.
    pub below: f32,
}

impl Room {
    /// The room the notes of `view` need (at least two staff spaces either way).
    pub fn of(view: &StaffView) -> Room {
        let bottom = bottom_line(view.clef);
        let mut hi = bottom + 8;
        let mut lo = bottom;
        for n in &view.notes {
            let dn = diatonic(n.spelling.step, n.spelling.octave);
            hi = hi.max(dn);
            lo = lo.min(dn);
        }
        let above = ((hi - bottom - 8) as f32 * SP / 2.0 + 3.0 * SP).max(2.0 * SP);
        let below = ((bottom - lo) as f32 * SP / 2.0 + 3.0 * SP).max(2.0 * SP);
        Room { above, below }
    }

    /// Height of the whole band: chord row, room above, the staff, room below, text rows.
    pub fn height(self) -> f32 {
        CHORD_ROW + self.above + 4.0 * SP + self.below + TEXT_ROWS
    }
}

/// One bar as placed on its system.
pub(super) struct PlacedBar<'a> {
    /// The staff the bar belongs to.
    pub view: &'a StaffView,
    /// The bar.
    pub bar: &'a ViewBar,
    /// Its natural layout.
    pub lay: &'a BarLayout,
    /// Left edge, mm.
    pub bx: f32,
    /// Stretch applied to the natural layout.
    pub scale: f32,
    /// The staff's room above and below.
    pub room: Room,
    /// The x of each event, mm.
    pub xs: Vec<f32>,
}

impl<'a> PlacedBar<'a> {
    /// Places `bar`, laid out as `lay`, at `bx`, stretched by `scale`.
    pub fn new(
        view: &'a StaffView,
        bar: &'a ViewBar,
        lay: &'a BarLayout,
        bx: f32,
        scale: f32,
        room: Room,
    ) -> PlacedBar<'a> {
        let xs = lay.xs.iter().map(|x| bx + x * scale).collect();
        PlacedBar {
            view,
            bar,
            lay,
            bx,
            scale,
            room,
            xs,
        }
    }

    /// Width as drawn, mm.
    pub fn width(&self) -> f32 {
        self.lay.width * self.scale
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn key_signatures() {
        // G major: F sharp; B-flat major: B and E flat.
        assert_eq!(key_alters(1)[3], 1);
        let bb = key_alters(-2);
        assert_eq!((bb[6], bb[2], bb[5]), (-1, -1, 0));
    }

    // 22 bars of A against 26 of B, two bars a system: 13 systems, and the last has no bar
    // of A (an empty range at A's end, never past it; a comparison of a long work with a
    // short one once panicked here). No bars at all on one side gives empty ranges too.
    #[test]
    fn a_side_whose_bars_run_out_gets_empty_ranges() {
        let plan = SystemPlan {
            systems: 13,
            ka: 2,
            kb: 2,
            len_a: 22,
            len_b: 26,
        };
        assert_eq!(plan.bars(12), (22..22, 24..26));
        assert_eq!(plan.bars(10), (20..22, 20..22));
        let empty = SystemPlan {
            systems: 1,
            ka: 1,
            kb: 3,
            len_a: 0,
            len_b: 3,
        };
        assert_eq!(empty.bars(0), (0..0, 0..3));
    }
}

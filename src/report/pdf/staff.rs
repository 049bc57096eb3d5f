//! Staff notation, drawn with vector paths: both works of a passage on parallel staves, system
//! by system, with clef, key and time signature, bar lines and printed bar numbers, noteheads,
//! stems, flags and beams, dots, ties, triplets, accidentals, rests, grace notes, chord
//! symbols above and, below each staff, lyrics, scale degrees and intervals. Matched notes are
//! navy on a tinted band; notes that differ are vermilion inside a ring; notes of the shown bars
//! outside the passage are grey. When a side's pitches are too unstable for a staff (audio),
//! [`draw_roll`] draws a piano roll with the same marks.
//!
//! All glyph shapes are our own outlines; sizes are in staff spaces (`sp`, the distance
//! between two staff lines, 1.8 mm here).

use super::layout::{palette, Flow, Page, Rgbf};
use super::text::{width_mm, Face};
use crate::report::notation::{Clef, Mark, PassageView, StaffView, ViewBar};
use crate::theory::Step;

/// Staff space, mm.
const SP: f32 = 1.8;
/// Width of the label column left of the staves, mm.
const LABEL_W: f32 = 9.0;

fn mark_ink(mark: Mark) -> Rgbf {
    match mark {
        Mark::Matched => palette::NAVY,
        Mark::Differs => palette::VERMILION,
        Mark::Outside => palette::LIGHT_GREY,
    }
}

/// Diatonic number of a spelled pitch (C0 = 0, one per letter).
fn diatonic(step: Step, octave: i32) -> i32 {
    octave * 7 + step.index()
}

/// Diatonic number of the bottom line.
fn bottom_line(clef: Clef) -> i32 {
    match clef {
        Clef::Treble => 30, // E4
        Clef::Bass => 18,   // G2
    }
}

/// Key signature positions (diatonic numbers) for sharps and flats, in order.
fn key_positions(clef: Clef, fifths: i32) -> Vec<(i32, i32)> {
    // Treble: F5 C5 G5 D5 A4 E5 B4 for sharps; B4 E5 A4 D5 G4 C5 F4 for flats.
    const SHARPS: [i32; 7] = [38, 35, 39, 36, 33, 37, 34];
    const FLATS: [i32; 7] = [34, 37, 33, 36, 32, 35, 31];
    let offset = match clef {
        Clef::Treble => 0,
        Clef::Bass => -14,
    };
    let n = fifths.unsigned_abs().min(7) as usize;
    if fifths > 0 {
        SHARPS[..n].iter().map(|&d| (d + offset, 1)).collect()
    } else {
        FLATS[..n].iter().map(|&d| (d + offset, -1)).collect()
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

/// Glyph drawing on a staff whose bottom line is at `y0`.
struct Staff<'p> {
    page: &'p mut Page,
    y0: f32,
    clef: Clef,
}

impl Staff<'_> {
    fn y(&self, dn: i32) -> f32 {
        self.y0 - (dn - bottom_line(self.clef)) as f32 * SP / 2.0
    }

    fn top(&self) -> f32 {
        self.y0 - 4.0 * SP
    }

    fn lines(&mut self, x1: f32, x2: f32) {
        for k in 0..5 {
            let y = self.y0 - k as f32 * SP;
            self.page.line(x1, y, x2, y, 0.13, palette::INK);
        }
    }

    fn barline(&mut self, x: f32, heavy: bool) {
        let (top, bottom) = (self.top(), self.y0);
        if heavy {
            self.page
                .line(x - 0.9, top, x - 0.9, bottom, 0.15, palette::INK);
            self.page
                .rect(x - 0.45, top, 0.45, bottom - top, Some(palette::INK), None);
        } else {
            self.page.line(x, top, x, bottom, 0.18, palette::INK);
        }
    }

    fn clef_glyph(&mut self, x: f32) {
        match self.clef {
            Clef::Treble => treble_clef(self.page, x, self.y0),
            Clef::Bass => bass_clef(self.page, x, self.y0),
        }
    }

    fn accidental(&mut self, x: f32, dn: i32, alter: i32, ink: Rgbf) {
        let y = self.y(dn);
        accidental_glyph(self.page, x, y, alter, ink);
    }

    fn ledger(&mut self, x: f32, dn: i32, ink: Rgbf) {
        let bottom = bottom_line(self.clef);
        let top = bottom + 8;
        let half = 0.95 * SP;
        let mut d = bottom - 2;
        while d >= dn {
            let y = self.y(d);
            self.page.line(x - half, y, x + half, y, 0.16, ink);
            d -= 2;
        }
        let mut d = top + 2;
        while d <= dn {
            let y = self.y(d);
            self.page.line(x - half, y, x + half, y, 0.16, ink);
            d += 2;
        }
    }
}

/// A treble clef: our own outline, a stroked spiral round the G line, a loop above the staff
/// and a tail with a ball below.
fn treble_clef(page: &mut Page, x: f32, y0: f32) {
    let s = SP;
    let g = y0 - s; // the G line
    let cx = x + 1.6 * s;
    let pts = [
        (cx + 0.15 * s, g + 0.15 * s, false),
        (cx - 0.55 * s, g + 0.2 * s, true),
        (cx - 0.6 * s, g - 0.8 * s, true),
        (cx + 0.1 * s, g - 0.85 * s, false),
        (cx + 1.0 * s, g - 0.9 * s, true),
        (cx + 1.25 * s, g + 0.35 * s, true),
        (cx + 0.35 * s, g + 0.95 * s, false),
        (cx - 0.75 * s, g + 1.5 * s, true),
        (cx - 1.45 * s, g - 0.3 * s, true),
        (cx - 0.2 * s, g - 1.6 * s, false),
        (cx + 0.7 * s, g - 2.5 * s, true),
        (cx + 1.05 * s, g - 4.2 * s, true),
        (cx + 0.55 * s, g - 4.9 * s, false),
        (cx + 0.05 * s, g - 5.3 * s, true),
        (cx - 0.45 * s, g - 3.6 * s, true),
        (cx - 0.05 * s, g - 1.8 * s, false),
        (cx + 0.25 * s, g - 0.2 * s, true),
        (cx + 0.45 * s, g + 1.6 * s, true),
        (cx + 0.3 * s, g + 2.3 * s, false),
        (cx + 0.2 * s, g + 2.9 * s, true),
        (cx - 0.5 * s, g + 3.0 * s, true),
        (cx - 0.6 * s, g + 2.55 * s, false),
    ];
    let line: Vec<(f32, f32, bool)> = pts.to_vec();
    stroke_path(page, &line, 0.26 * s, palette::INK);
    page.ellipse(
        cx - 0.45 * s,
        g + 2.5 * s,
        0.38 * s,
        0.38 * s,
        0.0,
        Some(palette::INK),
        None,
    );
}

/// A bass clef: ball on the F line, an arc, and two dots either side of the F line.
fn bass_clef(page: &mut Page, x: f32, y0: f32) {
    let s = SP;
    let f = y0 - 3.0 * s;
    let cx = x + 0.7 * s;
    page.ellipse(cx, f, 0.42 * s, 0.42 * s, 0.0, Some(palette::INK), None);
    let arc = [
        (cx - 0.3 * s, f - 0.2 * s, false),
        (cx + 0.3 * s, f - 1.3 * s, true),
        (cx + 2.4 * s, f - 1.2 * s, true),
        (cx + 2.3 * s, f + 0.4 * s, false),
        (cx + 2.2 * s, f + 1.8 * s, true),
        (cx + 1.0 * s, f + 2.7 * s, true),
        (cx - 0.2 * s, f + 3.2 * s, false),
    ];
    stroke_path(page, &arc, 0.3 * s, palette::INK);
    page.ellipse(
        cx + 3.0 * s,
        f - 0.5 * s,
        0.2 * s,
        0.2 * s,
        0.0,
        Some(palette::INK),
        None,
    );
    page.ellipse(
        cx + 3.0 * s,
        f + 0.5 * s,
        0.2 * s,
        0.2 * s,
        0.0,
        Some(palette::INK),
        None,
    );
}

/// Strokes an open path with Bézier control points.
fn stroke_path(page: &mut Page, pts: &[(f32, f32, bool)], width: f32, ink: Rgbf) {
    // An open stroked path: the shape helper closes rings, so draw it as a thin filled
    // outline instead by offsetting? Simpler: emit as a polygon stroke without closing by
    // going back along the same points.
    let mut there_and_back: Vec<(f32, f32, bool)> = pts.to_vec();
    let mut back: Vec<(f32, f32, bool)> = Vec::with_capacity(pts.len());
    // Reverse the path: control points swap order within each curve segment.
    for i in (0..pts.len()).rev() {
        back.push(pts[i]);
    }
    // After reversing, a curve's control points still precede its end point.
    there_and_back.extend(back.into_iter().skip(1));
    page.shape(&there_and_back, None, Some((ink, width)));
}

fn accidental_glyph(page: &mut Page, x: f32, y: f32, alter: i32, ink: Rgbf) {
    let s = SP;
    match alter {
        1 => {
            page.line(
                x - 0.22 * s,
                y - 1.3 * s,
                x - 0.22 * s,
                y + 1.4 * s,
                0.13,
                ink,
            );
            page.line(
                x + 0.22 * s,
                y - 1.4 * s,
                x + 0.22 * s,
                y + 1.3 * s,
                0.13,
                ink,
            );
            for dy in [-0.45 * s, 0.45 * s] {
                page.shape(
                    &[
                        (x - 0.55 * s, y + dy + 0.2 * s, false),
                        (x + 0.55 * s, y + dy - 0.05 * s, false),
                        (x + 0.55 * s, y + dy - 0.32 * s, false),
                        (x - 0.55 * s, y + dy - 0.07 * s, false),
                    ],
                    Some(ink),
                    None,
                );
            }
        }
        -1 => {
            page.line(
                x - 0.35 * s,
                y - 2.0 * s,
                x - 0.35 * s,
                y + 0.5 * s,
                0.15,
                ink,
            );
            page.shape(
                &[
                    (x - 0.35 * s, y + 0.5 * s, false),
                    (x + 0.6 * s, y - 0.1 * s, true),
                    (x + 0.55 * s, y - 0.9 * s, true),
                    (x - 0.35 * s, y - 0.35 * s, false),
                    (x - 0.35 * s, y - 0.15 * s, false),
                    (x + 0.25 * s, y - 0.6 * s, true),
                    (x + 0.3 * s, y + 0.0 * s, true),
                    (x - 0.35 * s, y + 0.32 * s, false),
                ],
                Some(ink),
                None,
            );
        }
        0 => {
            page.line(
                x - 0.3 * s,
                y - 1.4 * s,
                x - 0.3 * s,
                y + 0.55 * s,
                0.13,
                ink,
            );
            page.line(
                x + 0.3 * s,
                y - 0.55 * s,
                x + 0.3 * s,
                y + 1.4 * s,
                0.13,
                ink,
            );
            for dy in [-0.45 * s, 0.45 * s] {
                page.shape(
                    &[
                        (x - 0.3 * s, y + dy + 0.15 * s, false),
                        (x + 0.3 * s, y + dy - 0.05 * s, false),
                        (x + 0.3 * s, y + dy - 0.3 * s, false),
                        (x - 0.3 * s, y + dy - 0.1 * s, false),
                    ],
                    Some(ink),
                    None,
                );
            }
        }
        2 => {
            let d = 0.4 * s;
            page.line(x - d, y - d, x + d, y + d, 0.22, ink);
            page.line(x - d, y + d, x + d, y - d, 0.22, ink);
        }
        -2 => {
            accidental_glyph(page, x - 0.45 * s, y, -1, ink);
            accidental_glyph(page, x + 0.45 * s, y, -1, ink);
        }
        _ => {}
    }
}

fn notehead(page: &mut Page, x: f32, y: f32, log: u8, ink: Rgbf, scale: f32) {
    let s = SP * scale;
    match log {
        0 => {
            page.ellipse(x, y, 0.78 * s, 0.5 * s, 0.0, Some(ink), None);
            page.ellipse(
                x,
                y,
                0.32 * s,
                0.36 * s,
                0.9,
                Some(Rgbf(1.0, 1.0, 1.0)),
                None,
            );
        }
        1 => {
            page.ellipse(x, y, 0.66 * s, 0.46 * s, -0.35, Some(ink), None);
            page.ellipse(
                x,
                y,
                0.5 * s,
                0.2 * s,
                -0.55,
                Some(Rgbf(1.0, 1.0, 1.0)),
                None,
            );
        }
        _ => page.ellipse(x, y, 0.64 * s, 0.45 * s, -0.35, Some(ink), None),
    }
}

fn rest_glyph(page: &mut Page, x: f32, staff_y0: f32, log: u8, ink: Rgbf) {
    let s = SP;
    let mid = staff_y0 - 2.0 * s;
    match log {
        0 => page.rect(
            x - 0.6 * s,
            mid - 1.0 * s,
            1.2 * s,
            0.5 * s,
            Some(ink),
            None,
        ),
        1 => page.rect(
            x - 0.6 * s,
            mid - 0.5 * s,
            1.2 * s,
            0.5 * s,
            Some(ink),
            None,
        ),
        2 => {
            let pts = [
                (x - 0.3 * s, mid - 1.5 * s),
                (x + 0.35 * s, mid - 0.7 * s),
                (x - 0.25 * s, mid + 0.1 * s),
                (x + 0.3 * s, mid + 0.8 * s),
                (x - 0.3 * s, mid + 0.6 * s),
                (x + 0.05 * s, mid + 1.3 * s),
            ];
            page.polyline(&pts, 0.42, ink);
        }
        _ => {
            let hooks = i32::from(log) - 2;
            let top = mid - 0.6 * s;
            let bottom = mid + 1.0 * s + 0.5 * s * (hooks - 1) as f32;
            page.line(x + 0.5 * s, top, x - 0.1 * s, bottom, 0.2, ink);
            for k in 0..hooks {
                let yy = top + 0.1 * s + k as f32 * 0.9 * s;
                let xx = x + 0.5 * s - 0.35 * s * k as f32;
                page.ellipse(
                    xx - 0.9 * s,
                    yy + 0.15 * s,
                    0.3 * s,
                    0.3 * s,
                    0.0,
                    Some(ink),
                    None,
                );
                page.line(xx - 0.9 * s, yy + 0.3 * s, xx, yy, 0.16, ink);
            }
        }
    }
}

/// Natural width of one event in staff spaces, by its length (after the usual engraving
/// habit of spacing by a slowly growing function of duration).
fn event_space(ticks: i64, res: i64) -> f32 {
    let q = ticks as f32 / res.max(1) as f32;
    2.0 + 1.5 * (1.0 + 2.0 * q).log2()
}

/// Horizontal layout of one bar: the x of each event (mm from the bar's left edge) and the
/// natural width.
struct BarLayout {
    xs: Vec<f32>,
    width: f32,
}

fn layout_bar(view: &StaffView, bar: &ViewBar, accidentals: &[Option<i32>]) -> BarLayout {
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
    }
}

/// Accidentals to print per event: the alteration when it differs from what the key signature
/// and earlier notes of the bar leave in force (accidentals hold to the end of the bar).
fn bar_accidentals(view: &StaffView, bar: &ViewBar) -> Vec<Option<i32>> {
    let key = key_alters(view.key_fifths);
    let mut state: std::collections::BTreeMap<(i32, i32), i32> = std::collections::BTreeMap::new();
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

/// Vertical extent of a staff's notes: (space above the top line, space below the bottom line).
fn extents(view: &StaffView) -> (f32, f32) {
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
    (above, below)
}

/// Draws a passage: systems of both staves until every bar is shown.
pub fn draw_passage(flow: &mut Flow, view: &PassageView) {
    if view.a.unstable_pitch || view.b.unstable_pitch {
        draw_roll(flow, view);
        return;
    }
    let left = flow.geo.left();
    let width = flow.geo.text_width();
    let staff_x = left + LABEL_W;
    let staff_w = width - LABEL_W;
    let prefix =
        |v: &StaffView| 4.2 * SP + v.key_fifths.unsigned_abs() as f32 * 1.1 * SP + 1.0 * SP;
    let time_w = 2.4 * SP;
    let prefix_w = prefix(&view.a).max(prefix(&view.b)) + time_w;
    let accs_a: Vec<Vec<Option<i32>>> = view
        .a
        .bars
        .iter()
        .map(|b| bar_accidentals(&view.a, b))
        .collect();
    let accs_b: Vec<Vec<Option<i32>>> = view
        .b
        .bars
        .iter()
        .map(|b| bar_accidentals(&view.b, b))
        .collect();
    let lay_a: Vec<BarLayout> = view
        .a
        .bars
        .iter()
        .zip(&accs_a)
        .map(|(b, a)| layout_bar(&view.a, b, a))
        .collect();
    let lay_b: Vec<BarLayout> = view
        .b
        .bars
        .iter()
        .zip(&accs_b)
        .map(|(b, a)| layout_bar(&view.b, b, a))
        .collect();
    let na = view.a.bars.len().max(1);
    let nb = view.b.bars.len().max(1);
    // Bars per system: the most whose natural width fits, on the side with more bars.
    let avail = staff_w - prefix_w;
    let fits = |k: usize| {
        let systems = na.max(nb).div_ceil(k);
        let ka = na.div_ceil(systems);
        let kb = nb.div_ceil(systems);
        let widest = |lay: &[BarLayout], per: usize| {
            lay.chunks(per.max(1))
                .map(|c| c.iter().map(|l| l.width).sum::<f32>())
                .fold(0.0f32, f32::max)
        };
        // A little compression is allowed before a bar moves to the next system.
        widest(&lay_a, ka) <= avail * 1.15 && widest(&lay_b, kb) <= avail * 1.15
    };
    let mut per = na.max(nb).min(6);
    while per > 1 && !fits(per) {
        per -= 1;
    }
    // Balance the systems: 8 bars at most 3 a system are 3 + 3 + 2, at 4 they are 4 + 4.
    let systems = na.max(nb).div_ceil(per.max(1));
    let ka = na.div_ceil(systems);
    let kb = nb.div_ceil(systems);
    let (above_a, below_a) = extents(&view.a);
    let (above_b, below_b) = extents(&view.b);
    let text_rows = 3.0 * 3.3 + 1.0;
    let chord_row = 3.5;
    let h_a = chord_row + above_a + 4.0 * SP + below_a + text_rows;
    let h_b = chord_row + above_b + 4.0 * SP + below_b + text_rows;
    for sys in 0..systems {
        let bars_a = sys * ka..((sys + 1) * ka).min(na);
        let bars_b = sys * kb..((sys + 1) * kb).min(nb);
        flow.ensure(h_a + h_b + 1.0);
        let y_top = flow.y;
        // Bracket joining the two staves.
        let a_y0 = y_top + chord_row + above_a + 4.0 * SP;
        let b_y0 = a_y0 + below_a + text_rows + chord_row + above_b + 4.0 * SP;
        {
            let page = flow.page();
            page.rect(
                left + LABEL_W - 2.2,
                a_y0 - 4.0 * SP,
                0.7,
                b_y0 - a_y0 + 4.0 * SP,
                Some(palette::NAVY),
                None,
            );
        }
        draw_system(
            flow,
            &view.a,
            "A",
            &lay_a[bars_a.clone()],
            &accs_a[bars_a.clone()],
            bars_a.start,
            a_y0,
            staff_x,
            staff_w,
            prefix_w,
            sys == 0,
            below_a,
            sys + 1 == systems,
        );
        draw_system(
            flow,
            &view.b,
            "B",
            &lay_b[bars_b.clone()],
            &accs_b[bars_b.clone()],
            bars_b.start,
            b_y0,
            staff_x,
            staff_w,
            prefix_w,
            sys == 0,
            below_b,
            sys + 1 == systems,
        );
        flow.y = b_y0 + below_b + text_rows + 3.0;
    }
}

#[allow(clippy::too_many_arguments)]
fn draw_system(
    flow: &mut Flow,
    view: &StaffView,
    tag: &str,
    lays: &[BarLayout],
    accs: &[Vec<Option<i32>>],
    first_bar: usize,
    y0: f32,
    x0: f32,
    width: f32,
    prefix_w: f32,
    first_system: bool,
    below: f32,
    last_system: bool,
) {
    let page = flow.page();
    // Label: the work's letter in a navy tab.
    let tab_h = 4.0 * SP;
    page.round_rect(
        x0 - LABEL_W,
        y0 - tab_h,
        5.2,
        tab_h,
        0.8,
        Some(palette::NAVY),
        None,
    );
    page.text_centered(
        x0 - LABEL_W + 2.6,
        y0 - tab_h / 2.0 + 1.5,
        tag,
        Face::SansBold,
        11.0,
        Rgbf(1.0, 1.0, 1.0),
    );
    let mut st = Staff {
        page,
        y0,
        clef: view.clef,
    };
    st.lines(x0, x0 + width);
    st.clef_glyph(x0 + 0.4 * SP);
    // Key signature.
    let mut x = x0 + 4.2 * SP;
    for (dn, alter) in key_positions(view.clef, view.key_fifths) {
        st.accidental(x + 0.5 * SP, dn, alter, palette::INK);
        x += 1.1 * SP;
    }
    x += 0.8 * SP;
    let time_x = x;
    let music_x = x0 + prefix_w;
    let natural: f32 = lays.iter().map(|l| l.width).sum();
    let avail = x0 + width - music_x;
    let scale = if natural > 0.0 { avail / natural } else { 1.0 };
    let mut bx = music_x;
    for (k, (lay, acc)) in lays.iter().zip(accs).enumerate() {
        let Some(bar) = view.bars.get(first_bar + k) else {
            continue;
        };
        let bw = lay.width * scale;
        if bar.show_time && (k == 0 || first_system) {
            let tx = if k == 0 { time_x } else { bx + 0.3 * SP };
            time_signature(st.page, tx + 1.0 * SP, y0, bar.time);
        }
        // Bar number above the bar's start.
        let label = if bar.pickup {
            format!("{} (pickup)", bar.label)
        } else {
            bar.label.clone()
        };
        st.page.text(
            bx + 0.3,
            y0 - 4.0 * SP - 1.2,
            &label,
            Face::SansItalic,
            6.5,
            palette::GREY,
        );
        draw_bar(&mut st, view, bar, lay, acc, bx, scale, y0, below);
        bx += bw;
        let last = k + 1 == lays.len();
        st.barline(bx, last && last_system);
    }
    // Row labels under the staff.
    let rows_y = y0 + below;
    let page = flow.page();
    for (r, name) in ["lyric", "degree", "interval"].iter().enumerate() {
        let y = rows_y + 2.6 + r as f32 * 3.3;
        page.text(x0 + 0.3, y, name, Face::SansItalic, 6.0, palette::GREY);
    }
    let _ = tag;
}

fn time_signature(page: &mut Page, x: f32, y0: f32, time: (u32, u32)) {
    // Digits two spaces tall: Times Bold cap height ≈ 0.66 em.
    let size = 2.0 * SP / 0.66 / super::text::MM_PER_PT;
    page.text_centered(
        x,
        y0 - 2.0 * SP - 0.05,
        &time.0.to_string(),
        Face::SerifBold,
        size,
        palette::INK,
    );
    page.text_centered(
        x,
        y0 - 0.05,
        &time.1.to_string(),
        Face::SerifBold,
        size,
        palette::INK,
    );
}

/// Stem direction for a note at diatonic number `dn`: down from the middle line up.
fn stem_down(clef: Clef, dn: i32) -> bool {
    dn >= bottom_line(clef) + 4
}

/// Beat length in ticks for beaming.
fn beam_unit(time: (u32, u32), res: i64) -> i64 {
    let (n, d) = (i64::from(time.0), i64::from(time.1.max(1)));
    let unit = 4 * res / d;
    if d >= 8 && n % 3 == 0 && n > 3 {
        3 * unit
    } else if d == 2 {
        2 * unit
    } else {
        unit.max(1)
    }
}

#[allow(clippy::too_many_arguments)]
fn draw_bar(
    st: &mut Staff<'_>,
    view: &StaffView,
    bar: &ViewBar,
    lay: &BarLayout,
    acc: &[Option<i32>],
    bx: f32,
    scale: f32,
    y0: f32,
    below: f32,
) {
    let res = view.resolution;
    let xs: Vec<f32> = lay.xs.iter().map(|x| bx + x * scale).collect();
    // Chord symbols above.
    let chord_y = st.top() - extents(view).0 - 0.6;
    for (t, text) in &bar.chords {
        let x = bar
            .events
            .iter()
            .zip(&xs)
            .find(|(e, _)| e.start >= *t)
            .map_or(bx + 1.0, |(_, x)| *x - 0.6 * SP);
        st.page
            .text(x, chord_y, text, Face::SansBold, 7.5, palette::INK);
    }
    // Beam groups: runs of eighths or shorter inside one beat unit.
    let unit = beam_unit(bar.time, res);
    let mut groups: Vec<Vec<usize>> = Vec::new();
    let mut current: Vec<usize> = Vec::new();
    let mut current_beat = -1;
    for (k, ev) in bar.events.iter().enumerate() {
        let beamable = ev.note.is_some() && ev.value.log >= 3;
        let beat = ev.start / unit;
        let ends_in_beat = (ev.start + ev.ticks - 1) / unit == beat;
        if beamable && ends_in_beat && (current.is_empty() || beat == current_beat) {
            current.push(k);
            current_beat = beat;
        } else {
            if current.len() > 1 {
                groups.push(std::mem::take(&mut current));
            }
            current.clear();
            if beamable && ends_in_beat {
                current.push(k);
                current_beat = beat;
            }
        }
    }
    if current.len() > 1 {
        groups.push(current);
    }
    let in_group = |k: usize| groups.iter().position(|g| g.contains(&k));

    let lyric_y = y0 + below + 2.6;
    let degree_y = lyric_y + 3.3;
    let interval_y = degree_y + 3.3;
    let mut heads: Vec<Option<(f32, f32, bool)>> = vec![None; bar.events.len()];
    // First pass: noteheads, accidentals, ledger lines, marks, text rows.
    for (k, ev) in bar.events.iter().enumerate() {
        let x = xs[k];
        let Some(n) = ev.note.and_then(|i| view.notes.get(i)) else {
            let ink = palette::INK;
            if ev.value.log == 0 && bar.events.len() == 1 {
                let mid = bx + lay.width * scale / 2.0;
                rest_glyph(st.page, mid, y0, 0, ink);
            } else {
                rest_glyph(st.page, x, y0, ev.value.log, ink);
                rest_dots(st.page, x, y0, ev.value.dots, ink);
            }
            continue;
        };
        let ink = mark_ink(n.mark);
        let dn = diatonic(n.spelling.step, n.spelling.octave);
        let y = st.y(dn);
        // Mark: a tinted band behind matched notes, a ring round notes that differ.
        match n.mark {
            Mark::Matched => {
                st.page.round_rect(
                    x - 1.05 * SP,
                    y - 0.85 * SP,
                    2.1 * SP,
                    1.7 * SP,
                    0.5,
                    Some(palette::NAVY_TINT),
                    None,
                );
            }
            Mark::Differs => {
                st.page.ellipse(
                    x,
                    y,
                    1.25 * SP,
                    1.0 * SP,
                    0.0,
                    Some(palette::VERMILION_TINT),
                    Some((palette::VERMILION, 0.25)),
                );
            }
            Mark::Outside => {}
        }
        st.ledger(x, dn, palette::INK);
        if let Some(alter) = acc.get(k).copied().flatten() {
            st.accidental(x - 1.55 * SP, dn, alter, ink);
        }
        notehead(st.page, x, y, ev.value.log, ink, 1.0);
        // Dots in the space.
        let dot_y = if dn % 2 == bottom_line(view.clef) % 2 {
            y - SP / 2.0
        } else {
            y
        };
        for d in 0..ev.value.dots {
            st.page.ellipse(
                x + 1.05 * SP + d as f32 * 0.6 * SP,
                dot_y,
                0.17 * SP,
                0.17 * SP,
                0.0,
                Some(ink),
                None,
            );
        }
        // Grace notes before it.
        for g in bar.graces.iter().filter(|g| g.start == ev.start) {
            let gd = diatonic(g.spelling.step, g.spelling.octave);
            let gy = st.y(gd);
            let gx = x
                - 2.4 * SP
                - if acc.get(k).copied().flatten().is_some() {
                    1.3 * SP
                } else {
                    0.0
                };
            st.ledger(gx, gd, palette::GREY);
            notehead(st.page, gx, gy, 3, palette::GREY, 0.65);
            st.page.line(
                gx + 0.4 * SP,
                gy,
                gx + 0.4 * SP,
                gy - 2.4 * SP,
                0.12,
                palette::GREY,
            );
            st.page.line(
                gx + 0.4 * SP,
                gy - 2.4 * SP,
                gx + 1.0 * SP,
                gy - 1.6 * SP,
                0.12,
                palette::GREY,
            );
            st.page.line(
                gx - 0.2 * SP,
                gy - 0.6 * SP,
                gx + 1.0 * SP,
                gy - 1.8 * SP,
                0.12,
                palette::GREY,
            );
        }
        let down = match in_group(k) {
            Some(g) => {
                let group = &groups[g];
                let mean: f32 = group
                    .iter()
                    .filter_map(|&j| bar.events[j].note.and_then(|i| view.notes.get(i)))
                    .map(|m| diatonic(m.spelling.step, m.spelling.octave) as f32)
                    .sum::<f32>()
                    / group.len().max(1) as f32;
                mean >= (bottom_line(view.clef) + 4) as f32
            }
            None => stem_down(view.clef, dn),
        };
        heads[k] = Some((x, y, down));
        // Ties to the next piece.
        if ev.tie_start {
            let next_x = xs
                .get(k + 1)
                .copied()
                .unwrap_or(bx + lay.width * scale + 1.2 * SP);
            tie(st.page, x + 0.8 * SP, next_x - 0.8 * SP, y, !down, ink);
        }
        if ev.tie_stop && k == 0 {
            tie(st.page, bx - 0.6 * SP, x - 0.8 * SP, y, !down, ink);
        }
        if !ev.tie_stop {
            if let Some(l) = &n.lyric {
                st.page
                    .text_centered(x, lyric_y, l, Face::SerifItalic, 7.2, palette::INK);
            }
            let t_ink = if n.mark == Mark::Outside {
                palette::LIGHT_GREY
            } else {
                ink
            };
            st.page
                .text_centered(x, degree_y, &n.degree, Face::SansBold, 6.8, t_ink);
            if let Some(iv) = n.interval {
                let text = match iv.cmp(&0) {
                    std::cmp::Ordering::Greater => format!("+{iv}"),
                    std::cmp::Ordering::Less => format!("–{}", -iv),
                    std::cmp::Ordering::Equal => "0".to_string(),
                };
                st.page.text_centered(
                    x - 0.35 * SP,
                    interval_y,
                    &text,
                    Face::Sans,
                    6.3,
                    palette::GREY,
                );
            }
        }
    }
    // Second pass: stems, flags and beams.
    let stem_len = 3.4 * SP;
    let stem_x = |x: f32, down: bool| if down { x - 0.6 * SP } else { x + 0.6 * SP };
    for (k, ev) in bar.events.iter().enumerate() {
        let Some((x, y, down)) = heads[k] else {
            continue;
        };
        if ev.value.log == 0 || in_group(k).is_some() {
            continue;
        }
        let ink = ev
            .note
            .and_then(|i| view.notes.get(i))
            .map_or(palette::INK, |n| mark_ink(n.mark));
        let sx = stem_x(x, down);
        let extra = if ev.value.log >= 5 { 0.8 * SP } else { 0.0 };
        let mut end = if down {
            y + stem_len + extra
        } else {
            y - stem_len - extra
        };
        // Stems reach the middle line from far-off notes.
        let mid = y0 - 2.0 * SP;
        if down && end < mid {
            end = mid;
        }
        if !down && end > mid {
            end = mid;
        }
        st.page.line(sx, y, sx, end, 0.2, ink);
        for f in 0..ev.value.log.saturating_sub(2) {
            flag(
                st.page,
                sx,
                end + if down {
                    -(f as f32) * 0.8 * SP
                } else {
                    f as f32 * 0.8 * SP
                },
                down,
                ink,
            );
        }
        if ev.value.triplet {
            let ty = if down { y - 1.6 * SP } else { y + 2.3 * SP };
            st.page
                .text_centered(x, ty, "3", Face::SerifItalic, 7.0, palette::GREY);
        }
    }
    for group in &groups {
        let members: Vec<(usize, f32, f32)> = group
            .iter()
            .filter_map(|&k| heads[k].map(|(x, y, _)| (k, x, y)))
            .collect();
        let (Some(first), Some(last)) = (members.first(), members.last()) else {
            continue;
        };
        let down = heads[first.0].is_some_and(|h| h.2);
        let sx0 = stem_x(first.1, down);
        let sx1 = stem_x(last.1, down);
        // Beam line: follows first and last notes, slope capped, clear of every head.
        let slope_raw = if (sx1 - sx0).abs() > 0.1 {
            (last.2 - first.2) / (sx1 - sx0)
        } else {
            0.0
        };
        let slope = slope_raw.clamp(-0.18, 0.18);
        let base = |x: f32| slope * (x - sx0);
        let offset = members
            .iter()
            .map(|&(_, x, y)| {
                let sx = stem_x(x, down);
                if down {
                    y + stem_len - base(sx)
                } else {
                    y - stem_len - base(sx)
                }
            })
            .fold(if down { f32::MIN } else { f32::MAX }, |acc, v| {
                if down {
                    acc.max(v)
                } else {
                    acc.min(v)
                }
            });
        let beam_y = |x: f32| offset + base(x);
        let group_ink = members
            .iter()
            .map(|&(k, _, _)| {
                bar.events[k]
                    .note
                    .and_then(|i| view.notes.get(i))
                    .map_or(Mark::Outside, |n| n.mark)
            })
            .fold(None, |acc: Option<Mark>, m| match acc {
                None => Some(m),
                Some(a) if a == m => Some(a),
                Some(_) => Some(Mark::Outside),
            });
        let beam_ink = match group_ink {
            Some(Mark::Matched) => palette::NAVY,
            Some(Mark::Differs) => palette::VERMILION,
            _ => palette::INK,
        };
        for &(k, x, y) in &members {
            let ink = bar.events[k]
                .note
                .and_then(|i| view.notes.get(i))
                .map_or(palette::INK, |n| mark_ink(n.mark));
            let sx = stem_x(x, down);
            st.page.line(sx, y, sx, beam_y(sx), 0.2, ink);
        }
        let thick = 0.48 * SP;
        let beam = |page: &mut Page, xa: f32, xb: f32, level: u8| {
            let dy = level as f32 * 0.8 * SP * if down { -1.0 } else { 1.0 };
            let (ya, yb) = (beam_y(xa) + dy, beam_y(xb) + dy);
            let t = if down { -thick } else { thick };
            page.shape(
                &[
                    (xa, ya, false),
                    (xb, yb, false),
                    (xb, yb + t, false),
                    (xa, ya + t, false),
                ],
                Some(beam_ink),
                None,
            );
        };
        beam(st.page, sx0 - 0.08, sx1 + 0.08, 0);
        // Secondary beams between neighbours that are both 16ths or shorter; stubs otherwise.
        for level in 1..3u8 {
            let need = 3 + level;
            for (m, &(k, x, _)) in members.iter().enumerate() {
                if bar.events[k].value.log < need {
                    continue;
                }
                let sx = stem_x(x, down);
                let next = members
                    .get(m + 1)
                    .filter(|&&(j, _, _)| bar.events[j].value.log >= need);
                let prev = m
                    .checked_sub(1)
                    .and_then(|p| members.get(p))
                    .filter(|&&(j, _, _)| bar.events[j].value.log >= need);
                if let Some(&(_, nx, _)) = next {
                    beam(st.page, sx, stem_x(nx, down), level);
                } else if prev.is_none() {
                    let stub = 1.1 * SP;
                    if m + 1 == members.len() {
                        beam(st.page, sx - stub, sx, level);
                    } else {
                        beam(st.page, sx, sx + stub, level);
                    }
                }
            }
        }
        if members.iter().any(|&(k, _, _)| bar.events[k].value.triplet) {
            let mx = (sx0 + sx1) / 2.0;
            let y = beam_y(mx) + if down { 2.4 * SP } else { -1.2 * SP };
            st.page
                .text_centered(mx, y, "3", Face::SerifItalic, 7.0, palette::GREY);
        }
    }
}

fn rest_dots(page: &mut Page, x: f32, y0: f32, dots: u8, ink: Rgbf) {
    for d in 0..dots {
        page.ellipse(
            x + 1.0 * SP + d as f32 * 0.6 * SP,
            y0 - 2.5 * SP,
            0.17 * SP,
            0.17 * SP,
            0.0,
            Some(ink),
            None,
        );
    }
}

fn flag(page: &mut Page, sx: f32, end: f32, down: bool, ink: Rgbf) {
    let s = SP;
    let dir = if down { -1.0 } else { 1.0 };
    page.shape(
        &[
            (sx, end, false),
            (sx + 0.2 * s, end + dir * 1.0 * s, true),
            (sx + 1.5 * s, end + dir * 1.4 * s, true),
            (sx + 1.0 * s, end + dir * 3.0 * s, false),
            (sx + 1.2 * s, end + dir * 1.8 * s, true),
            (sx + 0.4 * s, end + dir * 1.5 * s, true),
            (sx, end + dir * 1.3 * s, false),
        ],
        Some(ink),
        None,
    );
}

fn tie(page: &mut Page, x1: f32, x2: f32, y: f32, below: bool, ink: Rgbf) {
    if x2 <= x1 {
        return;
    }
    let dir = if below { 1.0 } else { -1.0 };
    let y = y + dir * 0.7 * SP;
    let h = (0.25 * (x2 - x1)).clamp(0.6 * SP, 1.1 * SP);
    let k = (x2 - x1) * 0.25;
    page.shape(
        &[
            (x1, y, false),
            (x1 + k, y + dir * h, true),
            (x2 - k, y + dir * h, true),
            (x2, y, false),
            (x2 - k, y + dir * (h - 0.3), true),
            (x1 + k, y + dir * (h - 0.3), true),
            (x1, y, false),
        ],
        Some(ink),
        None,
    );
}

/// The piano roll: time across, pitch up, one lane per work, with the same marks as the
/// staves; bar lines and labels from each work's own bars.
pub fn draw_roll(flow: &mut Flow, view: &PassageView) {
    let left = flow.geo.left() + LABEL_W;
    let width = flow.geo.text_width() - LABEL_W;
    for (tag, side) in [("A", &view.a), ("B", &view.b)] {
        let pitches: Vec<f64> = side
            .notes
            .iter()
            .map(|n| n.original_pitch + f64::from(side.shift))
            .collect();
        let lo = pitches.iter().copied().fold(f64::MAX, f64::min).floor() as i32 - 1;
        let hi = pitches.iter().copied().fold(f64::MIN, f64::max).ceil() as i32 + 1;
        let (lo, hi) = if lo > hi { (60, 72) } else { (lo, hi) };
        let rows = (hi - lo + 1).max(1) as f32;
        let row_h = (42.0 / rows).clamp(0.9, 2.2);
        let h = rows * row_h;
        flow.ensure(h + 14.0);
        let y_top = flow.y + 5.0;
        let res = side.resolution as f64;
        let total: i64 = side.bars.iter().map(|b| b.length).sum();
        let x_of = |t: i64| left + width * (t as f32 / total.max(1) as f32);
        let page = flow.page();
        page.round_rect(
            left - LABEL_W,
            y_top,
            5.2,
            h,
            0.8,
            Some(palette::NAVY),
            None,
        );
        page.text_centered(
            left - LABEL_W + 2.6,
            y_top + h / 2.0 + 1.5,
            tag,
            Face::SansBold,
            11.0,
            Rgbf(1.0, 1.0, 1.0),
        );
        page.rect(
            left,
            y_top,
            width,
            h,
            Some(palette::PANEL),
            Some((palette::RULE, 0.2)),
        );
        for p in lo..=hi {
            if p.rem_euclid(12) == 0 {
                let y = y_top + (hi - p) as f32 * row_h + row_h / 2.0;
                page.line(left, y, left + width, y, 0.1, palette::RULE);
                page.text_right(
                    left - 0.8,
                    y + 1.0,
                    &crate::theory::pitch_name(f64::from(p)),
                    Face::Sans,
                    5.5,
                    palette::GREY,
                );
            }
        }
        let mut t0 = 0i64;
        for bar in &side.bars {
            let x = x_of(t0);
            page.line(x, y_top, x, y_top + h, 0.2, palette::GREY);
            page.text(
                x + 0.5,
                y_top - 1.0,
                &bar.label,
                Face::SansItalic,
                6.0,
                palette::GREY,
            );
            for ev in &bar.events {
                let Some(n) = ev.note.and_then(|i| side.notes.get(i)) else {
                    continue;
                };
                let p = n.original_pitch + f64::from(side.shift);
                let y = y_top + (f64::from(hi) - p) as f32 * row_h;
                let xa = x_of(t0 + ev.start);
                let xb = x_of(t0 + ev.start + ev.ticks);
                let (fill, stroke) = match n.mark {
                    Mark::Matched => (palette::NAVY, None),
                    Mark::Differs => (palette::VERMILION_TINT, Some((palette::VERMILION, 0.35))),
                    Mark::Outside => (palette::LIGHT_GREY, None),
                };
                page.rect(
                    xa + 0.15,
                    y + 0.1,
                    (xb - xa - 0.3).max(0.4),
                    row_h - 0.2,
                    Some(fill),
                    stroke,
                );
            }
            t0 += bar.length;
        }
        let _ = res;
        flow.y = y_top + h + 6.0;
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
        assert_eq!(key_positions(Clef::Treble, 2), vec![(38, 1), (35, 1)]);
    }

    #[test]
    fn compound_meters_beam_in_dotted_quarters() {
        assert_eq!(beam_unit((6, 8), 480), 720);
        assert_eq!(beam_unit((4, 4), 480), 480);
        assert_eq!(beam_unit((3, 8), 480), 240);
    }
}

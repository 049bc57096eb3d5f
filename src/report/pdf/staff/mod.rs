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
//!
//! This module draws the systems: the bracket, each staff's tab, lines, clef, key and time
//! signatures, bar numbers, bar lines and row labels. The rest is split by purpose: `spacing`
//! (where events and bars go), `bar` (one bar's notes, rests and text rows), `beams` (stems,
//! flags and beams), `glyphs` (the shapes) and `roll` (the piano roll).

mod bar;
mod beams;
mod glyphs;
mod roll;
mod spacing;

pub use roll::draw_roll;

use super::layout::{palette, Flow, Page, Rgbf};
use super::text::Face;
use crate::report::notation::{Clef, Mark, PassageView, StaffView, ViewBar};
use crate::theory::Step;
use bar::draw_bar;
use glyphs::{key_positions, time_signature, Staff};
use spacing::{
    layout_bars, prefix_width, BarLayout, PlacedBar, Room, SystemPlan, CHORD_ROW, TEXT_ROWS,
};

/// Staff space, mm.
const SP: f32 = 1.8;
/// Width of the label column left of the staves, mm.
const LABEL_W: f32 = 9.0;
/// Width of a time signature at the head of a system, mm.
const TIME_W: f32 = 2.4 * SP;

/// Ink of a note by its mark.
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

/// Draws a passage: systems of both staves until every bar is shown.
pub fn draw_passage(flow: &mut Flow, view: &PassageView) {
    if view.a.unstable_pitch || view.b.unstable_pitch {
        draw_roll(flow, view);
        return;
    }
    let left = flow.geo.left();
    let width = flow.geo.text_width();
    let staff_w = width - LABEL_W;
    let prefix_w = prefix_width(&view.a).max(prefix_width(&view.b)) + TIME_W;
    let lay_a = layout_bars(&view.a);
    let lay_b = layout_bars(&view.b);
    let plan = SystemPlan::new(&lay_a, &lay_b, staff_w - prefix_w);
    let (room_a, room_b) = (Room::of(&view.a), Room::of(&view.b));
    for sys in 0..plan.systems {
        let (bars_a, bars_b) = plan.bars(sys);
        flow.ensure(room_a.height() + room_b.height() + 1.0);
        let y_top = flow.y;
        let a_y0 = y_top + CHORD_ROW + room_a.above + 4.0 * SP;
        let b_y0 = a_y0 + room_a.below + TEXT_ROWS + CHORD_ROW + room_b.above + 4.0 * SP;
        let page = flow.page();
        // Bracket joining the two staves.
        page.rect(
            left + LABEL_W - 2.2,
            a_y0 - 4.0 * SP,
            0.7,
            b_y0 - a_y0 + 4.0 * SP,
            Some(palette::NAVY),
            None,
        );
        let frame = SystemFrame {
            x0: left + LABEL_W,
            width: staff_w,
            prefix_w,
            first: sys == 0,
            last: sys + 1 == plan.systems,
        };
        let side_a = SystemSide {
            view: &view.a,
            tag: "A",
            lays: &lay_a[bars_a.clone()],
            first_bar: bars_a.start,
            y0: a_y0,
            room: room_a,
        };
        draw_system(page, &frame, &side_a);
        let side_b = SystemSide {
            view: &view.b,
            tag: "B",
            lays: &lay_b[bars_b.clone()],
            first_bar: bars_b.start,
            y0: b_y0,
            room: room_b,
        };
        draw_system(page, &frame, &side_b);
        flow.y = b_y0 + room_b.below + TEXT_ROWS + 3.0;
    }
}

/// Where the staves of a system go across the page.
struct SystemFrame {
    /// Left edge of the staves, mm.
    x0: f32,
    /// Width of the staves, mm.
    width: f32,
    /// Width of clef, key and time signature before the first bar, mm.
    prefix_w: f32,
    /// The first system of the passage.
    first: bool,
    /// The last system of the passage.
    last: bool,
}

/// One work's staff on a system.
struct SystemSide<'a> {
    /// The work's notation.
    view: &'a StaffView,
    /// The work's letter.
    tag: &'a str,
    /// Layouts of the bars on this system.
    lays: &'a [BarLayout],
    /// Index of the first of them in the view.
    first_bar: usize,
    /// The staff's bottom line, mm.
    y0: f32,
    /// The staff's room above and below.
    room: Room,
}

/// One staff of a system: tab, lines, clef, key signature, then every bar with its time
/// signature, number and bar line, stretched to fill the width; the row labels under it.
fn draw_system(page: &mut Page, frame: &SystemFrame, side: &SystemSide<'_>) {
    let (x0, y0) = (frame.x0, side.y0);
    draw_tab(page, x0, y0, side.tag);
    let mut st = Staff {
        page,
        y0,
        clef: side.view.clef,
    };
    st.lines(x0, x0 + frame.width);
    st.clef_glyph(x0 + 0.4 * SP);
    let time_x = draw_key_signature(&mut st, x0, side.view.key_fifths);
    let music_x = x0 + frame.prefix_w;
    let natural: f32 = side.lays.iter().map(|l| l.width).sum();
    let avail = x0 + frame.width - music_x;
    let scale = if natural > 0.0 { avail / natural } else { 1.0 };
    let mut bx = music_x;
    for (k, lay) in side.lays.iter().enumerate() {
        let Some(bar) = side.view.bars.get(side.first_bar + k) else {
            continue;
        };
        if bar.show_time && (k == 0 || frame.first) {
            let tx = if k == 0 { time_x } else { bx + 0.3 * SP };
            time_signature(st.page, tx + 1.0 * SP, y0, bar.time);
        }
        draw_bar_number(st.page, bx, y0, bar);
        let placed = PlacedBar::new(side.view, bar, lay, bx, scale, side.room);
        draw_bar(&mut st, &placed);
        bx += placed.width();
        let last = k + 1 == side.lays.len();
        st.barline(bx, last && frame.last);
    }
    draw_row_labels(st.page, x0, y0 + side.room.below);
}

/// The work's letter in a navy tab left of the staff.
fn draw_tab(page: &mut Page, x0: f32, y0: f32, tag: &str) {
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
}

/// The key signature after the clef of a staff starting at `x0`; returns the x of the time
/// signature.
fn draw_key_signature(st: &mut Staff<'_>, x0: f32, fifths: i32) -> f32 {
    let mut x = x0 + 4.2 * SP;
    for (dn, alter) in key_positions(st.clef, fifths) {
        st.accidental(x + 0.5 * SP, dn, alter, palette::INK);
        x += 1.1 * SP;
    }
    x += 0.8 * SP;
    x
}

/// The bar's number above its start (with "(pickup)" for an incomplete opening bar).
fn draw_bar_number(page: &mut Page, bx: f32, y0: f32, bar: &ViewBar) {
    let label = if bar.pickup {
        format!("{} (pickup)", bar.label)
    } else {
        bar.label.clone()
    };
    page.text(
        bx + 0.3,
        y0 - 4.0 * SP - 1.2,
        &label,
        Face::SansItalic,
        6.5,
        palette::GREY,
    );
}

/// Names of the text rows under a staff, at its left edge `x0`.
fn draw_row_labels(page: &mut Page, x0: f32, rows_y: f32) {
    for (r, name) in ["lyric", "degree", "interval"].iter().enumerate() {
        let y = rows_y + 2.6 + r as f32 * 3.3;
        page.text(x0 + 0.3, y, name, Face::SansItalic, 6.0, palette::GREY);
    }
}

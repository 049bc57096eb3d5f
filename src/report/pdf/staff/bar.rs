//! One bar of a staff: chord symbols above it; for each event its rest, or the note's mark
//! (tinted band or ring), ledger lines, accidental, notehead, dots, grace notes and ties; the
//! lyric, degree and interval rows under the staff; then stems, flags and beams.

use super::beams::{beam_groups, draw_beam_group, draw_stems, stem_direction, Head};
use super::glyphs::{notehead, rest_dots, rest_glyph, tie, Staff};
use super::spacing::PlacedBar;
use super::{diatonic, mark_ink, SP};
use crate::report::notation::{Event, Mark, ViewNote};
use crate::report::pdf::layout::{palette, Page, Rgbf};
use crate::report::pdf::text::Face;

/// Baselines of the text rows under a staff.
struct TextRows {
    lyric: f32,
    degree: f32,
    interval: f32,
}

impl TextRows {
    /// The rows under a staff whose bottom line is at `y0`, `below` mm above the first row.
    fn under(y0: f32, below: f32) -> TextRows {
        let lyric = y0 + below + 2.6;
        let degree = lyric + 3.3;
        let interval = degree + 3.3;
        TextRows {
            lyric,
            degree,
            interval,
        }
    }
}

/// Draws one bar: chord symbols, then every event, then stems and beams.
pub(super) fn draw_bar(st: &mut Staff<'_>, pb: &PlacedBar<'_>) {
    draw_chords(st, pb);
    let groups = beam_groups(pb.bar, pb.view.resolution);
    let rows = TextRows::under(st.y0, pb.room.below);
    let mut heads: Vec<Option<Head>> = Vec::with_capacity(pb.bar.events.len());
    for k in 0..pb.bar.events.len() {
        heads.push(draw_event(st, pb, &groups, k, &rows));
    }
    draw_stems(st, pb, &heads, &groups);
    for group in &groups {
        draw_beam_group(st, pb, &heads, group);
    }
}

/// Chord symbols in the row above the staff, at the first event at or after each.
fn draw_chords(st: &mut Staff<'_>, pb: &PlacedBar<'_>) {
    let chord_y = st.top() - pb.room.above - 0.6;
    for (t, text) in &pb.bar.chords {
        let x = pb
            .bar
            .events
            .iter()
            .zip(&pb.xs)
            .find(|(e, _)| e.start >= *t)
            .map_or(pb.bx + 1.0, |(_, x)| *x - 0.6 * SP);
        st.page
            .text(x, chord_y, text, Face::SansBold, 7.5, palette::INK);
    }
}

/// Event `k`: a rest, or a note with everything that sits on it but its stem. Returns the
/// note's head.
fn draw_event(
    st: &mut Staff<'_>,
    pb: &PlacedBar<'_>,
    groups: &[Vec<usize>],
    k: usize,
    rows: &TextRows,
) -> Option<Head> {
    let ev = &pb.bar.events[k];
    let x = pb.xs[k];
    let Some(n) = ev.note.and_then(|i| pb.view.notes.get(i)) else {
        draw_rest(st, pb, ev, x);
        return None;
    };
    let ink = mark_ink(n.mark);
    let dn = diatonic(n.spelling.step, n.spelling.octave);
    let y = st.y(dn);
    draw_mark(st.page, x, y, n.mark);
    st.ledger(x, dn, palette::INK);
    let accidental = pb.lay.accidentals.get(k).copied().flatten();
    if let Some(alter) = accidental {
        st.accidental(x - 1.55 * SP, dn, alter, ink);
    }
    notehead(st.page, x, y, ev.value.log, ink, 1.0);
    st.note_dots(x, dn, ev.value.dots, ink);
    // Grace notes before it, left of its accidental.
    for g in pb.bar.graces.iter().filter(|g| g.start == ev.start) {
        let gx = x - 2.4 * SP - if accidental.is_some() { 1.3 * SP } else { 0.0 };
        st.grace(gx, diatonic(g.spelling.step, g.spelling.octave));
    }
    let down = stem_direction(pb.view, pb.bar, groups, k, dn);
    let head = Head { x, y, down };
    draw_ties(st.page, pb, k, head, ink);
    if !ev.tie_stop {
        draw_text_rows(st.page, n, x, rows, ink);
    }
    Some(head)
}

/// A rest; a whole-bar rest alone in its bar is centred in it.
fn draw_rest(st: &mut Staff<'_>, pb: &PlacedBar<'_>, ev: &Event, x: f32) {
    let ink = palette::INK;
    if ev.value.log == 0 && pb.bar.events.len() == 1 {
        let mid = pb.bx + pb.width() / 2.0;
        rest_glyph(st.page, mid, st.y0, 0, ink);
    } else {
        rest_glyph(st.page, x, st.y0, ev.value.log, ink);
        rest_dots(st.page, x, st.y0, ev.value.dots, ink);
    }
}

/// The mark behind a note: a tinted band behind matched notes, a ring round notes that differ.
fn draw_mark(page: &mut Page, x: f32, y: f32, mark: Mark) {
    match mark {
        Mark::Matched => {
            page.round_rect(
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
            page.ellipse(
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
}

/// Ties of event `k`: to the next piece (or past the bar line when it is the last), and from
/// the previous bar when the bar opens with a continuation.
fn draw_ties(page: &mut Page, pb: &PlacedBar<'_>, k: usize, head: Head, ink: Rgbf) {
    let ev = &pb.bar.events[k];
    let Head { x, y, down } = head;
    if ev.tie_start {
        let next_x = pb
            .xs
            .get(k + 1)
            .copied()
            .unwrap_or(pb.bx + pb.width() + 1.2 * SP);
        tie(page, x + 0.8 * SP, next_x - 0.8 * SP, y, !down, ink);
    }
    if ev.tie_stop && k == 0 {
        tie(page, pb.bx - 0.6 * SP, x - 0.8 * SP, y, !down, ink);
    }
}

/// The lyric, scale degree and interval of note `n` at `x`, in the rows under the staff.
fn draw_text_rows(page: &mut Page, n: &ViewNote, x: f32, rows: &TextRows, ink: Rgbf) {
    if let Some(l) = &n.lyric {
        page.text_centered(x, rows.lyric, l, Face::SerifItalic, 7.2, palette::INK);
    }
    let t_ink = if n.mark == Mark::Outside {
        palette::LIGHT_GREY
    } else {
        ink
    };
    page.text_centered(x, rows.degree, &n.degree, Face::SansBold, 6.8, t_ink);
    if let Some(iv) = n.interval {
        let text = match iv.cmp(&0) {
            std::cmp::Ordering::Greater => format!("+{iv}"),
            std::cmp::Ordering::Less => format!("–{}", -iv),
            std::cmp::Ordering::Equal => "0".to_string(),
        };
        page.text_centered(
            x - 0.35 * SP,
            rows.interval,
            &text,
            Face::Sans,
            6.3,
            palette::GREY,
        );
    }
}

//! The piano roll, drawn instead of staves when a side's pitches are too unstable for staff
//! notation (audio): time across, pitch up, one lane per work, with the same marks as the
//! staves, octave lines labelled by pitch, and bar lines and labels from each work's own bars.

use super::LABEL_W;
use crate::report::notation::{Event, Mark, PassageView, StaffView};
use crate::report::pdf::layout::{palette, Flow, Page, Rgbf};
use crate::report::pdf::text::Face;

/// One work's lane of the roll.
struct Lane {
    /// Left edge of the time axis, mm.
    left: f32,
    /// Width of the time axis, mm.
    width: f32,
    /// Top of the lane, mm.
    y_top: f32,
    /// Height of the lane, mm.
    h: f32,
    /// Highest pitch shown (MIDI number).
    hi: i32,
    /// Lowest pitch shown (MIDI number).
    lo: i32,
    /// Height of one semitone, mm.
    row_h: f32,
    /// Length of the shown bars, ticks.
    total: i64,
}

impl Lane {
    /// The x of `t` ticks from the start of the shown bars.
    fn x_of(&self, t: i64) -> f32 {
        self.left + self.width * (t as f32 / self.total.max(1) as f32)
    }

    /// The work's letter in a navy tab, and the panel.
    fn frame(&self, page: &mut Page, tag: &str) {
        let (left, y_top, h) = (self.left, self.y_top, self.h);
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
            self.width,
            h,
            Some(palette::PANEL),
            Some((palette::RULE, 0.2)),
        );
    }

    /// A rule at every C, labelled with its name.
    fn octave_lines(&self, page: &mut Page) {
        for p in self.lo..=self.hi {
            if p.rem_euclid(12) == 0 {
                let y = self.y_top + (self.hi - p) as f32 * self.row_h + self.row_h / 2.0;
                page.line(self.left, y, self.left + self.width, y, 0.1, palette::RULE);
                page.text_right(
                    self.left - 0.8,
                    y + 1.0,
                    &crate::theory::pitch_name(f64::from(p)),
                    Face::Sans,
                    5.5,
                    palette::GREY,
                );
            }
        }
    }

    /// Bar lines with their labels, and the notes of each bar.
    fn bars(&self, page: &mut Page, side: &StaffView) {
        let mut t0 = 0i64;
        for bar in &side.bars {
            let x = self.x_of(t0);
            page.line(x, self.y_top, x, self.y_top + self.h, 0.2, palette::GREY);
            page.text(
                x + 0.5,
                self.y_top - 1.0,
                &bar.label,
                Face::SansItalic,
                6.0,
                palette::GREY,
            );
            for ev in &bar.events {
                self.note(page, side, t0, ev);
            }
            t0 += bar.length;
        }
    }

    /// The note of `ev` (none for a rest), in a bar starting `t0` ticks in: a bar across its
    /// length in its pitch's row, navy when matched, ringed vermilion when it differs.
    fn note(&self, page: &mut Page, side: &StaffView, t0: i64, ev: &Event) {
        let Some(n) = ev.note.and_then(|i| side.notes.get(i)) else {
            return;
        };
        let p = n.original_pitch + f64::from(side.shift);
        let y = self.y_top + (f64::from(self.hi) - p) as f32 * self.row_h;
        let xa = self.x_of(t0 + ev.start);
        let xb = self.x_of(t0 + ev.start + ev.ticks);
        let (fill, stroke) = match n.mark {
            Mark::Matched => (palette::NAVY, None),
            Mark::Differs => (palette::VERMILION_TINT, Some((palette::VERMILION, 0.35))),
            Mark::Outside => (palette::LIGHT_GREY, None),
        };
        page.rect(
            xa + 0.15,
            y + 0.1,
            (xb - xa - 0.3).max(0.4),
            self.row_h - 0.2,
            Some(fill),
            stroke,
        );
    }
}

/// Lowest and highest pitch of a lane: the side's notes (in the common key) with a semitone
/// to spare either way, or C4 to C5 when it has none.
fn pitch_range(side: &StaffView) -> (i32, i32) {
    let pitches: Vec<f64> = side
        .notes
        .iter()
        .map(|n| n.original_pitch + f64::from(side.shift))
        .collect();
    let lo = pitches.iter().copied().fold(f64::MAX, f64::min).floor() as i32 - 1;
    let hi = pitches.iter().copied().fold(f64::MIN, f64::max).ceil() as i32 + 1;
    if lo > hi {
        (60, 72)
    } else {
        (lo, hi)
    }
}

/// The piano roll: time across, pitch up, one lane per work, with the same marks as the
/// staves; bar lines and labels from each work's own bars.
pub fn draw_roll(flow: &mut Flow, view: &PassageView) {
    let left = flow.geo.left() + LABEL_W;
    let width = flow.geo.text_width() - LABEL_W;
    for (tag, side) in [("A", &view.a), ("B", &view.b)] {
        let (lo, hi) = pitch_range(side);
        let rows = (hi - lo + 1).max(1) as f32;
        let row_h = (42.0 / rows).clamp(0.9, 2.2);
        let h = rows * row_h;
        flow.ensure(h + 14.0);
        let lane = Lane {
            left,
            width,
            y_top: flow.y + 5.0,
            h,
            hi,
            lo,
            row_h,
            total: side.bars.iter().map(|b| b.length).sum(),
        };
        let page = flow.page();
        lane.frame(page, tag);
        lane.octave_lines(page);
        lane.bars(page, side);
        flow.y = lane.y_top + h + 6.0;
    }
}

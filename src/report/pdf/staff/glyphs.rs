//! The glyphs of the staff, all our own outlines: the five lines and bar lines, treble and bass
//! clefs, key and time signatures, noteheads, augmentation dots, grace notes, accidentals,
//! rests, flags and ties.

use super::{bottom_line, SP};
use crate::report::notation::Clef;
use crate::report::pdf::layout::{palette, Page, Rgbf};
use crate::report::pdf::text::{Face, MM_PER_PT};

/// Paper white, for the hollow of open noteheads.
const WHITE: Rgbf = Rgbf(1.0, 1.0, 1.0);

/// Glyph drawing on a staff whose bottom line is at `y0`.
pub(super) struct Staff<'p> {
    /// The page drawn on.
    pub page: &'p mut Page,
    /// The bottom line, mm from the top of the page.
    pub y0: f32,
    /// The clef, which fixes the pitch of each line.
    pub clef: Clef,
}

impl Staff<'_> {
    /// The y of diatonic number `dn`.
    pub fn y(&self, dn: i32) -> f32 {
        self.y0 - (dn - bottom_line(self.clef)) as f32 * SP / 2.0
    }

    /// The y of the top line.
    pub fn top(&self) -> f32 {
        self.y0 - 4.0 * SP
    }

    /// The five lines from `x1` to `x2`.
    pub fn lines(&mut self, x1: f32, x2: f32) {
        for k in 0..5 {
            let y = self.y0 - k as f32 * SP;
            self.page.line(x1, y, x2, y, 0.13, palette::INK);
        }
    }

    /// A bar line at `x`; `heavy` is the thin-thick final bar line.
    pub fn barline(&mut self, x: f32, heavy: bool) {
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

    /// The staff's clef at `x`.
    pub fn clef_glyph(&mut self, x: f32) {
        match self.clef {
            Clef::Treble => treble_clef(self.page, x, self.y0),
            Clef::Bass => bass_clef(self.page, x, self.y0),
        }
    }

    /// An accidental (`alter` semitones) centred at `x` on diatonic number `dn`.
    pub fn accidental(&mut self, x: f32, dn: i32, alter: i32, ink: Rgbf) {
        let y = self.y(dn);
        accidental_glyph(self.page, x, y, alter, ink);
    }

    /// Ledger lines at `x` out to diatonic number `dn`, below or above the staff.
    pub fn ledger(&mut self, x: f32, dn: i32, ink: Rgbf) {
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

    /// Augmentation dots right of a notehead at `x` on diatonic number `dn`, in the space
    /// (a note on a line has its dots in the space above).
    pub fn note_dots(&mut self, x: f32, dn: i32, dots: u8, ink: Rgbf) {
        let y = self.y(dn);
        let dot_y = if dn % 2 == bottom_line(self.clef) % 2 {
            y - SP / 2.0
        } else {
            y
        };
        for d in 0..dots {
            self.page.ellipse(
                x + 1.05 * SP + d as f32 * 0.6 * SP,
                dot_y,
                0.17 * SP,
                0.17 * SP,
                0.0,
                Some(ink),
                None,
            );
        }
    }

    /// A small grey grace note with a slashed flag at `x` on diatonic number `dn`.
    pub fn grace(&mut self, x: f32, dn: i32) {
        let y = self.y(dn);
        let ink = palette::GREY;
        self.ledger(x, dn, ink);
        notehead(self.page, x, y, 3, ink, 0.65);
        let stem_x = x + 0.4 * SP;
        self.page.line(stem_x, y, stem_x, y - 2.4 * SP, 0.12, ink);
        self.page
            .line(stem_x, y - 2.4 * SP, x + 1.0 * SP, y - 1.6 * SP, 0.12, ink);
        self.page.line(
            x - 0.2 * SP,
            y - 0.6 * SP,
            x + 1.0 * SP,
            y - 1.8 * SP,
            0.12,
            ink,
        );
    }
}

/// Key signature positions (diatonic numbers) for sharps and flats, in order.
pub(super) fn key_positions(clef: Clef, fifths: i32) -> Vec<(i32, i32)> {
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

/// A treble clef: a stroked spiral round the G line, a loop above the staff and a tail with a
/// ball below.
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
    stroke_path(page, &pts, 0.26 * s, palette::INK);
    dot(page, cx - 0.45 * s, g + 2.5 * s, 0.38 * s, palette::INK);
}

/// A bass clef: ball on the F line, an arc, and two dots either side of the F line.
fn bass_clef(page: &mut Page, x: f32, y0: f32) {
    let s = SP;
    let f = y0 - 3.0 * s;
    let cx = x + 0.7 * s;
    dot(page, cx, f, 0.42 * s, palette::INK);
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
    dot(page, cx + 3.0 * s, f - 0.5 * s, 0.2 * s, palette::INK);
    dot(page, cx + 3.0 * s, f + 0.5 * s, 0.2 * s, palette::INK);
}

/// A filled round dot of radius `r` centred at (`x`, `y`).
fn dot(page: &mut Page, x: f32, y: f32, r: f32, ink: Rgbf) {
    page.ellipse(x, y, r, r, 0.0, Some(ink), None);
}

/// Strokes an open path with Bézier control points.
fn stroke_path(page: &mut Page, pts: &[(f32, f32, bool)], width: f32, ink: Rgbf) {
    // The shape helper closes every path, so the path is drawn out and back along the same
    // points (a closing segment of length zero); a curve's control points read the same way
    // backwards, so the return retraces the outward stroke.
    let mut there_and_back: Vec<(f32, f32, bool)> = pts.to_vec();
    there_and_back.extend(pts.iter().rev().skip(1).copied());
    page.shape(&there_and_back, None, Some((ink, width)));
}

/// An accidental centred at (`x`, `y`): sharp, flat, natural, double sharp or double flat.
fn accidental_glyph(page: &mut Page, x: f32, y: f32, alter: i32, ink: Rgbf) {
    let s = SP;
    match alter {
        1 => sharp(page, x, y, ink),
        -1 => flat(page, x, y, ink),
        0 => natural(page, x, y, ink),
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

/// A sharp: two upright strokes and two slanted thick bars.
fn sharp(page: &mut Page, x: f32, y: f32, ink: Rgbf) {
    let s = SP;
    let (xl, xr) = (x - 0.22 * s, x + 0.22 * s);
    page.line(xl, y - 1.3 * s, xl, y + 1.4 * s, 0.13, ink);
    page.line(xr, y - 1.4 * s, xr, y + 1.3 * s, 0.13, ink);
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

/// A flat: a tall stroke and a bowl on its foot.
fn flat(page: &mut Page, x: f32, y: f32, ink: Rgbf) {
    let s = SP;
    let xs = x - 0.35 * s;
    page.line(xs, y - 2.0 * s, xs, y + 0.5 * s, 0.15, ink);
    page.shape(
        &[
            (xs, y + 0.5 * s, false),
            (x + 0.6 * s, y - 0.1 * s, true),
            (x + 0.55 * s, y - 0.9 * s, true),
            (xs, y - 0.35 * s, false),
            (xs, y - 0.15 * s, false),
            (x + 0.25 * s, y - 0.6 * s, true),
            (x + 0.3 * s, y + 0.0 * s, true),
            (xs, y + 0.32 * s, false),
        ],
        Some(ink),
        None,
    );
}

/// A natural: two offset upright strokes joined by two slanted bars.
fn natural(page: &mut Page, x: f32, y: f32, ink: Rgbf) {
    let s = SP;
    let (xl, xr) = (x - 0.3 * s, x + 0.3 * s);
    page.line(xl, y - 1.4 * s, xl, y + 0.55 * s, 0.13, ink);
    page.line(xr, y - 0.55 * s, xr, y + 1.4 * s, 0.13, ink);
    for dy in [-0.45 * s, 0.45 * s] {
        page.shape(
            &[
                (xl, y + dy + 0.15 * s, false),
                (xr, y + dy - 0.05 * s, false),
                (xr, y + dy - 0.3 * s, false),
                (xl, y + dy - 0.1 * s, false),
            ],
            Some(ink),
            None,
        );
    }
}

/// A notehead centred at (`x`, `y`) for a value of `log` (0 whole, 1 half, 2 quarter and
/// shorter), `scale` times the normal size.
pub(super) fn notehead(page: &mut Page, x: f32, y: f32, log: u8, ink: Rgbf, scale: f32) {
    let s = SP * scale;
    match log {
        0 => {
            page.ellipse(x, y, 0.78 * s, 0.5 * s, 0.0, Some(ink), None);
            page.ellipse(x, y, 0.32 * s, 0.36 * s, 0.9, Some(WHITE), None);
        }
        1 => {
            page.ellipse(x, y, 0.66 * s, 0.46 * s, -0.35, Some(ink), None);
            page.ellipse(x, y, 0.5 * s, 0.2 * s, -0.55, Some(WHITE), None);
        }
        _ => page.ellipse(x, y, 0.64 * s, 0.45 * s, -0.35, Some(ink), None),
    }
}

/// A rest of value `log` at `x` on the staff whose bottom line is at `staff_y0`: whole and
/// half rests as blocks, the quarter as a zigzag, shorter ones as a slash with hooks.
pub(super) fn rest_glyph(page: &mut Page, x: f32, staff_y0: f32, log: u8, ink: Rgbf) {
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
        _ => hooked_rest(page, x, mid, log, ink),
    }
}

/// An eighth rest or shorter: a slanted stroke with one hook per flag.
fn hooked_rest(page: &mut Page, x: f32, mid: f32, log: u8, ink: Rgbf) {
    let s = SP;
    let hooks = i32::from(log) - 2;
    let top = mid - 0.6 * s;
    let bottom = mid + 1.0 * s + 0.5 * s * (hooks - 1) as f32;
    page.line(x + 0.5 * s, top, x - 0.1 * s, bottom, 0.2, ink);
    for k in 0..hooks {
        let yy = top + 0.1 * s + k as f32 * 0.9 * s;
        let xx = x + 0.5 * s - 0.35 * s * k as f32;
        dot(page, xx - 0.9 * s, yy + 0.15 * s, 0.3 * s, ink);
        page.line(xx - 0.9 * s, yy + 0.3 * s, xx, yy, 0.16, ink);
    }
}

/// Augmentation dots of a rest at `x` on the staff whose bottom line is at `y0`.
pub(super) fn rest_dots(page: &mut Page, x: f32, y0: f32, dots: u8, ink: Rgbf) {
    for d in 0..dots {
        dot(
            page,
            x + 1.0 * SP + d as f32 * 0.6 * SP,
            y0 - 2.5 * SP,
            0.17 * SP,
            ink,
        );
    }
}

/// A flag on a stem at `sx` ending at `end`, pointing away from a stem that goes `down`.
pub(super) fn flag(page: &mut Page, sx: f32, end: f32, down: bool, ink: Rgbf) {
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

/// A tie from `x1` to `x2` by notes at `y`, curving `below` or above them.
pub(super) fn tie(page: &mut Page, x1: f32, x2: f32, y: f32, below: bool, ink: Rgbf) {
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

/// A time signature centred at `x` on the staff whose bottom line is at `y0`.
pub(super) fn time_signature(page: &mut Page, x: f32, y0: f32, time: (u32, u32)) {
    // Digits two spaces tall: Times Bold cap height ≈ 0.66 em.
    let size = 2.0 * SP / 0.66 / MM_PER_PT;
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn key_signature_positions() {
        // D major on the treble staff: F sharp on the top line, then C sharp.
        assert_eq!(key_positions(Clef::Treble, 2), vec![(38, 1), (35, 1)]);
    }
}

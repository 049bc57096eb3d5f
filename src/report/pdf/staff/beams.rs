//! Stems, flags and beams of one bar: eighths and shorter inside one beat are beamed together
//! under a sloped beam clear of every head (with secondary beams and stubs for sixteenths and
//! shorter); other notes get a plain stem with flags. Triplets are numbered at the stem or beam.

use super::glyphs::{flag, Staff};
use super::spacing::PlacedBar;
use super::{bottom_line, diatonic, mark_ink, SP};
use crate::report::notation::{Clef, Mark, StaffView, ViewBar};
use crate::report::pdf::layout::{palette, Page, Rgbf};
use crate::report::pdf::text::Face;

/// Length of a stem from the notehead, mm.
const STEM_LEN: f32 = 3.4 * SP;
/// Thickness of a beam, mm.
const BEAM_THICK: f32 = 0.48 * SP;

/// A drawn notehead: its centre and which way its stem goes.
#[derive(Debug, Clone, Copy)]
pub(super) struct Head {
    /// Centre x, mm.
    pub x: f32,
    /// Centre y, mm.
    pub y: f32,
    /// Whether the stem goes down (on the left of the head).
    pub down: bool,
}

/// Stem direction for a note at diatonic number `dn`: down from the middle line up.
fn stem_down(clef: Clef, dn: i32) -> bool {
    dn >= bottom_line(clef) + 4
}

/// The x of the stem of a head at `x`: right of it going up, left of it going down.
fn stem_x(x: f32, down: bool) -> f32 {
    if down {
        x - 0.6 * SP
    } else {
        x + 0.6 * SP
    }
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

/// Beam groups: runs of two or more eighths or shorter inside one beat unit, as event indices.
pub(super) fn beam_groups(bar: &ViewBar, res: i64) -> Vec<Vec<usize>> {
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
    groups
}

/// The beam group event `k` belongs to, if any.
fn group_of(groups: &[Vec<usize>], k: usize) -> Option<&[usize]> {
    groups.iter().find(|g| g.contains(&k)).map(Vec::as_slice)
}

/// Stem direction of event `k`, a note at diatonic number `dn`: a beamed group's stems all go
/// the way its mean pitch asks; a lone note's by its own pitch.
pub(super) fn stem_direction(
    view: &StaffView,
    bar: &ViewBar,
    groups: &[Vec<usize>],
    k: usize,
    dn: i32,
) -> bool {
    match group_of(groups, k) {
        Some(group) => {
            let mean: f32 = group
                .iter()
                .filter_map(|&j| bar.events[j].note.and_then(|i| view.notes.get(i)))
                .map(|m| diatonic(m.spelling.step, m.spelling.octave) as f32)
                .sum::<f32>()
                / group.len().max(1) as f32;
            mean >= (bottom_line(view.clef) + 4) as f32
        }
        None => stem_down(view.clef, dn),
    }
}

/// Ink of event `k`'s stem: its note's mark, ink for anything else.
fn event_ink(pb: &PlacedBar<'_>, k: usize) -> Rgbf {
    pb.bar.events[k]
        .note
        .and_then(|i| pb.view.notes.get(i))
        .map_or(palette::INK, |n| mark_ink(n.mark))
}

/// Stems, flags and triplet numbers of the notes outside beam groups (not whole notes).
pub(super) fn draw_stems(
    st: &mut Staff<'_>,
    pb: &PlacedBar<'_>,
    heads: &[Option<Head>],
    groups: &[Vec<usize>],
) {
    for (k, ev) in pb.bar.events.iter().enumerate() {
        let Some(Head { x, y, down }) = heads[k] else {
            continue;
        };
        if ev.value.log == 0 || group_of(groups, k).is_some() {
            continue;
        }
        let ink = event_ink(pb, k);
        let sx = stem_x(x, down);
        let extra = if ev.value.log >= 5 { 0.8 * SP } else { 0.0 };
        let mut end = if down {
            y + STEM_LEN + extra
        } else {
            y - STEM_LEN - extra
        };
        // Stems reach the middle line from far-off notes.
        let mid = st.y0 - 2.0 * SP;
        if down && end < mid {
            end = mid;
        }
        if !down && end > mid {
            end = mid;
        }
        st.page.line(sx, y, sx, end, 0.2, ink);
        for f in 0..ev.value.log.saturating_sub(2) {
            let step = if down {
                -(f as f32) * 0.8 * SP
            } else {
                f as f32 * 0.8 * SP
            };
            flag(st.page, sx, end + step, down, ink);
        }
        if ev.value.triplet {
            let ty = if down { y - 1.6 * SP } else { y + 2.3 * SP };
            st.page
                .text_centered(x, ty, "3", Face::SerifItalic, 7.0, palette::GREY);
        }
    }
}

/// The beam of one group: a line from the first stem to the last.
struct Beam {
    /// Stem x of the first note.
    sx0: f32,
    /// Stem x of the last note.
    sx1: f32,
    /// Slope of the beam.
    slope: f32,
    /// y of the beam at `sx0`.
    offset: f32,
    /// Whether the stems go down.
    down: bool,
    /// Ink of the beams.
    ink: Rgbf,
}

impl Beam {
    /// The beam line over `members`: it follows the first and last notes, its slope capped,
    /// clear of every head by a stem's length.
    fn fit(members: &[(usize, Head)], down: bool, ink: Rgbf) -> Option<Beam> {
        let (first, last) = (members.first()?.1, members.last()?.1);
        let sx0 = stem_x(first.x, down);
        let sx1 = stem_x(last.x, down);
        let slope_raw = if (sx1 - sx0).abs() > 0.1 {
            (last.y - first.y) / (sx1 - sx0)
        } else {
            0.0
        };
        let slope = slope_raw.clamp(-0.18, 0.18);
        let base = |x: f32| slope * (x - sx0);
        let offset = members
            .iter()
            .map(|&(_, h)| {
                let sx = stem_x(h.x, down);
                if down {
                    h.y + STEM_LEN - base(sx)
                } else {
                    h.y - STEM_LEN - base(sx)
                }
            })
            .fold(if down { f32::MIN } else { f32::MAX }, |acc, v| {
                if down {
                    acc.max(v)
                } else {
                    acc.min(v)
                }
            });
        Some(Beam {
            sx0,
            sx1,
            slope,
            offset,
            down,
            ink,
        })
    }

    /// The y of the (primary) beam at `x`.
    fn y(&self, x: f32) -> f32 {
        self.offset + self.slope * (x - self.sx0)
    }

    /// A beam from `xa` to `xb` at `level` (0 the primary beam, then one per flag inward).
    fn draw(&self, page: &mut Page, xa: f32, xb: f32, level: u8) {
        let dy = level as f32 * 0.8 * SP * if self.down { -1.0 } else { 1.0 };
        let (ya, yb) = (self.y(xa) + dy, self.y(xb) + dy);
        let t = if self.down { -BEAM_THICK } else { BEAM_THICK };
        page.shape(
            &[
                (xa, ya, false),
                (xb, yb, false),
                (xb, yb + t, false),
                (xa, ya + t, false),
            ],
            Some(self.ink),
            None,
        );
    }
}

/// Ink of a group's beams: navy when every note matched, vermilion when every note differs,
/// ink otherwise.
fn group_ink(pb: &PlacedBar<'_>, members: &[(usize, Head)]) -> Rgbf {
    let mark = members
        .iter()
        .map(|&(k, _)| {
            pb.bar.events[k]
                .note
                .and_then(|i| pb.view.notes.get(i))
                .map_or(Mark::Outside, |n| n.mark)
        })
        .fold(None, |acc: Option<Mark>, m| match acc {
            None => Some(m),
            Some(a) if a == m => Some(a),
            Some(_) => Some(Mark::Outside),
        });
    match mark {
        Some(Mark::Matched) => palette::NAVY,
        Some(Mark::Differs) => palette::VERMILION,
        _ => palette::INK,
    }
}

/// One beam group: stems to the beam, the primary beam, secondary beams and a triplet number.
pub(super) fn draw_beam_group(
    st: &mut Staff<'_>,
    pb: &PlacedBar<'_>,
    heads: &[Option<Head>],
    group: &[usize],
) {
    let members: Vec<(usize, Head)> = group
        .iter()
        .filter_map(|&k| heads[k].map(|h| (k, h)))
        .collect();
    let Some(&(first, _)) = members.first() else {
        return;
    };
    let down = heads[first].is_some_and(|h| h.down);
    let Some(beam) = Beam::fit(&members, down, group_ink(pb, &members)) else {
        return;
    };
    for &(k, h) in &members {
        let sx = stem_x(h.x, down);
        st.page.line(sx, h.y, sx, beam.y(sx), 0.2, event_ink(pb, k));
    }
    beam.draw(st.page, beam.sx0 - 0.08, beam.sx1 + 0.08, 0);
    secondary_beams(st.page, pb.bar, &members, &beam);
    if members.iter().any(|&(k, _)| pb.bar.events[k].value.triplet) {
        let mx = (beam.sx0 + beam.sx1) / 2.0;
        let y = beam.y(mx) + if down { 2.4 * SP } else { -1.2 * SP };
        st.page
            .text_centered(mx, y, "3", Face::SerifItalic, 7.0, palette::GREY);
    }
}

/// Secondary beams between neighbours that are both sixteenths or shorter (two levels); a
/// stub on a lone short note, pointing into the group.
fn secondary_beams(page: &mut Page, bar: &ViewBar, members: &[(usize, Head)], beam: &Beam) {
    let down = beam.down;
    for level in 1..3u8 {
        let need = 3 + level;
        let short = |&&(j, _): &&(usize, Head)| bar.events[j].value.log >= need;
        for (m, &(k, h)) in members.iter().enumerate() {
            if bar.events[k].value.log < need {
                continue;
            }
            let sx = stem_x(h.x, down);
            let next = members.get(m + 1).filter(short);
            let prev = m.checked_sub(1).and_then(|p| members.get(p)).filter(short);
            if let Some(&(_, nh)) = next {
                beam.draw(page, sx, stem_x(nh.x, down), level);
            } else if prev.is_none() {
                let stub = 1.1 * SP;
                if m + 1 == members.len() {
                    beam.draw(page, sx - stub, sx, level);
                } else {
                    beam.draw(page, sx, sx + stub, level);
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compound_meters_beam_in_dotted_quarters() {
        assert_eq!(beam_unit((6, 8), 480), 720);
        assert_eq!(beam_unit((4, 4), 480), 480);
        assert_eq!(beam_unit((3, 8), 480), 240);
    }
}

//! The dot plot: work A's bars across, work B's bars down, a grey dot at every recurrence of a
//! short interval figure ([`crate::compare::recurrence`]), and each passage drawn over it as a
//! tinted rectangle with its alignment path and its rank.

use super::layout::{palette, Flow, Rgbf};
use super::text::Face;
use crate::findings::Findings;
use crate::timeline::Piece;

/// Bar labels to print along an axis: about `target` of them, on bars whose ordinal is a
/// multiple of a round step.
fn ticks(piece: &Piece, target: usize) -> Vec<(f64, String)> {
    let first_full = piece.bars.iter().position(|b| !b.pickup).unwrap_or(0);
    let n = piece.bars.len().saturating_sub(first_full).max(1);
    let steps = [1, 2, 4, 5, 8, 10, 16, 20, 25, 50, 100, 200, 500, 1000];
    let step = steps
        .iter()
        .copied()
        .find(|s| n / s < target)
        .unwrap_or(2000);
    piece
        .bars
        .iter()
        .enumerate()
        .filter(|(i, _)| *i >= first_full && (i - first_full) % step == 0)
        .map(|(_, b)| (b.start.0, b.label.clone()))
        .collect()
}

fn span(piece: &Piece) -> f64 {
    let bars_end = piece.bars.last().map_or(0.0, |b| {
        b.start.0 + b.length_ticks as f64 / f64::from(piece.resolution.max(1))
    });
    let notes_end = piece
        .melody
        .last()
        .map_or(0.0, |n| n.onset.0 + n.duration.0);
    bars_end.max(notes_end).max(1.0)
}

/// Height of the plot's frame for these works, mm, at most `max` (the figure needs 22 mm
/// more for its labels).
pub fn height(flow: &Flow, a: &Piece, b: &Piece, max: f32) -> f32 {
    let width = flow.geo.text_width() - 16.0;
    (width * (span(b) / span(a)) as f32).clamp(50.0, max.max(50.0))
}

/// Draws the plot for the whole of both works.
/// Draws the plot of `findings` into the flow, at most `max_height` mm tall.
pub fn draw(flow: &mut Flow, findings: &Findings, max_height: f32) {
    let (a, b) = (&findings.a, &findings.b);
    let left = flow.geo.left() + 14.0;
    let width = flow.geo.text_width() - 16.0;
    let len_a = span(a);
    let len_b = span(b);
    let height = height(flow, a, b, max_height);
    flow.ensure(height + 22.0);
    let top = flow.y + 8.0;
    let x_of = |beats: f64| left + width * (beats / len_a) as f32;
    let y_of = |beats: f64| top + height * (beats / len_b) as f32;
    let page = flow.page();
    page.rect(
        left,
        top,
        width,
        height,
        Some(Rgbf(1.0, 1.0, 1.0)),
        Some((palette::RULE, 0.25)),
    );
    // Bar grid and labels.
    for (beats, label) in ticks(a, 14) {
        let x = x_of(beats);
        page.line(x, top, x, top + height, 0.08, palette::RULE);
        page.text_centered(x, top - 1.6, &label, Face::Sans, 6.2, palette::GREY);
    }
    for (beats, label) in ticks(b, 12) {
        let y = y_of(beats);
        page.line(left, y, left + width, y, 0.08, palette::RULE);
        page.text_right(left - 1.2, y + 0.9, &label, Face::Sans, 6.2, palette::GREY);
    }
    let title_a = format!(
        "across: bars of A{}",
        a.title
            .as_ref()
            .map_or_else(String::new, |t| format!(" ({t})"))
    );
    let title_b = format!(
        "bars of B{}",
        b.title
            .as_ref()
            .map_or_else(String::new, |t| format!(" ({t})"))
    );
    page.text_centered(
        left + width / 2.0,
        top - 5.2,
        &title_a,
        Face::SansBold,
        7.5,
        palette::INK,
    );
    page.text(
        left - 13.5,
        top + height + 5.0,
        &format!("down: {title_b}"),
        Face::SansBold,
        7.5,
        palette::INK,
    );
    // Passage rectangles under the dots.
    for p in findings.passages.iter().map(|f| &f.passage) {
        let (x1, x2) = (x_of(p.a.onset_beats), x_of(p.a.end_beats));
        let (y1, y2) = (y_of(p.b.onset_beats), y_of(p.b.end_beats));
        page.rect(
            x1,
            y1,
            (x2 - x1).max(0.8),
            (y2 - y1).max(0.8),
            Some(palette::NAVY_TINT),
            Some((palette::NAVY, 0.3)),
        );
    }
    // Background dots: recurring interval figures.
    let r = 0.4;
    for &[i, j] in &findings.recurrences {
        let (Some(na), Some(nb)) = (a.melody.get(i), b.melody.get(j)) else {
            continue;
        };
        page.ellipse(
            x_of(na.onset.0),
            y_of(nb.onset.0),
            r,
            r,
            0.0,
            Some(palette::GREY),
            None,
        );
    }
    // Alignment paths over the dots.
    for p in findings.passages.iter().map(|f| &f.passage) {
        let points: Vec<(f32, f32)> = p
            .pairs
            .iter()
            .filter_map(|pair| {
                let (i, j) = (pair.a.first()?, pair.b.first()?);
                Some((
                    x_of(a.melody.get(*i)?.onset.0),
                    y_of(b.melody.get(*j)?.onset.0),
                ))
            })
            .collect();
        page.polyline(&points, 0.55, palette::NAVY);
        for &(x, y) in &points {
            page.ellipse(x, y, 0.45, 0.45, 0.0, Some(palette::NAVY), None);
        }
        let (x2, y1) = (x_of(p.a.end_beats), y_of(p.b.onset_beats));
        page.ellipse(x2 + 2.6, y1 - 2.2, 2.1, 2.1, 0.0, Some(palette::NAVY), None);
        page.text_centered(
            x2 + 2.6,
            y1 - 1.3,
            &p.rank.to_string(),
            Face::SansBold,
            7.0,
            Rgbf(1.0, 1.0, 1.0),
        );
    }
    flow.y = top + height + 9.0;
}

//! Pages and the drawing primitives every figure uses, in millimetres from the top-left corner
//! of the page (y grows downwards); converted to PDF points (origin bottom-left) when emitted.
//!
//! A [`Flow`] places blocks one under another and starts a new page when a block does not fit.

use super::text::{sanitize, width_mm, wrap, Block, Face, Span, MM_PER_PT};
use printpdf::{
    Color, LineDashPattern, LinePoint, Op, PaintMode, PdfFontHandle, Point, Polygon, PolygonRing,
    Pt, Rgb, TextItem, WindingOrder,
};

/// Paper sizes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Paper {
    /// ISO 216 A4, 210 × 297 mm.
    A4,
    /// US Letter, 8.5 × 11 in (215.9 × 279.4 mm).
    Letter,
}

impl Paper {
    /// Width and height in millimetres.
    pub fn size_mm(self) -> (f32, f32) {
        match self {
            Paper::A4 => (210.0, 297.0),
            Paper::Letter => (215.9, 279.4),
        }
    }

    /// Width and height in PostScript points (1/72 in): Letter exactly 612 × 792.
    pub fn size_pt(self) -> (f32, f32) {
        match self {
            Paper::A4 => (595.276, 841.89),
            Paper::Letter => (612.0, 792.0),
        }
    }

    /// The name printed on the cover.
    pub fn name(self) -> &'static str {
        match self {
            Paper::A4 => "A4",
            Paper::Letter => "US Letter",
        }
    }
}

/// An RGB colour, components in [0, 1].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rgbf(pub f32, pub f32, pub f32);

/// The exhibit's palette: a deep blue ink for headings and for matched notes, a warm vermilion
/// for what differs, greys for context. Matched and unmatched notes also differ in shape, so a
/// black-and-white copy keeps the distinction.
pub mod palette {
    use super::Rgbf;
    /// Body text.
    pub const INK: Rgbf = Rgbf(0.08, 0.08, 0.10);
    /// Headings, rules and matched material.
    pub const NAVY: Rgbf = Rgbf(0.10, 0.22, 0.42);
    /// Tint behind matched material.
    pub const NAVY_TINT: Rgbf = Rgbf(0.86, 0.90, 0.96);
    /// Differences.
    pub const VERMILION: Rgbf = Rgbf(0.80, 0.26, 0.10);
    /// Tint behind differences.
    pub const VERMILION_TINT: Rgbf = Rgbf(0.99, 0.90, 0.86);
    /// Secondary text.
    pub const GREY: Rgbf = Rgbf(0.42, 0.42, 0.45);
    /// Material outside the passage.
    pub const LIGHT_GREY: Rgbf = Rgbf(0.68, 0.68, 0.70);
    /// Table stripes and panels.
    pub const PANEL: Rgbf = Rgbf(0.95, 0.95, 0.94);
    /// Thin rules.
    pub const RULE: Rgbf = Rgbf(0.75, 0.75, 0.77);
}

fn color(c: Rgbf) -> Color {
    Color::Rgb(Rgb {
        r: c.0,
        g: c.1,
        b: c.2,
        icc_profile: None,
    })
}

/// One page being drawn.
#[derive(Debug, Clone)]
pub struct Page {
    /// Page height in mm (to flip y).
    height: f32,
    /// The drawing operations.
    pub ops: Vec<Op>,
}

impl Page {
    /// An empty page of the given height.
    pub fn new(height: f32) -> Page {
        Page {
            height,
            ops: Vec::new(),
        }
    }

    fn pt(&self, x: f32, y: f32) -> Point {
        Point {
            x: Pt(x / MM_PER_PT),
            y: Pt((self.height - y) / MM_PER_PT),
        }
    }

    fn lp(&self, x: f32, y: f32, bezier: bool) -> LinePoint {
        LinePoint {
            p: self.pt(x, y),
            bezier,
        }
    }

    /// Text with its baseline at `y`, starting at `x`.
    pub fn text(&mut self, x: f32, y: f32, text: &str, face: Face, size: f32, ink: Rgbf) {
        let text = sanitize(text);
        if text.is_empty() {
            return;
        }
        let pos = self.pt(x, y);
        self.ops.extend([
            Op::StartTextSection,
            Op::SetFillColor { col: color(ink) },
            Op::SetFont {
                font: PdfFontHandle::Builtin(face.builtin()),
                size: Pt(size),
            },
            Op::SetTextCursor { pos },
            Op::ShowText {
                items: vec![TextItem::Text(text)],
            },
            Op::EndTextSection,
        ]);
    }

    /// Runs of text in different faces, one after the other from `x` on the baseline `y`.
    pub fn runs(&mut self, x: f32, y: f32, runs: &[(String, Face)], size: f32, ink: Rgbf) {
        if runs.is_empty() {
            return;
        }
        let pos = self.pt(x, y);
        self.ops.push(Op::StartTextSection);
        self.ops.push(Op::SetFillColor { col: color(ink) });
        self.ops.push(Op::SetTextCursor { pos });
        for (text, face) in runs {
            self.ops.push(Op::SetFont {
                font: PdfFontHandle::Builtin(face.builtin()),
                size: Pt(size),
            });
            self.ops.push(Op::ShowText {
                items: vec![TextItem::Text(sanitize(text))],
            });
        }
        self.ops.push(Op::EndTextSection);
    }

    /// Text centred on `x`.
    pub fn text_centered(&mut self, x: f32, y: f32, text: &str, face: Face, size: f32, ink: Rgbf) {
        let w = width_mm(&sanitize(text), face, size);
        self.text(x - w / 2.0, y, text, face, size, ink);
    }

    /// Text ending at `x`.
    pub fn text_right(&mut self, x: f32, y: f32, text: &str, face: Face, size: f32, ink: Rgbf) {
        let w = width_mm(&sanitize(text), face, size);
        self.text(x - w, y, text, face, size, ink);
    }

    /// A straight line.
    pub fn line(&mut self, x1: f32, y1: f32, x2: f32, y2: f32, width: f32, ink: Rgbf) {
        self.polyline(&[(x1, y1), (x2, y2)], width, ink);
    }

    /// A dashed line (dash and gap in mm).
    pub fn dashed(&mut self, from: (f32, f32), to: (f32, f32), width: f32, ink: Rgbf, dash: f32) {
        let d = dash / MM_PER_PT;
        self.ops.push(Op::SetLineDashPattern {
            dash: LineDashPattern::new(0.0, &[d, d]),
        });
        self.polyline(&[from, to], width, ink);
        self.ops.push(Op::SetLineDashPattern {
            dash: LineDashPattern::solid(),
        });
    }

    /// Connected straight segments.
    pub fn polyline(&mut self, points: &[(f32, f32)], width: f32, ink: Rgbf) {
        if points.len() < 2 {
            return;
        }
        let points = points.iter().map(|&(x, y)| self.lp(x, y, false)).collect();
        self.ops.extend([
            Op::SetOutlineColor { col: color(ink) },
            Op::SetOutlineThickness {
                pt: Pt(width / MM_PER_PT),
            },
            Op::DrawPolygon {
                polygon: Polygon {
                    rings: vec![PolygonRing { points }],
                    mode: PaintMode::Stroke,
                    winding_order: WindingOrder::NonZero,
                },
            },
        ]);
    }

    /// A closed shape of straight edges and cubic curves. Each item is a point; a point with
    /// `true` is a Bézier control point (two in a row, then the end point).
    pub fn shape(
        &mut self,
        points: &[(f32, f32, bool)],
        fill: Option<Rgbf>,
        stroke: Option<(Rgbf, f32)>,
    ) {
        if points.len() < 2 {
            return;
        }
        let ring = PolygonRing {
            points: points.iter().map(|&(x, y, b)| self.lp(x, y, b)).collect(),
        };
        let mode = match (fill, stroke) {
            (Some(_), Some(_)) => PaintMode::FillStroke,
            (Some(_), None) => PaintMode::Fill,
            (None, Some(_)) => PaintMode::Stroke,
            (None, None) => return,
        };
        if let Some(f) = fill {
            self.ops.push(Op::SetFillColor { col: color(f) });
        }
        if let Some((s, w)) = stroke {
            self.ops.push(Op::SetOutlineColor { col: color(s) });
            self.ops.push(Op::SetOutlineThickness {
                pt: Pt(w / MM_PER_PT),
            });
        }
        self.ops.push(Op::DrawPolygon {
            polygon: Polygon {
                rings: vec![ring],
                mode,
                winding_order: WindingOrder::NonZero,
            },
        });
    }

    /// A rectangle (top-left corner, width, height).
    pub fn rect(
        &mut self,
        x: f32,
        y: f32,
        w: f32,
        h: f32,
        fill: Option<Rgbf>,
        stroke: Option<(Rgbf, f32)>,
    ) {
        self.shape(
            &[
                (x, y, false),
                (x + w, y, false),
                (x + w, y + h, false),
                (x, y + h, false),
            ],
            fill,
            stroke,
        );
    }

    /// A rectangle with rounded corners of radius `r`.
    #[allow(clippy::too_many_arguments)]
    pub fn round_rect(
        &mut self,
        x: f32,
        y: f32,
        w: f32,
        h: f32,
        r: f32,
        fill: Option<Rgbf>,
        stroke: Option<(Rgbf, f32)>,
    ) {
        let r = r.min(w / 2.0).min(h / 2.0);
        let k = 0.5523 * r;
        let pts = [
            (x + r, y, false),
            (x + w - r, y, false),
            (x + w - r + k, y, true),
            (x + w, y + r - k, true),
            (x + w, y + r, false),
            (x + w, y + h - r, false),
            (x + w, y + h - r + k, true),
            (x + w - r + k, y + h, true),
            (x + w - r, y + h, false),
            (x + r, y + h, false),
            (x + r - k, y + h, true),
            (x, y + h - r + k, true),
            (x, y + h - r, false),
            (x, y + r, false),
            (x, y + r - k, true),
            (x + r - k, y, true),
            (x + r, y, false),
        ];
        self.shape(&pts, fill, stroke);
    }

    /// An ellipse centred at (cx, cy) with radii rx, ry, rotated by `angle` radians.
    #[allow(clippy::too_many_arguments)]
    pub fn ellipse(
        &mut self,
        cx: f32,
        cy: f32,
        rx: f32,
        ry: f32,
        angle: f32,
        fill: Option<Rgbf>,
        stroke: Option<(Rgbf, f32)>,
    ) {
        let pts = ellipse_points(cx, cy, rx, ry, angle);
        self.shape(&pts, fill, stroke);
    }
}

/// The four-arc Bézier outline of a rotated ellipse.
pub fn ellipse_points(cx: f32, cy: f32, rx: f32, ry: f32, angle: f32) -> Vec<(f32, f32, bool)> {
    let k = 0.5523f32;
    let (s, c) = angle.sin_cos();
    // Unit-circle outline, y down; rotate then scale.
    let local = [
        (1.0, 0.0, false),
        (1.0, k, true),
        (k, 1.0, true),
        (0.0, 1.0, false),
        (-k, 1.0, true),
        (-1.0, k, true),
        (-1.0, 0.0, false),
        (-1.0, -k, true),
        (-k, -1.0, true),
        (0.0, -1.0, false),
        (k, -1.0, true),
        (1.0, -k, true),
        (1.0, 0.0, false),
    ];
    local
        .iter()
        .map(|&(u, v, b)| {
            let (x, y) = (u * rx, v * ry);
            (cx + x * c - y * s, cy + x * s + y * c, b)
        })
        .collect()
}

/// Geometry of the page: paper, margins, and the running header and footer.
#[derive(Debug, Clone)]
pub struct Geometry {
    /// Paper.
    pub paper: Paper,
    /// Left and right margin, mm.
    pub margin_x: f32,
    /// Top margin (below the running header), mm.
    pub top: f32,
    /// Bottom limit of the text area, mm from the top.
    pub bottom: f32,
}

impl Geometry {
    /// Margins for a paper size.
    pub fn new(paper: Paper) -> Geometry {
        let (_, h) = paper.size_mm();
        Geometry {
            paper,
            margin_x: 20.0,
            top: 24.0,
            bottom: h - 20.0,
        }
    }

    /// Page width.
    pub fn width(&self) -> f32 {
        self.paper.size_mm().0
    }

    /// Page height.
    pub fn height(&self) -> f32 {
        self.paper.size_mm().1
    }

    /// Width of the text column.
    pub fn text_width(&self) -> f32 {
        self.width() - 2.0 * self.margin_x
    }

    /// Left edge of the text column.
    pub fn left(&self) -> f32 {
        self.margin_x
    }

    /// Right edge of the text column.
    pub fn right(&self) -> f32 {
        self.width() - self.margin_x
    }
}

/// Body text size, points.
pub const BODY: f32 = 10.0;
/// Leading of body text, mm.
pub const LEADING: f32 = 4.6;

/// Places blocks down the pages.
#[derive(Debug)]
pub struct Flow {
    /// Page geometry.
    pub geo: Geometry,
    /// Finished and current pages.
    pub pages: Vec<Page>,
    /// Current y on the last page.
    pub y: f32,
}

impl Flow {
    /// A flow with one empty page.
    pub fn new(geo: Geometry) -> Flow {
        let first = Page::new(geo.height());
        let y = geo.top;
        Flow {
            geo,
            pages: vec![first],
            y,
        }
    }

    /// The page being drawn.
    pub fn page(&mut self) -> &mut Page {
        if self.pages.is_empty() {
            self.pages.push(Page::new(self.geo.height()));
        }
        let last = self.pages.len() - 1;
        &mut self.pages[last]
    }

    /// Starts a new page.
    pub fn new_page(&mut self) {
        self.pages.push(Page::new(self.geo.height()));
        self.y = self.geo.top;
    }

    /// Starts a new page unless `height` mm still fit on this one.
    pub fn ensure(&mut self, height: f32) {
        if self.y + height > self.geo.bottom && self.y > self.geo.top + 0.1 {
            self.new_page();
        }
    }

    /// Space left on the current page, mm.
    pub fn remaining(&self) -> f32 {
        self.geo.bottom - self.y
    }

    /// Lays out one block of markup. Figures are passed to `figure`.
    pub fn block(&mut self, block: &Block, figure: &mut dyn FnMut(&mut Flow, &str)) {
        let left = self.geo.left();
        let width = self.geo.text_width();
        match block {
            Block::Heading(text) => {
                self.ensure(26.0);
                if self.y > self.geo.top + 0.1 {
                    self.y += 4.0;
                }
                self.y += 6.0;
                let y = self.y;
                self.page()
                    .text(left, y, text, Face::SansBold, 15.0, palette::NAVY);
                self.y += 2.6;
                let y = self.y;
                self.page()
                    .line(left, y, left + width, y, 0.5, palette::NAVY);
                self.y += 5.5;
            }
            Block::Subheading(text) => {
                self.ensure(16.0);
                self.y += 3.0;
                let y = self.y + 3.0;
                self.page()
                    .text(left, y, text, Face::SansBold, 11.0, palette::NAVY);
                self.y += 7.0;
            }
            Block::Paragraph(text) => {
                self.paragraph(text, left, width, Face::Serif, BODY);
                self.y += 2.2;
            }
            Block::Bullet(text) => {
                let indent = 5.0;
                let lines = wrap(&super::text::spans(text), Face::Serif, BODY, width - indent);
                self.ensure(LEADING * lines.len().min(3) as f32);
                let y = self.y + LEADING * 0.75;
                self.page().ellipse(
                    left + 1.6,
                    y - 1.1,
                    0.55,
                    0.55,
                    0.0,
                    Some(palette::NAVY),
                    None,
                );
                self.paragraph(text, left + indent, width - indent, Face::Serif, BODY);
                self.y += 1.0;
            }
            Block::Statement(text) => {
                let pad = 4.0;
                let lines = wrap(
                    &super::text::spans(text),
                    Face::Serif,
                    BODY + 0.5,
                    width - 2.0 * pad - 2.0,
                );
                let h = lines.len() as f32 * (LEADING + 0.2) + 2.0 * pad - 1.0;
                self.ensure(h + 3.0);
                let y0 = self.y;
                self.page()
                    .rect(left, y0, width, h, Some(palette::NAVY_TINT), None);
                self.page()
                    .rect(left, y0, 1.4, h, Some(palette::NAVY), None);
                self.y = y0 + pad;
                for line in &lines {
                    let base = self.y + LEADING * 0.72;
                    let runs = super::text::runs(line, BODY + 0.5);
                    self.page()
                        .runs(left + pad + 2.0, base, &runs, BODY + 0.5, palette::INK);
                    self.y += LEADING + 0.2;
                }
                self.y = y0 + h + 4.0;
            }
            Block::Table(rows) => self.table(rows),
            Block::Field(label, value) => {
                let label_w = 30.0;
                self.ensure(LEADING);
                let y = self.y + LEADING * 0.75;
                self.page()
                    .text(left, y, label, Face::SansBold, 8.0, palette::GREY);
                self.paragraph(value, left + label_w, width - label_w, Face::Serif, BODY);
                self.y += 0.8;
            }
            Block::Figure(name) => figure(self, name),
            Block::Space => self.y += 4.0,
        }
    }

    /// Running text in a column, breaking pages between lines.
    pub fn paragraph(&mut self, text: &str, x: f32, width: f32, face: Face, size: f32) {
        let lead = LEADING * size / BODY;
        for line in wrap(&super::text::spans(text), face, size, width) {
            self.ensure(lead);
            let base = self.y + lead * 0.75;
            let runs = super::text::runs(&line, size);
            self.page().runs(x, base, &runs, size, palette::INK);
            self.y += lead;
        }
    }

    /// A table: header row in bold on a navy rule, body rows striped, cells wrapped.
    pub fn table(&mut self, rows: &[Vec<String>]) {
        let Some(header) = rows.first() else {
            return;
        };
        let size = 8.6;
        let lead = 3.7;
        let pad = 1.6;
        let left = self.geo.left();
        let width = self.geo.text_width();
        let ncol = rows.iter().map(Vec::len).max().unwrap_or(1).max(1);
        // Natural widths, then scale to the text width with a floor per column.
        let mut natural = vec![8.0f32; ncol];
        for (r, row) in rows.iter().enumerate() {
            let face = if r == 0 { Face::SansBold } else { Face::Sans };
            for (c, cell) in row.iter().enumerate() {
                let longest_word = cell
                    .split(' ')
                    .map(|w| width_mm(&sanitize(w), face, size))
                    .fold(0.0f32, f32::max);
                let whole = width_mm(&sanitize(cell), face, size);
                natural[c] = natural[c].max(whole.min(70.0)).max(longest_word) + 0.0;
            }
        }
        let total: f32 = natural.iter().map(|w| w + 2.0 * pad).sum();
        let scale = (width / total).min(1.6);
        let cols: Vec<f32> = natural.iter().map(|w| (w + 2.0 * pad) * scale).collect();
        let used: f32 = cols.iter().sum();
        let cols: Vec<f32> = cols.iter().map(|c| c * width / used).collect();
        let numeric = |text: &str| {
            let t = text.trim_end_matches(['%', 'x', '×']);
            !t.is_empty() && t.parse::<f64>().is_ok()
        };
        let draw_row = |flow: &mut Flow, row: &[String], r: usize| {
            let face = if r == 0 { Face::SansBold } else { Face::Sans };
            let cells: Vec<Vec<String>> = (0..ncol)
                .map(|c| {
                    let text = row.get(c).map_or("", String::as_str);
                    let spans = vec![Span {
                        text: sanitize(text),
                        bold: false,
                        mono: false,
                    }];
                    wrap(&spans, face, size, cols[c] - 2.0 * pad)
                        .into_iter()
                        .map(|l| {
                            l.iter()
                                .map(|p| p.text.as_str())
                                .collect::<Vec<_>>()
                                .join(" ")
                        })
                        .collect()
                })
                .collect();
            let lines = cells.iter().map(Vec::len).max().unwrap_or(1).max(1);
            let h = lines as f32 * lead + 2.0 * pad - 0.6;
            flow.ensure(h);
            let y0 = flow.y;
            if r == 0 {
                flow.page()
                    .rect(left, y0, width, h, Some(palette::NAVY), None);
            } else if r % 2 == 0 {
                flow.page()
                    .rect(left, y0, width, h, Some(palette::PANEL), None);
            }
            let ink = if r == 0 {
                Rgbf(1.0, 1.0, 1.0)
            } else {
                palette::INK
            };
            let mut x = left;
            for (c, lines) in cells.iter().enumerate() {
                let whole_numeric = numeric(row.get(c).map_or("", String::as_str));
                for (k, line) in lines.iter().enumerate() {
                    let base = y0 + pad + lead * (k as f32) + lead * 0.72;
                    if r > 0 && whole_numeric {
                        flow.page()
                            .text_right(x + cols[c] - pad, base, line, face, size, ink);
                    } else {
                        flow.page().text(x + pad, base, line, face, size, ink);
                    }
                }
                x += cols[c];
            }
            flow.y = y0 + h;
        };
        self.ensure(20.0);
        draw_row(self, header, 0);
        for (r, row) in rows.iter().enumerate().skip(1) {
            if self.y + 8.0 > self.geo.bottom {
                self.new_page();
                draw_row(self, header, 0);
            }
            draw_row(self, row, r);
        }
        let y = self.y;
        self.page()
            .line(left, y, left + width, y, 0.3, palette::RULE);
        self.y += 4.0;
    }
}

//! The PDF exhibit.
//!
//! In: an [`Exhibit`]. Out: the bytes of a PDF and its page count. The text of every section
//! comes from the Tera templates in `templates/` (compiled into the binary), rendered to the
//! small markup of [`text`] and laid out by [`layout`]; the figures are drawn by [`staff`]
//! (notation and piano roll) and [`dotplot`]. Everything is vector drawing with the standard
//! PDF fonts.
//!
//! Sections, in order: cover (case, works, input files with size and SHA-256, tool version,
//! date, every parameter); summary (table of passages, strongest first, and what was and was not
//! found); the dot plot; one section per passage (facts, the notation of both works in a common
//! key, the differences); what was compared; method and sources; limitations and cautions; the
//! use and limits of the document.
//!
//! Determinism: no clock is read; the document identifier in the trailer is derived from
//! [`Exhibit::digest`], which the information dictionary holds whole as `DocumentDigest`; the
//! dictionary carries a creation date only when a date was given (midnight UTC of that date).

pub mod dotplot;
pub mod layout;
pub mod staff;
pub mod text;

use super::exhibit::context::context;
use super::exhibit::options::ExhibitError;
use super::exhibit::prepared::Exhibit;
use layout::{palette, Flow, Geometry, Rgbf};
use text::{parse_blocks, Face};

/// The section templates, compiled in: (name, source).
pub const TEMPLATES: [(&str, &str); 10] = [
    ("cover", include_str!("../../../templates/cover.tera")),
    ("summary", include_str!("../../../templates/summary.tera")),
    ("dotplot", include_str!("../../../templates/dotplot.tera")),
    ("passage", include_str!("../../../templates/passage.tera")),
    ("compared", include_str!("../../../templates/compared.tera")),
    ("harmony", include_str!("../../../templates/harmony.tera")),
    ("method", include_str!("../../../templates/method.tera")),
    (
        "limitations",
        include_str!("../../../templates/limitations.tera"),
    ),
    (
        "use-and-limits",
        include_str!("../../../templates/use-and-limits.tera"),
    ),
    ("running", include_str!("../../../templates/running.tera")),
];

fn engine() -> Result<tera::Tera, ExhibitError> {
    let mut tera = tera::Tera::new();
    tera.autoescape_on(Vec::<&str>::new());
    for (name, source) in TEMPLATES {
        tera.add_raw_template(name, source)
            .map_err(|e| ExhibitError::Template {
                name: name.into(),
                message: e.to_string(),
            })?;
    }
    Ok(tera)
}

fn render_template(
    tera: &tera::Tera,
    name: &str,
    ctx: &tera::Context,
) -> Result<String, ExhibitError> {
    tera.render(name, ctx).map_err(|e| ExhibitError::Template {
        name: name.into(),
        message: format!("{e:?}"),
    })
}

/// Renders the exhibit: the PDF bytes and the number of pages.
pub fn render(ex: &Exhibit<'_>) -> Result<(Vec<u8>, usize), ExhibitError> {
    let tera = engine()?;
    let data = context(ex);
    let mut ctx = tera::Context::from_serialize(&data).map_err(|e| ExhibitError::Template {
        name: "context".into(),
        message: e.to_string(),
    })?;
    let geo = Geometry::new(ex.options.paper);
    let mut flow = Flow::new(geo.clone());

    // Cover: a navy band with the case label, then the facts.
    cover_band(&mut flow, &data.case_label);
    let cover = render_template(&tera, "cover", &ctx)?;
    for block in parse_blocks(&cover) {
        flow.block(&block, &mut |_, _| {});
    }

    // Summary and dot plot.
    flow.new_page();
    let summary = render_template(&tera, "summary", &ctx)?;
    for block in parse_blocks(&summary) {
        flow.block(&block, &mut |_, _| {});
    }
    let dot = render_template(&tera, "dotplot", &ctx)?;
    // Keep the heading and its text with the figure: on this page if a plot of useful size
    // fits, else on a page of its own at full size.
    let room = flow.remaining() - 22.0 - 34.0;
    let full = 110.0;
    let max_height = if room >= 55.0 { room.min(full) } else { full };
    let need = dotplot::height(&flow, ex.a, ex.b, max_height) + 22.0 + 34.0;
    flow.ensure(need);
    for block in parse_blocks(&dot) {
        flow.block(&block, &mut |f, name| {
            if name == "dotplot" {
                dotplot::draw(f, ex.findings, max_height);
            }
        });
    }

    // One section per passage.
    for (k, view) in ex.views.iter().enumerate() {
        flow.new_page();
        ctx.insert("p", &data.passages.get(k));
        let text = render_template(&tera, "passage", &ctx)?;
        for block in parse_blocks(&text) {
            flow.block(&block, &mut |f, name| match name {
                "notation" => staff::draw_passage(f, view),
                "legend" => legend(f),
                _ => {}
            });
        }
    }

    if data.harmony.is_some() || data.sync.is_some() {
        flow.new_page();
        let text = render_template(&tera, "harmony", &ctx)?;
        for block in parse_blocks(&text) {
            flow.block(&block, &mut |_, _| {});
        }
    }
    for (name, fresh_page) in [
        ("compared", true),
        ("method", true),
        ("limitations", true),
        ("use-and-limits", false),
    ] {
        if fresh_page {
            flow.new_page();
        }
        let text = render_template(&tera, name, &ctx)?;
        for block in parse_blocks(&text) {
            flow.block(&block, &mut |_, _| {});
        }
    }

    // Running header and footer on every page.
    let running = render_template(&tera, "running", &ctx)?;
    let mut lines = running.lines().map(str::trim).filter(|l| !l.is_empty());
    let head_left = lines.next().unwrap_or("").to_string();
    let head_right = lines.next().unwrap_or("").to_string();
    let foot_left = lines.next().unwrap_or("").to_string();
    let total = flow.pages.len();
    let (w, h) = (geo.width(), geo.height());
    for (i, page) in flow.pages.iter_mut().enumerate() {
        let (l, r) = (geo.left(), geo.right());
        if i > 0 {
            page.text(l, 13.0, &head_left, Face::SansBold, 7.5, palette::NAVY);
            page.text_right(r, 13.0, &head_right, Face::Sans, 7.5, palette::GREY);
            page.line(l, 15.0, r, 15.0, 0.25, palette::RULE);
        }
        page.line(l, h - 13.5, r, h - 13.5, 0.25, palette::RULE);
        page.text(l, h - 9.5, &foot_left, Face::Sans, 7.0, palette::GREY);
        page.text_right(
            r,
            h - 9.5,
            &format!("page {} of {total}", i + 1),
            Face::Sans,
            7.5,
            palette::INK,
        );
        let _ = w;
    }

    let bytes = save(ex, &flow, &data.a.label, &data.b.label)?;
    Ok((bytes, total))
}

fn cover_band(flow: &mut Flow, case_label: &str) {
    let geo = flow.geo.clone();
    let page = flow.page();
    page.rect(0.0, 0.0, geo.width(), 58.0, Some(palette::NAVY), None);
    page.text(
        geo.left(),
        20.0,
        "EXHIBIT",
        Face::SansBold,
        9.0,
        Rgbf(0.75, 0.82, 0.93),
    );
    let title = "Comparison of melodic material";
    page.text(
        geo.left(),
        32.0,
        title,
        Face::SerifBold,
        22.0,
        Rgbf(1.0, 1.0, 1.0),
    );
    let case = if case_label.is_empty() {
        "No case label given"
    } else {
        case_label
    };
    let face = if case_label.is_empty() {
        Face::SansItalic
    } else {
        Face::Sans
    };
    for (k, line) in text::wrap_plain(case, face, 12.0, geo.text_width())
        .iter()
        .take(2)
        .enumerate()
    {
        page.text(
            geo.left(),
            43.0 + 5.5 * k as f32,
            line,
            face,
            12.0,
            Rgbf(1.0, 1.0, 1.0),
        );
    }
    flow.y = 68.0;
}

/// The key to the marks, drawn as a small panel.
fn legend(flow: &mut Flow) {
    let left = flow.geo.left();
    let width = flow.geo.text_width();
    flow.ensure(12.0);
    let y = flow.y;
    let page = flow.page();
    page.rect(left, y, width, 9.0, Some(palette::PANEL), None);
    let mid = y + 4.5;
    let mut x = left + 4.0;
    page.round_rect(
        x - 1.9,
        mid - 1.6,
        3.8,
        3.2,
        0.5,
        Some(palette::NAVY_TINT),
        None,
    );
    page.ellipse(x, mid, 1.15, 0.8, -0.35, Some(palette::NAVY), None);
    page.text(
        x + 3.5,
        mid + 1.1,
        "same note as the other work",
        Face::Sans,
        7.5,
        palette::INK,
    );
    x += 52.0;
    page.ellipse(
        x,
        mid,
        2.2,
        1.8,
        0.0,
        Some(palette::VERMILION_TINT),
        Some((palette::VERMILION, 0.25)),
    );
    page.ellipse(x, mid, 1.15, 0.8, -0.35, Some(palette::VERMILION), None);
    page.text(
        x + 3.5,
        mid + 1.1,
        "different, or no counterpart",
        Face::Sans,
        7.5,
        palette::INK,
    );
    x += 52.0;
    page.ellipse(x, mid, 1.15, 0.8, -0.35, Some(palette::LIGHT_GREY), None);
    page.text(
        x + 3.5,
        mid + 1.1,
        "outside the passage",
        Face::Sans,
        7.5,
        palette::INK,
    );
    flow.y = y + 13.0;
}

fn utf16(text: &str) -> lopdf::Object {
    let mut bytes = vec![0xFE, 0xFF];
    for unit in text.encode_utf16() {
        bytes.extend_from_slice(&unit.to_be_bytes());
    }
    lopdf::Object::String(bytes, lopdf::StringFormat::Hexadecimal)
}

fn save(
    ex: &Exhibit<'_>,
    flow: &Flow,
    label_a: &str,
    label_b: &str,
) -> Result<Vec<u8>, ExhibitError> {
    use printpdf::{Mm, PdfDocument, PdfPage, PdfSaveOptions};
    let geo = &flow.geo;
    let mut doc = PdfDocument::new("Comparison of melodic material");
    let pages: Vec<PdfPage> = flow
        .pages
        .iter()
        .map(|p| {
            let mut page = PdfPage::new(Mm(geo.width()), Mm(geo.height()), p.ops.clone());
            // Exact sizes in points: 612 × 792 for Letter, 595.276 × 841.89 for A4.
            let (w, h) = geo.paper.size_pt();
            let bx = printpdf::Rect::from_wh(printpdf::Pt(w), printpdf::Pt(h));
            page.media_box = bx.clone();
            page.trim_box = bx.clone();
            page.crop_box = bx;
            page
        })
        .collect();
    doc.with_pages(pages);
    let opts = PdfSaveOptions {
        optimize: true,
        subset_fonts: true,
        secure: true,
        image_optimization: None,
    };
    let mut warnings = Vec::new();
    let mut lo = doc.to_lopdf_document(&opts, &mut warnings);
    // Our own information dictionary: nothing random, no clock.
    let mut info = lopdf::Dictionary::new();
    info.set(
        "Title",
        utf16(&format!(
            "Comparison of melodic material: {label_a} and {label_b}"
        )),
    );
    if let Some(case) = &ex.options.case_label {
        info.set("Subject", utf16(case));
    }
    info.set(
        "Creator",
        utf16(&format!("collatio {}", env!("CARGO_PKG_VERSION"))),
    );
    info.set(
        "Producer",
        utf16(&format!(
            "collatio {} (printpdf)",
            env!("CARGO_PKG_VERSION")
        )),
    );
    // The digest every file of the run carries, whole (the identifier below holds half of it).
    info.set("DocumentDigest", lopdf::Object::string_literal(ex.digest()));
    if let Some(date) = &ex.options.date {
        let stamp = format!("D:{}000000Z", date.replace('-', ""));
        info.set("CreationDate", lopdf::Object::string_literal(stamp.clone()));
        info.set("ModDate", lopdf::Object::string_literal(stamp));
    }
    let info_id = lo.add_object(lopdf::Object::Dictionary(info));
    lo.trailer.set("Info", lopdf::Object::Reference(info_id));
    let digest = ex.digest();
    let id: Vec<u8> = digest.as_bytes().iter().take(32).copied().collect();
    lo.trailer.set(
        "ID",
        lopdf::Object::Array(vec![
            lopdf::Object::String(id.clone(), lopdf::StringFormat::Literal),
            lopdf::Object::String(id, lopdf::StringFormat::Literal),
        ]),
    );
    lo.prune_objects();
    lo.compress();
    let mut out = Vec::new();
    lo.save_to(&mut out)
        .map_err(|e| ExhibitError::Pdf(e.to_string()))?;
    Ok(out)
}

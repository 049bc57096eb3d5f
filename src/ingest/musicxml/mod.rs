//! MusicXML reader: partwise and timewise scores, plain or compressed (`.mxl`).
//!
//! The XML is read with `roxmltree` after decoding the bytes by their byte-order mark or
//! declared encoding (UTF-8, UTF-16, ISO-8859-1, …), and `.mxl` containers are opened with the
//! `zip` crate: measured on real files, the `musicxml` crate's own zip and XML readers reject
//! about 9% of them (data descriptors in zips, UTF-16 files with single-quoted attributes).
//!
//! What the timeline gets, after MusicXML 4.0:
//! - positions from `<divisions>`/`<duration>`/`<backup>`/`<forward>`, exact in ticks at the
//!   least common multiple of every `<divisions>` value in the file;
//! - chords, voices and staves; ties merged into one note; grace notes listed as ornaments;
//!   cue notes and unpitched (percussion) notes left out;
//! - concert pitch: written pitch moved by `<transpose>` (`<chromatic>`, `<diatonic>`,
//!   `<octave-change>`);
//! - measure numbers exactly as printed (`0`, `12a`), `implicit="yes"` and pickups;
//! - time and key signatures, tempo from `<sound tempo>` (quarter notes per minute, 120 when
//!   none) or else from metronome marks;
//! - lyric syllables (first verse) on their notes and `<harmony>` chord symbols;
//! - measures in written order, or repeats and endings unfolded on request.

pub(crate) mod decode;
mod layout;
mod measure;
mod mxl;
pub(crate) mod prescan;

use super::{Limits, Problem, RawPiece};
use measure::{MeasureContent, PartState};
use roxmltree::Node;

/// Largest tick resolution used; files whose `<divisions>` values have a larger least common
/// multiple are read at this resolution with rounding, and a warning.
const MAX_RESOLUTION: u64 = 1 << 20;

/// Reads an uncompressed MusicXML document.
pub(crate) fn read_xml(bytes: &[u8], limits: &Limits, unfold: bool) -> Result<RawPiece, Problem> {
    let (text, had_errors) = decode::decode(bytes);
    let mut raw = read_text(&text, limits, unfold)?;
    if had_errors {
        raw.warnings.push(
            "musicxml: some bytes were not valid in the declared encoding and were replaced".into(),
        );
    }
    Ok(raw)
}

/// Reads a compressed MusicXML container.
pub(crate) fn read_mxl(bytes: &[u8], limits: &Limits, unfold: bool) -> Result<RawPiece, Problem> {
    let (name, data) = mxl::root_document(bytes, limits)?;
    let mut raw = read_xml(&data, limits, unfold)?;
    raw.detail = format!("{}; root file '{name}'", raw.detail);
    Ok(raw)
}

/// Where a part's measures are found.
struct PartSource<'a, 'input> {
    id: String,
    /// (attribute holder, content holder) per measure.
    measures: Vec<(Node<'a, 'input>, Node<'a, 'input>)>,
}

fn read_text(text: &str, limits: &Limits, unfold: bool) -> Result<RawPiece, Problem> {
    prescan::check(text, "musicxml", limits)?;
    let options = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..roxmltree::ParsingOptions::default()
    };
    let doc = roxmltree::Document::parse_with_options(text, options)
        .map_err(|e| Problem::Xml(e.to_string()))?;
    let root = doc.root_element();
    let timewise = match root.tag_name().name() {
        "score-partwise" => false,
        "score-timewise" => true,
        other => {
            return Err(Problem::MusicXml(format!(
                "root element is <{other}>, expected <score-partwise> or <score-timewise>"
            )))
        }
    };
    let version = root.attribute("version").unwrap_or("unspecified");
    let sources = part_sources(root, timewise);
    if sources.is_empty() {
        return Err(Problem::MusicXml("the score has no <part>".into()));
    }
    let (resolution, rounding) = resolution_for(root);
    let mut raw = RawPiece {
        detail: format!(
            "MusicXML {version}, {}, {resolution} ticks per quarter note",
            if timewise { "timewise" } else { "partwise" }
        ),
        resolution,
        ..RawPiece::default()
    };
    if rounding {
        raw.warnings.push(format!(
            "musicxml: the <divisions> values have no common multiple up to {MAX_RESOLUTION}; \
             positions are rounded to 1/{resolution} of a quarter note"
        ));
    }
    read_header(root, &mut raw);
    let part_list = part_list(root);

    let mut contents: Vec<Vec<MeasureContent>> = Vec::with_capacity(sources.len());
    let mut states: Vec<PartState> = Vec::with_capacity(sources.len());
    let mut total_notes = 0u64;
    for source in &sources {
        let mut state = PartState::new(resolution);
        let mut measures = Vec::with_capacity(source.measures.len());
        for (ordinal, (holder, content)) in source.measures.iter().enumerate() {
            let m = measure::read_measure(*holder, *content, ordinal, &mut state)
                .map_err(|p| in_part(p, &source.id))?;
            total_notes += m.notes.len() as u64;
            limits.check_notes(total_notes)?;
            measures.push(m);
        }
        if !state.saw_divisions && measures.iter().any(|m| !m.notes.is_empty()) {
            raw.warnings.push(format!(
                "musicxml: part {}: no <divisions>; one division per quarter note assumed",
                source.id
            ));
        }
        contents.push(measures);
        states.push(state);
    }

    for (source, state) in sources.iter().zip(&states) {
        let (name, instrument, channel) = part_list
            .iter()
            .find(|(id, ..)| id == &source.id)
            .map(|(_, n, i, c)| (n.clone(), i.clone(), *c))
            .unwrap_or_default();
        raw.parts.push(crate::timeline::Part {
            id: source.id.clone(),
            name,
            instrument,
            track: None,
            channel,
            percussion: channel == Some(10),
            transposition: state.transpose.1.round() as i32,
            staves: state.staves,
            voices: Vec::new(),
            notes: Vec::new(),
        });
    }
    layout::lay_out(&mut raw, contents, unfold, limits)?;
    Ok(raw)
}

fn in_part(problem: Problem, part: &str) -> Problem {
    match problem {
        Problem::MusicXml(detail) => Problem::MusicXml(format!("part {part}: {detail}")),
        other => other,
    }
}

/// The measures of each part, in document order, for either layout of the score.
fn part_sources<'a, 'input>(root: Node<'a, 'input>, timewise: bool) -> Vec<PartSource<'a, 'input>> {
    let mut sources: Vec<PartSource> = Vec::new();
    if timewise {
        for measure in root.children().filter(|c| c.has_tag_name("measure")) {
            for part in measure.children().filter(|c| c.has_tag_name("part")) {
                let id = part.attribute("id").unwrap_or("").to_string();
                match sources.iter_mut().find(|s| s.id == id) {
                    Some(source) => source.measures.push((measure, part)),
                    None => sources.push(PartSource {
                        id,
                        measures: vec![(measure, part)],
                    }),
                }
            }
        }
    } else {
        for (i, part) in root
            .children()
            .filter(|c| c.has_tag_name("part"))
            .enumerate()
        {
            let id = part
                .attribute("id")
                .map_or_else(|| format!("P{}", i + 1), str::to_string);
            let measures = part
                .children()
                .filter(|c| c.has_tag_name("measure"))
                .map(|m| (m, m))
                .collect();
            sources.push(PartSource { id, measures });
        }
    }
    sources
}

/// Ticks per quarter: the least common multiple of every integral `<divisions>` value, capped.
/// Returns the resolution and whether positions will need rounding.
fn resolution_for(root: Node) -> (u32, bool) {
    let mut lcm: u64 = 1;
    let mut rounding = false;
    for d in root.descendants().filter(|n| n.has_tag_name("divisions")) {
        let Some(value) = d.text().and_then(|t| t.trim().parse::<f64>().ok()) else {
            continue;
        };
        if !(value > 0.0 && value.is_finite()) {
            continue;
        }
        if value.fract() != 0.0 || value > MAX_RESOLUTION as f64 {
            rounding = true;
            continue;
        }
        let v = value as u64;
        let next = lcm / gcd(lcm, v) * v;
        if next > MAX_RESOLUTION {
            rounding = true;
        } else {
            lcm = next;
        }
    }
    if rounding {
        // A resolution that still divides evenly for the usual tuplets.
        lcm = (lcm.max(1)).max(960 * 7 * 11);
        lcm = lcm.min(MAX_RESOLUTION);
    }
    (lcm as u32, rounding)
}

fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a.max(1)
}

fn read_header(root: Node, raw: &mut RawPiece) {
    let text_at = |path: &[&str]| -> Option<String> {
        let mut node = root;
        for name in path {
            node = node.children().find(|c| c.has_tag_name(*name))?;
        }
        node.text()
            .map(|t| t.split_whitespace().collect::<Vec<_>>().join(" "))
            .filter(|t| !t.is_empty())
    };
    raw.title = text_at(&["work", "work-title"]).or_else(|| text_at(&["movement-title"]));
    raw.composer = root
        .children()
        .find(|c| c.has_tag_name("identification"))
        .and_then(|i| {
            i.children()
                .filter(|c| c.has_tag_name("creator"))
                .find(|c| c.attribute("type") == Some("composer"))
        })
        .and_then(|c| c.text())
        .map(|t| t.split_whitespace().collect::<Vec<_>>().join(" "))
        .filter(|t| !t.is_empty());
}

/// (id, part name, instrument name, MIDI channel) from `<part-list>`.
fn part_list(root: Node) -> Vec<(String, String, String, Option<u8>)> {
    let Some(list) = root.children().find(|c| c.has_tag_name("part-list")) else {
        return Vec::new();
    };
    list.descendants()
        .filter(|c| c.has_tag_name("score-part"))
        .map(|sp| {
            let text = |name: &str| {
                sp.descendants()
                    .find(|c| c.has_tag_name(name))
                    .and_then(|c| c.text())
                    .map(|t| t.split_whitespace().collect::<Vec<_>>().join(" "))
                    .unwrap_or_default()
            };
            let channel = sp
                .descendants()
                .find(|c| c.has_tag_name("midi-channel"))
                .and_then(|c| c.text()?.trim().parse::<u8>().ok())
                .filter(|c| (1..=16).contains(c));
            (
                sp.attribute("id").unwrap_or("").to_string(),
                text("part-name"),
                text("instrument-name"),
                channel,
            )
        })
        .collect()
}

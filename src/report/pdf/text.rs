//! Text for the exhibit: the standard PDF fonts and their widths, a character filter for the
//! fonts' WinAnsi encoding, and the small markup the section templates are written in.
//!
//! The exhibit uses four of the fourteen standard PDF fonts (PDF 32000-1:2008, 9.6.2.2), which
//! every reader supplies, so nothing is embedded: Times Roman for running text, its bold and
//! italic, and Helvetica (plain and bold) for headings, tables and figure labels. Widths come
//! from the metric-compatible outlines that `printpdf` ships for these fonts, in thousandths of
//! an em, and are read once per process.
//!
//! The markup (one construct per line) is what `templates/*.tera` render to:
//!
//! | line | block |
//! |---|---|
//! | `# Title` | section heading |
//! | `## Title` | subheading |
//! | `- text` | bulleted item |
//! | `> text` | boxed statement (consecutive lines join into one box) |
//! | `| a | b |` | table row; the first row of a table is its header |
//! | `@name` | a figure the caller draws in place (e.g. `@notation`) |
//! | `label :: value` | a labelled fact |
//! | `~` | vertical space |
//! | anything else | running text; a blank line ends a paragraph |
//!
//! Inside a line, `**bold**` sets words in bold and backquotes set them in Courier.

use printpdf::BuiltinFont;
use std::collections::BTreeMap;
use std::sync::OnceLock;

/// A font of the exhibit (a subset of the standard fourteen).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Face {
    /// Times Roman: running text.
    Serif,
    /// Times Bold.
    SerifBold,
    /// Times Italic.
    SerifItalic,
    /// Helvetica: labels and tables.
    Sans,
    /// Helvetica Bold: headings.
    SansBold,
    /// Helvetica Oblique.
    SansItalic,
    /// Courier: hashes and file names.
    Mono,
}

impl Face {
    /// The printpdf font.
    pub fn builtin(self) -> BuiltinFont {
        match self {
            Face::Serif => BuiltinFont::TimesRoman,
            Face::SerifBold => BuiltinFont::TimesBold,
            Face::SerifItalic => BuiltinFont::TimesItalic,
            Face::Sans => BuiltinFont::Helvetica,
            Face::SansBold => BuiltinFont::HelveticaBold,
            Face::SansItalic => BuiltinFont::HelveticaOblique,
            Face::Mono => BuiltinFont::Courier,
        }
    }

    /// The bold face of the same family.
    pub fn bold(self) -> Face {
        match self {
            Face::Serif | Face::SerifBold | Face::SerifItalic => Face::SerifBold,
            Face::Sans | Face::SansBold | Face::SansItalic => Face::SansBold,
            Face::Mono => Face::Mono,
        }
    }

    const ALL: [Face; 7] = [
        Face::Serif,
        Face::SerifBold,
        Face::SerifItalic,
        Face::Sans,
        Face::SansBold,
        Face::SansItalic,
        Face::Mono,
    ];
}

/// Advance widths in thousandths of an em, per character.
struct Widths {
    by_char: BTreeMap<char, f32>,
    fallback: f32,
}

fn load_widths(face: Face) -> Widths {
    let mut by_char = BTreeMap::new();
    let mut fallback = 500.0;
    if let Some(font) = face.builtin().get_parsed_font() {
        let upem = f32::from(font.units_per_em.max(1));
        for (&codepoint, &gid) in &font.codepoint_to_glyph {
            if let (Some(c), Some(&w)) = (char::from_u32(codepoint), font.glyph_widths.get(&gid)) {
                by_char.insert(c, f32::from(w) * 1000.0 / upem);
            }
        }
        if let Some(&w) = by_char.get(&'n') {
            fallback = w;
        }
    }
    // The bundled outlines map no glyph to the space; its width is the standard one
    // (Adobe core font metrics: Helvetica 278, Times 250, Courier 600).
    let space = match face {
        Face::Sans | Face::SansBold | Face::SansItalic => 278.0,
        Face::Serif | Face::SerifBold | Face::SerifItalic => 250.0,
        Face::Mono => 600.0,
    };
    by_char.insert(' ', space);
    by_char.insert('\u{a0}', space);
    Widths { by_char, fallback }
}

fn widths(face: Face) -> &'static Widths {
    static TABLES: OnceLock<Vec<Widths>> = OnceLock::new();
    let tables = TABLES.get_or_init(|| Face::ALL.iter().map(|&f| load_widths(f)).collect());
    let index = Face::ALL.iter().position(|&f| f == face).unwrap_or(0);
    // `tables` has one entry per face in ALL, so the index is always valid.
    &tables[index.min(tables.len().saturating_sub(1))]
}

/// Width of `text` set in `face` at `size` points, in millimetres.
pub fn width_mm(text: &str, face: Face, size: f32) -> f32 {
    let table = widths(face);
    let units: f32 = text
        .chars()
        .map(|c| table.by_char.get(&c).copied().unwrap_or(table.fallback))
        .sum();
    units / 1000.0 * size * MM_PER_PT
}

/// Millimetres per PostScript point.
pub const MM_PER_PT: f32 = 25.4 / 72.0;

/// Replaces characters the standard fonts' WinAnsi encoding cannot show with plain
/// equivalents (`♭` → `b`, `♯` → `#`, `−` → `-`, `→` → `->`), so nothing prints as `?`.
pub fn sanitize(text: &str) -> String {
    const WIN_ANSI_EXTRA: &str = "€‚ƒ„…†‡ˆ‰Š‹ŒŽ‘’“”•–—˜™š›œžŸ";
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            ' '..='~' | '\u{a0}'..='\u{ff}' => out.push(c),
            c if WIN_ANSI_EXTRA.contains(c) => out.push(c),
            '♭' => out.push('b'),
            '♯' => out.push('#'),
            '♮' => out.push('n'),
            '−' => out.push('-'),
            '→' => out.push_str("->"),
            '≈' => out.push('~'),
            '≤' => out.push_str("<="),
            '≥' => out.push_str(">="),
            '\t' => out.push(' '),
            '\n' | '\r' => out.push(' '),
            _ => out.push('?'),
        }
    }
    out
}

/// A run of words in one style.
#[derive(Debug, Clone, PartialEq)]
pub struct Span {
    /// The text (sanitised).
    pub text: String,
    /// Bold or not.
    pub bold: bool,
    /// Monospaced (file names, hashes).
    pub mono: bool,
}

/// Splits a line into spans at `**` (bold) and `` ` `` (monospaced) markers.
pub fn spans(line: &str) -> Vec<Span> {
    let mut out = Vec::new();
    let (mut bold, mut mono) = (false, false);
    let mut current = String::new();
    let mut rest = line;
    while !rest.is_empty() {
        let toggle_bold = rest.starts_with("**") && !mono;
        let toggle_mono = rest.starts_with('`');
        if toggle_bold || toggle_mono {
            if !current.is_empty() {
                out.push(Span {
                    text: sanitize(&current),
                    bold,
                    mono,
                });
                current.clear();
            }
            if toggle_bold {
                bold = !bold;
                rest = &rest[2..];
            } else {
                mono = !mono;
                rest = &rest[1..];
            }
            continue;
        }
        let mut chars = rest.chars();
        if let Some(c) = chars.next() {
            current.push(c);
        }
        rest = chars.as_str();
    }
    if !current.is_empty() {
        out.push(Span {
            text: sanitize(&current),
            bold,
            mono,
        });
    }
    out
}

/// One word placed on a line: text, face, and x offset from the line start in mm.
#[derive(Debug, Clone, PartialEq)]
pub struct Placed {
    /// Offset from the start of the line, mm.
    pub x: f32,
    /// The word (with no surrounding spaces).
    pub text: String,
    /// Its face.
    pub face: Face,
}

/// Breaks spans into lines no wider than `width` mm (greedy, first fit). A word longer than the
/// line is put on a line of its own.
pub fn wrap(spans: &[Span], face: Face, size: f32, width: f32) -> Vec<Vec<Placed>> {
    let space = width_mm(" ", face, size);
    let mut lines: Vec<Vec<Placed>> = Vec::new();
    let mut line: Vec<Placed> = Vec::new();
    let mut x = 0.0f32;
    // Whether the previous span ended with a space (then the next span is a new word).
    let mut ended_with_space = true;
    for span in spans {
        let f = if span.mono {
            Face::Mono
        } else if span.bold {
            face.bold()
        } else {
            face
        };
        let starts_with_space = span.text.starts_with(' ');
        for (k, word) in span.text.split(' ').enumerate() {
            if word.is_empty() {
                continue;
            }
            let w = width_mm(word, f, size);
            // Words of one span are separated by spaces; a span glued to the previous
            // one (e.g. "**bold**,") keeps no space.
            let glue = k == 0 && !starts_with_space && !ended_with_space && !line.is_empty();
            let gap = if line.is_empty() || glue { 0.0 } else { space };
            if !line.is_empty() && x + gap + w > width && !glue {
                lines.push(std::mem::take(&mut line));
                x = 0.0;
                line.push(Placed {
                    x,
                    text: word.to_string(),
                    face: f,
                });
                x += w;
                continue;
            }
            x += gap;
            line.push(Placed {
                x,
                text: word.to_string(),
                face: f,
            });
            x += w;
        }
        ended_with_space = span.text.ends_with(' ');
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

/// Wraps plain text (no markup) into lines of strings.
pub fn wrap_plain(text: &str, face: Face, size: f32, width: f32) -> Vec<String> {
    let span = Span {
        text: sanitize(text),
        bold: false,
        mono: false,
    };
    wrap(&[span], face, size, width)
        .into_iter()
        .map(|line| {
            line.iter()
                .map(|p| p.text.as_str())
                .collect::<Vec<_>>()
                .join(" ")
        })
        .collect()
}

/// A block of the section markup.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// `# ...`
    Heading(String),
    /// `## ...`
    Subheading(String),
    /// Running text (lines joined).
    Paragraph(String),
    /// `- ...`
    Bullet(String),
    /// `> ...` (lines joined).
    Statement(String),
    /// `| ... |` rows; the first is the header.
    Table(Vec<Vec<String>>),
    /// `@name`
    Figure(String),
    /// `label :: value`: a labelled line (the cover's facts).
    Field(String, String),
    /// `~`
    Space,
}

/// Parses the markup a template rendered to.
pub fn parse_blocks(text: &str) -> Vec<Block> {
    let mut blocks = Vec::new();
    let mut paragraph: Vec<String> = Vec::new();
    let mut statement: Vec<String> = Vec::new();
    let mut table: Vec<Vec<String>> = Vec::new();
    fn flush(
        blocks: &mut Vec<Block>,
        paragraph: &mut Vec<String>,
        statement: &mut Vec<String>,
        table: &mut Vec<Vec<String>>,
    ) {
        if !paragraph.is_empty() {
            blocks.push(Block::Paragraph(paragraph.join(" ")));
            paragraph.clear();
        }
        if !statement.is_empty() {
            blocks.push(Block::Statement(statement.join(" ")));
            statement.clear();
        }
        if !table.is_empty() {
            blocks.push(Block::Table(std::mem::take(table)));
        }
    }
    for raw in text.lines() {
        let line = raw.trim();
        if line.is_empty() {
            flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
            continue;
        }
        if let Some(rest) = line
            .strip_prefix("> ")
            .or(line.strip_prefix('>').filter(|r| r.is_empty()))
        {
            if !paragraph.is_empty() || !table.is_empty() {
                flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
            }
            statement.push(rest.trim().to_string());
            continue;
        }
        if line.starts_with('|') {
            if !paragraph.is_empty() || !statement.is_empty() {
                flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
            }
            let inner = line.trim_start_matches('|').trim_end_matches('|');
            let cells: Vec<String> = inner.split('|').map(|c| c.trim().to_string()).collect();
            let separator = cells
                .iter()
                .all(|c| !c.is_empty() && c.chars().all(|ch| ch == '-' || ch == ':'));
            if !separator {
                table.push(cells);
            }
            continue;
        }
        let plain = !(line.starts_with("# ")
            || line.starts_with("## ")
            || line.starts_with("- ")
            || line.starts_with('@')
            || line == "~"
            || line.contains(" :: "));
        if plain {
            if !statement.is_empty() || !table.is_empty() {
                flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
            }
            paragraph.push(line.to_string());
            continue;
        }
        flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
        if let Some(rest) = line.strip_prefix("## ") {
            blocks.push(Block::Subheading(rest.trim().to_string()));
        } else if let Some(rest) = line.strip_prefix("# ") {
            blocks.push(Block::Heading(rest.trim().to_string()));
        } else if let Some(rest) = line.strip_prefix("- ") {
            blocks.push(Block::Bullet(rest.trim().to_string()));
        } else if let Some(rest) = line.strip_prefix('@') {
            blocks.push(Block::Figure(rest.trim().to_string()));
        } else if let Some((label, value)) = line.split_once(" :: ") {
            blocks.push(Block::Field(
                label.trim().to_string(),
                value.trim().to_string(),
            ));
        } else if line == "~" {
            blocks.push(Block::Space);
        } else {
            paragraph.push(line.to_string());
        }
    }
    flush(&mut blocks, &mut paragraph, &mut statement, &mut table);
    blocks
}

/// Groups the words of a wrapped line into runs of one face, with the spaces between words
/// inside the runs, so that a reader's own font metrics space them.
pub fn runs(line: &[Placed], size: f32) -> Vec<(String, Face)> {
    let mut out: Vec<(String, Face)> = Vec::new();
    let mut prev_end: Option<f32> = None;
    for w in line {
        let spaced = prev_end.is_some_and(|end| w.x > end + 0.01);
        match out.last_mut() {
            Some((text, face)) if *face == w.face => {
                if spaced {
                    text.push(' ');
                }
                text.push_str(&w.text);
            }
            Some((text, _)) => {
                if spaced {
                    text.push(' ');
                }
                out.push((w.text.clone(), w.face));
            }
            None => out.push((w.text.clone(), w.face)),
        }
        prev_end = Some(w.x + width_mm(&w.text, w.face, size));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn helvetica_widths_match_the_standard_metrics() {
        // Adobe's Helvetica AFM: space 278, 'a' 556, 'i' 222, 'W' 944 (thousandths of an em).
        let at_1000 = |s: &str| width_mm(s, Face::Sans, 1000.0) / MM_PER_PT;
        assert!((at_1000(" ") - 278.0).abs() < 2.0, "{}", at_1000(" "));
        assert!((at_1000("a") - 556.0).abs() < 2.0);
        assert!((at_1000("i") - 222.0).abs() < 2.0);
        assert!((at_1000("W") - 944.0).abs() < 2.0);
    }

    #[test]
    fn markup_blocks() {
        let blocks = parse_blocks(
            "# Head\n\nsome text\nmore\n\n- item\n| a | b |\n|---|---|\n| 1 | 2 |\n> boxed\n> still\n@notation\n",
        );
        assert_eq!(
            blocks,
            vec![
                Block::Heading("Head".into()),
                Block::Paragraph("some text more".into()),
                Block::Bullet("item".into()),
                Block::Table(vec![
                    vec!["a".into(), "b".into()],
                    vec!["1".into(), "2".into()]
                ]),
                Block::Statement("boxed still".into()),
                Block::Figure("notation".into()),
            ]
        );
    }

    #[test]
    fn wrapping_respects_width_and_bold() {
        let lines = wrap(
            &spans("one **two** three four five"),
            Face::Serif,
            10.0,
            20.0,
        );
        assert!(lines.len() >= 2);
        for line in &lines {
            let last = line.last().unwrap();
            assert!(last.x + width_mm(&last.text, last.face, 10.0) <= 20.0 + 1e-3);
        }
        assert_eq!(lines[0][1].face, Face::SerifBold);
    }

    #[test]
    fn sanitizing() {
        assert_eq!(sanitize("B♭ – “x” → y"), "Bb – “x” -> y");
    }
}

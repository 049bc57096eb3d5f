//! Chord-symbol text and MusicXML `<kind>` values, both ways: the reader turns a `<harmony>`
//! element into lead-sheet text (`Dm7`, `G7/B`), the passage export turns that text back into
//! a `<harmony>` element that notation editors treat as a chord.

use super::Step;

/// MusicXML 4.0 `<kind>` values (the kind-value list of the MusicXML 4.0 specification) with
/// the usual lead-sheet suffix of each (common practice). `major` has no suffix.
pub const KINDS: [(&str, &str); 26] = [
    ("major", ""),
    ("minor", "m"),
    ("augmented", "+"),
    ("diminished", "dim"),
    ("dominant", "7"),
    ("major-seventh", "maj7"),
    ("minor-seventh", "m7"),
    ("diminished-seventh", "dim7"),
    ("augmented-seventh", "+7"),
    ("half-diminished", "m7b5"),
    ("major-minor", "m(maj7)"),
    ("major-sixth", "6"),
    ("minor-sixth", "m6"),
    ("dominant-ninth", "9"),
    ("major-ninth", "maj9"),
    ("minor-ninth", "m9"),
    ("dominant-11th", "11"),
    ("major-11th", "maj11"),
    ("minor-11th", "m11"),
    ("dominant-13th", "13"),
    ("major-13th", "maj13"),
    ("minor-13th", "m13"),
    ("suspended-second", "sus2"),
    ("suspended-fourth", "sus4"),
    ("power", "5"),
    ("pedal", "ped"),
];

/// The lead-sheet suffix of a MusicXML `<kind>` value; empty for `major` and unknown kinds.
pub fn kind_suffix(kind: &str) -> &'static str {
    KINDS
        .iter()
        .find(|(k, _)| *k == kind)
        .map_or("", |(_, s)| s)
}

/// A chord symbol taken apart: root, MusicXML kind, the suffix as printed, and the bass.
#[derive(Debug, Clone, PartialEq)]
pub struct ChordParts {
    /// Root letter.
    pub root: Step,
    /// Root alteration in semitones (−3 … 3).
    pub root_alter: i32,
    /// MusicXML `<kind>` value (`other` when the suffix is not one of [`KINDS`]; `none` for
    /// `N.C.`).
    pub kind: &'static str,
    /// The suffix as printed after the root (`m7`, `7(b9)`), empty for a plain major chord.
    pub suffix: String,
    /// Bass letter and alteration after a slash, when given.
    pub bass: Option<(Step, i32)>,
}

/// Takes apart chord-symbol text as the reader writes it (`Dm7`, `Bbmaj7/D`, `C(add9)`,
/// `N.C.`). `None` when the text does not start with a note letter.
pub fn parse_chord_symbol(text: &str) -> Option<ChordParts> {
    let text = text.trim();
    if text == "N.C." {
        return Some(ChordParts {
            root: Step::C,
            root_alter: 0,
            kind: "none",
            suffix: "N.C.".into(),
            bass: None,
        });
    }
    let (root, root_alter, rest) = note_prefix(text)?;
    // A slash followed by a note name and nothing else is the bass.
    let (body, bass) = match rest.rsplit_once('/') {
        Some((body, tail)) => match note_prefix(tail) {
            Some((step, alter, "")) => (body, Some((step, alter))),
            _ => (rest, None),
        },
        None => (rest, None),
    };
    // The kind comes from the suffix before any parenthesised degree, unless the suffix is a
    // kind's whole suffix with parentheses of its own (`m(maj7)`).
    let core = match KINDS.iter().find(|(_, s)| s.contains('(') && *s == body) {
        Some(_) => body,
        None => body.split('(').next().unwrap_or(""),
    };
    let kind = KINDS
        .iter()
        .find(|(_, s)| *s == core)
        .map_or("other", |(k, _)| k);
    Some(ChordParts {
        root,
        root_alter,
        kind,
        suffix: body.to_string(),
        bass,
    })
}

/// A note letter and its `#`/`b` signs at the start of `text`, and what follows.
fn note_prefix(text: &str) -> Option<(Step, i32, &str)> {
    let first = text.chars().next().filter(char::is_ascii_uppercase)?;
    let step = Step::parse(&first.to_string())?;
    let rest = &text[first.len_utf8()..];
    let signs = rest.chars().take_while(|c| *c == '#' || *c == 'b').count();
    // A `b` that starts a word is not a flat; only `#`/`b` runs of up to three count.
    let signs = signs.min(3);
    let alter = rest[..signs]
        .chars()
        .map(|c| if c == '#' { 1 } else { -1 })
        .sum();
    Some((step, alter, &rest[signs..]))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Kind values and their spelling: MusicXML 4.0 specification, kind-value; suffixes are the
    // usual lead-sheet ones (common practice).
    #[test]
    fn chord_text_takes_apart() {
        let c = parse_chord_symbol("Bbmaj7/D").unwrap();
        assert_eq!(
            (c.root, c.root_alter, c.kind),
            (Step::B, -1, "major-seventh")
        );
        assert_eq!(c.bass, Some((Step::D, 0)));
        let c = parse_chord_symbol("F#m7b5").unwrap();
        assert_eq!(
            (c.root, c.root_alter, c.kind),
            (Step::F, 1, "half-diminished")
        );
        let c = parse_chord_symbol("C").unwrap();
        assert_eq!((c.kind, c.suffix.as_str()), ("major", ""));
        let c = parse_chord_symbol("G7(b9)").unwrap();
        assert_eq!((c.kind, c.suffix.as_str()), ("dominant", "7(b9)"));
        let c = parse_chord_symbol("Am(maj7)").unwrap();
        assert_eq!(c.kind, "major-minor");
        assert_eq!(parse_chord_symbol("N.C.").unwrap().kind, "none");
        assert_eq!(parse_chord_symbol("Cxyz").unwrap().kind, "other");
        assert!(parse_chord_symbol("tacet").is_none());
        for (kind, suffix) in KINDS {
            assert_eq!(kind_suffix(kind), suffix);
        }
    }
}

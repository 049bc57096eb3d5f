//! Format detection by content; the file extension is only a hint for error messages.

use super::error::Problem;
use crate::timeline::Format;

/// Detects the format of `bytes` from magic numbers and the XML root element.
///
/// - `MThd` at offset 0: Standard MIDI File; `RIFF….RMID` wraps one.
/// - `PK\x03\x04`: a zip container, read as compressed MusicXML.
/// - Text (UTF-8, UTF-16 with or without BOM) whose first element is `score-partwise` or
///   `score-timewise`: MusicXML.
pub fn detect(bytes: &[u8]) -> Result<Format, Problem> {
    if bytes.is_empty() {
        return Err(Problem::Empty);
    }
    if bytes.starts_with(b"MThd") {
        return Ok(Format::Midi);
    }
    if bytes.len() >= 12 && bytes.starts_with(b"RIFF") && &bytes[8..12] == b"RMID" {
        return Ok(Format::Midi);
    }
    if bytes.starts_with(b"PK\x03\x04") {
        return Ok(Format::Mxl);
    }
    let head = &bytes[..bytes.len().min(4096)];
    let text = super::musicxml::decode::decode_prefix(head);
    if let Some(root) = first_element_name(&text) {
        return match root.as_str() {
            "score-partwise" | "score-timewise" => Ok(Format::MusicXml),
            other => Err(Problem::UnknownFormat(format!(
                "XML whose root element is <{other}>, expected <score-partwise> or <score-timewise>"
            ))),
        };
    }
    if text.trim_start().starts_with('<') {
        // XML whose root lies beyond the first 4 KiB of comments and declarations.
        return Ok(Format::MusicXml);
    }
    let shown: String = bytes
        .iter()
        .take(8)
        .map(|b| format!("{b:02x}"))
        .collect::<Vec<_>>()
        .join(" ");
    Err(Problem::UnknownFormat(format!(
        "the first bytes are {shown}, which match no MIDI (MThd), zip (PK) or XML header"
    )))
}

/// The name of the first element in a text, skipping the XML declaration, comments,
/// processing instructions and the DOCTYPE.
fn first_element_name(text: &str) -> Option<String> {
    let mut rest = text.trim_start_matches('\u{feff}');
    loop {
        rest = rest.trim_start();
        if let Some(after) = rest.strip_prefix("<?") {
            rest = &after[after.find("?>")? + 2..];
        } else if let Some(after) = rest.strip_prefix("<!--") {
            rest = &after[after.find("-->")? + 3..];
        } else if let Some(after) = rest.strip_prefix("<!") {
            rest = skip_declaration(after)?;
        } else if let Some(after) = rest.strip_prefix('<') {
            let name: String = after
                .chars()
                .take_while(|c| !c.is_whitespace() && *c != '>' && *c != '/')
                .collect();
            return (!name.is_empty()).then_some(name);
        } else {
            return None;
        }
    }
}

/// Skips a `<!DOCTYPE …>` declaration, including an internal subset in brackets.
fn skip_declaration(text: &str) -> Option<&str> {
    let mut depth = 0usize;
    for (i, c) in text.char_indices() {
        match c {
            '[' => depth += 1,
            ']' => depth = depth.saturating_sub(1),
            '>' if depth == 0 => return Some(&text[i + 1..]),
            _ => {}
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn midi_magic() {
        // SMF 1.0: every file starts with the header chunk type "MThd".
        assert_eq!(detect(b"MThd\0\0\0\x06").ok(), Some(Format::Midi));
    }

    #[test]
    fn musicxml_after_doctype() {
        let text = br#"<?xml version="1.0"?><!-- c --><!DOCTYPE score-partwise PUBLIC "-//Recordare//DTD MusicXML 4.0 Partwise//EN" "x.dtd"><score-partwise version="4.0">"#;
        assert_eq!(detect(text).ok(), Some(Format::MusicXml));
    }

    #[test]
    fn other_xml_is_named() {
        let err = detect(b"<html><body/></html>").err().map(|e| e.to_string());
        assert!(err.is_some_and(|e| e.contains("<html>")));
    }

    #[test]
    fn empty_and_garbage() {
        assert!(matches!(detect(b""), Err(Problem::Empty)));
        assert!(matches!(
            detect(b"\x00\x01"),
            Err(Problem::UnknownFormat(_))
        ));
    }
}

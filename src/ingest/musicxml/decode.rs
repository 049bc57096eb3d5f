//! Text decoding of XML bytes: byte-order marks, UTF-16 without a mark, and the encoding
//! named in the XML declaration (XML 1.0, appendix F "Autodetection of Character Encodings").

use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, UTF_8};
use std::borrow::Cow;

/// The encoding of an XML document: BOM first, then the `<?xml … encoding="…"?>` declaration,
/// then the pattern of the first bytes (`<\0?\0` is UTF-16LE), UTF-8 otherwise.
pub(crate) fn sniff(bytes: &[u8]) -> &'static Encoding {
    if let Some((encoding, _)) = Encoding::for_bom(bytes) {
        return encoding;
    }
    match bytes {
        [b'<', 0, b'?', 0, ..] | [b'<', 0, ..] => return UTF_16LE,
        [0, b'<', 0, b'?', ..] | [0, b'<', ..] => return UTF_16BE,
        _ => {}
    }
    declared_encoding(bytes).unwrap_or(UTF_8)
}

/// The encoding named in an ASCII-compatible XML declaration, if any and if known.
fn declared_encoding(bytes: &[u8]) -> Option<&'static Encoding> {
    let head = &bytes[..bytes.len().min(256)];
    let text = std::str::from_utf8(head)
        .ok()
        .map(Cow::Borrowed)
        .unwrap_or_else(|| String::from_utf8_lossy(head));
    let decl_end = text.find("?>")?;
    let decl = text
        .strip_prefix("<?xml")?
        .get(..decl_end.saturating_sub(5))?;
    let at = decl.find("encoding")?;
    let rest = decl[at + "encoding".len()..]
        .trim_start()
        .strip_prefix('=')?
        .trim_start();
    let quote = rest.chars().next()?;
    if quote != '"' && quote != '\'' {
        return None;
    }
    let value = &rest[1..];
    let end = value.find(quote)?;
    let encoding = Encoding::for_label(value[..end].trim().as_bytes())?;
    // A UTF-16 label in an ASCII-compatible declaration means the BOM-less bytes are really
    // 8-bit; encoding_rs maps such labels for decoding as XML does.
    Some(encoding.output_encoding())
}

/// Decodes a whole document to text. Malformed byte sequences are replaced with U+FFFD and
/// reported through the returned flag so the caller can warn.
pub(crate) fn decode(bytes: &[u8]) -> (String, bool) {
    let encoding = sniff(bytes);
    let (text, _, had_errors) = encoding.decode(bytes);
    let text = text.into_owned();
    // The XML declaration may still name UTF-16 after decoding; roxmltree only reads the text.
    (text, had_errors)
}

/// Decodes the beginning of a document for format detection (lossy, never fails).
pub(crate) fn decode_prefix(bytes: &[u8]) -> String {
    let encoding = sniff(bytes);
    let (text, _, _) = encoding.decode(bytes);
    text.into_owned()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn utf16le(text: &str, bom: bool) -> Vec<u8> {
        let mut out = if bom { vec![0xFF, 0xFE] } else { Vec::new() };
        for unit in text.encode_utf16() {
            out.extend_from_slice(&unit.to_le_bytes());
        }
        out
    }

    #[test]
    fn utf16_with_and_without_bom() {
        let doc = "<?xml version='1.0' encoding='UTF-16'?><score-partwise version='4.0'/>";
        for bom in [true, false] {
            let (text, errors) = decode(&utf16le(doc, bom));
            assert!(!errors);
            assert!(text.contains("<score-partwise version='4.0'/>"));
        }
    }

    #[test]
    fn latin1_declaration_is_honoured() {
        // "é" in ISO-8859-1 is the single byte 0xE9.
        let mut doc = b"<?xml version=\"1.0\" encoding=\"ISO-8859-1\"?><a>".to_vec();
        doc.push(0xE9);
        doc.extend_from_slice(b"</a>");
        let (text, errors) = decode(&doc);
        assert!(!errors);
        assert!(text.contains("<a>\u{e9}</a>"));
    }
}

//! Format detection by content; the file extension is only a hint for error messages.

use super::error::Problem;
use crate::timeline::Format;

/// Detects the format of `bytes` from magic numbers and the XML root element.
///
/// - `MThd` at offset 0: Standard MIDI File; `RIFF….RMID` wraps one.
/// - `PK\x03\x04`: a zip container, read as compressed MusicXML.
/// - Text (UTF-8, UTF-16 with or without BOM) whose first element is `score-partwise` or
///   `score-timewise`: MusicXML.
/// - Audio, by the container's signature ([`detect_audio`]).
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
    if let Some(audio) = detect_audio(bytes) {
        return Ok(audio);
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
        "the first bytes are {shown}, which match no MIDI (MThd), zip (PK) or XML header, \
         nor an audio one (RIFF/WAVE, fLaC, ID3 or MPEG sync, OggS, ftyp, FORM/AIFF)"
    )))
}

/// Detects an audio container from its signature (the container specifications' magic
/// numbers):
/// - `RIFF` … `WAVE` at bytes 8–11: WAV (Microsoft RIFF/WAVE).
/// - `fLaC`: FLAC (the FLAC format's stream marker).
/// - `OggS`: Ogg (RFC 3533), read as Vorbis; another codec inside is reported by the decoder.
/// - `ftyp` at bytes 4–7: an ISO base media file (MP4/M4A, ISO/IEC 14496-12), read as AAC.
/// - `FORM` … `AIFF` or `AIFC` at bytes 8–11: AIFF (EA IFF 85 / Apple AIFF).
/// - `ID3`: an ID3v2 tag (ID3v2.4 §3.1: 10-byte header, syncsafe size), then whatever follows
///   it (FLAC, ADTS AAC or MPEG audio; MP3 when the tag runs past the bytes given).
/// - 12 sync bits `0xFFF` with layer `00`: ADTS AAC (ISO/IEC 13818-7); 11 sync bits with a
///   valid version, layer, bit-rate and sample-rate index: MPEG audio (ISO/IEC 11172-3).
pub fn detect_audio(bytes: &[u8]) -> Option<Format> {
    let at = |range: std::ops::Range<usize>| bytes.get(range);
    if bytes.starts_with(b"RIFF") && at(8..12) == Some(b"WAVE") {
        return Some(Format::Wav);
    }
    if bytes.starts_with(b"fLaC") {
        return Some(Format::Flac);
    }
    if bytes.starts_with(b"OggS") {
        return Some(Format::OggVorbis);
    }
    if at(4..8) == Some(b"ftyp") {
        return Some(Format::Aac);
    }
    if bytes.starts_with(b"FORM") && matches!(at(8..12), Some(b"AIFF") | Some(b"AIFC")) {
        return Some(Format::Aiff);
    }
    if bytes.starts_with(b"ID3") {
        let header = at(0..10)?;
        if header[6..10].iter().any(|b| b & 0x80 != 0) {
            return None;
        }
        let size = header[6..10]
            .iter()
            .fold(0usize, |acc, b| (acc << 7) | usize::from(*b));
        let footer = if header[5] & 0x10 != 0 { 10 } else { 0 };
        let rest = bytes.get(10 + size + footer..).unwrap_or(&[]);
        if rest.len() < 4 {
            return Some(Format::Mp3);
        }
        return match detect_audio(rest) {
            Some(Format::Flac) => Some(Format::Flac),
            Some(Format::Aac) => Some(Format::Aac),
            _ => Some(Format::Mp3),
        };
    }
    let head = at(0..4)?;
    if head[0] == 0xFF && head[1] & 0xF6 == 0xF0 {
        // ADTS: sampling frequency index (bits 2-5 of byte 2) below 13.
        return ((head[2] >> 2) & 0x0F < 13).then_some(Format::Aac);
    }
    if head[0] == 0xFF && head[1] & 0xE0 == 0xE0 {
        let version = (head[1] >> 3) & 3;
        let layer = (head[1] >> 1) & 3;
        let bitrate = head[2] >> 4;
        let rate = (head[2] >> 2) & 3;
        if version != 1 && layer != 0 && bitrate != 15 && rate != 3 {
            return Some(Format::Mp3);
        }
    }
    None
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
    fn audio_signatures() {
        // Magic numbers from each container's specification (see `detect_audio`).
        let cases: [(&[u8], Format); 9] = [
            (b"RIFF\x24\0\0\0WAVEfmt ", Format::Wav),
            (b"fLaC\0\0\0\x22", Format::Flac),
            (b"OggS\0\x02\0\0", Format::OggVorbis),
            (b"\0\0\0\x20ftypM4A \0\0", Format::Aac),
            (b"FORM\0\0\x10\0AIFFCOMM", Format::Aiff),
            (b"FORM\0\0\x10\0AIFCFVER", Format::Aiff),
            (b"ID3\x04\0\0\0\0\0\x00\xFF\xFB\x90\x64", Format::Mp3),
            (b"\xFF\xFB\x90\x64\0\0", Format::Mp3),
            (b"\xFF\xF1\x50\x80\0\0", Format::Aac),
        ];
        for (bytes, format) in cases {
            assert_eq!(detect(bytes).ok(), Some(format), "{bytes:?}");
        }
        // A RIFF that is neither WAVE nor RMID, and a bad MPEG header, are not audio.
        assert!(detect(b"RIFF\0\0\0\0AVI LIST").is_err());
        assert!(detect(b"\xFF\xFB\xF0\x64").is_err());
        // ID3 followed by FLAC.
        assert_eq!(
            detect(b"ID3\x04\0\0\0\0\0\x02\0\0fLaC\0").ok(),
            Some(Format::Flac)
        );
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

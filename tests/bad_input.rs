//! Bad input through the real executable: every case gets a clear message naming the file and
//! the problem, a documented exit code (3 = input error, 2 = usage error), and never a panic.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::io::Write;
use std::path::Path;
use std::process::Output;

mod common;

fn collatio(args: &[&str]) -> Output {
    common::run_collatio(args)
}

fn write(dir: &Path, name: &str, bytes: &[u8]) -> String {
    let path = dir.join(name);
    std::fs::write(&path, bytes).unwrap();
    path.display().to_string()
}

/// Runs `inspect` and checks the exit code and that stderr names the file and a phrase.
fn expect_error(path: &str, extra: &[&str], code: i32, phrase: &str) {
    let mut args = vec!["inspect", path];
    args.extend_from_slice(extra);
    let out = collatio(&args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(code), "{path}: stderr was {stderr}");
    assert!(
        stderr.contains(path),
        "{path}: message does not name the file: {stderr}"
    );
    assert!(
        stderr.contains(phrase),
        "{path}: expected '{phrase}' in: {stderr}"
    );
    assert!(!stderr.contains("panicked"), "{stderr}");
}

fn valid_midi() -> Vec<u8> {
    // SMF 1.0 header: MThd, length 6, format 0, one track, 96 ticks per quarter.
    let mut bytes = b"MThd\0\0\0\x06\0\0\0\x01\0\x60MTrk".to_vec();
    let track = [
        0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0, 0x00, 0xFF, 0x2F, 0x00,
    ];
    bytes.extend_from_slice(&(track.len() as u32).to_be_bytes());
    bytes.extend_from_slice(&track);
    bytes
}

#[test]
fn empty_file() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "empty.mid", b"");
    expect_error(&p, &[], 3, "empty");
}

#[test]
fn missing_file() {
    expect_error("/nonexistent/nothing.mid", &[], 3, "cannot read");
}

#[test]
fn text_named_as_midi() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "letter.mid",
        b"Dear colleague, please find attached",
    );
    expect_error(&p, &[], 3, "not a MIDI or MusicXML file");
}

#[test]
fn truncated_midi() {
    let dir = tempfile::tempdir().unwrap();
    let bytes = valid_midi();
    let p = write(dir.path(), "cut.mid", &bytes[..10]);
    expect_error(&p, &[], 3, "midi:");
}

#[test]
fn midi_track_length_beyond_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let mut bytes = valid_midi();
    // Declare a track chunk of 4096 bytes in a file of a few dozen.
    bytes[18..22].copy_from_slice(&4096u32.to_be_bytes());
    let p = write(dir.path(), "long-chunk.mid", &bytes);
    let out = collatio(&["inspect", &p]);
    // The note that is there is read, and the short chunk is reported (exit 1: partly read).
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{stderr}");
    assert!(
        stderr.contains("track 1 at byte 14: chunk length 4096 exceeds"),
        "{stderr}"
    );
    assert!(stderr.contains(&p), "{stderr}");
}

#[test]
fn malformed_xml() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "broken.musicxml",
        b"<?xml version=\"1.0\"?><score-partwise><part id=\"P1\"><measure></part>",
    );
    expect_error(&p, &[], 3, "not well-formed");
}

#[test]
fn musicxml_without_notes() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "rests.musicxml",
        b"<score-partwise version=\"4.0\"><part-list><score-part id=\"P1\"/></part-list>\
          <part id=\"P1\"><measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
          <note><rest/><duration>4</duration></note></measure></part></score-partwise>",
    );
    expect_error(&p, &[], 3, "no notes");
}

#[test]
fn other_xml_document() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "page.xml", b"<html><body>hello</body></html>");
    expect_error(&p, &[], 3, "<html>");
}

#[test]
fn absurd_duration_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "huge.musicxml",
        b"<score-partwise version=\"4.0\"><part id=\"P1\"><measure number=\"1\">\
          <attributes><divisions>1</divisions></attributes><note><pitch><step>C</step>\
          <octave>4</octave></pitch><duration>1e300</duration></note></measure></part>\
          </score-partwise>",
    );
    expect_error(&p, &[], 3, "not a usable length");
}

/// A compressed MusicXML container whose entry inflates beyond the limit (a "zip bomb") is
/// refused without inflating it all.
#[test]
fn zip_bomb_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bomb.mxl");
    {
        let file = std::fs::File::create(&path).unwrap();
        let mut zip = zip::ZipWriter::new(file);
        let options = zip::write::SimpleFileOptions::default()
            .compression_method(zip::CompressionMethod::Deflated);
        zip.start_file("META-INF/container.xml", options).unwrap();
        zip.write_all(
            b"<container><rootfiles><rootfile full-path=\"score.musicxml\"/></rootfiles></container>",
        )
        .unwrap();
        zip.start_file("score.musicxml", options).unwrap();
        zip.write_all(b"<score-partwise version=\"4.0\">").unwrap();
        let spaces = vec![b' '; 1 << 20];
        for _ in 0..3 {
            zip.write_all(&spaces).unwrap();
        }
        zip.finish().unwrap();
    }
    assert!(std::fs::metadata(&path).unwrap().len() < 64 * 1024);
    let p = path.display().to_string();
    expect_error(&p, &["--max-decompressed-mb", "2"], 3, "decompressed size");
}

#[test]
fn mxl_that_is_not_a_zip() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "fake.mxl",
        b"PK\x03\x04 this is not really a zip archive",
    );
    expect_error(&p, &[], 3, "mxl:");
}

#[test]
fn file_above_the_size_limit() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "big.mid", &vec![0u8; (1 << 20) + 10]);
    expect_error(&p, &["--max-file-mb", "1"], 3, "--max-file-mb");
}

#[test]
fn selection_that_matches_nothing_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "ok.mid", &valid_midi());
    expect_error(&p, &["--part", "P9"], 2, "no part 'P9'");
    expect_error(&p, &["--bars", "40-41"], 2, "no bar labelled '40'");
}

#[test]
fn bad_option_is_a_usage_error() {
    let out = collatio(&["inspect", "--channel", "17", "x.mid"]);
    assert_eq!(out.status.code(), Some(2));
}

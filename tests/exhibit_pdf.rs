//! The exhibit as a user makes it: `collatio compare ... --pdf --json --export` on the demo.
//! Checks: two runs give byte-identical files; the JSON file is the record `--format json`
//! prints; the PDF's text (read back with poppler's `pdftotext`, an independent reader) holds
//! both works' passage bars, the SHA-256 of both inputs, the cautions and the counsel
//! statement; outputs never replace an input; bad dates and keys are usage errors.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use std::process::Command;

fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo")
        .join(name)
}

fn run(args: &[&str], dir: &Path) -> (i32, Vec<u8>, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_collatio"))
        .args(args)
        .current_dir(dir)
        .env_remove("SOURCE_DATE_EPOCH")
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        out.stdout,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn write_demo_exhibit(dir: &Path, extra: &[&str]) -> (i32, Vec<u8>, String) {
    let a = demo("pierside-lamps.musicxml");
    let b = demo("millstream-boats.musicxml");
    let mut args = vec![
        "compare",
        a.to_str().unwrap(),
        b.to_str().unwrap(),
        "--pdf",
        "exhibit.pdf",
        "--json",
        "findings.json",
        "--export",
        "passages",
        "--case-label",
        "Holloway v. Wren (invented demo case)",
        "--date",
        "2025-06-01",
    ];
    args.extend_from_slice(extra);
    run(&args, dir)
}

fn sha256_hex(path: &Path) -> String {
    Sha256::digest(std::fs::read(path).unwrap())
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Writes the demo exhibit into `dir` and returns its text ([`pdf_text`]).
fn demo_exhibit_text(dir: &Path) -> Option<String> {
    let (code, _, stderr) = write_demo_exhibit(dir, &[]);
    assert_eq!(code, 0, "{stderr}");
    pdf_text(&dir.join("exhibit.pdf"))
}

/// The PDF's text as poppler's `pdftotext` reads it (pages end with form feeds), or `None`
/// with a notice when poppler-utils is not installed.
fn pdf_text(pdf: &Path) -> Option<String> {
    match Command::new("pdftotext").arg(pdf).arg("-").output() {
        Ok(out) if out.status.success() => Some(String::from_utf8_lossy(&out.stdout).into_owned()),
        _ => {
            println!("notice: pdftotext (poppler-utils) not found; PDF text check skipped");
            None
        }
    }
}

#[test]
fn two_runs_give_identical_files() {
    let one = tempfile::tempdir().unwrap();
    let two = tempfile::tempdir().unwrap();
    let (code, stdout, stderr) = write_demo_exhibit(one.path(), &[]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stdout.is_empty());
    let (code, _, stderr) = write_demo_exhibit(two.path(), &[]);
    assert_eq!(code, 0, "{stderr}");
    for name in [
        "exhibit.pdf",
        "findings.json",
        "passages/passage-01.musicxml",
        "passages/passage-01.mid",
    ] {
        let x = std::fs::read(one.path().join(name)).unwrap();
        let y = std::fs::read(two.path().join(name)).unwrap();
        assert!(!x.is_empty(), "{name} is empty");
        assert!(x == y, "{name} differs between two runs");
    }
    let pdf = std::fs::read(one.path().join("exhibit.pdf")).unwrap();
    assert!(pdf.starts_with(b"%PDF-"));
    // No temporary files are left behind.
    let leftovers: Vec<_> = std::fs::read_dir(one.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn json_file_is_the_printed_record() {
    let dir = tempfile::tempdir().unwrap();
    let a = demo("pierside-lamps.musicxml");
    let b = demo("millstream-boats.musicxml");
    let (code, stdout, stderr) = run(
        &[
            "compare",
            a.to_str().unwrap(),
            b.to_str().unwrap(),
            "--format",
            "json",
            "--json",
            "findings.json",
        ],
        dir.path(),
    );
    assert_eq!(code, 0, "{stderr}");
    let file = std::fs::read(dir.path().join("findings.json")).unwrap();
    assert_eq!(file, stdout);
}

#[test]
fn pdf_text_holds_bars_hashes_cautions_and_counsel_statement() {
    let dir = tempfile::tempdir().unwrap();
    let Some(text) = demo_exhibit_text(dir.path()) else {
        return;
    };
    // Bars of the demo's borrowed hook (demo/README.md): A 9–16, B 17–24.
    for needle in [
        "bars 9–16",
        "bars 17–24",
        "Passage 1: A bars 9–16, B bars 17–24",
        "Holloway v. Wren (invented demo case)",
        "2025-06-01",
    ] {
        assert!(text.contains(needle), "missing {needle:?}");
    }
    for file in ["pierside-lamps.musicxml", "millstream-boats.musicxml"] {
        let hash = sha256_hex(&demo(file));
        assert!(text.contains(&hash), "missing hash of {file}");
    }
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    for needle in [
        "Similarity is not proof of copying",
        "independently",
        "public domain",
        "depends on what was compared",
        "Transcriptions can be wrong",
        "Statistics rest on their assumptions",
        "analytical aid",
        "defers to qualified legal counsel and to the law of the place",
        "Smith & Waterman 1981",
        "Mongeau & Sankoff 1990",
        // The demo has no corpus: its chance figures come from the general null, with its
        // caution.
        "Pearson 1998",
        "describes no single repertoire",
    ] {
        assert!(flat.contains(needle), "missing {needle:?}");
    }
}

// The cover (works, this document, parameters) fits on its page: the next page opens with the
// summary, not with the cover's last lines (a page holding one stray sentence of the cover was
// printed before its digest paragraph was shortened). Pages are split at form feeds by
// pdftotext.
#[test]
fn the_cover_fits_on_its_page() {
    let dir = tempfile::tempdir().unwrap();
    let Some(text) = demo_exhibit_text(dir.path()) else {
        return;
    };
    let pages: Vec<&str> = text.split('\u{c}').collect();
    assert!(
        pages[0].contains("Parameters of the comparison"),
        "{}",
        pages[0]
    );
    assert!(pages[1].contains("Summary"), "{}", pages[1]);
    assert!(!pages[1].contains("setting"), "{}", pages[1]);
}

#[test]
fn letter_paper_and_no_date() {
    let dir = tempfile::tempdir().unwrap();
    let a = demo("pierside-lamps.musicxml");
    let b = demo("millstream-boats.musicxml");
    let (code, _, stderr) = run(
        &[
            "compare",
            a.to_str().unwrap(),
            b.to_str().unwrap(),
            "--pdf",
            "letter.pdf",
            "--paper",
            "letter",
        ],
        dir.path(),
    );
    assert_eq!(code, 0, "{stderr}");
    let bytes = std::fs::read(dir.path().join("letter.pdf")).unwrap();
    let text = String::from_utf8_lossy(&bytes);
    // US Letter is 612 x 792 points.
    assert!(text.contains("/MediaBox[0 0 612 792]"), "not US Letter");
    // Without --date and SOURCE_DATE_EPOCH no date is recorded.
    assert!(!text.contains("/CreationDate"));
}

#[test]
fn source_date_epoch_gives_the_date() {
    let dir = tempfile::tempdir().unwrap();
    let a = demo("pierside-lamps.musicxml");
    let b = demo("millstream-boats.musicxml");
    let out = Command::new(env!("CARGO_BIN_EXE_collatio"))
        .args([
            "compare",
            a.to_str().unwrap(),
            b.to_str().unwrap(),
            "--pdf",
            "e.pdf",
        ])
        .current_dir(dir.path())
        .env("SOURCE_DATE_EPOCH", "1709208000")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let bytes = std::fs::read(dir.path().join("e.pdf")).unwrap();
    assert!(String::from_utf8_lossy(&bytes).contains("D:20240229000000Z"));
}

#[test]
fn outputs_never_overwrite_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("a.musicxml");
    let b = dir.path().join("b.musicxml");
    std::fs::copy(demo("pierside-lamps.musicxml"), &a).unwrap();
    std::fs::copy(demo("millstream-boats.musicxml"), &b).unwrap();
    let before = std::fs::read(&a).unwrap();
    for flag in ["--pdf", "--json"] {
        let (code, _, stderr) = run(
            &["compare", "a.musicxml", "b.musicxml", flag, "./a.musicxml"],
            dir.path(),
        );
        assert_eq!(code, 2, "{flag}: {stderr}");
        assert!(stderr.contains("input file"), "{stderr}");
        assert_eq!(std::fs::read(&a).unwrap(), before);
    }
    let (code, _, stderr) = run(
        &[
            "compare",
            "a.musicxml",
            "b.musicxml",
            "--pdf",
            "x.pdf",
            "--json",
            "x.pdf",
        ],
        dir.path(),
    );
    assert_eq!(code, 2, "{stderr}");
}

#[test]
fn bad_date_and_key_are_usage_errors() {
    let dir = tempfile::tempdir().unwrap();
    let a = demo("pierside-lamps.musicxml");
    let b = demo("millstream-boats.musicxml");
    let (a, b) = (a.to_str().unwrap(), b.to_str().unwrap());
    let (code, _, stderr) = run(
        &["compare", a, b, "--pdf", "x.pdf", "--date", "1 June"],
        dir.path(),
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("YYYY-MM-DD"));
    let (code, _, stderr) = run(
        &["compare", a, b, "--pdf", "x.pdf", "--common-key", "H"],
        dir.path(),
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(!dir.path().join("x.pdf").exists());
}

#[test]
fn piano_roll_and_other_keys_render() {
    use collatio::ingest::{read_file, ReadOptions};
    use collatio::report::exhibit::{ExhibitOptions, Outputs};
    let a = read_file(&demo("pierside-lamps.musicxml"), &ReadOptions::default()).unwrap();
    let b = read_file(&demo("millstream-boats.musicxml"), &ReadOptions::default()).unwrap();
    let settings = collatio::findings::CompareSettings {
        harmony: None,
        ..Default::default()
    };
    let findings = collatio::pipeline::compare_works(a, b, &settings, None);
    let dir = tempfile::tempdir().unwrap();
    for (roll, key) in [(true, "C"), (false, "Eb"), (false, "F#")] {
        let options = ExhibitOptions {
            piano_roll: roll,
            common_key: key.into(),
            ..ExhibitOptions::default()
        };
        let outputs = Outputs {
            pdf: Some(dir.path().join(format!("x-{key}-{roll}.pdf"))),
            ..Outputs::default()
        };
        let written =
            collatio::report::exhibit::write_exhibit(&findings, &options, &outputs).unwrap();
        assert!(written.pdf_pages >= 6);
    }
}

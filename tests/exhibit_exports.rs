//! Passage exports read back: the MusicXML and MIDI that `--export` writes for the demo are
//! read by collatio's own readers and must give the same notes as the passage's bars in the
//! works (moved to the common key); and music21's reading of the MusicXML (golden JSON in
//! tests/golden/exports/, written by scripts/check_exports_music21.py with music21 10.5.1)
//! must give the same notes as collatio's reading.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::ingest::{read_file, MelodyChoice, ReadOptions};
use collatio::report::exhibit::{write_exhibit, Exhibit, ExhibitOptions, Outputs};
use collatio::timeline::Piece;
use std::path::{Path, PathBuf};

/// Onsets and durations agree to this many quarter notes (exact fractions in both readers).
const TOLERANCE: f64 = 1e-6;

fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo")
        .join(name)
}

fn pieces() -> (Piece, Piece) {
    let a = read_file(&demo("pierside-lamps.musicxml"), &ReadOptions::default()).unwrap();
    let b = read_file(&demo("millstream-boats.musicxml"), &ReadOptions::default()).unwrap();
    (a, b)
}

/// (MIDI pitch, onset from the first note, duration) in quarter notes.
type Notes = Vec<(i32, f64, f64)>;

fn melody(path: &Path, part: &str) -> Notes {
    let options = ReadOptions {
        choice: MelodyChoice {
            part: Some(part.into()),
            ..MelodyChoice::default()
        },
        ..ReadOptions::default()
    };
    let piece = read_file(path, &options).unwrap();
    let first = piece.melody.first().map_or(0.0, |n| n.onset.0);
    piece
        .melody
        .iter()
        .map(|n| (n.pitch.0.round() as i32, n.onset.0 - first, n.duration.0))
        .collect()
}

fn assert_same(what: &str, got: &Notes, want: &Notes) {
    assert_eq!(got.len(), want.len(), "{what}: note count");
    for (k, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            g.0 == w.0 && (g.1 - w.1).abs() < TOLERANCE && (g.2 - w.2).abs() < TOLERANCE,
            "{what}: note {k}: got {g:?}, want {w:?}"
        );
    }
}

/// The notes of the shown bars in the work itself, moved to the common key.
fn expected(piece: &Piece, side: &collatio::report::notation::StaffView) -> Notes {
    let first = side
        .notes
        .first()
        .map_or(0.0, |n| piece.melody[n.index].onset.0);
    side.notes
        .iter()
        .map(|n| {
            let note = &piece.melody[n.index];
            let next = piece
                .melody
                .get(n.index + 1)
                .map_or(f64::MAX, |m| m.onset.0);
            let duration = note.duration.0.min(next - note.onset.0);
            (
                note.pitch.0.round() as i32 + side.shift,
                note.onset.0 - first,
                duration,
            )
        })
        .collect()
}

/// The demo pair compared on melody alone (the exports draw only the passages).
fn melodic_findings() -> collatio::findings::Findings {
    let (a, b) = pieces();
    let settings = collatio::findings::CompareSettings {
        chance: collatio::stats::chance::ChanceParams {
            null: collatio::stats::chance::NullChoice::Off,
            ..Default::default()
        },
        harmony: None,
        sync: None,
        ..Default::default()
    };
    collatio::pipeline::compare_works(a, b, &settings, None)
}

#[test]
fn exports_read_back_with_the_same_notes() {
    let findings = melodic_findings();
    let (a, b) = (&findings.a, &findings.b);
    assert!(!findings.passages.is_empty());
    let options = ExhibitOptions::default();
    let dir = tempfile::tempdir().unwrap();
    let outputs = Outputs {
        export_dir: Some(dir.path().join("passages")),
        ..Outputs::default()
    };
    write_exhibit(&findings, &options, &outputs).unwrap();
    let exhibit = Exhibit::new(&findings, &options).unwrap();
    for (finding, view) in findings.passages.iter().zip(&exhibit.views) {
        let passage = &finding.passage;
        let stem = collatio::report::export::file_stem(passage.rank);
        let xml = dir.path().join("passages").join(format!("{stem}.musicxml"));
        let mid = dir.path().join("passages").join(format!("{stem}.mid"));
        let want_a = expected(a, &view.a);
        let want_b = expected(b, &view.b);
        assert_same("MusicXML part A", &melody(&xml, "P1"), &want_a);
        assert_same("MusicXML part B", &melody(&xml, "P2"), &want_b);
        // MIDI: track 1 is the conductor; A on track 2, channel 1; B on track 3, channel 2.
        assert_same("MIDI track A", &melody(&mid, "track2-ch1"), &want_a);
        assert_same("MIDI track B", &melody(&mid, "track3-ch2"), &want_b);
        // The passage's matched notes are coloured.
        let text = std::fs::read_to_string(&xml).unwrap();
        assert!(text.contains("color=\"#1A386B\""));
        assert!(text.contains(&format!("passage {} begins", passage.rank)));
    }
}

#[test]
fn music21_reads_the_same_notes_as_collatio() {
    let findings = melodic_findings();
    let dir = tempfile::tempdir().unwrap();
    let outputs = Outputs {
        export_dir: Some(dir.path().to_path_buf()),
        ..Outputs::default()
    };
    write_exhibit(&findings, &ExhibitOptions::default(), &outputs).unwrap();
    let golden_dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden/exports");
    let mut checked = 0;
    for entry in std::fs::read_dir(&golden_dir).unwrap() {
        let path = entry.unwrap().path();
        let Some(name) = path.file_name().and_then(|n| n.to_str()) else {
            continue;
        };
        let Some(export) = name.strip_suffix(".music21.json") else {
            continue;
        };
        let golden: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
        let parts = golden["parts"].as_array().unwrap();
        for (k, part) in parts.iter().enumerate() {
            let notes = part["notes"].as_array().unwrap();
            let first = notes.first().map_or(0.0, |n| n[1].as_f64().unwrap());
            let want: Notes = notes
                .iter()
                .map(|n| {
                    (
                        n[0].as_i64().unwrap() as i32,
                        n[1].as_f64().unwrap() - first,
                        n[2].as_f64().unwrap(),
                    )
                })
                .collect();
            let got = melody(&dir.path().join(export), &format!("P{}", k + 1));
            assert_same(&format!("{export} part {}", k + 1), &got, &want);
            checked += 1;
        }
    }
    assert!(
        checked >= 2,
        "no golden readings found in {}",
        golden_dir.display()
    );
}

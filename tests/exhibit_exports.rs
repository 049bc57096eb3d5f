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

/// One part of a file as collatio reads it, that part selected as the melody.
fn read_part(path: &Path, part: &str) -> Piece {
    let options = ReadOptions {
        choice: MelodyChoice {
            part: Some(part.into()),
            ..MelodyChoice::default()
        },
        ..ReadOptions::default()
    };
    read_file(path, &options).unwrap()
}

fn melody(path: &Path, part: &str) -> Notes {
    let piece = read_part(path, part);
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
        // Both files carry the one-line caution (MusicXML: a miscellaneous field and a credit;
        // MIDI: a text event, meta type 0x01 of the SMF 1.0 specification).
        assert!(text.contains(
            "<miscellaneous-field name=\"caution\">Caution: similarity is not proof of copying"
        ));
        assert!(text.contains("<credit page=\"1\">"));
        let smf = std::fs::read(&mid).unwrap();
        let caution = collatio::report::cautions::ONE_LINE.as_bytes();
        assert!(smf.windows(caution.len()).any(|w| w == caution));
        let at = smf
            .windows(caution.len())
            .position(|w| w == caution)
            .unwrap();
        // FF 01 <length> <text>: the length fits in a one- or two-byte variable-length quantity.
        assert!(smf[..at]
            .windows(2)
            .rev()
            .take(3)
            .any(|w| w == [0xFF, 0x01]));
    }
}

/// Chord symbols of one part of a file as collatio reads them: (root pitch class, bass pitch
/// class, onset in quarter notes from the start of the part).
fn chords(path: &Path, part: &str) -> Vec<(i32, i32, f64)> {
    let piece = read_part(path, part);
    let pc = |step: collatio::theory::Step, alter: i32| {
        (step.natural_semitones() + alter).rem_euclid(12)
    };
    piece
        .chord_symbols
        .iter()
        .filter(|c| c.part == piece.selection.part)
        .map(|c| {
            let parts = collatio::theory::parse_chord_symbol(&c.text).unwrap();
            let root = pc(parts.root, parts.root_alter);
            let bass = parts.bass.map_or(root, |(s, a)| pc(s, a));
            (root, bass, c.onset.0)
        })
        .collect()
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
            // Chord symbols are written as <harmony> elements (MusicXML 4.0): music21 reads
            // them as chord symbols with the same root, bass and place as collatio does.
            let want: Vec<(i32, i32, f64)> = part["chords"]
                .as_array()
                .unwrap()
                .iter()
                .map(|c| {
                    (
                        c[0].as_i64().unwrap() as i32,
                        c[1].as_i64().unwrap() as i32,
                        c[2].as_f64().unwrap(),
                    )
                })
                .collect();
            assert!(!want.is_empty(), "{export}: music21 found no chord symbols");
            let got = chords(&dir.path().join(export), &format!("P{}", k + 1));
            assert_eq!(
                got.len(),
                want.len(),
                "{export} part {}: chord count",
                k + 1
            );
            for (g, w) in got.iter().zip(&want) {
                assert!(
                    g.0 == w.0 && g.1 == w.1 && (g.2 - w.2).abs() < TOLERANCE,
                    "{export} part {}: chord got {g:?}, music21 {w:?}",
                    k + 1
                );
            }
            checked += 1;
        }
    }
    assert!(
        checked >= 2,
        "no golden readings found in {}",
        golden_dir.display()
    );
}

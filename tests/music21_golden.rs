//! Note-by-note comparison with music21's reading of every fixture.
//!
//! The golden files in `tests/golden/` were produced by `tests/golden/music21_reading.py` with
//! music21 10.5.1 (the version is recorded in each file). music21 is a general-purpose,
//! independently written reference library; where its reading is known to depart from the
//! MusicXML or MIDI specification, the golden file says so in `notes_on_reading` and the
//! deviation is handled below by name, with the reason.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::ingest::{read_file, ReadOptions};
use collatio::timeline::Piece;
use serde_json::Value;
use std::path::Path;

/// Onsets and durations in quarter notes: music21 stores triplets as binary floats, so
/// equality is up to float rounding, far below a tick.
const BEAT_TOLERANCE: f64 = 1e-9;

/// A MIDI file whose re-struck notes music21 pairs differently from collatio: music21 ends both
/// strikes of a key at the first Note Off that follows; collatio pairs Note On and Note Off
/// first in, first out, so the second strike lasts until its own release. The SMF
/// specification leaves the pairing open; onsets and pitches must still agree.
const RESTRIKE_FIXTURE: &str = "midi_overlapping_restrike.mid";

#[derive(Debug, PartialEq)]
struct Golden {
    midi: f64,
    onset: f64,
    duration: f64,
    bar: String,
}

fn golden_parts(value: &Value) -> Vec<(String, Vec<Golden>)> {
    value["parts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            let notes = p["notes"]
                .as_array()
                .unwrap()
                .iter()
                .map(|n| Golden {
                    midi: n["midi"].as_f64().unwrap(),
                    onset: n["onset"].as_f64().unwrap(),
                    duration: n["duration"].as_f64().unwrap(),
                    bar: n["bar"].as_str().unwrap().to_string(),
                })
                .collect();
            (p["id"].as_str().unwrap().to_string(), notes)
        })
        .collect()
}

/// collatio's notes for a golden part: MusicXML parts by id; MIDI parts by track (the golden
/// id `track<N>` counts tracks from 0, collatio from 1), all channels of the track together.
fn our_notes(piece: &Piece, golden_id: &str, midi: bool) -> Vec<Golden> {
    let mut notes: Vec<Golden> = piece
        .parts
        .iter()
        .filter(|p| {
            if midi {
                let n: u32 = golden_id.trim_start_matches("track").parse().unwrap();
                p.track == Some(n + 1) && !p.percussion
            } else {
                p.id == golden_id
            }
        })
        .flat_map(|p| p.notes.iter())
        .map(|n| Golden {
            midi: n.pitch.0,
            onset: n.onset.0,
            duration: n.duration.0,
            bar: piece.bars[n.bar].label.clone(),
        })
        .collect();
    notes.sort_by(|a, b| (a.onset, a.midi).partial_cmp(&(b.onset, b.midi)).unwrap());
    notes
}

fn compare(file: &str) {
    compare_with(file, "tests/golden", &ReadOptions::default());
}

fn compare_with(file: &str, golden_dir: &str, options: &ReadOptions) {
    let golden_path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join(golden_dir)
        .join(format!("{file}.json"));
    let golden: Value =
        serde_json::from_str(&std::fs::read_to_string(&golden_path).unwrap()).unwrap();
    assert!(golden["generator"]
        .as_str()
        .is_some_and(|g| g.starts_with("tests/golden/music21_")));
    let midi = golden["kind"] == "midi";
    let piece =
        read_file(&common::fixture(file), options).unwrap_or_else(|e| panic!("{file}: {e}"));
    for (id, expected) in golden_parts(&golden) {
        if expected.is_empty() {
            // music21 reads channel-10 drums as unpitched notes: nothing to compare.
            continue;
        }
        let got = our_notes(&piece, &id, midi);
        assert_eq!(
            got.len(),
            expected.len(),
            "{file} part {id}: note count; collatio {got:?}\nmusic21 {expected:?}"
        );
        for (i, (g, e)) in got.iter().zip(&expected).enumerate() {
            let at = format!("{file} part {id} note {i}: collatio {g:?}, music21 {e:?}");
            assert_eq!(g.midi, e.midi, "pitch, {at}");
            assert!((g.onset - e.onset).abs() < BEAT_TOLERANCE, "onset, {at}");
            if file != RESTRIKE_FIXTURE {
                assert!(
                    (g.duration - e.duration).abs() < BEAT_TOLERANCE,
                    "duration, {at}"
                );
            }
            assert_eq!(g.bar, e.bar, "bar label, {at}");
        }
    }
}

macro_rules! golden_tests {
    ($($name:ident => $file:expr,)*) => {
        $(
            #[test]
            fn $name() {
                compare($file);
            }
        )*
    };
}

golden_tests! {
    compressed_container_mxl => "compressed_container.mxl",
    divisions_changes => "divisions_changes.musicxml",
    grace_notes_rests => "grace_notes_rests.musicxml",
    lyrics_harmony => "lyrics_harmony.musicxml",
    midi_drums_lyrics => "midi_drums_lyrics.mid",
    midi_format0_no_tempo_vel0 => "midi_format0_no_tempo_vel0.mid",
    midi_overlapping_restrike => "midi_overlapping_restrike.mid",
    midi_running_status => "midi_running_status.mid",
    midi_tempo_meter_key_changes => "midi_tempo_meter_key_changes.mid",
    piano_two_staves => "piano_two_staves.musicxml",
    pickup_measure_numbers => "pickup_measure_numbers.musicxml",
    repeat_endings => "repeat_endings.musicxml",
    tempo_meter_key_changes => "tempo_meter_key_changes.musicxml",
    ties_chords => "ties_chords.musicxml",
    timewise_two_parts => "timewise_two_parts.musicxml",
    transposing_instruments => "transposing_instruments.musicxml",
    triplets_tuplets => "triplets_tuplets.musicxml",
    two_voices_backup_forward => "two_voices_backup_forward.musicxml",
    utf16_bom => "utf16_bom.musicxml",
}

/// Repeats and endings unfolded into performance order, against music21's `expandRepeats()`
/// (golden from `tests/golden/music21_unfolded.py`): bar labels repeat as printed.
#[test]
fn repeat_endings_unfolded() {
    let options = ReadOptions {
        unfold_repeats: true,
        ..ReadOptions::default()
    };
    compare_with("repeat_endings.musicxml", "tests/golden/unfolded", &options);
}

/// Every fixture has a golden file and a test above (a new fixture cannot go unchecked).
#[test]
fn every_fixture_is_covered() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let mut missing = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
        if matches!(ext, "mid" | "musicxml" | "mxl") {
            let name = path.file_name().unwrap().to_str().unwrap().to_string();
            let golden = path
                .parent()
                .unwrap()
                .parent()
                .unwrap()
                .join("golden")
                .join(format!("{name}.json"));
            let source = include_str!("music21_golden.rs");
            if !golden.exists() || !source.contains(&format!("=> \"{name}\"")) {
                missing.push(name);
            }
        }
    }
    assert!(
        missing.is_empty(),
        "fixtures without a golden comparison: {missing:?}"
    );
}

/// The re-struck fixture under collatio's own pairing rule (first in, first out), checked
/// against the Note On/Off ticks written by `tests/fixtures/make_midi_fixtures.py`: C4 struck at
/// 0 and at half a beat, released at 1 and 1.5 beats; the second strike lasts one beat.
#[test]
fn restruck_notes_pair_first_in_first_out() {
    let piece = read_file(&common::fixture(RESTRIKE_FIXTURE), &ReadOptions::default()).unwrap();
    let c4: Vec<(f64, f64)> = piece
        .parts
        .iter()
        .flat_map(|p| p.notes.iter())
        .filter(|n| n.pitch.0 == 60.0)
        .map(|n| (n.onset.0, n.duration.0))
        .collect();
    assert_eq!(c4, vec![(0.0, 1.0), (0.5, 1.0)]);
}

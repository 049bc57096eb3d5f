//! Rhythm judged on a recording's beat grid: a FluidSynth render of a MIDI file, compared with
//! that MIDI file, differs from it only by the render's timing and the transcription, so the
//! note-level differences of the shared passage must not report the performance's jitter or
//! articulation as changed lengths or notes moved in the bar.
//!
//! The renders are those of `tests/fixtures/audio/make_audio_fixtures.py` (FluidSynth 2.3.1,
//! FluidR3 General MIDI soundfont, Debian `fluid-soundfont-gm` 3.1); the MIDI files are the
//! reference. Before the grid rule, these renders gave a changed length for every note of the
//! passage (7 to 17) and up to 16 moved notes.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::compare::differences::DifferenceKind;
use collatio::findings::CompareSettings;
use collatio::ingest::{read_file, ReadOptions};
use collatio::pipeline::compare_works;
use collatio::stats::chance::{ChanceParams, NullChoice};
use std::path::PathBuf;

fn render(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/audio/renders")
        .join(name)
}

#[test]
fn a_render_differs_from_its_midi_file_by_at_most_one_rhythm_and_one_placement() {
    let settings = CompareSettings {
        chance: ChanceParams {
            null: NullChoice::Off,
            ..Default::default()
        },
        harmony: None,
        ..Default::default()
    };
    for name in ["flute", "violin", "sax", "choir"] {
        let options = ReadOptions::default();
        let recording = read_file(&render(&format!("{name}.flac")), &options).unwrap();
        let midi = read_file(&render(&format!("{name}.mid")), &options).unwrap();
        let findings = compare_works(recording, midi, &settings, None);
        let best = findings.passages.first().expect("a shared passage");
        let count =
            |kind: DifferenceKind| best.differences.iter().filter(|d| d.kind == kind).count();
        let (rhythm, placement) = (
            count(DifferenceKind::Rhythm),
            count(DifferenceKind::Placement),
        );
        assert!(
            best.passage.a.notes >= 7,
            "{name}: passage of {} notes",
            best.passage.a.notes
        );
        assert!(
            rhythm <= 1 && placement <= 1,
            "{name}: {rhythm} changed lengths and {placement} moved notes in {} notes",
            best.passage.a.notes
        );
    }
}

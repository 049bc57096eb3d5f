//! Music-theory tables checked against published sources, values worked by hand from a
//! published formula, or (where marked) common practice.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use approx::assert_abs_diff_eq;
use collatio::theory::{
    cents_between, frequency_of, key_name, midi_of_frequency, pitch_name, Interval, KeyMode,
    Spelling, Step, DEFAULT_REFERENCE_HZ,
};
use collatio::units::{Hz, MidiPitch};

/// Interval sizes in semitones: the standard table of any theory text, e.g. Kostka & Payne,
/// *Tonal Harmony*: P1 0, m2 1, M2 2, m3 3, M3 4, P4 5, A4 6, d5 6, P5 7, m6 8, M6 9, m7 10,
/// M7 11, P8 12; compound intervals add 12 (m9 13, M9 14, m10 15, M10 16, P11 17, P12 19,
/// P15 24).
#[test]
fn interval_sizes_match_the_theory_handbook_table() {
    let table = [
        ("P1", 0),
        ("m2", 1),
        ("M2", 2),
        ("m3", 3),
        ("M3", 4),
        ("P4", 5),
        ("A4", 6),
        ("d5", 6),
        ("P5", 7),
        ("m6", 8),
        ("M6", 9),
        ("m7", 10),
        ("M7", 11),
        ("P8", 12),
        ("m9", 13),
        ("M9", 14),
        ("m10", 15),
        ("M10", 16),
        ("P11", 17),
        ("P12", 19),
        ("P15", 24),
    ];
    for (name, semitones) in table {
        let interval = Interval::parse(name).unwrap_or_else(|| panic!("{name} did not parse"));
        assert_eq!(interval.semitones(), semitones, "{name}");
        assert_eq!(interval.abbreviation(), name);
    }
    // Impossible names are refused (common practice: fifths are perfect, thirds major/minor).
    assert!(Interval::parse("M5").is_none());
    assert!(Interval::parse("P3").is_none());
}

/// The plainest name of each size round-trips through the same handbook table.
#[test]
fn interval_names_from_sizes() {
    let expected = [
        "P1", "m2", "M2", "m3", "M3", "P4", "A4", "P5", "m6", "M6", "m7", "M7", "P8", "m9", "M9",
    ];
    for (semitones, name) in expected.iter().enumerate() {
        let interval = Interval::from_semitones(semitones as u32);
        assert_eq!(interval.abbreviation(), *name);
        assert_eq!(interval.semitones(), semitones as i32);
    }
    assert_eq!(Interval::from_semitones(24).abbreviation(), "P15");
}

/// Equal-temperament frequencies against values worked by hand from the twelve-tone
/// equal-temperament formula f = 440 · 2^((n − 69)/12), n the MIDI note number (MIDI 1.0
/// Detailed Specification: 69 is A4), with A4 = 440 Hz per ISO 16:1975, rounded to three
/// decimals: A0 (n = 21) 440 · 2^(−4) = 27.500 Hz; C4 (n = 60) 440 · 2^(−9/12) = 261.626 Hz;
/// A4 440.000 Hz; C8 (n = 108) 440 · 2^(39/12) = 4186.009 Hz; MIDI 0 440 · 2^(−69/12) =
/// 8.176 Hz. The values are kept to three decimals, hence the tolerance.
#[test]
fn equal_temperament_matches_the_formula_worked_by_hand() {
    const TABLE_PRECISION_HZ: f64 = 0.0005;
    let table = [
        (21.0, 27.500),
        (60.0, 261.626),
        (69.0, 440.000),
        (108.0, 4186.009),
        (0.0, 8.176),
    ];
    let a4 = Hz(DEFAULT_REFERENCE_HZ);
    for (midi, hz) in table {
        assert_abs_diff_eq!(
            frequency_of(MidiPitch(midi), a4).0,
            hz,
            epsilon = TABLE_PRECISION_HZ
        );
        let back = midi_of_frequency(Hz(hz), a4).unwrap();
        // The table's 0.0005 Hz rounding is at most 0.11 cents at 8.176 Hz.
        assert_abs_diff_eq!(back.0, midi, epsilon = 1.2e-3);
    }
    // A configurable reference: with A4 = 442 Hz, A4 is 442 Hz and A5 twice that.
    assert_abs_diff_eq!(
        frequency_of(MidiPitch(81.0), Hz(442.0)).0,
        884.0,
        epsilon = 1e-9
    );
    assert!(midi_of_frequency(Hz(0.0), a4).is_none());
}

/// Cents = 1200 · log2(f2/f1), the cent as defined by Ellis (1885, "On the musical scales of
/// various nations", *Journal of the Society of Arts* 33): worked by hand, the just major
/// third 5/4 is 1200 · log2 1.25 = 386.31 cents and the just fifth 3/2 is
/// 1200 · log2 1.5 = 701.96 cents.
#[test]
fn cents_of_just_intervals() {
    assert_abs_diff_eq!(
        cents_between(Hz(400.0), Hz(500.0)).0,
        386.31,
        epsilon = 0.005
    );
    assert_abs_diff_eq!(
        cents_between(Hz(200.0), Hz(300.0)).0,
        701.96,
        epsilon = 0.005
    );
    assert_abs_diff_eq!(
        cents_between(Hz(220.0), Hz(440.0)).0,
        1200.0,
        epsilon = 1e-9
    );
}

/// MIDI 1.0 Detailed Specification: note number 60 is middle C; collatio names it C4
/// (scientific pitch notation), and A4 = 69.
#[test]
fn midi_note_names() {
    assert_eq!(pitch_name(60.0), "C4");
    assert_eq!(pitch_name(69.0), "A4");
    assert_eq!(pitch_name(21.0), "A0");
    assert_eq!(pitch_name(108.0), "C8");
    assert_eq!(pitch_name(0.0), "C-1");
    assert_eq!(pitch_name(61.0), "C#4");
    assert_eq!(pitch_name(60.23), "C4+23c");
}

/// Spelled pitches: MusicXML `<step>`, `<alter>`, `<octave>` to MIDI (C4 = 60), including
/// the octave boundary cases B#3 = C4 and Cb4 = B3 (common practice).
#[test]
fn spelled_pitches() {
    let s = |step, alter, octave| Spelling {
        step,
        alter,
        octave,
    };
    assert_eq!(s(Step::C, 0.0, 4).midi(), 60.0);
    assert_eq!(s(Step::B, 1.0, 3).midi(), 60.0);
    assert_eq!(s(Step::C, -1.0, 4).midi(), 59.0);
    assert_eq!(s(Step::F, 1.0, 4).name(), "F#4");
    assert_eq!(s(Step::B, -1.0, 3).name(), "Bb3");
    // Written D5 on a B-flat clarinet (<diatonic>-1, <chromatic>-2) sounds C5.
    let concert = s(Step::D, 0.0, 5).transposed(-1, -2.0);
    assert_eq!(concert.name(), "C5");
    // Saxophone transpositions (common practice): the E-flat alto sounds a major sixth lower
    // than written (diatonic −5, chromatic −9), so written F#5 sounds A4; the E-flat
    // baritone a major sixth plus an octave lower (diatonic −12, chromatic −21), so written
    // F#5 sounds A3.
    let concert = s(Step::F, 1.0, 5).transposed(-5, -9.0);
    assert_eq!(concert.name(), "A4");
    let concert = s(Step::F, 1.0, 5).transposed(-12, -21.0);
    assert_eq!(concert.name(), "A3");
}

/// Key signatures on the circle of fifths (common practice).
#[test]
fn key_names() {
    assert_eq!(key_name(0, KeyMode::Major), "C major");
    assert_eq!(key_name(2, KeyMode::Major), "D major");
    assert_eq!(key_name(-3, KeyMode::Minor), "C minor");
    assert_eq!(key_name(-2, KeyMode::Major), "Bb major");
    assert_eq!(key_name(7, KeyMode::Major), "C# major");
    assert_eq!(key_name(-7, KeyMode::Minor), "Ab minor");
}

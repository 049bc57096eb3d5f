//! Harmonic comparison and score following on recordings of full arrangements.
//!
//! Source of truth: FluidSynth 2.3.1 renders (FluidR3 General MIDI soundfont) of MIDI files
//! written for these tests by `tests/fixtures/arrangements/make_arrangements.py`, whose
//! `truth.json` files give the bar starts from the MIDI tempo maps and the chords per bar.
//! `cinderpath_rearranged` takes `larkfield`'s melody of bars 5–12, with those bars' chords,
//! up a minor third and 1.2 times faster, as its bars 9–16; its bars 17–20 repeat the
//! progression of `larkfield`'s bars 13–16 in the new key (Gm E♭ F B♭), so the two share one
//! harmonic stretch: `larkfield` bars 5–16 and `cinderpath_rearranged` bars 9–20.
//! `glimmerfen` and `weirmoor` share nothing with `larkfield`.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::harmony::{compare_harmony, HarmonyParams};
use collatio::features::chroma::chroma_of;
use collatio::ingest::{read_file, ReadOptions};
use collatio::timeline::ChromaLayer;
use serde_json::Value;
use std::path::PathBuf;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/arrangements")
        .join(name)
}

fn chroma(name: &str) -> ChromaLayer {
    chroma_of(&read_file(&fixture(name), &ReadOptions::default()).unwrap())
}

fn bar_starts(render: &str) -> Vec<f64> {
    let text = std::fs::read_to_string(fixture(&format!("{render}.truth.json"))).unwrap();
    let truth: Value = serde_json::from_str(&text).unwrap();
    truth["bar_starts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect()
}

#[test]
fn the_shared_progression_of_two_arrangements_is_found_with_its_bars() {
    let result = compare_harmony(
        &chroma("larkfield.ogg"),
        &chroma("cinderpath_rearranged.ogg"),
        &HarmonyParams::default(),
    );
    // Up a minor third (fixtures README).
    assert_eq!(result.transposition_semitones, 3);
    let best = result.matches.first().expect("a harmonic passage");
    let lark = bar_starts("larkfield");
    let cinder = bar_starts("cinderpath_rearranged");
    // Bars are 2.4 s (larkfield, 4/4 at 100) and 2.0 s (cinderpath, 4/4 at 120): the span
    // must start within one bar of the truth and end within one bar of it.
    let lark_end = lark[15] + 2.4;
    let cinder_end = cinder[19] + 2.0;
    assert!((best.a_seconds[0] - lark[4]).abs() < 2.4, "{best:?}");
    assert!((best.a_seconds[1] - lark_end).abs() < 2.4, "{best:?}");
    assert!((best.b_seconds[0] - cinder[8]).abs() < 2.0, "{best:?}");
    assert!((best.b_seconds[1] - cinder_end).abs() < 2.0, "{best:?}");
    // B is 1.2 times faster: B's span over A's about 1/1.2.
    assert!(
        (best.duration_ratio - 1.0 / 1.2).abs() < 0.1,
        "{}",
        best.duration_ratio
    );
    assert!(best.empirical_p <= 0.01);
}

/// A fixture's bar starts, bar length in seconds and chord per bar (root pitch class and
/// quality, a dominant seventh counted as major) from its `truth.json`.
struct ChordTruth {
    bars: Vec<f64>,
    bar_seconds: f64,
    chords: Vec<(i64, String)>,
}

fn chord_truth(piece: &str) -> ChordTruth {
    let text = std::fs::read_to_string(fixture(&format!("{piece}.truth.json"))).unwrap();
    let truth: Value = serde_json::from_str(&text).unwrap();
    let bars = bar_starts(piece);
    let chords = truth["chords"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            let quality = c[1].as_str().unwrap();
            let quality = if quality == "dom7" { "maj" } else { quality };
            (c[0].as_i64().unwrap(), quality.to_string())
        })
        .collect();
    ChordTruth {
        bar_seconds: bars[1] - bars[0],
        bars,
        chords,
    }
}

/// Every stretch of at least `min_bars` bars over which B's chords, moved up `shift`
/// semitones, are A's: (first bar of A, first bar of B, bars, shift), bars counted from 0.
fn shared_progressions(a: &ChordTruth, b: &ChordTruth, min_bars: usize) -> Vec<[usize; 4]> {
    let mut found = Vec::new();
    for shift in 0..12 {
        let same = |i: usize, j: usize| {
            a.chords[i].1 == b.chords[j].1 && a.chords[i].0 == (b.chords[j].0 + shift as i64) % 12
        };
        for i in 0..a.chords.len() {
            for j in 0..b.chords.len() {
                if i > 0 && j > 0 && same(i - 1, j - 1) {
                    continue;
                }
                let mut length = 0;
                while i + length < a.chords.len()
                    && j + length < b.chords.len()
                    && same(i + length, j + length)
                {
                    length += 1;
                }
                if length >= min_bars {
                    found.push([i, j, length, shift]);
                }
            }
        }
    }
    found
}

/// The five arrangements have unrelated melodies but, like much tonal music, share chord
/// progressions: glimmerfen and weirmoor run through the same eleven bars of chords a tone
/// apart, larkfield and tidewrack share seven bars, and so on (the chord lists in the
/// fixtures' truth files, written by `make_arrangements.py` with the MIDI files). Over all ten
/// pairs, as scores and as recordings in every combination, each harmonic passage reported
/// must lie on such a shared progression (at least three bars), at the transposition
/// reported: more than half of the passage on both sides inside the stretch. Recall is
/// printed and kept from falling: shared stretches of five bars or more are found 10 of 20
/// times at the defaults (5 of 20 with fixed-time instead of beat-synchronous frames; the
/// misses are mostly pairs of different metre or tempi far apart, and diatonic sequences whose
/// block-shuffled copies recur as well, so their p-values stay above 0.05).
#[test]
fn harmonic_passages_lie_on_shared_chord_progressions() {
    let names = [
        "larkfield",
        "glimmerfen",
        "weirmoor",
        "tidewrack",
        "cinderpath_rearranged",
    ];
    let (mut on_shared, mut elsewhere, mut long_found, mut long_total) = (0, 0, 0, 0);
    for (k, a_name) in names.iter().enumerate() {
        for b_name in &names[k + 1..] {
            let (ta, tb) = (chord_truth(a_name), chord_truth(b_name));
            let shared = shared_progressions(&ta, &tb, 3);
            for (ea, eb) in [
                ("musicxml", "musicxml"),
                ("ogg", "ogg"),
                ("musicxml", "ogg"),
                ("ogg", "musicxml"),
            ] {
                let result = compare_harmony(
                    &chroma(&format!("{a_name}.{ea}")),
                    &chroma(&format!("{b_name}.{eb}")),
                    &HarmonyParams::default(),
                );
                // The reported index moves B into A's key; the truth's shift moves B's chords
                // onto A's, the other way round.
                let shift = (-result.transposition_semitones).rem_euclid(12) as usize;
                let mut hit = vec![false; shared.len()];
                for m in &result.matches {
                    let mut inside = false;
                    for (h, &[i, j, bars, s]) in shared.iter().enumerate() {
                        let a_span = [ta.bars[i], ta.bars[i] + bars as f64 * ta.bar_seconds];
                        let b_span = [tb.bars[j], tb.bars[j] + bars as f64 * tb.bar_seconds];
                        let overlap = |x: [f64; 2], y: [f64; 2]| {
                            (x[1].min(y[1]) - x[0].max(y[0])).max(0.0) > 0.5 * (x[1] - x[0])
                        };
                        if s == shift
                            && overlap(m.a_seconds, a_span)
                            && overlap(m.b_seconds, b_span)
                        {
                            inside = true;
                            hit[h] = true;
                        }
                    }
                    if inside {
                        on_shared += 1;
                    } else {
                        elsewhere += 1;
                        println!(
                            "{a_name}.{ea} / {b_name}.{eb}: not on a shared progression: {m:?}"
                        );
                    }
                }
                for (h, &[_, _, bars, _]) in shared.iter().enumerate() {
                    if bars >= 5 {
                        long_total += 1;
                        long_found += usize::from(hit[h]);
                    }
                }
            }
        }
    }
    println!(
        "harmonic passages: {on_shared} on shared progressions, {elsewhere} elsewhere; shared \
         stretches of 5+ bars found {long_found} of {long_total}"
    );
    assert_eq!(elsewhere, 0);
    assert!(long_found >= 10, "{long_found} of {long_total}");
}

#[test]
fn a_tempo_change_of_the_whole_recording_does_not_matter() {
    // The same render slowed by SoX `tempo 0.8`: one passage covering the piece.
    let result = compare_harmony(
        &chroma("tidewrack.ogg"),
        &chroma("tidewrack_tempo0.8.ogg"),
        &HarmonyParams::default(),
    );
    let best = result.matches.first().expect("a harmonic passage");
    assert_eq!(result.transposition_semitones, 0);
    assert!(best.a_seconds[1] - best.a_seconds[0] > 30.0, "{best:?}");
    assert!((best.duration_ratio - 1.25).abs() < 0.1, "{best:?}");
}

#[test]
fn compare_puts_the_scores_bars_onto_a_recording_of_it() {
    let score = fixture("larkfield.musicxml");
    let recording = fixture("larkfield_tempo0.8.ogg");
    let out = common::run_collatio(&[
        "compare",
        score.to_str().unwrap(),
        recording.to_str().unwrap(),
        "--format",
        "json",
        "--shuffles",
        "0",
    ]);
    let record: Value = serde_json::from_slice(&out.stdout).unwrap();
    let sync = &record["synchronisation"];
    assert_eq!(sync["score"], "a");
    assert_eq!(sync["follows"], true);
    assert_eq!(sync["bars_from_score"], true);
    // Every bar start within 100 ms of the truth (SoX tempo 0.8 of the render).
    let truth = bar_starts("larkfield_tempo0.8");
    let map = sync["bar_map"].as_array().unwrap();
    assert_eq!(map.len(), truth.len());
    for (entry, expected) in map.iter().zip(&truth) {
        let t = entry["recording_seconds"].as_f64().unwrap();
        assert!((t - expected).abs() <= 0.1, "{entry} vs {expected}");
    }
    // Passages name the score's bars on the recording's side too.
    let passages = record["passages"].as_array().unwrap();
    assert!(!passages.is_empty());
    let labels: Vec<String> = (1..=16).map(|k| k.to_string()).collect();
    for p in passages {
        for bar in p["b"]["bars"].as_array().unwrap() {
            assert!(labels.contains(&bar.as_str().unwrap().to_string()), "{p}");
        }
    }
}

fn compare_json(a: &str, b: &str) -> Value {
    let (a, b) = (fixture(a), fixture(b));
    let out = common::run_collatio(&[
        "compare",
        a.to_str().unwrap(),
        b.to_str().unwrap(),
        "--format",
        "json",
    ]);
    serde_json::from_slice(&out.stdout).unwrap()
}

fn number(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn the_same_melody_in_two_arranged_recordings_is_found_with_its_bars() {
    // Both recordings are full arrangements: the melody comes from the predominant-melody
    // extractor. larkfield bars 5–12 = cinderpath bars 9–16, up a minor third, 1.2 times
    // faster (fixtures README).
    let record = compare_json("larkfield.ogg", "cinderpath_rearranged.ogg");
    let lark = bar_starts("larkfield");
    let cinder = bar_starts("cinderpath_rearranged");
    let best = &record["passages"][0];
    assert_eq!(
        best["transposition_semitones"]
            .as_i64()
            .unwrap()
            .rem_euclid(12),
        3
    );
    assert!((number(&best["tempo_ratio"]) - 1.2).abs() < 0.05, "{best}");
    // Starts within a quarter note (0.6 s and 0.5 s) of the first shared bar.
    assert!(
        (number(&best["a"]["onset_seconds"]) - lark[4]).abs() < 0.6,
        "{best}"
    );
    assert!(
        (number(&best["b"]["onset_seconds"]) - cinder[8]).abs() < 0.5,
        "{best}"
    );
    // Ends within the last shared bar.
    assert!(number(&best["a"]["end_seconds"]) > lark[11], "{best}");
    assert!(number(&best["a"]["end_seconds"]) < lark[12] + 2.4, "{best}");
    assert!(number(&best["b"]["end_seconds"]) > cinder[15], "{best}");
    assert!(
        number(&best["b"]["end_seconds"]) < cinder[16] + 2.0,
        "{best}"
    );
    assert!(number(&best["significance"]["e_value"]) < 0.01, "{best}");
    let evidence: Vec<&str> = best["evidence"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e.as_str().unwrap())
        .collect();
    assert_eq!(evidence, ["melody", "harmony"]);
    // The detail says the melody came from a mix.
    assert!(record["a"]["source"]["detail"]
        .as_str()
        .unwrap()
        .contains("predominant melody of a mix"));
}

#[test]
fn a_score_against_another_arrangements_recording_reports_the_scores_bars() {
    let record = compare_json("larkfield.musicxml", "cinderpath_rearranged.ogg");
    // Another piece: it must not take the score's bars.
    assert_eq!(record["synchronisation"]["follows"], false);
    let best = &record["passages"][0];
    assert_eq!(best["a"]["bars"][0], "5");
    let cinder = bar_starts("cinderpath_rearranged");
    assert!(
        (number(&best["b"]["onset_seconds"]) - cinder[8]).abs() < 0.5,
        "{best}"
    );
    assert!(number(&best["significance"]["e_value"]) < 0.01, "{best}");
}

#[test]
fn unrelated_arranged_recordings_share_no_significant_melody() {
    for other in ["glimmerfen.ogg", "weirmoor.ogg", "tidewrack.ogg"] {
        let record = compare_json("larkfield.ogg", other);
        for p in record["passages"].as_array().unwrap() {
            let e = p["significance"]["e_value"]
                .as_f64()
                .unwrap_or(f64::INFINITY);
            assert!(e > 0.01, "larkfield / {other}: {p}");
        }
    }
}

#[test]
fn every_pairing_of_score_midi_and_recording_finds_the_piece() {
    // The same arrangement as MusicXML, as MIDI and as its render slowed by SoX `tempo 0.8`:
    // every pairing shares one passage covering nearly all of the melody (63 notes).
    let pairs = [
        ("larkfield.musicxml", "larkfield.mid"),
        ("larkfield.mid", "larkfield_tempo0.8.ogg"),
        ("larkfield.musicxml", "larkfield_pitch-300.ogg"),
        ("larkfield.ogg", "larkfield_tempo0.8.ogg"),
        ("larkfield_pitch+200.ogg", "larkfield_tempo1.25.ogg"),
    ];
    for (a, b) in pairs {
        let record = compare_json(a, b);
        let best = &record["passages"][0];
        let notes = best["a"]["notes"].as_u64().unwrap();
        assert!(notes >= 50, "{a} / {b}: {best}");
        assert!(number(&best["pmi"]) >= 85.0, "{a} / {b}: {best}");
        // (No E-value check here: the null model's k-let shuffles keep runs of four pitches,
        // so for two copies of one melody they rebuild much of it and the E-value is
        // conservative, about 0.02; docs/statistics.md.)
        // Key and tempo differences between the two are measured, not penalised.
        let expected_shift = |name: &str| {
            if name.contains("pitch-300") {
                -3
            } else if name.contains("pitch+200") {
                2
            } else {
                0
            }
        };
        let shift = expected_shift(b) - expected_shift(a);
        assert_eq!(
            best["transposition_semitones"]
                .as_i64()
                .unwrap()
                .rem_euclid(12),
            i64::from(shift).rem_euclid(12),
            "{a} / {b}"
        );
        let factor = |name: &str| {
            if name.contains("tempo0.8") {
                0.8
            } else if name.contains("tempo1.25") {
                1.25
            } else {
                1.0
            }
        };
        let tempo = factor(b) / factor(a);
        assert!(
            (number(&best["tempo_ratio"]) - tempo).abs() < 0.03,
            "{a} / {b}: tempo {}",
            best["tempo_ratio"]
        );
        // The harmony confirms it.
        assert!(
            best["evidence"]
                .as_array()
                .unwrap()
                .iter()
                .any(|e| e == "harmony"),
            "{a} / {b}: {best}"
        );
    }
}

/// The harmony layer's beats: a score's quarter notes from its tempo map (larkfield is in 4/4
/// at 100 bpm, bars of 2.4 s in its truth file), a recording's tracked beats at the same
/// spacing; with both the comparison runs per beat, and a recording without beats falls back
/// to fixed-time frames.
#[test]
fn harmony_runs_on_beats_when_both_works_have_them() {
    let bar_seconds = bar_starts("larkfield")[1] - bar_starts("larkfield")[0];
    let score = chroma("larkfield.musicxml");
    let recording = chroma("larkfield.ogg");
    let spacing = |beats: &[f64]| {
        let mut gaps: Vec<f64> = beats.windows(2).map(|w| w[1] - w[0]).collect();
        gaps.sort_by(f64::total_cmp);
        gaps[gaps.len() / 2]
    };
    assert!((spacing(&score.beats) - bar_seconds / 4.0).abs() < 1e-6);
    assert!(*score.beats.last().unwrap() >= score.seconds());
    let tracked = spacing(&recording.beats);
    assert!(
        (tracked / (bar_seconds / 4.0) - 1.0).abs() < 0.03,
        "tracked beat {tracked} s"
    );
    let params = HarmonyParams::default();
    assert!(compare_harmony(&score, &recording, &params).beat_synchronous);
    let unbeaten = ChromaLayer {
        beats: Vec::new(),
        ..recording.clone()
    };
    let fixed = compare_harmony(&score, &unbeaten, &params);
    assert!(!fixed.beat_synchronous);
    assert!((fixed.frame_seconds - 8.0 * score.hop_seconds).abs() < 1e-9);
}

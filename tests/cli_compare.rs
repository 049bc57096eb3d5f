//! `collatio compare` and `collatio inspect` as a user runs them: exit codes, the human table,
//! and the JSON records' required fields (docs/compare-json.md, docs/inspect-json.md).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use serde_json::Value;

fn run(args: &[&str]) -> (i32, String, String) {
    common::run_cli(args)
}

fn fixture(name: &str) -> String {
    common::fixture(name).display().to_string()
}

#[test]
fn compare_prints_a_readable_table() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/alphabet_song_g_4-4.musicxml");
    let (code, stdout, stderr) = run(&["compare", &a, &b]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("bars 1-12"), "{stdout}");
    assert!(stdout.contains("up a perfect fifth"), "{stdout}");
    assert!(stdout.contains("Passage 1"), "{stdout}");
    assert!(stdout.contains("= same note after transposing"), "{stdout}");
    // Two scores: the tempo ratio is of written tempos, not of performances.
    assert!(
        stdout.contains("notated tempo, not a performance"),
        "{stdout}"
    );
    // The text ends with the usual cautions and the deferral to legal counsel.
    let tail = &stdout[stdout.rfind("Cautions:").expect("cautions")..];
    assert!(
        tail.contains("Similarity is not proof of copying"),
        "{tail}"
    );
    assert!(tail.contains("defers to qualified legal counsel"), "{tail}");
}

#[test]
fn compare_json_has_the_documented_fields() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/baa_baa_black_sheep_f_2-4.musicxml");
    let (code, stdout, stderr) = run(&["compare", &a, &b, "--format", "json"]);
    assert_eq!(code, 0, "{stderr}");
    let v: Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["schema_version"], 2);
    let relatedness = v["relatedness"]["value"].as_f64().unwrap();
    assert!((0.0..=1.0).contains(&relatedness));
    assert!((0.0..=1.0).contains(&v["coverage"].as_f64().unwrap()));
    assert!(v["relatedness"]["self_score_a"].is_i64());
    assert_eq!(v["chance"]["null"], "general");
    assert_eq!(v["a"]["source"]["sha256"].as_str().unwrap().len(), 64);
    assert!(v["parameters"]["gap_open"].is_i64());
    // The record carries the cautions as a field.
    let cautions = v["cautions"].as_array().unwrap();
    assert_eq!(cautions.len(), 4);
    assert!(cautions
        .iter()
        .any(|c| c.as_str().unwrap().contains("legal counsel")));
    // Scores and MIDI files have no transcription settings.
    assert!(v["a"]["transcription"].is_null());
    let passages = v["passages"].as_array().unwrap();
    assert!(!passages.is_empty());
    for p in passages {
        for side in ["a", "b"] {
            let s = &p[side];
            assert_eq!(s["bars"].as_array().unwrap().len(), 2);
            assert!(s["bars"][0].is_string());
            assert!(s["start_beat"].is_f64());
            assert!(s["end_beat"].is_f64());
            assert!(s["notes"].is_u64());
        }
        assert!(p["transposition_semitones"].is_i64());
        assert!(p["tempo_ratio"].is_f64());
        assert!(p["score"].is_i64());
        let pmi = p["pmi"].as_f64().unwrap();
        assert!((0.0..=100.0).contains(&pmi));
        for pair in p["pairs"].as_array().unwrap() {
            assert!(pair["kind"].is_string());
            assert!(pair["a"].is_array() && pair["b"].is_array());
        }
    }
}

/// `--shuffle-runs` sets the run length of the null model's shuffles: recorded in the JSON,
/// counted in distinct orders, and limited to 2–8.
#[test]
fn shuffle_runs_reach_the_null_model() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/alphabet_song_g_4-4.musicxml");
    let null_of = |runs: &str| -> Value {
        let (code, stdout, stderr) = run(&[
            "compare",
            &a,
            &b,
            "--format",
            "json",
            "--null",
            "shuffles",
            "--shuffle-runs",
            runs,
        ]);
        assert_eq!(code, 0, "{stderr}");
        let v: Value = serde_json::from_str(&stdout).unwrap();
        assert_eq!(v["chance"]["null"], "shuffles");
        v["chance"]["shuffles"].clone()
    };
    let (pairs, fours) = (null_of("2"), null_of("4"));
    assert_eq!(pairs["run_length"], 2);
    assert_eq!(fours["run_length"], 4);
    // Keeping longer runs can only constrain the shuffles more.
    assert!(pairs["distinct_a"].as_u64().unwrap() >= fours["distinct_a"].as_u64().unwrap());
    let (code, _, stderr) = run(&["compare", &a, &b, "--shuffle-runs", "1"]);
    assert_eq!(code, 2, "{stderr}");
}

#[test]
fn compare_selection_errors_are_usage_errors() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let (code, _, stderr) = run(&["compare", &a, &a, "--select-b", "bars=99-100"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("no bar labelled '99'"), "{stderr}");
    let (code, _, stderr) = run(&["compare", &a, &a, "--select-a", "colour=blue"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("unknown key 'colour'"), "{stderr}");
}

#[test]
fn compare_with_an_unreadable_file_is_an_input_error() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let (code, _, stderr) = run(&["compare", &a, "/nonexistent/b.mid"]);
    assert_eq!(code, 3, "{stderr}");
    assert!(stderr.contains("/nonexistent/b.mid"), "{stderr}");
}

// The two works are read at once; when both are unreadable, A's error is the one reported,
// as when they were read in turn.
#[test]
fn with_both_files_unreadable_the_first_is_named() {
    let (code, _, stderr) = run(&["compare", "/nonexistent/a.mid", "/nonexistent/b.mid"]);
    assert_eq!(code, 3, "{stderr}");
    assert!(stderr.contains("/nonexistent/a.mid"), "{stderr}");
    assert!(!stderr.contains("/nonexistent/b.mid"), "{stderr}");
}

#[test]
fn identical_runs_give_identical_json() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/twinkle_d_2-2_doubled.musicxml");
    let first = run(&["compare", &a, &b, "--format", "json"]).1;
    let second = run(&["compare", &a, &b, "--format", "json"]).1;
    assert_eq!(first, second);
}

#[test]
fn inspect_json_has_the_documented_note_fields() {
    let (code, stdout, stderr) = run(&[
        "inspect",
        &fixture("pickup_measure_numbers.musicxml"),
        "--format",
        "json",
    ]);
    assert!(code == 0 || code == 1, "{stderr}");
    let v: Value = serde_json::from_str(&stdout).unwrap();
    let notes = v["notes"].as_array().unwrap();
    assert!(!notes.is_empty());
    for n in notes {
        assert!(n["bar"].is_string());
        for key in [
            "beat",
            "midi",
            "onset_beats",
            "duration_beats",
            "onset_seconds",
            "duration_seconds",
        ] {
            assert!(n[key].is_number(), "{key} in {n}");
        }
        assert!(n["name"].is_string());
    }
    // The pickup is labelled as printed.
    assert_eq!(notes[0]["bar"], "0");
}

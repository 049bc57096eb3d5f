//! collatio's re-implementation of mir_eval's measures against mir_eval 0.8.2 itself, on the
//! arrays in `tests/fixtures/audio/golden/mir_eval_metrics.json` (made by
//! `tests/fixtures/audio/make_audio_golden.py`, which records the library versions).
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::audio::eval::{
    beat_f_measure, raw_chroma_accuracy, raw_pitch_accuracy, transcription_prf,
};
use serde_json::Value;

/// Agreement required: both compute in double precision on the same arrays.
const TOLERANCE: f64 = 1e-9;

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn measures_agree_with_mir_eval() {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/audio/golden/mir_eval_metrics.json"
    );
    let golden: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let mut counts = [0usize; 3];
    for case in golden["cases"].as_array().unwrap() {
        let close = |ours: f64, key: &str| {
            let theirs = case[key].as_f64().unwrap();
            assert!(
                (ours - theirs).abs() < TOLERANCE,
                "{}: {key} {ours} vs mir_eval {theirs}",
                case["kind"]
            );
        };
        match case["kind"].as_str().unwrap() {
            "melody" => {
                let (v, r, e) = (
                    floats(&case["ref_voicing"]),
                    floats(&case["ref_cent"]),
                    floats(&case["est_cent"]),
                );
                close(raw_pitch_accuracy(&v, &r, &e, 50.0), "raw_pitch_accuracy");
                close(raw_chroma_accuracy(&v, &r, &e, 50.0), "raw_chroma_accuracy");
                counts[0] += 1;
            }
            "transcription" => {
                let pairs = |on: &str, p: &str| -> Vec<(f64, f64)> {
                    floats(&case[on])
                        .into_iter()
                        .zip(floats(&case[p]))
                        .collect()
                };
                let prf = transcription_prf(
                    &pairs("ref_onsets", "ref_pitches"),
                    &pairs("est_onsets", "est_pitches"),
                    0.05,
                    50.0,
                );
                close(prf.precision, "precision");
                close(prf.recall, "recall");
                close(prf.f_measure, "f_measure");
                counts[1] += 1;
            }
            "beats" => {
                let f = beat_f_measure(
                    &floats(&case["reference"]),
                    &floats(&case["estimated"]),
                    0.07,
                );
                close(f, "f_measure");
                counts[2] += 1;
            }
            other => panic!("unknown case {other}"),
        }
    }
    assert_eq!(
        counts,
        [1, 4, 4],
        "every case of the golden file was checked"
    );
}

//! Beat-synchronous chroma against librosa 0.11.0's `util.sync` (mean aggregation) of its
//! `chroma_stft` on the same drum render, between the MIDI file's beat times
//! (`tests/fixtures/audio/make_beat_sync_golden.py` wrote the golden file).
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::audio::chroma::beat_synchronous;
use collatio::audio::decode::{decode_file, DecodeOptions};
use collatio::audio::{analyse, AnalysisOptions};
use serde_json::Value;
use std::path::PathBuf;

fn audio_fixture(path: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/audio")
        .join(path)
}

fn pearson(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len() as f64;
    let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
    let cov: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let vx: f64 = x.iter().map(|a| (a - mx).powi(2)).sum();
    let vy: f64 = y.iter().map(|b| (b - my).powi(2)).sum();
    cov / (vx * vy).sqrt()
}

#[test]
fn beat_synchronous_chroma_matches_librosa_sync() {
    let golden: Value = serde_json::from_str(
        &std::fs::read_to_string(audio_fixture("golden/beat_sync.json")).unwrap(),
    )
    .unwrap();
    let beats: Vec<f64> = golden["beats"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let theirs: Vec<Vec<f64>> = golden["chroma_sync"]
        .as_array()
        .unwrap()
        .iter()
        .map(|row| {
            row.as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect()
        })
        .collect();
    let decoded = decode_file(
        &audio_fixture("renders/drums.flac"),
        "FLAC",
        &DecodeOptions::default(),
    )
    .unwrap();
    let analysis = analyse(&decoded.samples, &AnalysisOptions::default());
    let ours = beat_synchronous(&analysis.chroma.frames, analysis.chroma.hop_seconds, &beats);
    // Same segmentation: one row per segment between beats (librosa drops the duplicate
    // boundary of a beat at time 0).
    assert_eq!(ours.len(), theirs.len());
    let correlations: Vec<f64> = ours
        .iter()
        .zip(&theirs)
        .map(|(a, b)| {
            let a: Vec<f64> = a.iter().map(|v| f64::from(*v)).collect();
            pearson(&a, b)
        })
        .collect();
    let mean = correlations.iter().sum::<f64>() / correlations.len() as f64;
    // The frame-wise chroma already correlates ≥ 0.9 with librosa's (tests/audio_reference.rs);
    // the means over beats must too.
    assert!(mean >= 0.95, "mean correlation {mean}: {correlations:?}");
}

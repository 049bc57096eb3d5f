//! f0 of test tones made by SoX 14.4.2 (`sox -n -r 22050 -b 16 … synth 0.6 WAVE FREQ`, see
//! `tests/fixtures/audio/make_audio_fixtures.py`) at equal-tempered frequencies with
//! A4 = 440 Hz (ISO 16:1975; f(n) = 440 · 2^((n − 69)/12)), C2 to C7, sine and sawtooth, three
//! of them mixed with white noise (about 17 dB SNR). Both YIN and pYIN must find the tone's
//! frequency within 5 cents (issue 4) on every voiced frame of the steady middle of the tone.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::audio::decode::{decode_file, DecodeOptions};
use collatio::audio::pitch::{pyin, yin, PyinOptions};
use collatio::audio::{analyse, AnalysisOptions, ANALYSIS_RATE};
use std::path::PathBuf;

/// Largest f0 error allowed, in cents (issue 4).
const MAX_CENTS: f64 = 5.0;

fn tones() -> Vec<(String, PathBuf, f64)> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/audio/tones");
    let mut out = Vec::new();
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_stem().unwrap().to_string_lossy().into_owned();
        let midi: f64 = name.split('_').nth(1).unwrap().parse().unwrap();
        out.push((name, path, 440.0 * 2f64.powf((midi - 69.0) / 12.0)));
    }
    out.sort_by(|a, b| a.0.cmp(&b.0));
    assert_eq!(out.len(), 15, "every SoX tone of the fixture script");
    out
}

fn cents(f: f64, reference: f64) -> f64 {
    1200.0 * (f / reference).log2()
}

#[test]
fn pyin_and_yin_within_5_cents_on_sox_tones() {
    let options = PyinOptions::default();
    let mut failures = Vec::new();
    for (name, path, hz) in tones() {
        let decoded = decode_file(&path, "FLAC", &DecodeOptions::default()).unwrap();
        assert_eq!(decoded.sample_rate, ANALYSIS_RATE);
        let track = pyin(&decoded.samples, ANALYSIS_RATE, 512, &options);
        let plain = yin(&decoded.samples, ANALYSIS_RATE, 512, &options, 0.1);
        // The middle of the 0.6 s tone: frames whose whole analysis window is inside it.
        let n = track.f0.len();
        let middle = 5..n - 5;
        let mut worst: f64 = 0.0;
        let mut voiced = 0;
        for k in middle.clone() {
            if track.voiced[k] {
                voiced += 1;
                worst = worst.max(cents(track.f0[k], hz).abs());
            }
        }
        let yin_worst = middle
            .clone()
            .map(|k| cents(plain[k], hz).abs())
            .fold(0.0f64, f64::max);
        println!("{name}: {hz:.3} Hz, pYIN {voiced}/{} frames voiced, worst {worst:.2} cents; YIN worst {yin_worst:.2} cents", middle.len());
        if voiced != middle.len() {
            failures.push(format!("{name}: unvoiced frames in a steady tone"));
        }
        if worst > MAX_CENTS {
            failures.push(format!("{name}: pYIN off by {worst:.2} cents"));
        }
        if yin_worst > MAX_CENTS {
            failures.push(format!("{name}: YIN off by {yin_worst:.2} cents"));
        }
        // And the whole pipeline transcribes exactly one note at that pitch.
        let analysis = analyse(&decoded.samples, &AnalysisOptions::default());
        let expected = 69.0 + 12.0 * (hz / 440.0).log2();
        if analysis.notes.len() != 1
            || (analysis.notes[0].pitch - expected).abs() * 100.0 > MAX_CENTS
        {
            failures.push(format!("{name}: notes {:?}", analysis.notes));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

//! Predominant melody extraction (`collatio::audio::melody`) against outside truth.
//!
//! - Arrangements in `tests/fixtures/arrangements/` (written by its `make_arrangements.py`):
//!   FluidSynth 2.3.1 renders with the FluidR3 General MIDI soundfont of a melody instrument
//!   over piano, guitar, strings and bass; the reference f0 (`melody_f0`, every 10 ms, from the
//!   MIDI file) is the truth. Variants made with SoX 14.4.2's `pitch` and `tempo` effects have
//!   their own truth files.
//! - Monophonic renders in `tests/fixtures/audio/renders/` (FluidSynth, same soundfont), with
//!   the reference f0 from their MIDI files in the golden files of
//!   `tests/fixtures/audio/make_audio_golden.py`.
//!
//! Measures as mir_eval 0.8 defines them (Raffel et al. 2014, `mir_eval.melody`): the estimate
//! is converted to cents above 10 Hz and resampled to the reference's time base the way
//! `resample_melody_series` does with its default `kind="linear"` (cents interpolated
//! linearly over held values, zeros and voicing by zero-order hold); raw pitch and raw chroma
//! accuracy with a 50-cent tolerance; overall accuracy, voicing recall and voicing false
//! alarm with binary voicing.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::audio::decode::{decode_file, DecodeOptions};
use collatio::audio::eval::{hz_to_cents, raw_chroma_accuracy, raw_pitch_accuracy};
use collatio::audio::melody::{predominant_melody, MelodyOptions, MelodyTrack};
use collatio::audio::notes::{transcribe, NoteOptions};
use collatio::audio::ANALYSIS_RATE;
use serde_json::Value;
use std::path::PathBuf;

/// Raw pitch accuracy the issue asks for on each plain arrangement render.
const MIN_RPA: f64 = 0.70;
/// Raw chroma accuracy the issue asks for on each plain arrangement render.
const MIN_RCA: f64 = 0.75;
/// Raw pitch accuracy asked for on the monophonic renders (one instrument, no accompaniment).
const MIN_MONOPHONIC_RPA: f64 = 0.90;

/// The plain renders of the arrangements.
const PIECES: [&str; 5] = [
    "larkfield",
    "weirmoor",
    "tidewrack",
    "cinderpath_rearranged",
    "glimmerfen",
];

/// The SoX variants (pitch-shifted and time-stretched).
const VARIANTS: [&str; 12] = [
    "larkfield_pitch+200",
    "larkfield_pitch-300",
    "larkfield_tempo0.8",
    "larkfield_tempo1.25",
    "weirmoor_pitch+200",
    "weirmoor_pitch-300",
    "weirmoor_tempo0.8",
    "weirmoor_tempo1.25",
    "tidewrack_pitch+200",
    "tidewrack_pitch-300",
    "tidewrack_tempo0.8",
    "tidewrack_tempo1.25",
];

fn fixture(path: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(path)
}

fn json(path: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(fixture(path)).unwrap()).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn melody_of(path: &str, container: &'static str) -> MelodyTrack {
    let decoded = decode_file(&fixture(path), container, &DecodeOptions::default()).unwrap();
    assert_eq!(decoded.sample_rate, ANALYSIS_RATE);
    predominant_melody(
        &decoded.samples,
        decoded.sample_rate,
        &MelodyOptions::default(),
    )
}

/// The mir_eval measures of one estimate.
#[derive(Debug, Clone, Copy)]
struct Scores {
    rpa: f64,
    rca: f64,
    oa: f64,
    vr: f64,
    vfa: f64,
}

/// `mir_eval.melody.resample_melody_series(times, cents, voicing, times_new, kind="linear")`
/// for an estimate every `hop` seconds from 0, onto `n_new` frames every `hop_new` seconds:
/// returns (cents, voicing) on the new time base.
fn resample(est_cents: &[f64], hop: f64, hop_new: f64, n_new: usize) -> (Vec<f64>, Vec<f64>) {
    let round = |t: f64| (t * 1e10).round() / 1e10;
    let mut times: Vec<f64> = (0..est_cents.len())
        .map(|j| round(j as f64 * hop))
        .collect();
    let mut cents = est_cents.to_vec();
    let last_new = round((n_new.max(1) - 1) as f64 * hop_new);
    // An extra unvoiced sample when the new times reach past the estimate's.
    if times.last().is_none_or(|t| last_new > *t) {
        times.push(last_new);
        cents.push(0.0);
    }
    // Zeros replaced by the last voiced value before the linear interpolation.
    let mut held = cents.clone();
    for j in 1..held.len() {
        if held[j] == 0.0 {
            held[j] = held[j - 1];
        }
    }
    let mut out_cents = Vec::with_capacity(n_new);
    let mut out_voicing = Vec::with_capacity(n_new);
    let mut j = 0usize;
    for i in 0..n_new {
        let t = round(i as f64 * hop_new);
        while j + 1 < times.len() && times[j + 1] <= t {
            j += 1;
        }
        let mask = cents[j];
        let value = if j + 1 < times.len() && t > times[j] {
            let x = (t - times[j]) / (times[j + 1] - times[j]);
            held[j] + (held[j + 1] - held[j]) * x
        } else {
            held[j]
        };
        out_cents.push(if mask != 0.0 { value } else { 0.0 });
        out_voicing.push(if mask != 0.0 { 1.0 } else { 0.0 });
    }
    (out_cents, out_voicing)
}

/// Scores of an f0 series every `hop` seconds against a reference every `ref_hop` seconds.
fn score(est_hz: &[f64], hop: f64, ref_hz: &[f64], ref_hop: f64) -> Scores {
    let est: Vec<f64> = est_hz.iter().map(|f| hz_to_cents(*f)).collect();
    let (est_c, est_v) = resample(&est, hop, ref_hop, ref_hz.len());
    let ref_c: Vec<f64> = ref_hz.iter().map(|f| hz_to_cents(*f)).collect();
    let ref_v: Vec<f64> = ref_hz
        .iter()
        .map(|f| if *f > 0.0 { 1.0 } else { 0.0 })
        .collect();
    let n = ref_v.len() as f64;
    let voiced = ref_v.iter().sum::<f64>();
    let unvoiced = n - voiced;
    let mut correct = 0.0;
    let (mut hits, mut false_alarms) = (0.0, 0.0);
    for k in 0..ref_v.len() {
        if ref_v[k] > 0.0 {
            if est_v[k] > 0.0 {
                hits += 1.0;
                if (ref_c[k] - est_c[k]).abs() < 50.0 {
                    correct += 1.0;
                }
            }
        } else if est_v[k] > 0.0 {
            false_alarms += 1.0;
        } else {
            correct += 1.0;
        }
    }
    Scores {
        rpa: raw_pitch_accuracy(&ref_v, &ref_c, &est_c, 50.0),
        rca: raw_chroma_accuracy(&ref_v, &ref_c, &est_c, 50.0),
        oa: correct / n.max(1.0),
        vr: hits / voiced.max(1.0),
        vfa: false_alarms / unvoiced.max(1.0),
    }
}

/// Raw pitch accuracy of the reference-voiced frames (on the reference's time base, nearest
/// estimate frame) inside and outside the unsure spans.
fn accuracy_inside_and_outside(
    melody: &MelodyTrack,
    reference: &[f64],
    ref_hop: f64,
) -> (f64, f64) {
    let mut counts = [[0usize; 2]; 2];
    for (i, r) in reference.iter().enumerate() {
        if *r <= 0.0 {
            continue;
        }
        let t = i as f64 * ref_hop;
        let k = (t / melody.track.hop_seconds).round() as usize;
        let est = melody.track.f0.get(k).copied().unwrap_or(0.0);
        let correct = est > 0.0 && (1200.0 * (est / r).log2()).abs() < 50.0;
        let unsure = melody.unsure.iter().any(|(a, b)| t >= *a && t < *b);
        counts[usize::from(unsure)][usize::from(correct)] += 1;
    }
    let rate = |c: [usize; 2]| c[1] as f64 / (c[0] + c[1]).max(1) as f64;
    (rate(counts[1]), rate(counts[0]))
}

fn arrangement(name: &str) -> (Scores, MelodyTrack) {
    let truth = json(&format!("arrangements/{name}.truth.json"));
    let reference = floats(&truth["melody_f0"]["hz"]);
    let ref_hop = truth["melody_f0"]["hop_seconds"].as_f64().unwrap();
    let melody = melody_of(&format!("arrangements/{name}.ogg"), "Ogg");
    let s = score(
        &melody.track.f0,
        melody.track.hop_seconds,
        &reference,
        ref_hop,
    );
    let unsure: f64 = melody.unsure.iter().map(|(a, b)| b - a).sum();
    println!(
        "{name}: RPA {:.3} RCA {:.3} OA {:.3} VR {:.3} VFA {:.3}; contours {:?}; {} unsure spans, \
         {unsure:.1} s",
        s.rpa,
        s.rca,
        s.oa,
        s.vr,
        s.vfa,
        melody.contours,
        melody.unsure.len()
    );
    let (inside, outside) = accuracy_inside_and_outside(&melody, &reference, ref_hop);
    let mut reasons = [0usize; 4];
    for r in &melody.unsure_reasons {
        let flags = [r.low_salience, r.competing_contour, r.octave, r.voicing];
        for (n, flag) in reasons.iter_mut().zip(flags) {
            *n += usize::from(flag);
        }
    }
    println!(
        "{name}: raw pitch accuracy inside unsure spans {inside:.3}, outside {outside:.3}; \
         spans by reason (low salience, competing, octave, voicing) {reasons:?}"
    );
    (s, melody)
}

/// The issue's targets on every plain arrangement render; and the unsure spans mark where
/// the errors are: over all five pieces, raw pitch accuracy inside them is lower than outside.
#[test]
fn arrangements_reach_the_issue_targets() {
    let mut failures = Vec::new();
    let (mut inside, mut outside) = (Vec::new(), Vec::new());
    for name in PIECES {
        let (s, melody) = arrangement(name);
        if s.rpa < MIN_RPA || s.rca < MIN_RCA {
            failures.push(format!("{name}: RPA {:.3} RCA {:.3}", s.rpa, s.rca));
        }
        let truth = json(&format!("arrangements/{name}.truth.json"));
        let reference = floats(&truth["melody_f0"]["hz"]);
        let hop = truth["melody_f0"]["hop_seconds"].as_f64().unwrap();
        let (i, o) = accuracy_inside_and_outside(&melody, &reference, hop);
        inside.push(i);
        outside.push(o);
    }
    assert!(failures.is_empty(), "{failures:?}");
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    assert!(
        mean(&inside) + 0.05 < mean(&outside),
        "accuracy inside unsure spans {inside:?}, outside {outside:?}"
    );
}

/// The pitch-shifted and time-stretched variants (SoX): reported, with the same targets.
#[test]
fn sox_variants() {
    let mut failures = Vec::new();
    for name in VARIANTS {
        let (s, _) = arrangement(name);
        if s.rpa < MIN_RPA || s.rca < MIN_RCA {
            failures.push(format!("{name}: RPA {:.3} RCA {:.3}", s.rpa, s.rca));
        }
    }
    assert!(failures.is_empty(), "{failures:?}");
}

/// Monophonic renders: the extractor must also do the easy case well. The reference f0 is on
/// the same frames as the estimate (512 samples at 22,050 Hz).
#[test]
fn monophonic_renders() {
    let mut failures = Vec::new();
    for name in ["flute", "violin", "sax", "choir", "drums"] {
        let golden = json(&format!("audio/golden/{name}.json"));
        let reference = floats(&golden["reference_f0"]);
        let hop = golden["hop_length"].as_f64().unwrap() / golden["sample_rate"].as_f64().unwrap();
        let melody = melody_of(&format!("audio/renders/{name}.flac"), "FLAC");
        assert_eq!(
            melody.track.f0.len(),
            reference.len(),
            "{name}: frame grids"
        );
        let s = score(&melody.track.f0, hop, &reference, hop);
        println!(
            "{name}: RPA {:.3} RCA {:.3} OA {:.3} VR {:.3} VFA {:.3}",
            s.rpa, s.rca, s.oa, s.vr, s.vfa
        );
        // The drum render is a piano melody over a drum kit: reported, not gated.
        if name != "drums" && s.rpa < MIN_MONOPHONIC_RPA {
            failures.push(format!("{name}: RPA {:.3}", s.rpa));
        }
    }
    assert!(failures.is_empty(), "{failures:?}");
}

/// The melody track goes through the monophonic note stage unchanged.
#[test]
fn notes_from_the_melody_track() {
    let melody = melody_of("arrangements/larkfield.ogg", "Ogg");
    let onset = vec![0.0f32; melody.track.f0.len()];
    let notes = transcribe(&melody.track, &onset, 440.0, &NoteOptions::default());
    let truth = json("arrangements/larkfield.truth.json");
    let reference = truth["melody_notes"].as_array().unwrap().len();
    println!(
        "larkfield: {} notes transcribed, {reference} in the score",
        notes.len()
    );
    assert!(notes.len() as f64 >= 0.5 * reference as f64);
    assert!(notes
        .iter()
        .all(|n| n.confidence > 0.0 && n.confidence <= 0.99));
}

/// Silence and white noise have no melody (and do not panic).
#[test]
fn silence_and_noise_have_no_melody() {
    let silence = vec![0.0f32; 5 * 22_050];
    let mut seed = 7u64;
    let noise: Vec<f32> = (0..5 * 22_050)
        .map(|_| {
            seed = seed
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            0.3 * (((seed >> 33) as f32 / (1u64 << 31) as f32) - 0.5)
        })
        .collect();
    for (name, signal) in [("silence", silence), ("noise", noise)] {
        let m = predominant_melody(&signal, 22_050, &MelodyOptions::default());
        let voiced = m.track.voiced.iter().filter(|v| **v).count();
        println!("{name}: {voiced} voiced frames of {}", m.track.f0.len());
        assert_eq!(voiced, 0, "{name}");
    }
}

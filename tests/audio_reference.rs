//! Audio analysis against sources outside the project.
//!
//! - Renders of MIDI files written for these tests, made by FluidSynth 2.3.1 with the FluidR3
//!   General MIDI soundfont (Debian `fluid-soundfont-gm` 3.1), by
//!   `tests/fixtures/audio/make_audio_fixtures.py`: the MIDI files are the reference (pitch per
//!   frame, notes, beats).
//! - librosa 0.11.0's `pyin` and `chroma_stft` on the same renders, and mir_eval 0.8.2's
//!   measures, in golden files made by `tests/fixtures/audio/make_audio_golden.py`.
//!
//! Measures follow mir_eval (Raffel et al. 2014): raw pitch and raw chroma accuracy with a
//! 50-cent tolerance; note F-measure with a 50 ms onset and 50-cent pitch tolerance, offsets
//! ignored; beat F-measure with a 70 ms window.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::audio::decode::{decode_file, DecodeOptions};
use collatio::audio::eval::{
    beat_f_measure, hz_to_cents, raw_chroma_accuracy, raw_pitch_accuracy, transcription_prf,
};
use collatio::audio::{analyse, Analysis, AnalysisOptions};
use serde_json::Value;
use std::path::PathBuf;

/// Required raw pitch and raw chroma accuracy more than 50 ms from any note boundary (issue 4).
const MIN_ACCURACY_AWAY_FROM_BOUNDARIES: f64 = 0.95;
/// Required note F-measure (issue 4).
const MIN_NOTE_F_MEASURE: f64 = 0.80;
/// Required mean per-frame correlation with librosa's chroma (issue 4).
const MIN_CHROMA_CORRELATION: f64 = 0.9;
/// Required beat F-measure (issue 4).
const MIN_BEAT_F_MEASURE: f64 = 0.8;

fn audio_fixture(path: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/audio")
        .join(path)
}

fn golden(name: &str) -> Value {
    let text = std::fs::read_to_string(audio_fixture(&format!("golden/{name}.json"))).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn analyse_render(name: &str) -> Analysis {
    let decoded = decode_file(
        &audio_fixture(&format!("renders/{name}.flac")),
        "FLAC",
        &DecodeOptions::default(),
    )
    .unwrap();
    analyse(&decoded.samples, &AnalysisOptions::default())
}

struct Scores {
    rpa: f64,
    rca: f64,
    rpa_away: f64,
    rca_away: f64,
}

/// mir_eval's raw pitch/chroma accuracy of an f0 series (0 = unvoiced) against the reference,
/// over all frames and over frames more than `boundary` s from every reference note boundary.
fn pitch_scores(
    reference: &[f64],
    estimate: &[f64],
    notes: &[(f64, f64, f64)],
    hop: f64,
    boundary: f64,
) -> Scores {
    let n = reference.len().min(estimate.len());
    let ref_v: Vec<f64> = reference[..n]
        .iter()
        .map(|f| if *f > 0.0 { 1.0 } else { 0.0 })
        .collect();
    let ref_c: Vec<f64> = reference[..n].iter().map(|f| hz_to_cents(*f)).collect();
    let est_c: Vec<f64> = estimate[..n].iter().map(|f| hz_to_cents(*f)).collect();
    let away: Vec<bool> = (0..n)
        .map(|k| {
            let t = k as f64 * hop;
            notes
                .iter()
                .all(|(on, off, _)| (t - on).abs() > boundary && (t - off).abs() > boundary)
        })
        .collect();
    let pick = |v: &[f64]| -> Vec<f64> {
        v.iter()
            .zip(&away)
            .filter(|(_, a)| **a)
            .map(|(x, _)| *x)
            .collect()
    };
    Scores {
        rpa: raw_pitch_accuracy(&ref_v, &ref_c, &est_c, 50.0),
        rca: raw_chroma_accuracy(&ref_v, &ref_c, &est_c, 50.0),
        rpa_away: raw_pitch_accuracy(&pick(&ref_v), &pick(&ref_c), &pick(&est_c), 50.0),
        rca_away: raw_chroma_accuracy(&pick(&ref_v), &pick(&ref_c), &pick(&est_c), 50.0),
    }
}

fn reference_notes(g: &Value) -> Vec<(f64, f64, f64)> {
    g["reference_notes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|n| {
            let v = floats(n);
            (v[0], v[1], v[2])
        })
        .collect()
}

fn pearson(a: &[f64], b: &[f64]) -> Option<f64> {
    let n = a.len() as f64;
    let ma = a.iter().sum::<f64>() / n;
    let mb = b.iter().sum::<f64>() / n;
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    (saa > 1e-12 && sbb > 1e-12).then(|| sab / (saa * sbb).sqrt())
}

/// Pitch, notes and chroma of one rendered instrument against its MIDI file and librosa.
fn check_render(name: &str) {
    let g = golden(name);
    let analysis = analyse_render(name);
    let hop = g["hop_length"].as_f64().unwrap() / g["sample_rate"].as_f64().unwrap();
    let boundary = g["boundary_seconds"].as_f64().unwrap();
    let reference = floats(&g["reference_f0"]);
    let notes = reference_notes(&g);
    assert_eq!(
        analysis.pitch.f0.len(),
        reference.len(),
        "{name}: frame grids differ"
    );

    let ours = pitch_scores(&reference, &analysis.pitch.f0, &notes, hop, boundary);
    let librosa = pitch_scores(
        &reference,
        &floats(&g["librosa_pyin_f0"]),
        &notes,
        hop,
        boundary,
    );
    // Our evaluation of librosa's f0 reproduces mir_eval's numbers in the golden file.
    let m = &g["librosa_pyin_metrics"];
    assert!((librosa.rpa - m["raw_pitch_accuracy"].as_f64().unwrap()).abs() < 1e-9);
    assert!(
        (librosa.rpa_away
            - m["raw_pitch_accuracy_away_from_boundaries"]
                .as_f64()
                .unwrap())
        .abs()
            < 1e-9
    );

    let est: Vec<(f64, f64)> = analysis
        .notes
        .iter()
        .map(|n| (n.onset, collatio::audio::hz_of_midi(n.pitch, 440.0)))
        .collect();
    let refs: Vec<(f64, f64)> = notes.iter().map(|(on, _, hz)| (*on, *hz)).collect();
    let prf = transcription_prf(&refs, &est, 0.05, 50.0);

    let ref_chroma: Vec<Vec<f64>> = g["librosa_chroma"]
        .as_array()
        .unwrap()
        .iter()
        .map(floats)
        .collect();
    let mut correlations = Vec::new();
    for (ours, theirs) in analysis.chroma.frames.iter().zip(&ref_chroma) {
        let ours: Vec<f64> = ours.iter().map(|x| f64::from(*x)).collect();
        if let Some(r) = pearson(&ours, theirs) {
            correlations.push(r);
        }
    }
    let mean_correlation = correlations.iter().sum::<f64>() / correlations.len().max(1) as f64;
    let tuning_diff = (analysis.chroma.tuning - g["librosa_tuning"].as_f64().unwrap()).abs();

    println!(
        "{name}: collatio RPA {:.4} RCA {:.4} (away from boundaries {:.4} / {:.4}); \
         librosa.pyin RPA {:.4} RCA {:.4} (away {:.4} / {:.4}); notes P {:.3} R {:.3} F {:.3} \
         ({} estimated, {} reference); chroma correlation {:.4} over {} frames; tuning {:+.2} vs \
         librosa {:+.2}",
        ours.rpa,
        ours.rca,
        ours.rpa_away,
        ours.rca_away,
        librosa.rpa,
        librosa.rca,
        librosa.rpa_away,
        librosa.rca_away,
        prf.precision,
        prf.recall,
        prf.f_measure,
        est.len(),
        refs.len(),
        mean_correlation,
        correlations.len(),
        analysis.chroma.tuning,
        g["librosa_tuning"].as_f64().unwrap()
    );
    assert!(
        ours.rpa_away >= MIN_ACCURACY_AWAY_FROM_BOUNDARIES,
        "{name}: RPA away {}",
        ours.rpa_away
    );
    assert!(
        ours.rca_away >= MIN_ACCURACY_AWAY_FROM_BOUNDARIES,
        "{name}: RCA away {}",
        ours.rca_away
    );
    // At least librosa's accuracy over all frames (issue 4); 1e-12 absorbs rounding only.
    let margin = 1e-12;
    assert!(
        ours.rpa >= librosa.rpa - margin,
        "{name}: RPA {} vs librosa's {}",
        ours.rpa,
        librosa.rpa
    );
    assert!(
        ours.rca >= librosa.rca - margin,
        "{name}: RCA {} vs librosa's {}",
        ours.rca,
        librosa.rca
    );
    assert!(
        prf.f_measure >= MIN_NOTE_F_MEASURE,
        "{name}: note F {}",
        prf.f_measure
    );
    assert!(
        mean_correlation >= MIN_CHROMA_CORRELATION,
        "{name}: chroma r {mean_correlation}"
    );
    // Same estimator, same histogram resolution: within two 0.01-semitone bins.
    assert!(
        tuning_diff <= 0.02 + 1e-9,
        "{name}: tuning differs by {tuning_diff}"
    );
}

/// Flute (tongued notes with a breathy attack).
#[test]
fn flute_render() {
    check_render("flute");
}

/// Violin (legato bowing, soft attacks that speak 45-70 ms after the MIDI onset under the
/// previous note's release).
#[test]
fn violin_render() {
    check_render("violin");
}

/// Alto sax.
#[test]
fn alto_sax_render() {
    check_render("sax");
}

/// Choir "oohs" (slow attacks).
#[test]
fn choir_render() {
    check_render("choir");
}

/// Beats of the render with a drum kit (piano melody, rock beat at 100 bpm) against the MIDI
/// file's quarter-note beats.
#[test]
fn beats_of_the_drum_render() {
    let g = golden("drums");
    let analysis = analyse_render("drums");
    let reference = floats(&g["reference_beats"]);
    let f = beat_f_measure(&reference, &analysis.beats.beats, 0.07);
    println!(
        "drums: tempo {:.2} bpm (MIDI 100), {} beats (reference {}), beat F-measure {:.4}",
        analysis.beats.tempo_bpm,
        analysis.beats.beats.len(),
        reference.len(),
        f
    );
    assert!(f >= MIN_BEAT_F_MEASURE, "beat F {f}");
}

/// Quarter-note beat times of a MIDI file (read by collatio's MIDI reader for its tempo map)
/// up to the end of its last melody note, and its first tempo in bpm.
fn midi_quarter_beats(path: &std::path::Path) -> (Vec<f64>, f64) {
    let midi =
        collatio::ingest::read_file(path, &collatio::ingest::ReadOptions::default()).unwrap();
    let end = midi
        .melody
        .iter()
        .map(|n| n.onset_seconds.0 + n.duration_seconds.0)
        .fold(0.0, f64::max);
    let quarter = i64::from(midi.tempo.resolution);
    let beats = (0..)
        .map(|k| midi.tempo.seconds_at(k * quarter).0)
        .take_while(|t| *t < end - 1e-9)
        .collect();
    (beats, midi.tempo.changes[0].bpm())
}

/// The legato violin render (eighths and quarters at 88 bpm, MIDI file beside it): its onsets
/// support the eighth-note level (≈ 176 bpm) about as well as the quarter, and without help
/// the tracker takes the eighths. A tempo hint (`--tempo 88`) picks the quarter-note level,
/// whose beats then meet the MIDI file's within 70 ms (mir_eval's beat F-measure).
#[test]
fn a_tempo_hint_gives_the_legato_violin_its_quarter_notes() {
    let (reference, midi_bpm) = midi_quarter_beats(&audio_fixture("renders/violin.mid"));
    let decoded = decode_file(
        &audio_fixture("renders/violin.flac"),
        "FLAC",
        &DecodeOptions::default(),
    )
    .unwrap();
    let mut options = AnalysisOptions::default();
    options.beats.tempo_hint = Some(midi_bpm);
    let hinted = analyse(&decoded.samples, &options);
    let f = beat_f_measure(&reference, &hinted.beats.beats, 0.07);
    let unhinted = analyse(&decoded.samples, &AnalysisOptions::default());
    println!(
        "violin: hint {midi_bpm:.0} bpm → tempo {:.2}, beat F {f:.4}; without a hint {:.2} bpm, \
         beat F {:.4}",
        hinted.beats.tempo_bpm,
        unhinted.beats.tempo_bpm,
        beat_f_measure(&reference, &unhinted.beats.beats, 0.07)
    );
    assert!(
        (hinted.beats.tempo_bpm / midi_bpm - 1.0).abs() < 0.04,
        "tempo {}",
        hinted.beats.tempo_bpm
    );
    assert!(f >= MIN_BEAT_F_MEASURE, "beat F {f}");
}

/// Beats of the demo songs' melodies rendered alone (`demo/audio/make_demo_audio.py`:
/// FluidSynth with FluidR3_GM, flute and alto sax) against the quarter notes of the MIDI files
/// they were rendered from (`demo/*.mid`, read here by collatio's MIDI reader for its tempo
/// map). The melodies are syncopated (dotted rhythms, notes across the beat), with no drums:
/// the single strongest onset periodicity is an off-beat spacing (80 bpm in a 120-bpm song).
#[test]
fn beats_of_the_syncopated_demo_melodies() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    for name in ["pierside-lamps", "millstream-boats"] {
        let (reference, midi_bpm) = midi_quarter_beats(&root.join(format!("demo/{name}.mid")));
        let decoded = decode_file(
            &root.join(format!("demo/audio/{name}-melody.flac")),
            "FLAC",
            &DecodeOptions::default(),
        )
        .unwrap();
        let analysis = analyse(&decoded.samples, &AnalysisOptions::default());
        let f = beat_f_measure(&reference, &analysis.beats.beats, 0.07);
        println!(
            "{name}: tempo {:.2} bpm (MIDI {midi_bpm:.0}), {} beats (reference {}), beat \
             F-measure {f:.4}",
            analysis.beats.tempo_bpm,
            analysis.beats.beats.len(),
            reference.len()
        );
        assert!(
            (analysis.beats.tempo_bpm / midi_bpm - 1.0).abs() < 0.04,
            "{name}: tempo {} vs {midi_bpm}",
            analysis.beats.tempo_bpm
        );
        assert!(f >= MIN_BEAT_F_MEASURE, "{name}: beat F {f}");
    }
}

/// The pYIN frame length (1900 samples) was chosen on the four renders above (flute, violin,
/// alto sax, choir; docs/audio.md): lengths from 1850 to 2000 samples met the targets there,
/// 1690 did not. Checked here on renders it was not chosen on: the demo songs' sung melodies
/// (`demo/audio/make_demo_audio.py`: FluidSynth with FluidR3_GM, flute and alto sax, other
/// tunes, other tempi, syncopated), against the Voice track of the MIDI files they were
/// rendered from (`demo/*.mid`, read by collatio's MIDI reader, which `tests/music21_golden.rs`
/// checks against music21): raw pitch and raw chroma accuracy more than 50 ms from every note
/// boundary (mir_eval's measures, 50-cent tolerance) at least the same 0.95 as above.
#[test]
fn the_pyin_frame_length_holds_on_renders_it_was_not_chosen_on() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    for name in ["pierside-lamps", "millstream-boats"] {
        let midi = collatio::ingest::read_file(
            &root.join(format!("demo/{name}.mid")),
            &collatio::ingest::ReadOptions::default(),
        )
        .unwrap();
        let voice = midi
            .parts
            .iter()
            .position(|p| p.name == "Voice")
            .expect("a Voice track");
        let notes: Vec<(f64, f64, f64)> = midi.parts[voice]
            .notes
            .iter()
            .map(|n| {
                (
                    n.onset_seconds.0,
                    n.onset_seconds.0 + n.duration_seconds.0,
                    collatio::audio::hz_of_midi(n.pitch.0, 440.0),
                )
            })
            .collect();
        let decoded = decode_file(
            &root.join(format!("demo/audio/{name}-melody.flac")),
            "FLAC",
            &DecodeOptions::default(),
        )
        .unwrap();
        let analysis = analyse(&decoded.samples, &AnalysisOptions::default());
        let hop = analysis.pitch.hop_seconds;
        // The sounding note at each frame's time (the later note where two touch).
        let reference: Vec<f64> = (0..analysis.pitch.f0.len())
            .map(|k| {
                let t = k as f64 * hop;
                notes
                    .iter()
                    .rev()
                    .find(|(on, off, _)| *on <= t && t < *off)
                    .map_or(0.0, |n| n.2)
            })
            .collect();
        let scores = pitch_scores(&reference, &analysis.pitch.f0, &notes, hop, 0.05);
        println!(
            "{name}: {} notes, melody source {}; RPA {:.4} RCA {:.4} (away from boundaries \
             {:.4} / {:.4})",
            notes.len(),
            analysis.melody_source,
            scores.rpa,
            scores.rca,
            scores.rpa_away,
            scores.rca_away
        );
        assert_eq!(analysis.melody_source, "solo", "{name}");
        assert!(
            scores.rpa_away >= MIN_ACCURACY_AWAY_FROM_BOUNDARIES,
            "{name}: RPA away {}",
            scores.rpa_away
        );
        assert!(
            scores.rca_away >= MIN_ACCURACY_AWAY_FROM_BOUNDARIES,
            "{name}: RCA away {}",
            scores.rca_away
        );
    }
}

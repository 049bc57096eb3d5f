//! Audio through the real executable: `inspect` on a recording, `--export-midi`, `compare` of a
//! recording with its own MIDI score, and bad audio input (never a panic; a message naming the
//! file and starting with `audio:`; exit code 3 for input errors, 2 for usage errors).
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::path::{Path, PathBuf};
use std::process::Output;

mod common;

fn collatio(args: &[&str]) -> Output {
    common::run_collatio(args)
}

fn fixture(name: &str) -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/audio")
        .join(name)
        .display()
        .to_string()
}

fn write(dir: &Path, name: &str, bytes: &[u8]) -> String {
    let path = dir.join(name);
    std::fs::write(&path, bytes).unwrap();
    path.display().to_string()
}

/// A canonical 44-byte-header PCM WAV (Microsoft RIFF/WAVE: `fmt ` chunk of 16 bytes, then
/// `data`), with the header fields given.
fn wav(rate: u32, channels: u16, samples: &[i16], declared_data: Option<u32>) -> Vec<u8> {
    let data_len = (samples.len() * 2) as u32;
    let mut out = b"RIFF".to_vec();
    out.extend_from_slice(&(36 + data_len).to_le_bytes());
    out.extend_from_slice(b"WAVEfmt ");
    out.extend_from_slice(&16u32.to_le_bytes());
    out.extend_from_slice(&1u16.to_le_bytes()); // PCM
    out.extend_from_slice(&channels.to_le_bytes());
    out.extend_from_slice(&rate.to_le_bytes());
    out.extend_from_slice(&(rate * 2 * u32::from(channels)).to_le_bytes());
    out.extend_from_slice(&(2 * channels).to_le_bytes());
    out.extend_from_slice(&16u16.to_le_bytes());
    out.extend_from_slice(b"data");
    out.extend_from_slice(&declared_data.unwrap_or(data_len).to_le_bytes());
    for s in samples {
        out.extend_from_slice(&s.to_le_bytes());
    }
    out
}

fn tone(hz: f64, seconds: f64, rate: u32) -> Vec<i16> {
    (0..(seconds * f64::from(rate)) as usize)
        .map(|n| {
            (12_000.0 * (2.0 * std::f64::consts::PI * hz * n as f64 / f64::from(rate)).sin()) as i16
        })
        .collect()
}

fn expect_error(path: &str, extra: &[&str], code: i32, phrase: &str) {
    let mut args = vec!["inspect", path];
    args.extend_from_slice(extra);
    let out = collatio(&args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(code), "{path}: {stderr}");
    assert!(
        stderr.contains(phrase),
        "{path}: expected '{phrase}' in: {stderr}"
    );
    assert!(!stderr.contains("panicked"), "{stderr}");
}

#[test]
fn inspect_a_recording_bar_by_bar() {
    let out = collatio(&["inspect", &fixture("renders/flute.flac")]);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(stdout.contains("FLAC audio"), "{stdout}");
    assert!(stdout.contains("15 notes"), "{stdout}");
    // The flute melody of the fixture script, G4 B4 D5 …, named with cents.
    assert!(
        stdout.contains("G4") && stdout.contains("D5") && stdout.contains("E5"),
        "{stdout}"
    );
    let json = collatio(&[
        "inspect",
        &fixture("renders/flute.flac"),
        "--format",
        "json",
    ]);
    let record: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    assert_eq!(record["source"]["format"], "flac");
}

#[test]
fn meter_and_downbeat_shape_the_bars() {
    // The flute melody is in 4/4 at 96 bpm with a downbeat at 0 s: bar 2 starts at 2.5 s.
    let out = collatio(&[
        "inspect",
        &fixture("renders/flute.flac"),
        "--meter",
        "4/4",
        "--downbeat",
        "0",
        "--format",
        "json",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let record: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    // Bar 1 starts on the given downbeat, so no pickup; the second bar starts near 2.5 s
    // (4 beats at 96 bpm), within a frame or two of the tracked beats.
    let bars = record["bars"].as_array().unwrap();
    assert_eq!(bars[0]["label"], "1", "{bars:?}");
    let second = bars[1]["start_seconds"].as_f64().unwrap();
    assert!((second - 2.5).abs() < 0.06, "second bar at {second} s");
    // Through the library: every audio bar is marked estimated, and the meter is as given.
    let mut options = collatio::ingest::ReadOptions::default();
    options.audio.meter = Some((3, 4));
    let piece =
        collatio::ingest::read_file(Path::new(&fixture("renders/flute.flac")), &options).unwrap();
    assert!(piece
        .bars
        .iter()
        .all(|b| b.estimated && b.time_signature == (3, 4)));
    assert!(piece.melody.iter().all(|n| n.confidence < 1.0));
    let usage = collatio(&["inspect", &fixture("renders/flute.flac"), "--meter", "4/5"]);
    assert_eq!(usage.status.code(), Some(2));
}

#[test]
fn export_midi_reads_back_with_the_same_pitches() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("melody.mid");
    let out = collatio(&[
        "inspect",
        &fixture("renders/sax.flac"),
        "--export-midi",
        target.to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let audio: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let back = collatio(&["inspect", target.to_str().unwrap(), "--format", "json"]);
    assert_eq!(
        back.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&back.stderr)
    );
    let midi: serde_json::Value = serde_json::from_slice(&back.stdout).unwrap();
    let pitches = |v: &serde_json::Value| -> Vec<i64> {
        v["notes"]
            .as_array()
            .unwrap()
            .iter()
            .map(|n| n["midi"].as_f64().unwrap().round() as i64)
            .collect()
    };
    // The sax melody of the fixture script (sounding pitch).
    let expected = vec![58, 61, 63, 65, 68, 66, 65, 63, 61, 65, 63, 61, 58];
    assert_eq!(pitches(&audio), expected);
    assert_eq!(pitches(&midi), expected);
    // Never over the input.
    let input = fixture("renders/sax.flac");
    let refused = collatio(&["inspect", &input, "--export-midi", &input]);
    assert_eq!(refused.status.code(), Some(2));
}

#[test]
fn compare_a_recording_with_its_score() {
    let out = collatio(&[
        "compare",
        &fixture("renders/flute.flac"),
        &fixture("renders/flute.mid"),
        "--format",
        "json",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let record: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let text = record.to_string();
    assert!(text.contains("passages"), "{text}");
    let passages = record["passages"].as_array().unwrap();
    assert!(!passages.is_empty(), "the recording matches its own score");
    // The transcription's settings are in the record: A4 = 440 Hz by default (ISO 16), the
    // pitch range searched, the tracker, the estimates.
    let t = &record["a"]["transcription"];
    assert_eq!(t["a4_hz"], 440.0, "{t}");
    assert!(t["fmin_hz"].as_f64().unwrap() < t["fmax_hz"].as_f64().unwrap());
    assert!(t["melody_used"].is_string());
    assert!(t["estimated_tuning_semitones"].as_f64().unwrap().abs() < 0.5);
    assert!(record["b"]["transcription"].is_null());
    // ... and another A4 is recorded as given.
    let out = collatio(&[
        "compare",
        &fixture("renders/flute.flac"),
        &fixture("renders/flute.mid"),
        "--a4",
        "442",
        "--format",
        "json",
    ]);
    let record: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(record["a"]["transcription"]["a4_hz"], 442.0);
}

/// A half-second clip of one note agrees with any score that sounds its pitch class
/// somewhere; it must not be taken for a performance of the score (A4 = 440 Hz, ISO 16; the
/// demo's Pierside Lamps has A4s in its melody).
#[test]
fn a_clip_of_one_note_does_not_follow_a_score() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "a4.wav",
        &wav(22_050, 1, &tone(440.0, 0.5, 22_050), None),
    );
    let score = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("demo/pierside-lamps.musicxml");
    let out = collatio(&["compare", &p, score.to_str().unwrap(), "--format", "json"]);
    let record: serde_json::Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|_| panic!("{}", String::from_utf8_lossy(&out.stderr)));
    let sync = &record["synchronisation"];
    assert_eq!(sync["follows"], false, "{sync}");
    assert!(sync["agreeing_notes"].as_u64().unwrap() < 8, "{sync}");
    assert_eq!(sync["bars_from_score"], false, "{sync}");
}

#[test]
fn bad_audio_never_panics() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let good = wav(22_050, 1, &tone(440.0, 1.0, 22_050), None);

    // Truncated: the header promises more data than there is; what is there is read.
    let p = write(d, "cut.wav", &good[..good.len() / 2]);
    let out = collatio(&["inspect", &p]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{stderr}");
    assert!(matches!(out.status.code(), Some(0) | Some(1)), "{stderr}");

    // Cut inside the header.
    let p = write(d, "header.wav", &good[..30]);
    expect_error(&p, &[], 3, "audio:");

    // Huge declared data size (4 GiB) on a short file.
    let p = write(
        d,
        "huge.wav",
        &wav(22_050, 1, &tone(440.0, 0.5, 22_050), Some(u32::MAX)),
    );
    let out = collatio(&["inspect", &p]);
    assert!(!String::from_utf8_lossy(&out.stderr).contains("panicked"));

    // Zero samples.
    let p = write(d, "zero.wav", &wav(22_050, 1, &[], None));
    expect_error(&p, &[], 3, "audio:");

    // Silence and noise: no melody.
    let p = write(d, "silence.wav", &wav(22_050, 1, &vec![0; 22_050], None));
    expect_error(&p, &[], 3, "no melody was found");
    let mut seed = 7u64;
    let noise: Vec<i16> = (0..44_100)
        .map(|_| {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((seed >> 48) as i16) / 4
        })
        .collect();
    let p = write(d, "noise.wav", &wav(22_050, 1, &noise, None));
    expect_error(&p, &[], 3, "no melody was found");

    // Absurd sample rates.
    let p = write(d, "rate1.wav", &wav(1, 1, &tone(0.1, 100.0, 1), None));
    expect_error(&p, &[], 3, "audio:");
    let p = write(
        d,
        "rate_huge.wav",
        &wav(3_000_000, 1, &tone(440.0, 0.01, 3_000_000), None),
    );
    expect_error(&p, &[], 3, "audio:");

    // Many channels (the same tone in each): accepted up to 256, mixed down.
    let eight: Vec<i16> = tone(440.0, 0.5, 22_050)
        .iter()
        .flat_map(|s| [*s; 8])
        .collect();
    let p = write(d, "eight.wav", &wav(22_050, 8, &eight, None));
    let out = collatio(&["inspect", &p]);
    // Exit 1: too short for a beat, which the warnings say.
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(String::from_utf8_lossy(&out.stdout).contains("A4"));

    // Longer than the limit.
    let p = write(d, "long.wav", &good);
    expect_error(&p, &["--max-audio-seconds", "0.5"], 3, "above the limit");

    // A range outside the recording, and a range the wrong way round.
    expect_error(&p, &["--from", "5"], 3, "no audio samples");
    expect_error(&p, &["--from", "0.8", "--to", "0.2"], 2, "--to");

    // Garbage after a valid signature.
    let mut junk = b"fLaC".to_vec();
    junk.extend(std::iter::repeat_n(0xA5u8, 4000));
    let p = write(d, "junk.flac", &junk);
    expect_error(&p, &[], 3, "audio:");
    let mut junk = b"OggS".to_vec();
    junk.extend(std::iter::repeat_n(0x00u8, 200));
    let p = write(d, "junk.ogg", &junk);
    expect_error(&p, &[], 3, "audio:");
}

/// Every audio fixture cut at many points and with bytes flipped (seeded) never panics.
#[test]
fn truncated_and_mutated_audio_never_panics() {
    let dir = tempfile::tempdir().unwrap();
    let mut seed = 20_261_201u64;
    for name in [
        "formats/flute.mp3",
        "formats/flute.ogg",
        "formats/flute.m4a",
        "formats/flute.flac",
        "formats/flute.aiff",
    ] {
        let bytes = std::fs::read(fixture(name)).unwrap();
        for k in 1..4 {
            let mut cut = bytes[..bytes.len() * k / 4].to_vec();
            for _ in 0..8 {
                seed = seed
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                let at = 64 + (seed >> 33) as usize % (cut.len().max(65) - 64);
                if let Some(b) = cut.get_mut(at) {
                    *b ^= (seed >> 8) as u8 | 1;
                }
            }
            let ext = name.rsplit('.').next().unwrap();
            let p = write(dir.path(), &format!("m{k}.{ext}"), &cut);
            let out = collatio(&["inspect", &p]);
            let stderr = String::from_utf8_lossy(&out.stderr);
            assert!(!stderr.contains("panicked"), "{name} cut {k}/4: {stderr}");
            assert!(
                matches!(out.status.code(), Some(0) | Some(1) | Some(3)),
                "{name}: {stderr}"
            );
        }
    }
}

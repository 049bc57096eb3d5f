//! Arbitrary bytes through detection, audio decoding and the whole analysis, with a short
//! duration limit. Half of the inputs are also framed as a PCM WAV file (mono, 16-bit,
//! 8 kHz) and as the start of a FLAC and an Ogg stream, so that the fuzzer reaches the
//! decoders and the analysis (pYIN, notes, beats, bars) quickly instead of stopping at
//! detection.
#![no_main]

use collatio::ingest::{read_bytes, Limits, ReadOptions};
use libfuzzer_sys::fuzz_target;
use std::path::Path;

/// A canonical 44-byte WAV header (RIFF/WAVE, `fmt ` PCM) followed by `data` as samples.
fn wav(data: &[u8]) -> Vec<u8> {
    let rate: u32 = 8_000;
    let len = data.len() as u32;
    let mut out = b"RIFF".to_vec();
    out.extend_from_slice(&(36 + len).to_le_bytes());
    out.extend_from_slice(b"WAVEfmt ");
    out.extend_from_slice(&16u32.to_le_bytes());
    out.extend_from_slice(&1u16.to_le_bytes()); // PCM
    out.extend_from_slice(&1u16.to_le_bytes()); // mono
    out.extend_from_slice(&rate.to_le_bytes());
    out.extend_from_slice(&(rate * 2).to_le_bytes());
    out.extend_from_slice(&2u16.to_le_bytes());
    out.extend_from_slice(&16u16.to_le_bytes());
    out.extend_from_slice(b"data");
    out.extend_from_slice(&len.to_le_bytes());
    out.extend_from_slice(data);
    out
}

fuzz_target!(|data: &[u8]| {
    let mut options = ReadOptions {
        limits: Limits {
            max_notes: 100_000,
            max_bars: 10_000,
            ..Limits::default()
        },
        ..ReadOptions::default()
    };
    options.audio.decode.max_seconds = 20.0;
    let _ = read_bytes(Path::new("fuzz.audio"), data, &options);
    if data.first().is_some_and(|b| b & 1 == 1) {
        let _ = read_bytes(Path::new("fuzz.wav"), &wav(&data[1..]), &options);
        for magic in [&b"fLaC"[..], &b"OggS"[..]] {
            let mut framed = magic.to_vec();
            framed.extend_from_slice(&data[1..]);
            let _ = read_bytes(Path::new("fuzz.audio"), &framed, &options);
        }
    }
});

//! Arbitrary bytes through detection and the MusicXML reader, raw and wrapped in a minimal
//! partwise score so that the fuzzer reaches measure reading quickly.
#![no_main]

use collatio::ingest::{read_bytes, Limits, ReadOptions};
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let options = ReadOptions {
        limits: Limits {
            max_notes: 100_000,
            max_bars: 10_000,
            ..Limits::default()
        },
        unfold_repeats: data.first().is_some_and(|b| b & 1 == 1),
        ..ReadOptions::default()
    };
    let _ = read_bytes(Path::new("fuzz.musicxml"), data, &options);
    let mut wrapped = b"<score-partwise version=\"4.0\"><part id=\"P1\">".to_vec();
    wrapped.extend_from_slice(data);
    wrapped.extend_from_slice(b"</part></score-partwise>");
    let _ = read_bytes(Path::new("fuzz.musicxml"), &wrapped, &options);
});

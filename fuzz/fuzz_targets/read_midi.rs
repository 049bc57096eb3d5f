//! Arbitrary bytes through detection and the MIDI reader (a valid header is prepended half of
//! the time so that the fuzzer reaches the track decoder quickly).
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
        ..ReadOptions::default()
    };
    let _ = read_bytes(Path::new("fuzz.mid"), data, &options);
    let mut framed = b"MThd\0\0\0\x06\0\x01\0\x02\x01\xe0MTrk".to_vec();
    framed.extend_from_slice(&(data.len() as u32).to_be_bytes());
    framed.extend_from_slice(data);
    let _ = read_bytes(Path::new("fuzz.mid"), &framed, &options);
});

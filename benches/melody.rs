//! Predominant melody extraction speed on a synthesized 3-minute mix at 22,050 Hz mono: a
//! melody of harmonic tones over quieter three-note chords and a bass line. The issue's
//! target: well under 1 s on one core.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::audio::melody::{predominant_melody, MelodyOptions};
use collatio::audio::ANALYSIS_RATE;
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

const SECONDS: usize = 180;

/// Adds a harmonic tone (`partials` partials, amplitudes 1/k, short attack and release) at
/// `hz` with amplitude `amp` to `out[start .. start + len]`.
fn add_tone(out: &mut [f32], start: usize, len: usize, hz: f64, amp: f64, partials: usize) {
    let sr = f64::from(ANALYSIS_RATE);
    let end = (start + len).min(out.len());
    for (i, o) in out[start..end].iter_mut().enumerate() {
        let t = i as f64 / sr;
        let envelope = (t * 50.0).min(1.0) * ((len - i) as f64 / 200.0).min(1.0);
        let value: f64 = (1..=partials)
            .map(|k| (2.0 * std::f64::consts::PI * hz * k as f64 * t).sin() / k as f64)
            .sum();
        *o += (amp * envelope * value) as f32;
    }
}

fn synthetic_mix() -> Vec<f32> {
    let sr = ANALYSIS_RATE as usize;
    let n = SECONDS * sr;
    let mut out = vec![0.0f32; n];
    let mut seed = 12_345u64;
    let mut next = || {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (seed >> 33) as u32
    };
    let hz = |midi: i32| 440.0 * 2f64.powf(f64::from(midi - 69) / 12.0);
    // Melody: eighth to half notes at 100 bpm around G4.
    let (mut at, mut pitch) = (0usize, 67i32);
    while at < n {
        pitch = (pitch + (next() % 7) as i32 - 3).clamp(60, 79);
        let len = [0.3, 0.6, 0.6, 1.2][(next() % 4) as usize];
        let len = (len * sr as f64) as usize;
        add_tone(&mut out, at, len, hz(pitch), 0.2, 8);
        at += len;
    }
    // Accompaniment: a triad and a bass note every 2.4 s (one 4/4 bar at 100 bpm).
    let bar = (2.4 * sr as f64) as usize;
    for (i, start) in (0..n).step_by(bar).enumerate() {
        let root = [48, 53, 55, 50][i % 4];
        for interval in [0, 4, 7] {
            add_tone(&mut out, start, bar, hz(root + 12 + interval), 0.05, 6);
        }
        add_tone(&mut out, start, bar, hz(root - 12), 0.1, 4);
    }
    out
}

fn bench(c: &mut Criterion) {
    let signal = synthetic_mix();
    let options = MelodyOptions::default();
    let mut group = c.benchmark_group("melody_3min_22k_mono");
    group.sample_size(10);
    group.bench_function("predominant_melody", |b| {
        b.iter(|| predominant_melody(black_box(&signal), ANALYSIS_RATE, &options))
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

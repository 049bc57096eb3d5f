//! Harmony stages on three-minute inputs: the chroma cross-recurrence comparison (Qmax with 99
//! block shuffles) of two chromagrams, and the multiscale subsequence DTW of a recording's
//! chromagram against a score's. Inputs are deterministic pseudo-random chord sequences at the
//! analysis hop (23.2 ms), 180 s each, with quarter notes at 120 bpm; the second is the first's
//! last two thirds transposed, at 1.1 times the tempo, followed by other chords. The Qmax
//! comparison is timed on the beat grid (the default) and on fixed-time frames.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::align::harmony::{compare_harmony, HarmonyParams};
use collatio::align::sync::{synchronise, SyncParams};
use collatio::timeline::ChromaLayer;
use criterion::{criterion_group, criterion_main, Criterion};

const HOP: f64 = 512.0 / 22_050.0;

/// Pseudo-random chords (64-bit LCG), each lasting 1–3 s, as triads with onsets.
fn chords(seed: u64, n: usize) -> Vec<(usize, bool, f64)> {
    let mut x = seed;
    (0..n)
        .map(|_| {
            x = x
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            (
                ((x >> 33) % 12) as usize,
                (x >> 20) % 2 == 1,
                1.0 + ((x >> 40) % 3) as f64,
            )
        })
        .collect()
}

/// The chromagram of `chords` moved up `shift` semitones at `speed` times the tempo, with
/// quarter notes of 0.5 s / `speed` (120 bpm at speed 1).
fn layer(chords: &[(usize, bool, f64)], shift: usize, speed: f64, seconds: f64) -> ChromaLayer {
    let mut frames = Vec::new();
    let mut onsets = Vec::new();
    for &(root, minor, length) in chords.iter().cycle() {
        let mut f = [0.1f32; 12];
        for s in [0, if minor { 3 } else { 4 }, 7] {
            f[(root + shift + s) % 12] = 1.0;
        }
        let n = (length / speed / HOP).round() as usize;
        for k in 0..n {
            frames.push(f);
            onsets.push(if k == 0 { 1.0 } else { 0.0 });
        }
        if frames.len() as f64 * HOP >= seconds {
            break;
        }
    }
    ChromaLayer {
        hop_seconds: HOP,
        tuning: 0.0,
        source: collatio::timeline::ChromaSource::Notes,
        frames,
        onsets,
        beats: (0..)
            .map(|k| f64::from(k) * 0.5 / speed)
            .take_while(|t| *t <= seconds + 0.5)
            .collect(),
    }
}

fn bench(c: &mut Criterion) {
    let a_chords = chords(1, 200);
    let a = layer(&a_chords, 0, 1.0, 180.0);
    let mut b_chords: Vec<_> = a_chords[a_chords.len() / 3..].to_vec();
    b_chords.extend(chords(2, 100));
    let b = layer(&b_chords, 2, 1.1, 180.0);
    let mut group = c.benchmark_group("harmony_3min");
    group.sample_size(10);
    group.bench_function("qmax_with_99_shuffles", |bench| {
        bench.iter(|| compare_harmony(&a, &b, &HarmonyParams::default()))
    });
    let fixed_frames = HarmonyParams {
        per_beat: 0,
        ..HarmonyParams::default()
    };
    group.bench_function("qmax_with_99_shuffles_fixed_frames", |bench| {
        bench.iter(|| compare_harmony(&a, &b, &fixed_frames))
    });
    group.bench_function("dtw_score_to_recording", |bench| {
        bench.iter(|| synchronise(&a, &b, &SyncParams::default()))
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

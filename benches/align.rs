//! Alignment speed: the scoring kernel in cell updates per second (the full substitution
//! function: pitch, interval, rhythm, metre, fragmentation and consolidation checks), and a
//! 1,000-note against 1,000-note comparison with traceback of 10 passages; and two
//! 50,000-note works, searched from seeds (`collatio::align::seeded`).
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::align::{align, best_score, AlignParams};
use collatio::features::{MetricLevel, SeqNote, Sequence};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};

/// A deterministic pseudo-random melody (64-bit LCG): steps and leaps, varied rhythm.
pub fn random_sequence(len: usize, seed: u64) -> Sequence {
    let mut state = seed;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 33) as i64
    };
    let mut pitch = 67i32;
    let mut previous_ioi: Option<f64> = None;
    let mut notes = Vec::with_capacity(len);
    for i in 0..len {
        let step = (next() % 11 - 5) as i32;
        let new_pitch = (pitch + step).clamp(55, 84);
        let ioi = [0.5, 0.5, 1.0, 1.0, 1.5, 2.0][(next() % 6) as usize];
        notes.push(SeqNote {
            pitch: new_pitch,
            pitch_class: new_pitch.rem_euclid(12) as u8,
            interval: (i > 0).then_some(new_pitch - pitch),
            ioi,
            log_ioi_ratio: previous_ioi.map(|p: f64| (ioi / p).log2()),
            metric: [
                MetricLevel::Downbeat,
                MetricLevel::Weak,
                MetricLevel::Strong,
                MetricLevel::Offbeat,
            ][(next() % 4) as usize],
        });
        pitch = new_pitch;
        previous_ioi = Some(ioi);
    }
    Sequence { notes }
}

/// B made of ten 30-note segments of A, each in unrelated material.
fn with_shared_passages(a: &Sequence, len: usize) -> Sequence {
    let noise = random_sequence(len, 99);
    let mut notes = Vec::with_capacity(len);
    let segment = 30;
    let stride = len / 10;
    for k in 0..10 {
        let from_a = &a.notes[k * stride..k * stride + segment];
        notes.extend_from_slice(&noise.notes[k * stride..(k + 1) * stride - segment]);
        notes.extend_from_slice(from_a);
    }
    Sequence { notes }
}

fn bench_align(c: &mut Criterion) {
    let mut group = c.benchmark_group("align");
    group.sample_size(10);
    let a = random_sequence(1000, 1);
    let b = random_sequence(1000, 2);
    // One full scan of all 12 transpositions with nothing to report: the kernel alone.
    let scan_only = AlignParams {
        min_score: i32::MAX,
        ..AlignParams::default()
    };
    group.throughput(Throughput::Elements((a.len() * b.len() * 12) as u64));
    // The scoring kernel: best local score over all 12 transpositions (what the null model
    // runs for every shuffle).
    group.bench_function("scoring kernel 1000x1000 x 12 transpositions", |bench| {
        bench.iter(|| best_score(&a, &b, &AlignParams::default()))
    });
    // The scan that also carries each path's origin (what a comparison runs first).
    group.bench_function("kernel 1000x1000 x 12 transpositions", |bench| {
        bench.iter(|| align(&a, &b, &scan_only).len())
    });
    let b_shared = with_shared_passages(&a, 1000);
    let ten = AlignParams {
        max_passages: 10,
        ..AlignParams::default()
    };
    assert_eq!(align(&a, &b_shared, &ten).len(), 10);
    group.throughput(Throughput::Elements(1));
    group.bench_function("1000 vs 1000 notes, traceback of 10 passages", |bench| {
        bench.iter(|| align(&a, &b_shared, &ten).len())
    });
    group.finish();

    // Long works: 50,000 notes against 50,000 with ten shared 30-note segments, above the
    // full search's limit, so searched from seeds and aligned in bands.
    let mut long = c.benchmark_group("long works");
    long.sample_size(10);
    let a = random_sequence(50_000, 3);
    let b = with_shared_passages(&a, 50_000);
    let found = align(&a, &b, &AlignParams::default());
    assert!(found.len() >= 10, "{} passages", found.len());
    long.bench_function("50000 vs 50000 notes, seeded search", |bench| {
        bench.iter(|| align(&a, &b, &AlignParams::default()).len())
    });
    long.finish();
}

criterion_group!(benches, bench_align);
criterion_main!(benches);

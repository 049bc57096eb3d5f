//! Audio analysis speed on a synthesized 3-minute 44.1 kHz stereo recording (16-bit WAV in
//! memory): decoding (with mixdown and resampling to 22,050 Hz), each analysis stage on its
//! own (STFT with tuning and onset strength, chroma, pYIN, notes, beats), and the whole
//! analysis. The target: the whole
//! analysis at least 200 times faster than real time on one core, i.e. under 0.9 s here.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::audio::beats::{track_beats, OnsetStrength};
use collatio::audio::chroma::{chroma_stft, TuningEstimator};
use collatio::audio::decode::{decode_bytes, DecodeOptions};
use collatio::audio::notes::transcribe;
use collatio::audio::pitch::{pyin, PyinOptions};
use collatio::audio::stft::Stft;
use collatio::audio::{analyse, AnalysisOptions, ANALYSIS_RATE};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

const SECONDS: usize = 180;
const RATE: u32 = 44_100;

/// A melody of harmonic tones (five partials, decaying), eighth to half notes at 100 bpm,
/// pitches wandering over two octaves, in both channels; encoded as a PCM WAV.
fn synthetic_wav() -> Vec<u8> {
    let n = SECONDS * RATE as usize;
    let mut seed = 12_345u64;
    let mut next = || {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (seed >> 33) as u32
    };
    let mut left = Vec::with_capacity(n);
    let mut pitch = 67i32;
    while left.len() < n {
        pitch = (pitch + (next() % 7) as i32 - 3).clamp(55, 79);
        let length = [0.3, 0.6, 0.6, 1.2][(next() % 4) as usize];
        let hz = 440.0 * 2f64.powf(f64::from(pitch - 69) / 12.0);
        let samples = (length * f64::from(RATE)) as usize;
        for i in 0..samples {
            let t = i as f64 / f64::from(RATE);
            let envelope =
                (t * 50.0).min(1.0) * (-2.0 * t).exp() * if i + 200 > samples { 0.0 } else { 1.0 };
            let value: f64 = (1..=5)
                .map(|k| (2.0 * std::f64::consts::PI * hz * f64::from(k) * t).sin() / f64::from(k))
                .sum();
            left.push((0.25 * envelope * value * 32767.0) as i16);
        }
    }
    left.truncate(n);
    let data_len = (n * 4) as u32;
    let mut out = b"RIFF".to_vec();
    out.extend_from_slice(&(36 + data_len).to_le_bytes());
    out.extend_from_slice(b"WAVEfmt ");
    out.extend_from_slice(&16u32.to_le_bytes());
    out.extend_from_slice(&1u16.to_le_bytes());
    out.extend_from_slice(&2u16.to_le_bytes());
    out.extend_from_slice(&RATE.to_le_bytes());
    out.extend_from_slice(&(RATE * 4).to_le_bytes());
    out.extend_from_slice(&4u16.to_le_bytes());
    out.extend_from_slice(&16u16.to_le_bytes());
    out.extend_from_slice(b"data");
    out.extend_from_slice(&data_len.to_le_bytes());
    for s in &left {
        out.extend_from_slice(&s.to_le_bytes());
        out.extend_from_slice(&s.to_le_bytes());
    }
    out
}

fn bench(c: &mut Criterion) {
    let wav = synthetic_wav();
    let decoded = decode_bytes(&wav, "WAV", &DecodeOptions::default()).unwrap();
    let mut group = c.benchmark_group("audio_3min_44k_stereo");
    group.sample_size(10);
    group.bench_function("decode_mixdown_resample", |b| {
        b.iter(|| decode_bytes(black_box(&wav), "WAV", &DecodeOptions::default()).unwrap())
    });
    let options = AnalysisOptions::default();
    // The first STFT pass of `analyse`: power spectra, tuning peaks and onset strength.
    let first_pass = |samples: &[f32]| {
        let mut spectra = Stft::new(options.n_fft, options.hop_length);
        let mut tuning = TuningEstimator::default();
        let mut onsets = OnsetStrength::default();
        for k in 0..spectra.n_frames(samples.len()) {
            let power = spectra.power_frame(samples, k);
            tuning.push(power, ANALYSIS_RATE, options.n_fft);
            onsets.push(power, ANALYSIS_RATE, options.n_fft);
        }
        (tuning.estimate(), onsets.values)
    };
    let (tuning, onset_strength) = first_pass(&decoded.samples);
    let track = pyin(
        &decoded.samples,
        ANALYSIS_RATE,
        512,
        &PyinOptions::default(),
    );
    group.bench_function("stft_tuning_onset_strength", |b| {
        b.iter(|| first_pass(black_box(&decoded.samples)))
    });
    group.bench_function("chroma_stft", |b| {
        b.iter(|| {
            let mut spectra = Stft::new(options.n_fft, options.hop_length);
            chroma_stft(
                &mut spectra,
                black_box(&decoded.samples),
                ANALYSIS_RATE,
                tuning,
            )
        })
    });
    group.bench_function("notes", |b| {
        b.iter(|| transcribe(black_box(&track), &onset_strength, 440.0, &options.notes))
    });
    group.bench_function("beats", |b| {
        b.iter(|| {
            track_beats(
                black_box(&onset_strength),
                ANALYSIS_RATE,
                512,
                &options.beats,
            )
        })
    });
    group.bench_function("pyin", |b| {
        b.iter(|| {
            pyin(
                black_box(&decoded.samples),
                ANALYSIS_RATE,
                512,
                &PyinOptions::default(),
            )
        })
    });
    group.bench_function("decode_and_pyin", |b| {
        b.iter(|| {
            let d = decode_bytes(black_box(&wav), "WAV", &DecodeOptions::default()).unwrap();
            pyin(&d.samples, ANALYSIS_RATE, 512, &PyinOptions::default())
        })
    });
    group.bench_function("decode_and_whole_analysis", |b| {
        b.iter(|| {
            let d = decode_bytes(black_box(&wav), "WAV", &DecodeOptions::default()).unwrap();
            analyse(&d.samples, &AnalysisOptions::default())
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

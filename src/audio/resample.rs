//! Streaming sample-rate conversion of a mono signal, block by block.
//!
//! Built on rubato's synchronous FFT resampler (`rubato::Fft`, fixed input chunks of about 1024
//! frames, Blackman–Harris anti-aliasing window), which converts between any two integer rates
//! exactly. The resampler's own delay is removed, and the output has `ceil(n · to / from)`
//! samples for `n` input samples, so sample `i` of the output is at time `i / to` seconds like
//! sample `i · from / to` of the input. Memory is one chunk, whatever the signal length.

use super::AudioError;
use rubato::audioadapter_buffers::direct::InterleavedSlice;
use rubato::{Fft, FixedSync, Indexing, Resampler};

/// Lowest input sample rate accepted, Hz.
pub const MIN_RATE: u32 = 1_000;
/// Highest input sample rate accepted, Hz.
pub const MAX_RATE: u32 = 768_000;

/// A mono resampler that takes input in blocks of any size.
pub struct StreamResampler {
    inner: Option<Fft<f32>>,
    from: u32,
    to: u32,
    pending: Vec<f32>,
    chunk_out: Vec<f32>,
    delay_left: usize,
    total_in: u64,
    total_out: u64,
}

impl std::fmt::Debug for StreamResampler {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("StreamResampler")
            .field("from", &self.from)
            .field("to", &self.to)
            .finish()
    }
}

fn failed(e: impl std::fmt::Display) -> AudioError {
    AudioError::Options(format!("resampler: {e}"))
}

impl StreamResampler {
    /// A resampler from `from` Hz to `to` Hz (both within [`MIN_RATE`] ..= [`MAX_RATE`]);
    /// equal rates pass samples through unchanged.
    pub fn new(from: u32, to: u32) -> Result<StreamResampler, AudioError> {
        for rate in [from, to] {
            if !(MIN_RATE..=MAX_RATE).contains(&rate) {
                return Err(AudioError::Unsupported {
                    what: "sample rate in Hz",
                    value: rate.to_string(),
                    range: "1000 to 768000",
                });
            }
        }
        let inner = if from == to {
            None
        } else {
            Some(
                Fft::<f32>::new(from as usize, to as usize, 1024, 1, FixedSync::Input)
                    .map_err(failed)?,
            )
        };
        let (chunk_out, delay_left) = match &inner {
            Some(r) => (vec![0.0; r.output_frames_max()], r.output_delay()),
            None => (Vec::new(), 0),
        };
        Ok(StreamResampler {
            inner,
            from,
            to,
            pending: Vec::new(),
            chunk_out,
            delay_left,
            total_in: 0,
            total_out: 0,
        })
    }

    /// Feeds `input` and appends whatever output is ready to `out`.
    pub fn push(&mut self, input: &[f32], out: &mut Vec<f32>) -> Result<(), AudioError> {
        self.total_in += input.len() as u64;
        let Some(inner) = self.inner.as_mut() else {
            out.extend_from_slice(input);
            self.total_out += input.len() as u64;
            return Ok(());
        };
        self.pending.extend_from_slice(input);
        let need = inner.input_frames_next();
        let mut used = 0;
        while self.pending.len() - used >= need {
            let block = &self.pending[used..used + need];
            let produced = run_chunk(inner, block, None, &mut self.chunk_out)?;
            emit(
                &self.chunk_out[..produced],
                &mut self.delay_left,
                out,
                &mut self.total_out,
                u64::MAX,
            );
            used += need;
        }
        self.pending.drain(..used);
        Ok(())
    }

    /// Flushes the remaining input and the resampler's delay line; after this the output holds
    /// exactly `ceil(total_in · to / from)` samples.
    pub fn finish(&mut self, out: &mut Vec<f32>) -> Result<(), AudioError> {
        let expected =
            (self.total_in as u128 * u128::from(self.to)).div_ceil(u128::from(self.from)) as u64;
        let Some(inner) = self.inner.as_mut() else {
            return Ok(());
        };
        let need = inner.input_frames_next();
        let mut block = std::mem::take(&mut self.pending);
        let partial = block.len();
        block.resize(need, 0.0);
        let mut guard = 0;
        let mut first = true;
        while self.total_out < expected && guard < 64 {
            let indexing = Indexing {
                input_offset: 0,
                output_offset: 0,
                partial_len: Some(if first { partial } else { 0 }),
                active_channels_mask: None,
            };
            first = false;
            let produced = run_chunk(inner, &block, Some(&indexing), &mut self.chunk_out)?;
            emit(
                &self.chunk_out[..produced],
                &mut self.delay_left,
                out,
                &mut self.total_out,
                expected,
            );
            guard += 1;
        }
        Ok(())
    }
}

fn run_chunk(
    inner: &mut Fft<f32>,
    block: &[f32],
    indexing: Option<&Indexing>,
    chunk_out: &mut [f32],
) -> Result<usize, AudioError> {
    let frames_in = block.len();
    let frames_out = chunk_out.len();
    let input = InterleavedSlice::new(block, 1, frames_in).map_err(failed)?;
    let mut output = InterleavedSlice::new_mut(chunk_out, 1, frames_out).map_err(failed)?;
    let (_, produced) = inner
        .process_into_buffer(&input, &mut output, indexing)
        .map_err(failed)?;
    Ok(produced.min(frames_out))
}

/// Appends `chunk` to `out` after dropping the first `delay_left` samples overall, stopping at
/// `limit` samples in total.
fn emit(chunk: &[f32], delay_left: &mut usize, out: &mut Vec<f32>, total: &mut u64, limit: u64) {
    let skip = (*delay_left).min(chunk.len());
    *delay_left -= skip;
    let room = limit.saturating_sub(*total) as usize;
    let take = (chunk.len() - skip).min(room);
    out.extend_from_slice(&chunk[skip..skip + take]);
    *total += take as u64;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_sine_keeps_its_frequency_and_length() {
        // 1 kHz at 44.1 kHz → 22.05 kHz: same amplitude and phase, half the samples.
        let from = 44_100.0;
        let input: Vec<f32> = (0..44_100)
            .map(|n| (2.0 * std::f64::consts::PI * 1000.0 * n as f64 / from).sin() as f32)
            .collect();
        let mut r = StreamResampler::new(44_100, 22_050).unwrap();
        let mut out = Vec::new();
        for block in input.chunks(777) {
            r.push(block, &mut out).unwrap();
        }
        r.finish(&mut out).unwrap();
        assert_eq!(out.len(), 22_050);
        let to = 22_050.0;
        let err: f64 = (2000..20_000)
            .map(|n| {
                let e = (2.0 * std::f64::consts::PI * 1000.0 * n as f64 / to).sin();
                (f64::from(out[n]) - e).abs()
            })
            .fold(0.0, f64::max);
        assert!(err < 1e-2, "max error {err}");
    }

    #[test]
    fn absurd_rates_are_refused() {
        assert!(StreamResampler::new(0, 22_050).is_err());
        assert!(StreamResampler::new(10_000_000, 22_050).is_err());
    }
}

//! Decoding: container and codec → mono `f32` samples at the analysis rate, block by block.
//!
//! Symphonia demuxes and decodes (WAV, AIFF, FLAC, MP3, Ogg/Vorbis, AAC in MP4/M4A or ADTS);
//! each decoded packet is converted to `f32`, mixed down to mono (the mean of the channels),
//! cut to the range asked for (`from` ..< `to` seconds of the source), and passed through a
//! streaming resampler ([`super::resample`]). Only one packet and one resampler chunk are held at
//! a time, so memory is the output signal plus a constant; the output is bounded by
//! `max_seconds`. Gapless trimming (encoder delay and padding) is on, so MP3 and AAC decode
//! aligned with the source.
//!
//! Corrupt packets are skipped and counted (a warning); a stream whose packets mostly fail is
//! an error. A truncated file decodes up to where it ends, with a warning. Symphonia's own
//! documentation allows that some malformed streams may panic inside a decoder; such a panic is
//! caught here and reported as a corrupt stream, never passed on.

use super::resample::StreamResampler;
use super::{AudioError, ANALYSIS_RATE};
use serde::Serialize;
use symphonia::core::codecs::audio::AudioDecoderOptions;
use symphonia::core::errors::Error as SymphoniaError;
use symphonia::core::formats::probe::Hint;
use symphonia::core::formats::{FormatOptions, TrackType};
use symphonia::core::io::{MediaSource, MediaSourceStream};
use symphonia::core::meta::MetadataOptions;

/// Most channels accepted in one stream.
pub const MAX_CHANNELS: usize = 256;

/// What to decode.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DecodeOptions {
    /// Start of the range in seconds of the source. Default: the beginning.
    pub from: Option<f64>,
    /// End of the range in seconds of the source (exclusive). Default: the end.
    pub to: Option<f64>,
    /// Longest range decoded, in seconds; longer audio is an error. Default 1800 (30 minutes).
    pub max_seconds: f64,
    /// Output sample rate in Hz. Default [`ANALYSIS_RATE`] (22,050).
    pub target_rate: u32,
}

impl Default for DecodeOptions {
    fn default() -> Self {
        DecodeOptions {
            from: None,
            to: None,
            max_seconds: 1800.0,
            target_rate: ANALYSIS_RATE,
        }
    }
}

/// A decoded, mixed-down and resampled signal.
#[derive(Debug, Clone, Serialize)]
pub struct Decoded {
    /// Mono samples at `sample_rate`, nominally within −1 … 1.
    #[serde(skip)]
    pub samples: Vec<f32>,
    /// Sample rate of `samples` in Hz.
    pub sample_rate: u32,
    /// Sample rate of the source in Hz.
    pub source_rate: u32,
    /// Channels in the source.
    pub channels: usize,
    /// Codec, e.g. `FLAC` or `MP3`.
    pub codec: String,
    /// Where in the source the samples start, seconds.
    pub start_seconds: f64,
    /// Duration of the source decoded up to the end of the range (or the stream), seconds.
    pub source_seconds: f64,
    /// Things worth knowing that did not stop decoding.
    pub warnings: Vec<String>,
}

impl Decoded {
    /// Duration of `samples` in seconds.
    pub fn seconds(&self) -> f64 {
        self.samples.len() as f64 / f64::from(self.sample_rate.max(1))
    }
}

/// Decodes an in-memory file.
pub fn decode_bytes(
    bytes: &[u8],
    container: &'static str,
    options: &DecodeOptions,
) -> Result<Decoded, AudioError> {
    let source: Box<dyn MediaSource + '_> = Box::new(std::io::Cursor::new(bytes));
    decode_source(source, container, options)
}

/// Decodes a file from disk, streaming it.
pub fn decode_file(
    path: &std::path::Path,
    container: &'static str,
    options: &DecodeOptions,
) -> Result<Decoded, AudioError> {
    let file = std::fs::File::open(path).map_err(|e| AudioError::Container {
        container,
        reason: e.to_string(),
    })?;
    decode_source(Box::new(file), container, options)
}

/// Decodes any media source; `container` names it in messages.
pub fn decode_source<'s>(
    source: Box<dyn MediaSource + 's>,
    container: &'static str,
    options: &DecodeOptions,
) -> Result<Decoded, AudioError> {
    check_options(options)?;
    let run = std::panic::AssertUnwindSafe(|| decode_inner(source, container, options));
    match std::panic::catch_unwind(run) {
        Ok(result) => result,
        Err(panic) => {
            let reason = panic
                .downcast_ref::<&str>()
                .map(|s| (*s).to_string())
                .or_else(|| panic.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "the decoder failed".to_string());
            Err(AudioError::Corrupt {
                at_seconds: 0.0,
                reason: format!("decoder panic caught: {reason}"),
            })
        }
    }
}

fn check_options(options: &DecodeOptions) -> Result<(), AudioError> {
    let bad = |v: Option<f64>| v.is_some_and(|x| !x.is_finite() || x < 0.0);
    if bad(options.from) || bad(options.to) {
        return Err(AudioError::Options(
            "--from and --to must be non-negative numbers of seconds".into(),
        ));
    }
    if let (Some(a), Some(b)) = (options.from, options.to) {
        if b <= a {
            return Err(AudioError::Options(format!(
                "--to ({b} s) must be after --from ({a} s)"
            )));
        }
    }
    if !(options.max_seconds.is_finite() && options.max_seconds > 0.0) {
        return Err(AudioError::Options(
            "the duration limit must be a positive number of seconds".into(),
        ));
    }
    Ok(())
}

fn decode_inner<'s>(
    source: Box<dyn MediaSource + 's>,
    container: &'static str,
    options: &DecodeOptions,
) -> Result<Decoded, AudioError> {
    let stream = MediaSourceStream::new(source, Default::default());
    let mut format = symphonia::default::get_probe()
        .probe(
            &Hint::new(),
            stream,
            FormatOptions::default(),
            MetadataOptions::default(),
        )
        .map_err(|e| match e {
            SymphoniaError::Unsupported(what) => {
                AudioError::UnsupportedCodec(format!("the {container} container holds {what}"))
            }
            other => AudioError::Container {
                container,
                reason: other.to_string(),
            },
        })?;
    let track = format.default_track(TrackType::Audio).ok_or_else(|| {
        AudioError::UnsupportedCodec(format!("no audio track in the {container}"))
    })?;
    let track_id = track.id;
    let params = track
        .codec_params
        .as_ref()
        .and_then(|p| p.audio())
        .cloned()
        .ok_or_else(|| {
            AudioError::UnsupportedCodec(format!("the {container} track has no audio parameters"))
        })?;
    let declared_frames = track.num_frames;
    let registry = symphonia::default::get_codecs();
    let mut decoder = registry
        .make_audio_decoder(&params, &AudioDecoderOptions::default())
        .map_err(|e| {
            AudioError::UnsupportedCodec(format!("{} in the {container}: {e}", codec_name(&params)))
        })?;
    let codec = codec_name(&params);
    let mut source_rate = params.sample_rate.unwrap_or(0);
    let mut channels = params.channels.as_ref().map_or(0, |c| c.count());

    let mut warnings = Vec::new();
    let mut resampler: Option<StreamResampler> = None;
    let mut samples: Vec<f32> = Vec::new();
    let mut interleaved: Vec<f32> = Vec::new();
    let mut mono: Vec<f32> = Vec::new();
    let mut position: u64 = 0; // source frames decoded so far
    let (mut good, mut bad) = (0usize, 0usize);
    let mut consecutive_bad = 0usize;
    let mut truncated = false;

    if source_rate > 0 {
        check_rate(source_rate)?;
        if let Some(frames) = declared_frames {
            let seconds = frames as f64 / f64::from(source_rate);
            let range = options.to.unwrap_or(seconds).min(seconds) - options.from.unwrap_or(0.0);
            if range > options.max_seconds {
                return Err(AudioError::TooLong {
                    seconds: range,
                    limit: options.max_seconds,
                });
            }
        }
    }
    check_channels(channels)?;

    loop {
        let packet = match format.next_packet() {
            Ok(Some(packet)) => packet,
            Ok(None) => break,
            Err(SymphoniaError::IoError(e)) if e.kind() == std::io::ErrorKind::UnexpectedEof => {
                truncated = true;
                break;
            }
            Err(SymphoniaError::ResetRequired) => {
                warnings.push(format!(
                    "audio: the {container} stream changes its format midway; decoded up to there"
                ));
                break;
            }
            Err(SymphoniaError::DecodeError(what)) => {
                bad += 1;
                consecutive_bad += 1;
                if consecutive_bad > 64 {
                    return Err(AudioError::Corrupt {
                        at_seconds: seconds_at(position, source_rate),
                        reason: format!("demuxer: {what}"),
                    });
                }
                continue;
            }
            Err(other) => {
                if good == 0 {
                    return Err(AudioError::Corrupt {
                        at_seconds: seconds_at(position, source_rate),
                        reason: other.to_string(),
                    });
                }
                truncated = true;
                break;
            }
        };
        if packet.track_id != track_id {
            continue;
        }
        let decoded = match decoder.decode(&packet) {
            Ok(buffer) => buffer,
            Err(SymphoniaError::DecodeError(_)) | Err(SymphoniaError::IoError(_)) => {
                bad += 1;
                consecutive_bad += 1;
                if consecutive_bad > 64 {
                    return Err(AudioError::Corrupt {
                        at_seconds: seconds_at(position, source_rate),
                        reason: "more than 64 packets in a row fail to decode".into(),
                    });
                }
                continue;
            }
            Err(e) => {
                return Err(AudioError::Corrupt {
                    at_seconds: seconds_at(position, source_rate),
                    reason: e.to_string(),
                })
            }
        };
        consecutive_bad = 0;
        good += 1;
        let spec_rate = decoded.spec().rate();
        let spec_channels = decoded.spec().channels().count();
        if source_rate == 0 {
            source_rate = spec_rate;
            check_rate(source_rate)?;
        }
        if channels == 0 {
            channels = spec_channels;
            check_channels(channels)?;
        }
        if spec_rate != source_rate || spec_channels != channels {
            warnings.push(format!(
                "audio: the stream changes from {source_rate} Hz, {channels} channels to \
                 {spec_rate} Hz, {spec_channels} channels at {:.3} s; decoded up to there",
                seconds_at(position, source_rate)
            ));
            break;
        }
        let frames = decoded.frames();
        if frames == 0 || spec_channels == 0 {
            continue;
        }
        decoded.copy_to_vec_interleaved::<f32>(&mut interleaved);
        mono.clear();
        let scale = 1.0 / spec_channels as f32;
        mono.extend(interleaved.chunks_exact(spec_channels).map(|frame| {
            let s: f32 = frame.iter().sum::<f32>() * scale;
            if s.is_finite() {
                s
            } else {
                0.0
            }
        }));
        // Cut to the range.
        let rate = f64::from(source_rate);
        let first = options.from.map_or(0, |s| (s * rate).round() as u64);
        let last = options.to.map_or(u64::MAX, |s| (s * rate).round() as u64);
        let start = position;
        let end = position + mono.len() as u64;
        position = end;
        let keep_from = first.max(start);
        let keep_to = last.min(end);
        if keep_to > keep_from {
            let a = (keep_from - start) as usize;
            let b = (keep_to - start) as usize;
            let kept = keep_to - first;
            if kept as f64 / rate > options.max_seconds {
                return Err(AudioError::TooLong {
                    seconds: kept as f64 / rate,
                    limit: options.max_seconds,
                });
            }
            let r = match resampler.as_mut() {
                Some(r) => r,
                None => resampler.insert(StreamResampler::new(source_rate, options.target_rate)?),
            };
            r.push(&mono[a..b], &mut samples)?;
        }
        if end >= last {
            break;
        }
    }
    if let Some(r) = resampler.as_mut() {
        r.finish(&mut samples)?;
    }
    if bad > 0 {
        if good == 0 || bad > good {
            return Err(AudioError::Corrupt {
                at_seconds: seconds_at(position, source_rate),
                reason: format!("{bad} of {} packets failed to decode", bad + good),
            });
        }
        warnings.push(format!(
            "audio: {bad} of {} packets failed to decode and were skipped",
            bad + good
        ));
    }
    if truncated {
        warnings.push(format!(
            "audio: the {container} stream ends early at {:.3} s (truncated file?); decoded what is there",
            seconds_at(position, source_rate)
        ));
    } else if let Some(declared) = declared_frames {
        if position + u64::from(source_rate / 10) < declared && options.to.is_none() {
            warnings.push(format!(
                "audio: the {container} header declares {:.3} s but only {:.3} s decode (truncated file?)",
                seconds_at(declared, source_rate),
                seconds_at(position, source_rate)
            ));
        }
    }
    if samples.is_empty() {
        let range = match (options.from, options.to) {
            (None, None) => String::new(),
            (a, b) => format!(
                " between {:.3} s and {} (the stream lasts {:.3} s)",
                a.unwrap_or(0.0),
                b.map_or("the end".to_string(), |b| format!("{b:.3} s")),
                seconds_at(position, source_rate)
            ),
        };
        return Err(AudioError::NoSamples(range));
    }
    Ok(Decoded {
        samples,
        sample_rate: options.target_rate,
        source_rate,
        channels,
        codec,
        start_seconds: options.from.unwrap_or(0.0),
        source_seconds: seconds_at(position, source_rate),
        warnings,
    })
}

fn seconds_at(frames: u64, rate: u32) -> f64 {
    if rate == 0 {
        0.0
    } else {
        frames as f64 / f64::from(rate)
    }
}

fn check_rate(rate: u32) -> Result<(), AudioError> {
    if !(super::resample::MIN_RATE..=super::resample::MAX_RATE).contains(&rate) {
        return Err(AudioError::Unsupported {
            what: "sample rate in Hz",
            value: rate.to_string(),
            range: "1000 to 768000",
        });
    }
    Ok(())
}

fn check_channels(channels: usize) -> Result<(), AudioError> {
    if channels > MAX_CHANNELS {
        return Err(AudioError::Unsupported {
            what: "number of channels",
            value: channels.to_string(),
            range: "1 to 256",
        });
    }
    Ok(())
}

fn codec_name(params: &symphonia::core::codecs::audio::AudioCodecParameters) -> String {
    symphonia::default::get_codecs()
        .get_audio_decoder(params.codec)
        .map_or_else(
            || format!("codec {:?}", params.codec),
            |d| d.codec.info.short_name.to_uppercase(),
        )
}

//! One Standard MIDI File writer for every MIDI collatio writes (a transcribed melody, a
//! passage export), over midly's encoder.
//!
//! Tracks are given as events at absolute ticks; at one tick, meta events come first, then
//! note-offs, then note-ons, so that a repeated note ends before it sounds again (Standard MIDI
//! Files 1.0 leaves the order of simultaneous events to the writer). Deltas longer than the
//! four-byte variable-length quantity allows (0x0FFFFFFF) are clamped; an End of Track closes
//! every track.

use midly::num::{u15, u24, u28, u4, u7};
use midly::{Format, Header, MetaMessage, MidiMessage, Smf, Timing, TrackEvent, TrackEventKind};

/// One event of a track.
#[derive(Debug, Clone, PartialEq)]
pub enum SmfEvent {
    /// Sequence/track name (meta 0x03).
    TrackName(Vec<u8>),
    /// Text event (meta 0x01).
    Text(Vec<u8>),
    /// Lyric (meta 0x05).
    Lyric(Vec<u8>),
    /// Marker (meta 0x06).
    Marker(Vec<u8>),
    /// Set Tempo, microseconds per quarter note (meta 0x51), clamped to 1..=0xFFFFFF.
    Tempo(f64),
    /// Time signature: numerator and the power of two of the denominator (meta 0x58).
    TimeSignature(u8, u8),
    /// Key signature: sharps (negative: flats) and whether minor (meta 0x59).
    KeySignature(i8, bool),
    /// Note on: channel 0–15, key, velocity 1–127.
    NoteOn(u8, u8, u8),
    /// Note off: channel, key, release velocity.
    NoteOff(u8, u8, u8),
}

impl SmfEvent {
    /// Order at one tick: meta, note-off, note-on.
    fn order(&self) -> u8 {
        match self {
            SmfEvent::NoteOff(..) => 1,
            SmfEvent::NoteOn(..) => 2,
            _ => 0,
        }
    }

    fn kind(&self) -> TrackEventKind<'_> {
        let midi = |channel: u8, message| TrackEventKind::Midi {
            channel: u4::new(channel.min(15)),
            message,
        };
        match self {
            SmfEvent::TrackName(b) => TrackEventKind::Meta(MetaMessage::TrackName(b)),
            SmfEvent::Text(b) => TrackEventKind::Meta(MetaMessage::Text(b)),
            SmfEvent::Lyric(b) => TrackEventKind::Meta(MetaMessage::Lyric(b)),
            SmfEvent::Marker(b) => TrackEventKind::Meta(MetaMessage::Marker(b)),
            SmfEvent::Tempo(micros) => TrackEventKind::Meta(MetaMessage::Tempo(u24::new(
                micros.round().clamp(1.0, f64::from(0x00FF_FFFFu32)) as u32,
            ))),
            SmfEvent::TimeSignature(n, d) => {
                TrackEventKind::Meta(MetaMessage::TimeSignature(*n, *d, 24, 8))
            }
            SmfEvent::KeySignature(f, minor) => {
                TrackEventKind::Meta(MetaMessage::KeySignature(*f, *minor))
            }
            SmfEvent::NoteOn(c, k, v) => midi(
                *c,
                MidiMessage::NoteOn {
                    key: u7::new((*k).min(127)),
                    vel: u7::new((*v).min(127)),
                },
            ),
            SmfEvent::NoteOff(c, k, v) => midi(
                *c,
                MidiMessage::NoteOff {
                    key: u7::new((*k).min(127)),
                    vel: u7::new((*v).min(127)),
                },
            ),
        }
    }
}

/// Encodes tracks of `(tick, event)` as an SMF: format 0 for one track, format 1 otherwise,
/// at `ticks_per_quarter` (at most 0x7FFF).
pub fn write_smf(
    tracks: &[Vec<(u64, SmfEvent)>],
    ticks_per_quarter: u16,
) -> std::io::Result<Vec<u8>> {
    let sorted: Vec<Vec<&(u64, SmfEvent)>> = tracks
        .iter()
        .map(|t| {
            let mut events: Vec<&(u64, SmfEvent)> = t.iter().collect();
            events.sort_by_key(|(at, e)| (*at, e.order()));
            events
        })
        .collect();
    let encoded: Vec<Vec<TrackEvent<'_>>> = sorted
        .iter()
        .map(|events| {
            let mut last = 0u64;
            let mut out: Vec<TrackEvent<'_>> = events
                .iter()
                .map(|(at, event)| {
                    let delta = u28::new((at.saturating_sub(last)).min(0x0FFF_FFFF) as u32);
                    last = *at;
                    TrackEvent {
                        delta,
                        kind: event.kind(),
                    }
                })
                .collect();
            out.push(TrackEvent {
                delta: u28::new(0),
                kind: TrackEventKind::Meta(MetaMessage::EndOfTrack),
            });
            out
        })
        .collect();
    let format = if encoded.len() == 1 {
        Format::SingleTrack
    } else {
        Format::Parallel
    };
    let smf = Smf {
        header: Header::new(
            format,
            Timing::Metrical(u15::new(ticks_per_quarter.min(0x7FFF))),
        ),
        tracks: encoded,
    };
    let mut bytes = Vec::new();
    smf.write_std(&mut bytes)?;
    Ok(bytes)
}

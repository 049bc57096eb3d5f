//! A piece's melody as a Standard MIDI File, so that an expert can correct a transcription in
//! any editor and compare again.
//!
//! Written with midly's writer: SMF format 0, one track on channel 1, the piece's resolution
//! (rescaled to 960 ticks per quarter note when it exceeds the 15 bits SMF allows), its tempo
//! map as Set Tempo events (for audio, one per tracked beat, so the editor's beat grid follows
//! the performance) and its time signatures. Pitches are rounded to the nearest MIDI number
//! (the cents deviation of audio notes is dropped; SMF 1.0 has no per-note microtones);
//! velocity is the note's own, or 40 + 80 × confidence for transcribed notes. Note-offs at a
//! tick come before note-ons, so repeated notes stay separate.

use crate::timeline::Piece;
use midly::num::{u15, u24, u28, u4, u7};
use midly::{Format, Header, MetaMessage, MidiMessage, Smf, Timing, TrackEvent, TrackEventKind};

/// Encodes the melody of `piece` as SMF bytes.
pub fn melody_to_smf(piece: &Piece) -> std::io::Result<Vec<u8>> {
    let resolution = piece.resolution.max(1);
    let (out_res, scale) = if resolution <= 0x7FFF {
        (resolution, 1.0)
    } else {
        (960, 960.0 / f64::from(resolution))
    };
    let tick = |t: i64| -> u64 { (t.max(0) as f64 * scale).round() as u64 };
    // (tick, order, kind): order 0 = meta, 1 = note-off, 2 = note-on.
    let mut events: Vec<(u64, u8, TrackEventKind<'static>)> = Vec::new();
    events.push((
        0,
        0,
        TrackEventKind::Meta(MetaMessage::TrackName(b"melody (collatio)")),
    ));
    for change in &piece.tempo.changes {
        let micros = change
            .micros_per_quarter
            .round()
            .clamp(1.0, f64::from(0x00FF_FFFFu32));
        events.push((
            tick(change.ticks),
            0,
            TrackEventKind::Meta(MetaMessage::Tempo(u24::new(micros as u32))),
        ));
    }
    for signature in &piece.time_signatures {
        let power = signature.denominator.max(1).ilog2().min(6) as u8;
        let numerator = signature.numerator.clamp(1, 255) as u8;
        events.push((
            tick(signature.ticks),
            0,
            TrackEventKind::Meta(MetaMessage::TimeSignature(numerator, power, 24, 8)),
        ));
    }
    let channel = u4::new(0);
    for note in &piece.melody {
        let key = u7::new(note.pitch.0.round().clamp(0.0, 127.0) as u8);
        let velocity = note.velocity.unwrap_or_else(|| {
            (40.0 + 80.0 * f64::from(note.confidence.clamp(0.0, 1.0))).round() as u8
        });
        let vel = u7::new(velocity.clamp(1, 127));
        let on = tick(note.onset_ticks);
        let off = tick(note.end_ticks()).max(on + 1);
        events.push((
            on,
            2,
            TrackEventKind::Midi {
                channel,
                message: MidiMessage::NoteOn { key, vel },
            },
        ));
        events.push((
            off,
            1,
            TrackEventKind::Midi {
                channel,
                message: MidiMessage::NoteOff {
                    key,
                    vel: u7::new(0),
                },
            },
        ));
    }
    events.sort_by_key(|e| (e.0, e.1));
    let mut track: Vec<TrackEvent<'static>> = Vec::with_capacity(events.len() + 1);
    let mut last = 0u64;
    for (at, _, kind) in events {
        let delta = (at - last).min(0x0FFF_FFFF);
        last = at;
        track.push(TrackEvent {
            delta: u28::new(delta as u32),
            kind,
        });
    }
    track.push(TrackEvent {
        delta: u28::new(0),
        kind: TrackEventKind::Meta(MetaMessage::EndOfTrack),
    });
    let smf = Smf {
        header: Header::new(
            Format::SingleTrack,
            Timing::Metrical(u15::new(out_res as u16)),
        ),
        tracks: vec![track],
    };
    let mut bytes = Vec::new();
    smf.write_std(&mut bytes)?;
    Ok(bytes)
}

//! A passage, or a piece's melody, as a Standard MIDI File, through the one writer
//! ([`crate::report::smf`]).

use crate::compare::Passage;
use crate::report::exhibit::options::ExhibitError;
use crate::report::exhibit::prepared::Exhibit;
use crate::report::notation::{Mark, PassageView};
use crate::report::smf::{write_smf, SmfEvent};
use crate::timeline::Piece;

/// Ticks per quarter note of the passage exports.
pub const MIDI_TPQ: u16 = 480;

/// The text event (FF 01) of a passage export that carries the run's document digest.
pub fn digest_text(digest: &str) -> String {
    format!("collatio document digest {digest}")
}

/// The passage as a Standard MIDI File (format 1): a conductor track (A's tempo at the passage,
/// A's time signature, the common key; text events with the caution and the document digest),
/// then one track per work on channels 1 and 2 with lyrics and the passage's start and end as
/// markers; velocity 96 in the passage, 56 outside.
pub fn midi(
    ex: &Exhibit<'_>,
    passage: &Passage,
    view: &PassageView,
) -> Result<Vec<u8>, ExhibitError> {
    let tempo = view
        .a
        .bars
        .first()
        .map(|b| {
            let i =
                ex.a.tempo
                    .changes
                    .partition_point(|c| c.ticks <= b.start_ticks);
            i.checked_sub(1)
                .and_then(|i| ex.a.tempo.changes.get(i))
                .map_or(500_000.0, |c| c.micros_per_quarter)
        })
        .unwrap_or(500_000.0);
    let time = view.a.bars.first().map_or((4, 4), |b| b.time);
    let mut tracks: Vec<Vec<(u64, SmfEvent)>> = vec![vec![
        (
            0,
            SmfEvent::TrackName(format!("collatio passage {}", passage.rank).into_bytes()),
        ),
        (
            0,
            SmfEvent::Text(crate::report::cautions::ONE_LINE.as_bytes().to_vec()),
        ),
        // The run's document digest, also in the PDF and the JSON record.
        (0, SmfEvent::Text(digest_text(ex.digest()).into_bytes())),
        (0, SmfEvent::Tempo(tempo)),
        (
            0,
            SmfEvent::TimeSignature(time.0.min(255) as u8, time.1.max(1).trailing_zeros() as u8),
        ),
        (
            0,
            SmfEvent::KeySignature(
                view.a.key_fifths as i8,
                view.a.mode == crate::theory::KeyMode::Minor,
            ),
        ),
    ]];
    for (channel, (tag, label, side, range)) in [
        ("A", &ex.label_a, &view.a, passage.a.note_range),
        ("B", &ex.label_b, &view.b, passage.b.note_range),
    ]
    .into_iter()
    .enumerate()
    {
        let ch = channel as u8;
        let scale = |t: i64| -> u64 {
            let v = (t as i128 * i128::from(MIDI_TPQ) + i128::from(side.resolution) / 2)
                / i128::from(side.resolution.max(1));
            v.max(0) as u64
        };
        let mut evs: Vec<(u64, SmfEvent)> = vec![(
            0,
            SmfEvent::TrackName(format!("{tag}: {label}").into_bytes()),
        )];
        // Whole length of each note: the sum of its tied pieces.
        let mut lengths = vec![0i64; side.notes.len()];
        for bar in &side.bars {
            for e in &bar.events {
                if let Some(l) = e.note.and_then(|k| lengths.get_mut(k)) {
                    *l += e.ticks;
                }
            }
        }
        let mut bar_start = 0i64;
        for bar in &side.bars {
            for e in &bar.events {
                let Some(k) = e.note else {
                    continue;
                };
                let Some(n) = side.notes.get(k) else {
                    continue;
                };
                if e.tie_stop {
                    continue;
                }
                let len = lengths.get(k).copied().unwrap_or(e.ticks);
                let on = scale(bar_start + e.start);
                let off = scale(bar_start + e.start + len);
                let key = n.pitch.clamp(0, 127) as u8;
                let vel = if n.mark == Mark::Outside { 56 } else { 96 };
                if let Some(l) = &n.lyric {
                    evs.push((on, SmfEvent::Lyric(l.clone().into_bytes())));
                }
                if n.index == range[0] {
                    let text = format!("passage {} begins", passage.rank);
                    evs.push((on, SmfEvent::Marker(text.into_bytes())));
                }
                if n.index == range[1] {
                    let text = format!("passage {} ends", passage.rank);
                    evs.push((on, SmfEvent::Marker(text.into_bytes())));
                }
                evs.push((on, SmfEvent::NoteOn(ch, key, vel)));
                evs.push((off.max(on + 1), SmfEvent::NoteOff(ch, key, 64)));
            }
            bar_start += bar.length;
        }
        tracks.push(evs);
    }
    write_smf(&tracks, MIDI_TPQ).map_err(|e| ExhibitError::Midi(e.to_string()))
}

/// The melody of `piece` as an SMF (format 0, one track on channel 1), so that an expert can
/// correct a transcription in any editor and compare again.
///
/// The piece's resolution is kept (rescaled to 960 ticks per quarter note when it exceeds the
/// 15 bits SMF allows); its tempo map becomes Set Tempo events (for audio, one per tracked
/// beat, so the editor's beat grid follows the performance) and its time signatures follow.
/// Pitches are rounded to the nearest MIDI number (the cents deviation of audio notes is
/// dropped; SMF 1.0 has no per-note microtones); velocity is the note's own, or
/// 40 + 80 × confidence for transcribed notes.
pub fn melody_to_smf(piece: &Piece) -> std::io::Result<Vec<u8>> {
    let resolution = piece.resolution.max(1);
    let (out_res, scale) = if resolution <= 0x7FFF {
        (resolution, 1.0)
    } else {
        (960, 960.0 / f64::from(resolution))
    };
    let tick = |t: i64| -> u64 { (t.max(0) as f64 * scale).round() as u64 };
    let mut events: Vec<(u64, SmfEvent)> =
        vec![(0, SmfEvent::TrackName(b"melody (collatio)".to_vec()))];
    for change in &piece.tempo.changes {
        events.push((
            tick(change.ticks),
            SmfEvent::Tempo(change.micros_per_quarter),
        ));
    }
    for signature in &piece.time_signatures {
        let power = signature.denominator.max(1).ilog2().min(6) as u8;
        let numerator = signature.numerator.clamp(1, 255) as u8;
        events.push((
            tick(signature.ticks),
            SmfEvent::TimeSignature(numerator, power),
        ));
    }
    for note in &piece.melody {
        let key = note.pitch.0.round().clamp(0.0, 127.0) as u8;
        let velocity = note.velocity.unwrap_or_else(|| {
            (40.0 + 80.0 * f64::from(note.confidence.clamp(0.0, 1.0))).round() as u8
        });
        let on = tick(note.onset_ticks);
        let off = tick(note.end_ticks()).max(on + 1);
        events.push((on, SmfEvent::NoteOn(0, key, velocity.clamp(1, 127))));
        events.push((off, SmfEvent::NoteOff(0, key, 0)));
    }
    write_smf(&[events], out_res as u16)
}

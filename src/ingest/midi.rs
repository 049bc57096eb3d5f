//! Standard MIDI File reader (SMF format 0, 1 and 2), on top of the `midly` decoder.
//!
//! Conventions, after the Standard MIDI Files 1.0 and MIDI 1.0 Detailed Specifications:
//! - Tempo from Set Tempo meta events (µs per quarter note); 500,000 µs (120 bpm) until the
//!   first one.
//! - Bars from Time Signature meta events; 4/4 until the first one. Bars are numbered from 1;
//!   an opening bar whose first note is not on its downbeat is a pickup numbered 0.
//! - Note On with velocity 0 is a Note Off. Repeated Note Ons of one key on one channel are
//!   paired first-in first-out with the Note Offs that follow (a re-struck note).
//! - One part per (track, channel) pair that has notes; channel 10 is percussion and is left
//!   out of automatic melody selection. Tracks and channels are numbered from 1 in ids.
//! - Lyric meta events (FF 05) attach to the note of the same track starting at that tick.

use super::{Limits, Problem, RawBar, RawPiece};
use crate::theory::KeyMode;
use crate::timeline::{KeySignature, Note, Part, TempoChange, TimeSignature};
use midly::{MetaMessage, MidiMessage, Smf, Timing, TrackEventKind};
use std::collections::{BTreeMap, VecDeque};

/// General MIDI percussion channel, 0-based (channel 10 as users count).
const PERCUSSION_CHANNEL: u8 = 9;

/// Refuses a header whose division is in SMPTE time code with a frame rate other than the four
/// the SMF 1.0 specification allows (the upper byte is −24, −25, −29 or −30): midly negates that
/// byte, which overflows for −128.
fn check_timecode_division(bytes: &[u8]) -> Result<(), Problem> {
    if bytes.len() < 14 || &bytes[..4] != b"MThd" || bytes[12] & 0x80 == 0 {
        return Ok(());
    }
    let fps = bytes[12] as i8;
    if [-24, -25, -29, -30].contains(&fps) {
        Ok(())
    } else {
        Err(Problem::Midi(format!(
            "the header's time-code division names {fps} frames per second; SMF 1.0 allows only \
             -24, -25, -29 and -30"
        )))
    }
}

/// Reads a Standard MIDI File (or an RMID RIFF wrapper around one).
pub(crate) fn read(bytes: &[u8], limits: &Limits) -> Result<RawPiece, Problem> {
    let bytes = unwrap_rmid(bytes)?;
    check_timecode_division(bytes)?;
    let smf = Smf::parse(bytes).map_err(|e| Problem::Midi(describe_midly_error(&e, bytes)))?;
    let mut raw = RawPiece {
        warnings: chunk_warnings(bytes),
        ..RawPiece::default()
    };
    let (resolution, timecode) = match smf.header.timing {
        Timing::Metrical(tpq) => (u32::from(tpq.as_int()), false),
        Timing::Timecode(fps, sub) => (u32::from(fps.as_int()) * u32::from(sub.max(1)), true),
    };
    if resolution == 0 {
        return Err(Problem::Midi(
            "header division is 0 ticks per quarter note; the file cannot be timed".into(),
        ));
    }
    raw.resolution = resolution;
    let format = match smf.header.format {
        midly::Format::SingleTrack => 0,
        midly::Format::Parallel => 1,
        midly::Format::Sequential => 2,
    };
    raw.detail = if timecode {
        format!("SMF format {format}, SMPTE timing with {resolution} ticks per second")
    } else {
        format!("SMF format {format}, {resolution} ticks per quarter note")
    };
    if timecode {
        raw.warnings.push(
            "midi: SMPTE time code instead of metrical time: one beat is taken as one second"
                .into(),
        );
        raw.tempo.push(TempoChange {
            ticks: 0,
            micros_per_quarter: 1_000_000.0,
        });
    }
    if format == 2 {
        raw.warnings.push(
            "midi: format 2 (independent sequences): tracks are read as if they played together"
                .into(),
        );
    }

    let mut time_signatures: Vec<(i64, u32, u32)> = Vec::new();
    let mut parts: BTreeMap<(usize, u8), Part> = BTreeMap::new();
    let mut lyrics: Vec<(usize, i64, String)> = Vec::new();
    let mut end_tick = 0i64;
    let mut total_notes = 0u64;

    for (track_index, track) in smf.tracks.iter().enumerate() {
        let mut tick = 0i64;
        let mut open: BTreeMap<(u8, u8), VecDeque<(i64, u8)>> = BTreeMap::new();
        let mut track_name = String::new();
        let mut instrument = String::new();
        let mut programs: BTreeMap<u8, u8> = BTreeMap::new();
        let mut notes: BTreeMap<u8, Vec<Note>> = BTreeMap::new();
        for event in track {
            tick += i64::from(event.delta.as_int());
            match event.kind {
                TrackEventKind::Midi { channel, message } => {
                    let channel = channel.as_int();
                    match message {
                        MidiMessage::NoteOn { key, vel } if vel.as_int() > 0 => {
                            open.entry((channel, key.as_int()))
                                .or_default()
                                .push_back((tick, vel.as_int()));
                        }
                        MidiMessage::NoteOn { key, .. } | MidiMessage::NoteOff { key, .. } => {
                            let key = key.as_int();
                            if let Some((onset, velocity)) =
                                open.get_mut(&(channel, key)).and_then(VecDeque::pop_front)
                            {
                                total_notes += 1;
                                limits.check_notes(total_notes)?;
                                notes.entry(channel).or_default().push(midi_note(
                                    onset,
                                    tick - onset,
                                    key,
                                    velocity,
                                ));
                            }
                        }
                        MidiMessage::ProgramChange { program } => {
                            programs.entry(channel).or_insert(program.as_int());
                        }
                        _ => {}
                    }
                }
                TrackEventKind::Meta(meta) => match meta {
                    MetaMessage::Tempo(micros) => {
                        let micros = f64::from(micros.as_int());
                        if micros > 0.0 && super::TEMPO_RANGE.contains(&(60e6 / micros)) {
                            raw.tempo.push(TempoChange {
                                ticks: tick,
                                micros_per_quarter: micros,
                            });
                        } else {
                            raw.warnings.push(format!(
                                "midi: track {}, tick {tick}: Set Tempo of {micros} µs per quarter note is outside {:?} quarter notes per minute; ignored",
                                track_index + 1,
                                super::TEMPO_RANGE
                            ));
                        }
                    }
                    MetaMessage::TimeSignature(numerator, power, _, _) => {
                        time_signatures.push((tick, u32::from(numerator), u32::from(power)));
                    }
                    MetaMessage::KeySignature(sharps, _)
                        if !super::FIFTHS_RANGE.contains(&i32::from(sharps)) =>
                    {
                        raw.warnings.push(format!(
                            "midi: track {}, tick {tick}: key signature of {sharps} sharps is outside -7 to 7; ignored",
                            track_index + 1
                        ));
                    }
                    MetaMessage::KeySignature(sharps, minor) => {
                        raw.key_signatures.push(KeySignature {
                            ticks: tick,
                            fifths: i32::from(sharps),
                            mode: if minor {
                                KeyMode::Minor
                            } else {
                                KeyMode::Major
                            },
                        });
                    }
                    MetaMessage::TrackName(text) if track_name.is_empty() => {
                        track_name = text_of(text);
                    }
                    MetaMessage::InstrumentName(text) if instrument.is_empty() => {
                        instrument = text_of(text);
                    }
                    MetaMessage::Lyric(text) => {
                        let text = text_of(text);
                        if !text.trim().is_empty() {
                            lyrics.push((track_index, tick, text.trim().to_string()));
                        }
                    }
                    _ => {}
                },
                _ => {}
            }
        }
        end_tick = end_tick.max(tick);
        let mut unclosed = 0usize;
        for ((channel, key), queue) in open {
            for (onset, velocity) in queue {
                unclosed += 1;
                total_notes += 1;
                limits.check_notes(total_notes)?;
                notes.entry(channel).or_default().push(midi_note(
                    onset,
                    tick - onset,
                    key,
                    velocity,
                ));
            }
        }
        if unclosed > 0 {
            raw.warnings.push(format!(
                "midi: track {}: {unclosed} notes never released; ended at the end of the track",
                track_index + 1
            ));
        }
        for (channel, channel_notes) in notes {
            let program = programs.get(&channel).copied();
            let instrument = if !instrument.is_empty() {
                instrument.clone()
            } else if channel == PERCUSSION_CHANNEL {
                "General MIDI percussion map".to_string()
            } else {
                program.map_or(String::new(), |p| format!("General MIDI program {}", p + 1))
            };
            parts.insert(
                (track_index, channel),
                Part {
                    id: format!("track{}-ch{}", track_index + 1, channel + 1),
                    name: track_name.clone(),
                    instrument,
                    track: Some(track_index as u32 + 1),
                    channel: Some(channel + 1),
                    percussion: channel == PERCUSSION_CHANNEL,
                    transposition: 0,
                    staves: 1,
                    voices: Vec::new(),
                    notes: channel_notes,
                },
            );
        }
    }

    let mut parts: Vec<((usize, u8), Part)> = parts.into_iter().collect();
    for ((_, _), part) in &mut parts {
        for note in &mut part.notes {
            end_tick = end_tick.max(note.end_ticks());
        }
    }
    attach_lyrics(&mut parts, lyrics, resolution, &mut raw.warnings);
    raw.parts = parts.into_iter().map(|(_, p)| p).collect();
    for (index, part) in raw.parts.iter_mut().enumerate() {
        for note in &mut part.notes {
            note.part = index;
        }
    }
    let first_onset = raw
        .parts
        .iter()
        .filter(|p| !p.percussion)
        .flat_map(|p| p.notes.iter().map(|n| n.onset_ticks))
        .min();
    raw.time_signatures = normalise_time_signatures(time_signatures, &mut raw.warnings);
    raw.bars = bar_grid(
        &raw.time_signatures,
        resolution,
        end_tick,
        first_onset,
        limits,
    )?;
    Ok(raw)
}

fn midi_note(onset: i64, duration: i64, key: u8, velocity: u8) -> Note {
    Note {
        velocity: Some(velocity),
        ..Note::at_ticks(onset, duration.max(0), f64::from(key))
    }
}

/// Text of a meta event: UTF-8 where valid, otherwise Latin-1 (common practice for SMF text).
fn text_of(bytes: &[u8]) -> String {
    match std::str::from_utf8(bytes) {
        Ok(s) => s.trim_end_matches('\0').to_string(),
        Err(_) => bytes.iter().map(|&b| char::from(b)).collect(),
    }
}

/// Attaches each lyric syllable to the note of its track that starts at its tick, or failing
/// that the first note starting within a 32nd note after it.
fn attach_lyrics(
    parts: &mut [((usize, u8), Part)],
    lyrics: Vec<(usize, i64, String)>,
    resolution: u32,
    warnings: &mut Vec<String>,
) {
    let tolerance = i64::from(resolution / 8);
    let mut unplaced = 0usize;
    for (track, tick, text) in lyrics {
        let mut best: Option<(i64, usize, usize)> = None;
        for (pi, ((t, _), part)) in parts.iter().enumerate() {
            if *t != track || part.percussion {
                continue;
            }
            let start = part.notes.partition_point(|n| n.onset_ticks < tick);
            if let Some(note) = part.notes.get(start) {
                let gap = note.onset_ticks - tick;
                if gap <= tolerance && best.is_none_or(|(g, _, _)| gap < g) {
                    best = Some((gap, pi, start));
                }
            }
        }
        match best {
            Some((_, pi, ni)) => {
                let note = &mut parts[pi].1.notes[ni];
                match &mut note.lyric {
                    Some(existing) => {
                        existing.push(' ');
                        existing.push_str(&text);
                    }
                    None => note.lyric = Some(text),
                }
            }
            None => unplaced += 1,
        }
    }
    if unplaced > 0 {
        warnings.push(format!(
            "midi: {unplaced} lyric events had no note starting with them and were not attached"
        ));
    }
}

/// Converts (tick, numerator, denominator power) events to time signatures, dropping
/// impossible ones with a warning; later events at one tick win.
fn normalise_time_signatures(
    events: Vec<(i64, u32, u32)>,
    warnings: &mut Vec<String>,
) -> Vec<TimeSignature> {
    let mut out: Vec<TimeSignature> = Vec::new();
    let mut sorted = events;
    sorted.sort_by_key(|e| e.0);
    for (ticks, numerator, power) in sorted {
        if numerator == 0 || power > 6 {
            warnings.push(format!(
                "midi: time signature {numerator}/2^{power} at tick {ticks} ignored"
            ));
            continue;
        }
        let signature = TimeSignature {
            ticks,
            numerator,
            denominator: 1 << power,
        };
        match out.last_mut() {
            Some(last) if last.ticks == ticks => *last = signature,
            _ => out.push(signature),
        }
    }
    out
}

/// Lays bars from tick 0 to `end_tick` by the time-signature map (4/4 until the first).
/// A time signature arriving mid-bar ends that bar early. The opening bar is a pickup,
/// numbered 0, when the first pitched note falls inside it but not on its downbeat, or when
/// it is shorter than the bar that follows because a new signature starts there.
fn bar_grid(
    signatures: &[TimeSignature],
    resolution: u32,
    end_tick: i64,
    first_onset: Option<i64>,
    limits: &Limits,
) -> Result<Vec<RawBar>, Problem> {
    let mut bars: Vec<RawBar> = Vec::new();
    let mut current = (4u32, 4u32);
    let mut next = 0usize;
    let mut cursor = 0i64;
    while next < signatures.len() && signatures[next].ticks <= 0 {
        current = (signatures[next].numerator, signatures[next].denominator);
        next += 1;
    }
    loop {
        let nominal = TimeSignature {
            ticks: cursor,
            numerator: current.0,
            denominator: current.1,
        }
        .bar_ticks(resolution)
        .max(1);
        let mut length = nominal;
        if let Some(change) = signatures.get(next) {
            if change.ticks < cursor + nominal {
                length = change.ticks - cursor;
            }
        }
        bars.push(RawBar {
            label: String::new(),
            start_ticks: cursor,
            length_ticks: length,
            time_signature: current,
            pickup: false,
            implicit: false,
        });
        limits.check_bars(bars.len() as u64)?;
        cursor += length;
        while next < signatures.len() && signatures[next].ticks <= cursor {
            current = (signatures[next].numerator, signatures[next].denominator);
            next += 1;
        }
        if cursor >= end_tick {
            break;
        }
    }
    let first_is_pickup = match (bars.first(), bars.get(1)) {
        (Some(first), second) => {
            let off_downbeat = first_onset.is_some_and(|t| {
                t > first.start_ticks && t < first.start_ticks + first.length_ticks
            });
            let short_before_change = second.is_some_and(|s| {
                s.time_signature != first.time_signature
                    && first.length_ticks
                        < TimeSignature {
                            ticks: 0,
                            numerator: s.time_signature.0,
                            denominator: s.time_signature.1,
                        }
                        .bar_ticks(resolution)
            });
            off_downbeat || short_before_change
        }
        _ => false,
    };
    let base = if first_is_pickup { 0 } else { 1 };
    for (i, bar) in bars.iter_mut().enumerate() {
        bar.label = (i + base).to_string();
    }
    if let Some(first) = bars.first_mut() {
        first.pickup = first_is_pickup;
    }
    Ok(bars)
}

/// Returns the SMF inside an RMID (RIFF) wrapper, or the bytes as they are.
fn unwrap_rmid(bytes: &[u8]) -> Result<&[u8], Problem> {
    if !bytes.starts_with(b"RIFF") {
        return Ok(bytes);
    }
    let mut pos = 12usize;
    while pos + 8 <= bytes.len() {
        let id = &bytes[pos..pos + 4];
        let size = u32::from_le_bytes(four_bytes(bytes, pos + 4)) as usize;
        let start = pos + 8;
        if id == b"data" {
            let end = start.saturating_add(size).min(bytes.len());
            return Ok(&bytes[start..end]);
        }
        pos = start.saturating_add(size).saturating_add(size & 1);
    }
    Err(Problem::Midi(
        "RIFF/RMID container without a 'data' chunk holding the MIDI file".into(),
    ))
}

/// The four bytes at `pos` (the caller has checked that they are there).
fn four_bytes(bytes: &[u8], pos: usize) -> [u8; 4] {
    let mut out = [0u8; 4];
    if let Some(b) = bytes.get(pos..pos + 4) {
        out.copy_from_slice(b);
    }
    out
}

/// Checks the chunk lengths that the file declares against its size (SMF 1.0: each chunk is a
/// 4-byte type, a 32-bit big-endian length, then that many bytes). The decoder reads what is
/// there; these warnings say what was missing.
fn chunk_warnings(bytes: &[u8]) -> Vec<String> {
    let mut warnings = Vec::new();
    let mut pos = 0usize;
    let mut track = 0usize;
    while pos + 8 <= bytes.len() {
        let kind = &bytes[pos..pos + 4];
        let declared = u32::from_be_bytes(four_bytes(bytes, pos + 4));
        let remaining = bytes.len() - pos - 8;
        if kind == b"MTrk" {
            track += 1;
        }
        if declared as usize > remaining {
            let what = if kind == b"MTrk" {
                format!("track {track}")
            } else {
                format!("chunk '{}'", String::from_utf8_lossy(kind))
            };
            warnings.push(format!(
                "midi: {what} at byte {pos}: chunk length {declared} exceeds the {remaining} \
                 bytes left in the file (truncated?); read what is there"
            ));
            break;
        }
        pos += 8 + declared as usize;
    }
    warnings
}

/// A plain-language version of a decoder error, with the header facts that explain it.
fn describe_midly_error(error: &midly::Error, bytes: &[u8]) -> String {
    let mut text = format!("cannot decode the file: {error}");
    if bytes.len() < 14 {
        text.push_str(&format!(
            " (the file has {} bytes; a MIDI header chunk alone needs 14)",
            bytes.len()
        ));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Encodes a variable-length quantity as the SMF 1.0 specification defines it: 7 bits per
    /// byte, most significant group first, bit 7 set on every byte but the last.
    fn vlq(mut value: u32) -> Vec<u8> {
        let mut out = vec![(value & 0x7f) as u8];
        value >>= 7;
        while value > 0 {
            out.insert(0, ((value & 0x7f) as u8) | 0x80);
            value >>= 7;
        }
        out
    }

    /// Builds an SMF with the given header division and tracks of raw event bytes.
    fn smf(format: u16, division: u16, tracks: &[Vec<u8>]) -> Vec<u8> {
        let mut out = b"MThd".to_vec();
        out.extend_from_slice(&6u32.to_be_bytes());
        out.extend_from_slice(&format.to_be_bytes());
        out.extend_from_slice(&(tracks.len() as u16).to_be_bytes());
        out.extend_from_slice(&division.to_be_bytes());
        for t in tracks {
            out.extend_from_slice(b"MTrk");
            out.extend_from_slice(&(t.len() as u32).to_be_bytes());
            out.extend_from_slice(t);
        }
        out
    }

    /// The variable-length quantity table of the Standard MIDI Files 1.0 specification
    /// ("Variable Length Quantities" examples), value → bytes. A delta time written with each
    /// encoding must place the note at exactly that tick.
    #[test]
    fn smf_spec_vlq_examples_decode_to_their_ticks() {
        let table: [(u32, &[u8]); 12] = [
            (0x0000_0000, &[0x00]),
            (0x0000_0040, &[0x40]),
            (0x0000_007F, &[0x7F]),
            (0x0000_0080, &[0x81, 0x00]),
            (0x0000_2000, &[0xC0, 0x00]),
            (0x0000_3FFF, &[0xFF, 0x7F]),
            (0x0000_4000, &[0x81, 0x80, 0x00]),
            (0x0010_0000, &[0xC0, 0x80, 0x00]),
            (0x001F_FFFF, &[0xFF, 0xFF, 0x7F]),
            (0x0020_0000, &[0x81, 0x80, 0x80, 0x00]),
            (0x0800_0000, &[0xC0, 0x80, 0x80, 0x00]),
            (0x0FFF_FFFF, &[0xFF, 0xFF, 0xFF, 0x7F]),
        ];
        for (value, bytes) in table {
            assert_eq!(
                vlq(value),
                bytes,
                "test encoder disagrees with the spec table"
            );
            let mut track = bytes.to_vec();
            track.extend_from_slice(&[0x90, 60, 100, 0x60, 0x80, 60, 0]);
            track.extend_from_slice(&[0x00, 0xFF, 0x2F, 0x00]);
            let file = smf(0, 96, &[track]);
            let limits = Limits {
                max_bars: u64::MAX,
                ..Limits::default()
            };
            // Only the note's position matters here; skip the bar grid for huge offsets.
            let raw = read(&file, &limits);
            let raw = match raw {
                Ok(r) => r,
                Err(e) => panic!("value {value:#x}: {e}"),
            };
            let note = &raw.parts[0].notes[0];
            assert_eq!(note.onset_ticks, i64::from(value), "value {value:#x}");
            assert_eq!(note.duration_ticks, 0x60);
        }
    }

    /// SMF 1.0: with no Set Tempo event the tempo is 120 bpm (500,000 µs per quarter note).
    #[test]
    fn default_tempo_is_120_bpm() {
        let track = vec![
            0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0, 0x00, 0xFF, 0x2F, 0x00,
        ];
        let raw = read(&smf(0, 96, &[track]), &Limits::default()).ok();
        let raw = raw.as_ref();
        assert!(raw.is_some_and(|r| r.tempo.is_empty()));
        let map = crate::timeline::TempoMap::new(96, Vec::new());
        // 96 ticks = one quarter note = 0.5 s at 120 bpm.
        approx::assert_abs_diff_eq!(map.seconds_at(96).0, 0.5, epsilon = 1e-12);
    }

    /// MIDI 1.0: Note On with velocity 0 acts as Note Off; running status (no repeated status
    /// byte) is allowed.
    #[test]
    fn velocity_zero_and_running_status() {
        let track = vec![
            0x00, 0x90, 60, 100, // C4 on
            0x60, 60, 0, // running status: C4 velocity 0 = off
            0x00, 62, 90, // D4 on
            0x60, 62, 0, // D4 off
            0x00, 0xFF, 0x2F, 0x00,
        ];
        let raw = read(&smf(0, 96, &[track]), &Limits::default()).ok();
        let notes: Vec<(i64, i64, f64)> = raw
            .map(|r| {
                r.parts[0]
                    .notes
                    .iter()
                    .map(|n| (n.onset_ticks, n.duration_ticks, n.pitch.0))
                    .collect()
            })
            .unwrap_or_default();
        assert_eq!(notes, vec![(0, 96, 60.0), (96, 96, 62.0)]);
    }

    #[test]
    fn pickup_detected_when_first_note_is_off_the_downbeat() {
        // 4/4 at 96 tpq: first note at beat 4 of the opening bar.
        let track = vec![
            0x00, 0x90, 67, 100, 0x60, 0x80, 67, 0, 0x00, 0x90, 72, 100, 0x83, 0x00, 0x80, 72, 0,
            0x00, 0xFF, 0x2F, 0x00,
        ];
        let mut track = track;
        // Delay the first note by three quarter notes (288 ticks = 0x82 0x20).
        track.splice(0..1, [0x82, 0x20]);
        let raw = read(&smf(0, 96, &[track]), &Limits::default()).ok();
        let labels: Vec<(String, bool)> = raw
            .map(|r| r.bars.iter().map(|b| (b.label.clone(), b.pickup)).collect())
            .unwrap_or_default();
        assert_eq!(labels.first(), Some(&("0".to_string(), true)));
        assert_eq!(labels.get(1), Some(&("1".to_string(), false)));
    }

    #[test]
    fn truncated_and_garbage_files_are_errors() {
        let track = vec![
            0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0, 0x00, 0xFF, 0x2F, 0x00,
        ];
        let file = smf(0, 96, &[track]);
        for cut in [4, 13, 20, file.len() - 3] {
            // Never a panic; either an error or a lenient reading.
            let _ = read(&file[..cut], &Limits::default());
        }
        assert!(read(b"MThd\0\0\0\x06\0\0", &Limits::default()).is_err());
        // SMF 1.0: a time-code division's upper byte is -24, -25, -29 or -30; 0x80 (-128) is
        // refused with a message, not passed to the parser (which would overflow negating it).
        let header = b"MThd\0\0\0\x06\0\x01\0\x01\x80\x03MTrk\0\0\0\x04\0\xff\x2f\0";
        let err = read(header, &Limits::default()).unwrap_err();
        assert!(format!("{err:?}").contains("frames per second"), "{err:?}");
        let ok = b"MThd\0\0\0\x06\0\x01\0\x01\xe7\x28MTrk\0\0\0\x04\0\xff\x2f\0";
        assert!(check_timecode_division(ok).is_ok());
    }
}

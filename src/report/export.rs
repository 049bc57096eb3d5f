//! Passage exports that a notation editor opens: one MusicXML file and one MIDI file per
//! passage, each holding both works' bars of the passage as two parts (A, then B) in the
//! common key of the exhibit.
//!
//! In: an [`Exhibit`] and one passage with its [`PassageView`]. Out: MusicXML 4.0 text
//! ([`musicxml`]) and Standard MIDI File bytes ([`midi`]).
//!
//! - MusicXML: partwise, one `<measure>` per shown bar, numbered from 1 (0 for a pickup,
//!   `implicit="yes"`); each part's first note of a bar carries the bar's printed label in the
//!   work as a `<words>` direction (`A bar 9`), because the two works' bar numbers differ. Notes
//!   carry a `color` attribute: navy `#1A386B` matched, vermilion `#CC421A` differs from its
//!   counterpart or has none, grey `#A0A0A8` outside the passage; the passage's first and last
//!   notes carry `passage N begins` / `ends` directions. Lyrics, chord symbols (as words above
//!   the staff) and grace notes are kept. The shorter work is padded with bars of rest so that
//!   both parts have the same number of measures.
//! - MIDI: format 1, 480 ticks per quarter; a conductor track (tempo of A at the passage, A's
//!   time signature, the common key), then one track per work on channels 1 and 2 with lyrics
//!   as FF 05 events and the passage's start and end as markers (FF 06). Velocity 96 for notes
//!   in the passage, 56 for notes outside it.
//!
//! The MusicXML is written by this module rather than through the `musicxml` crate's typed
//! model: that crate's writer (1.1) puts text and attribute values into the file without
//! escaping them, so a title or lyric with `&` or `<` would produce a malformed file, and it
//! declares the MusicXML 3.0 DTD. See `docs/exhibit.md`.

use super::exhibit::{Exhibit, ExhibitError};
use super::notation::{Clef, Mark, PassageView, StaffView};
use crate::compare::Passage;
use std::fmt::Write as _;

/// File name stem of a passage's exports: `passage-01`.
pub fn file_stem(rank: usize) -> String {
    format!("passage-{rank:02}")
}

/// Colour of a mark in exports.
pub fn mark_color(mark: Mark) -> &'static str {
    match mark {
        Mark::Matched => "#1A386B",
        Mark::Differs => "#CC421A",
        Mark::Outside => "#A0A0A8",
    }
}

fn esc(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' => {}
            c => out.push(c),
        }
    }
    out
}

fn mode_name(view: &StaffView) -> &'static str {
    match view.mode {
        crate::theory::KeyMode::Minor => "minor",
        _ => "major",
    }
}

/// The passage as a MusicXML 4.0 partwise score.
pub fn musicxml(ex: &Exhibit<'_>, passage: &Passage, view: &PassageView) -> String {
    let mut x = String::new();
    x.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n");
    x.push_str("<!DOCTYPE score-partwise PUBLIC \"-//Recordare//DTD MusicXML 4.0 Partwise//EN\" \"http://www.musicxml.org/dtds/partwise.dtd\">\n");
    x.push_str("<score-partwise version=\"4.0\">\n");
    let title = format!(
        "Passage {}: A {} / B {}",
        passage.rank,
        super::exhibit::bars_text(&passage.a.bars[0], &passage.a.bars[1]),
        super::exhibit::bars_text(&passage.b.bars[0], &passage.b.bars[1])
    );
    let _ = writeln!(
        x,
        "  <work>\n    <work-title>{}</work-title>\n  </work>",
        esc(&title)
    );
    x.push_str("  <identification>\n    <encoding>\n");
    let _ = writeln!(
        x,
        "      <software>collatio {}</software>",
        env!("CARGO_PKG_VERSION")
    );
    x.push_str("    </encoding>\n    <miscellaneous>\n");
    let fields = [
        ("source-a-sha256", ex.a.provenance.sha256.clone()),
        ("source-b-sha256", ex.b.provenance.sha256.clone()),
        (
            "colours",
            "navy #1A386B matched; vermilion #CC421A differs or has no counterpart; grey #A0A0A8 outside the passage".into(),
        ),
        ("a-shown", format!("{} (the work is in {})", view.a.shown_key, view.a.own_key)),
        ("b-shown", format!("{} (the work is in {})", view.b.shown_key, view.b.own_key)),
    ];
    for (name, value) in fields {
        let _ = writeln!(
            x,
            "      <miscellaneous-field name=\"{name}\">{}</miscellaneous-field>",
            esc(&value)
        );
    }
    x.push_str("    </miscellaneous>\n  </identification>\n  <part-list>\n");
    for (id, label) in [
        ("P1", format!("A: {}", ex.label_a)),
        ("P2", format!("B: {}", ex.label_b)),
    ] {
        let _ = writeln!(
            x,
            "    <score-part id=\"{id}\">\n      <part-name>{}</part-name>\n    </score-part>",
            esc(&label)
        );
    }
    x.push_str("  </part-list>\n");
    let measures = view.a.bars.len().max(view.b.bars.len());
    let pickup_first = view.a.bars.first().is_some_and(|b| b.pickup)
        || view.b.bars.first().is_some_and(|b| b.pickup);
    for (id, tag, side) in [("P1", "A", &view.a), ("P2", "B", &view.b)] {
        let _ = writeln!(x, "  <part id=\"{id}\">");
        part_measures(&mut x, tag, side, passage, measures, pickup_first);
        x.push_str("  </part>\n");
    }
    x.push_str("</score-partwise>\n");
    x
}

fn part_measures(
    x: &mut String,
    tag: &str,
    side: &StaffView,
    passage: &Passage,
    measures: usize,
    pickup_first: bool,
) {
    let res = side.resolution;
    let range = if tag == "A" {
        passage.a.note_range
    } else {
        passage.b.note_range
    };
    let mut lyric_open = false;
    for m in 0..measures {
        let number = if pickup_first { m } else { m + 1 };
        let bar = side.bars.get(m);
        let implicit = if pickup_first && m == 0 {
            " implicit=\"yes\""
        } else {
            ""
        };
        let _ = writeln!(x, "    <measure number=\"{number}\"{implicit}>");
        let time = bar
            .map(|b| b.time)
            .or_else(|| side.bars.last().map(|b| b.time))
            .unwrap_or((4, 4));
        if m == 0 {
            let (sign, line) = match side.clef {
                Clef::Treble => ("G", 2),
                Clef::Bass => ("F", 4),
            };
            let _ = write!(
                x,
                "      <attributes>\n        <divisions>{res}</divisions>\n        <key>\n          <fifths>{}</fifths>\n          <mode>{}</mode>\n        </key>\n        <time>\n          <beats>{}</beats>\n          <beat-type>{}</beat-type>\n        </time>\n        <clef>\n          <sign>{sign}</sign>\n          <line>{line}</line>\n        </clef>\n      </attributes>\n",
                side.key_fifths,
                mode_name(side),
                time.0,
                time.1
            );
        } else if bar.is_some_and(|b| b.show_time) {
            let _ = write!(
                x,
                "      <attributes>\n        <time>\n          <beats>{}</beats>\n          <beat-type>{}</beat-type>\n        </time>\n      </attributes>\n",
                time.0, time.1
            );
        }
        let Some(bar) = bar else {
            // Padding: a bar of rest.
            let ticks = i64::from(time.0) * 4 * res / i64::from(time.1.max(1));
            let _ = write!(
                x,
                "      <note>\n        <rest measure=\"yes\"/>\n        <duration>{ticks}</duration>\n        <voice>1</voice>\n      </note>\n"
            );
            x.push_str("    </measure>\n");
            continue;
        };
        let _ = write!(
            x,
            "      <direction placement=\"above\">\n        <direction-type>\n          <words font-style=\"italic\" font-size=\"8\">{tag} bar {}</words>\n        </direction-type>\n      </direction>\n",
            esc(&bar.label)
        );
        let mut chords = bar.chords.iter().peekable();
        for ev in &bar.events {
            while let Some((t, text)) = chords.peek() {
                if *t > ev.start {
                    break;
                }
                let _ = write!(
                    x,
                    "      <direction placement=\"above\">\n        <direction-type>\n          <words font-weight=\"bold\">{}</words>\n        </direction-type>\n      </direction>\n",
                    esc(text)
                );
                chords.next();
            }
            let note = ev.note.and_then(|k| side.notes.get(k));
            if let Some(n) = note {
                if !ev.tie_stop && (n.index == range[0] || n.index == range[1]) {
                    let what = if n.index == range[0] {
                        "begins"
                    } else {
                        "ends"
                    };
                    let _ = write!(
                        x,
                        "      <direction placement=\"below\">\n        <direction-type>\n          <words>passage {} {what}</words>\n        </direction-type>\n      </direction>\n",
                        passage.rank
                    );
                }
                for g in bar
                    .graces
                    .iter()
                    .filter(|g| g.start == ev.start && !ev.tie_stop)
                {
                    let _ = write!(
                        x,
                        "      <note color=\"{}\">\n        <grace slash=\"yes\"/>\n{}        <voice>1</voice>\n        <type>eighth</type>\n      </note>\n",
                        mark_color(Mark::Outside),
                        pitch_xml(g.spelling)
                    );
                }
            }
            match note {
                None => {
                    let _ = write!(
                        x,
                        "      <note>\n        <rest/>\n        <duration>{}</duration>\n        <voice>1</voice>\n        <type>{}</type>\n{}{}      </note>\n",
                        ev.ticks,
                        ev.value.type_name(),
                        "        <dot/>\n".repeat(usize::from(ev.value.dots)),
                        triplet_xml(ev.value.triplet)
                    );
                }
                Some(n) => {
                    let mut ties = String::new();
                    let mut tied = String::new();
                    if ev.tie_stop {
                        ties.push_str("        <tie type=\"stop\"/>\n");
                        tied.push_str("          <tied type=\"stop\"/>\n");
                    }
                    if ev.tie_start {
                        ties.push_str("        <tie type=\"start\"/>\n");
                        tied.push_str("          <tied type=\"start\"/>\n");
                    }
                    let notations = if tied.is_empty() {
                        String::new()
                    } else {
                        format!("        <notations>\n{tied}        </notations>\n")
                    };
                    let lyric = match (&n.lyric, ev.tie_stop) {
                        (Some(l), false) => {
                            let continues = l.ends_with('-');
                            let text = l.trim_end_matches('-').trim_start_matches('-');
                            let syllabic = match (lyric_open, continues) {
                                (false, false) => "single",
                                (false, true) => "begin",
                                (true, true) => "middle",
                                (true, false) => "end",
                            };
                            lyric_open = continues;
                            format!(
                                "        <lyric number=\"1\">\n          <syllabic>{syllabic}</syllabic>\n          <text>{}</text>\n        </lyric>\n",
                                esc(text)
                            )
                        }
                        _ => String::new(),
                    };
                    let _ = write!(
                        x,
                        "      <note color=\"{}\">\n{}        <duration>{}</duration>\n{ties}        <voice>1</voice>\n        <type>{}</type>\n{}{}{notations}{lyric}      </note>\n",
                        mark_color(n.mark),
                        pitch_xml(n.spelling),
                        ev.ticks,
                        ev.value.type_name(),
                        "        <dot/>\n".repeat(usize::from(ev.value.dots)),
                        triplet_xml(ev.value.triplet),
                    );
                }
            }
        }
        x.push_str("    </measure>\n");
    }
}

fn pitch_xml(s: crate::theory::Spelling) -> String {
    let alter = s.alter.round() as i32;
    let alter_xml = if alter == 0 {
        String::new()
    } else {
        format!("          <alter>{alter}</alter>\n")
    };
    format!(
        "        <pitch>\n          <step>{}</step>\n{alter_xml}          <octave>{}</octave>\n        </pitch>\n",
        s.step.letter(),
        s.octave
    )
}

fn triplet_xml(triplet: bool) -> &'static str {
    if triplet {
        "        <time-modification>\n          <actual-notes>3</actual-notes>\n          <normal-notes>2</normal-notes>\n        </time-modification>\n"
    } else {
        ""
    }
}

/// Ticks per quarter note of the MIDI exports.
pub const MIDI_TPQ: u16 = 480;

/// The passage as a Standard MIDI File (format 1).
pub fn midi(
    ex: &Exhibit<'_>,
    passage: &Passage,
    view: &PassageView,
) -> Result<Vec<u8>, ExhibitError> {
    use midly::num::{u15, u24, u28, u4, u7};
    use midly::{
        Format, Header, MetaMessage, MidiMessage, Smf, Timing, TrackEvent, TrackEventKind,
    };

    // Absolute-time events, then deltas.
    #[derive(Clone)]
    enum Ev {
        Meta(u8, Vec<u8>),
        On(u8, u8, u8),
        Off(u8, u8),
    }
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
    let mut tracks_abs: Vec<Vec<(u64, Ev)>> = Vec::new();
    let title = format!("collatio passage {}", passage.rank);
    tracks_abs.push(vec![
        (0, Ev::Meta(0x03, title.into_bytes())),
        (0, Ev::Meta(0x51, Vec::new())),
        (
            0,
            Ev::Meta(
                0x58,
                vec![time.0.min(255) as u8, time.1.max(1).trailing_zeros() as u8],
            ),
        ),
        (
            0,
            Ev::Meta(
                0x59,
                vec![
                    view.a.key_fifths as i8 as u8,
                    u8::from(view.a.mode == crate::theory::KeyMode::Minor),
                ],
            ),
        ),
    ]);
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
        let mut evs: Vec<(u64, Ev)> =
            vec![(0, Ev::Meta(0x03, format!("{tag}: {label}").into_bytes()))];
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
                    evs.push((on, Ev::Meta(0x05, l.clone().into_bytes())));
                }
                if n.index == range[0] {
                    evs.push((
                        on,
                        Ev::Meta(
                            0x06,
                            format!("passage {} begins", passage.rank).into_bytes(),
                        ),
                    ));
                }
                if n.index == range[1] {
                    evs.push((
                        on,
                        Ev::Meta(0x06, format!("passage {} ends", passage.rank).into_bytes()),
                    ));
                }
                evs.push((on, Ev::On(ch, key, vel)));
                evs.push((off.max(on + 1), Ev::Off(ch, key)));
            }
            bar_start += bar.length;
        }
        tracks_abs.push(evs);
    }
    let micros = u24::new(tempo.round().clamp(1.0, 16_777_215.0) as u32);
    // Offs before ons at the same tick, so repeated notes restart cleanly.
    let mut owned: Vec<Vec<(u64, Ev)>> = tracks_abs;
    for t in &mut owned {
        t.sort_by_key(|(at, ev)| {
            (
                *at,
                match ev {
                    Ev::Meta(..) => 0,
                    Ev::Off(..) => 1,
                    Ev::On(..) => 2,
                },
            )
        });
    }
    let tracks: Vec<Vec<TrackEvent<'_>>> = owned
        .iter()
        .map(|t| {
            let mut last = 0u64;
            let mut out: Vec<TrackEvent<'_>> = t
                .iter()
                .map(|(at, ev)| {
                    let delta = u28::new((at - last).min(0x0FFF_FFFF) as u32);
                    last = *at;
                    let kind = match ev {
                        Ev::Meta(0x03, bytes) => {
                            TrackEventKind::Meta(MetaMessage::TrackName(bytes))
                        }
                        Ev::Meta(0x05, bytes) => TrackEventKind::Meta(MetaMessage::Lyric(bytes)),
                        Ev::Meta(0x06, bytes) => TrackEventKind::Meta(MetaMessage::Marker(bytes)),
                        Ev::Meta(0x51, _) => TrackEventKind::Meta(MetaMessage::Tempo(micros)),
                        Ev::Meta(0x58, b) => TrackEventKind::Meta(MetaMessage::TimeSignature(
                            b.first().copied().unwrap_or(4),
                            b.get(1).copied().unwrap_or(2),
                            24,
                            8,
                        )),
                        Ev::Meta(_, b) => TrackEventKind::Meta(MetaMessage::KeySignature(
                            b.first().copied().unwrap_or(0) as i8,
                            b.get(1).copied().unwrap_or(0) == 1,
                        )),
                        Ev::On(c, k, v) => TrackEventKind::Midi {
                            channel: u4::new(*c),
                            message: MidiMessage::NoteOn {
                                key: u7::new(*k),
                                vel: u7::new(*v),
                            },
                        },
                        Ev::Off(c, k) => TrackEventKind::Midi {
                            channel: u4::new(*c),
                            message: MidiMessage::NoteOff {
                                key: u7::new(*k),
                                vel: u7::new(64),
                            },
                        },
                    };
                    TrackEvent { delta, kind }
                })
                .collect();
            out.push(TrackEvent {
                delta: u28::new(0),
                kind: TrackEventKind::Meta(MetaMessage::EndOfTrack),
            });
            out
        })
        .collect();
    let smf = Smf {
        header: Header::new(Format::Parallel, Timing::Metrical(u15::new(MIDI_TPQ))),
        tracks,
    };
    let mut bytes = Vec::new();
    smf.write_std(&mut bytes)
        .map_err(|e| ExhibitError::Midi(e.to_string()))?;
    Ok(bytes)
}

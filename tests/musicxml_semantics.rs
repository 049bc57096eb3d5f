//! MusicXML 4.0 semantics, each check citing the part of the specification it rests on.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;
use collatio::ingest::ReadOptions;
use common::{notes_of, one_part, read_xml, read_xml_with};

fn note(step: &str, octave: i32, duration: u32, extra: &str) -> String {
    format!(
        "<note><pitch><step>{step}</step><octave>{octave}</octave></pitch>\
         <duration>{duration}</duration>{extra}</note>"
    )
}

/// MusicXML 4.0, `<divisions>`: "the number of divisions per quarter note"; `<duration>` is
/// in divisions. With divisions 2, duration 1 is an eighth note and duration 4 a half note.
#[test]
fn divisions_define_the_quarter_note() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>2</divisions>\
         <time><beats>4</beats><beat-type>4</beat-type></time></attributes>{}{}{}</measure>",
        note("C", 4, 1, ""),
        note("D", 4, 3, ""),
        note("E", 4, 4, "")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(
        notes_of(&piece, 0),
        vec![(0.0, 0.5, 60.0), (0.5, 1.5, 62.0), (2.0, 2.0, 64.0)]
    );
}

/// MusicXML 4.0: `<divisions>` may change within a part, even mid-measure; durations after
/// the change are in the new unit.
#[test]
fn divisions_may_change_mid_measure() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>{}\
         <attributes><divisions>3</divisions></attributes>{}{}{}{}</measure>",
        note("C", 4, 2, ""),
        note("D", 4, 1, ""),
        note("E", 4, 1, ""),
        note("F", 4, 1, ""),
        note("G", 4, 3, "")
    ));
    let piece = read_xml(&xml).unwrap();
    let got = notes_of(&piece, 0);
    let third = 1.0 / 3.0;
    let expected = [
        (0.0, 2.0, 60.0),
        (2.0, third, 62.0),
        (2.0 + third, third, 64.0),
        (2.0 + 2.0 * third, third, 65.0),
        (3.0, 1.0, 67.0),
    ];
    for (g, e) in got.iter().zip(expected) {
        approx::assert_abs_diff_eq!(g.0, e.0, epsilon = 1e-12);
        approx::assert_abs_diff_eq!(g.1, e.1, epsilon = 1e-12);
        assert_eq!(g.2, e.2);
    }
    // Exact ticks: the resolution is the least common multiple of the divisions (3).
    assert_eq!(piece.resolution, 3);
}

/// MusicXML 4.0, `<backup>` and `<forward>`: move the position by a duration without sounding;
/// used for a second voice. `<chord/>`: the note starts with the previous one.
#[test]
fn backup_forward_and_chords() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
         {}{}{}<backup><duration>4</duration></backup>\
         <forward><duration>1</duration></forward>{}</measure>",
        note("E", 5, 2, "<voice>1</voice>"),
        note("C", 5, 2, "<voice>1</voice>"),
        "<note><chord/><pitch><step>A</step><octave>4</octave></pitch><duration>2</duration><voice>1</voice></note>",
        note("G", 3, 3, "<voice>2</voice>")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(
        notes_of(&piece, 0),
        vec![
            (0.0, 2.0, 76.0),
            (1.0, 3.0, 55.0),
            (2.0, 2.0, 69.0),
            (2.0, 2.0, 72.0)
        ]
    );
    assert_eq!(
        piece.parts[0].voices,
        vec!["1".to_string(), "2".to_string()]
    );
    // The melody keeps the top line: E5, then C5 (the G3 starts under the held E5).
    let melody: Vec<f64> = piece.melody.iter().map(|n| n.pitch.0).collect();
    assert_eq!(melody, vec![76.0, 72.0]);
}

/// MusicXML 4.0, `<tie>`: "indicates that a tie begins or ends with this note"; the sound is
/// one note. A tie across a barline merges into one note that starts in the first bar.
#[test]
fn ties_merge_across_the_barline() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions>\
         <time><beats>2</beats><beat-type>4</beat-type></time></attributes>{}{}</measure>\
         <measure number=\"2\">{}{}</measure>",
        note("C", 4, 1, ""),
        note("G", 4, 1, "<tie type=\"start\"/>"),
        note("G", 4, 1, "<tie type=\"stop\"/>"),
        note("E", 4, 1, "")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(
        notes_of(&piece, 0),
        vec![(0.0, 1.0, 60.0), (1.0, 2.0, 67.0), (3.0, 1.0, 64.0)]
    );
    assert_eq!(piece.bars[piece.parts[0].notes[1].bar].label, "1");
}

/// MusicXML 4.0, `<transpose>`: "the chromatic element represents the number of semitones
/// needed to get from written to sounding pitch". Written D5 for a B-flat clarinet
/// (chromatic −2) sounds C5 = MIDI 72.
#[test]
fn transposing_instruments_are_read_at_concert_pitch() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions>\
         <key><fifths>2</fifths><mode>major</mode></key>\
         <transpose><diatonic>-1</diatonic><chromatic>-2</chromatic></transpose>\
         </attributes>{}</measure>",
        note("D", 5, 4, "")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(piece.parts[0].notes[0].pitch.0, 72.0);
    assert_eq!(piece.parts[0].transposition, -2);
    assert_eq!(
        piece.parts[0].notes[0].spelling.map(|s| s.name()),
        Some("C5".to_string())
    );
    // Written D major sounds C major.
    assert_eq!(piece.key_signatures[0].fifths, 0);
}

/// MusicXML 4.0, `<measure number>` is a token printed as is, and `implicit="yes"` marks a
/// measure not counted (a pickup). Labels are kept exactly; the pickup is short.
#[test]
fn measure_labels_are_kept_as_printed() {
    let xml = one_part(&format!(
        "<measure number=\"0\" implicit=\"yes\"><attributes><divisions>1</divisions>\
         <time><beats>3</beats><beat-type>4</beat-type></time></attributes>{}</measure>\
         <measure number=\"1\">{}</measure><measure number=\"12a\">{}</measure>",
        note("D", 4, 1, ""),
        note("G", 4, 3, ""),
        note("B", 4, 3, "")
    ));
    let piece = read_xml(&xml).unwrap();
    let labels: Vec<&str> = piece.bars.iter().map(|b| b.label.as_str()).collect();
    assert_eq!(labels, vec!["0", "1", "12a"]);
    assert!(piece.bars[0].pickup && piece.bars[0].implicit);
    assert_eq!(piece.bars[0].length_ticks, piece.resolution as i64);
    // The downbeat of bar 1 follows the one-beat pickup.
    assert_eq!(piece.parts[0].notes[1].onset.0, 1.0);
    assert_eq!(piece.beat_in_bar(&piece.parts[0].notes[1]), 1.0);
}

/// MusicXML 4.0, `<sound tempo>`: quarter notes per minute. 60 bpm makes a quarter note last
/// one second.
#[test]
fn sound_tempo_gives_seconds() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
         <direction><direction-type><words>Slow</words></direction-type>\
         <sound tempo=\"60\"/></direction>{}{}\
         <direction><direction-type><words>Faster</words></direction-type>\
         <sound tempo=\"120\"/></direction>{}</measure>",
        note("C", 4, 1, ""),
        note("D", 4, 1, ""),
        note("E", 4, 2, "")
    ));
    let piece = read_xml(&xml).unwrap();
    let times: Vec<(f64, f64)> = piece.parts[0]
        .notes
        .iter()
        .map(|n| (n.onset_seconds.0, n.duration_seconds.0))
        .collect();
    assert_eq!(times, vec![(0.0, 1.0), (1.0, 1.0), (2.0, 1.0)]);
}

/// MusicXML 4.0, `<grace>`: a grace note takes no time; collatio lists it as an ornament.
#[test]
fn grace_notes_are_ornaments() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
         <note><grace/><pitch><step>B</step><octave>4</octave></pitch><type>eighth</type></note>\
         {}{}</measure>",
        note("C", 5, 2, ""),
        note("D", 5, 2, "")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(
        notes_of(&piece, 0),
        vec![(0.0, 2.0, 72.0), (2.0, 2.0, 74.0)]
    );
    assert_eq!(piece.ornaments.len(), 1);
    assert_eq!(piece.ornaments[0].pitch.0, 71.0);
}

/// Lyrics and chord symbols reach the notes they belong to.
#[test]
fn lyrics_and_harmony() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
         <harmony><root><root-step>F</root-step></root><kind>major-seventh</kind></harmony>\
         {}{}</measure>",
        note(
            "A",
            4,
            2,
            "<lyric number=\"1\"><syllabic>begin</syllabic><text>Mor</text></lyric>"
        ),
        note(
            "C",
            5,
            2,
            "<lyric number=\"1\"><syllabic>end</syllabic><text>ning</text></lyric>"
        )
    ));
    let piece = read_xml(&xml).unwrap();
    let lyrics: Vec<Option<String>> = piece.melody.iter().map(|n| n.lyric.clone()).collect();
    assert_eq!(lyrics, vec![Some("Mor-".into()), Some("ning".into())]);
    assert_eq!(piece.chord_symbols[0].text, "Fmaj7");
}

/// Repeats: written order by default; unfolded on request, |: A :| B plays A A B.
#[test]
fn repeats_written_or_unfolded() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions>\
         <time><beats>1</beats><beat-type>4</beat-type></time></attributes>\
         <barline location=\"left\"><repeat direction=\"forward\"/></barline>{}</measure>\
         <measure number=\"2\">{}<barline location=\"right\">\
         <repeat direction=\"backward\"/></barline></measure>\
         <measure number=\"3\">{}</measure>",
        note("C", 4, 1, ""),
        note("D", 4, 1, ""),
        note("E", 4, 1, "")
    ));
    let written = read_xml(&xml).unwrap();
    assert_eq!(written.melody.len(), 3);
    let options = ReadOptions {
        unfold_repeats: true,
        ..ReadOptions::default()
    };
    let unfolded = read_xml_with(&xml, &options).unwrap();
    let pitches: Vec<f64> = unfolded.melody.iter().map(|n| n.pitch.0).collect();
    let labels: Vec<&str> = unfolded.bars.iter().map(|b| b.label.as_str()).collect();
    assert_eq!(pitches, vec![60.0, 62.0, 60.0, 62.0, 64.0]);
    assert_eq!(labels, vec!["1", "2", "1", "2", "3"]);
}

/// Timewise scores hold the same music as partwise ones (MusicXML 4.0 offers both).
#[test]
fn timewise_equals_partwise() {
    let timewise = r#"<?xml version="1.0"?>
<score-timewise version="4.0">
  <part-list><score-part id="P1"><part-name>A</part-name></score-part></part-list>
  <measure number="1"><part id="P1"><attributes><divisions>1</divisions></attributes>
    <note><pitch><step>E</step><octave>4</octave></pitch><duration>4</duration></note></part></measure>
  <measure number="2"><part id="P1">
    <note><pitch><step>F</step><alter>1</alter><octave>4</octave></pitch><duration>4</duration></note></part></measure>
</score-timewise>"#;
    let partwise = one_part(
        "<measure number=\"1\"><attributes><divisions>1</divisions></attributes>\
         <note><pitch><step>E</step><octave>4</octave></pitch><duration>4</duration></note></measure>\
         <measure number=\"2\"><note><pitch><step>F</step><alter>1</alter><octave>4</octave></pitch>\
         <duration>4</duration></note></measure>",
    );
    let a = read_xml(timewise).unwrap();
    let b = read_xml(&partwise).unwrap();
    assert_eq!(notes_of(&a, 0), notes_of(&b, 0));
    assert_eq!(notes_of(&a, 0), vec![(0.0, 4.0, 64.0), (4.0, 4.0, 66.0)]);
}

/// XML 1.0 allows single-quoted attributes and UTF-16; both must read.
#[test]
fn utf16_with_single_quotes() {
    let xml = one_part(&format!(
        "<measure number='1'><attributes><divisions>1</divisions></attributes>{}</measure>",
        note("A", 4, 4, "<tie type='start'/>")
    ))
    .replace("encoding=\"UTF-8\"", "encoding='UTF-16'");
    let mut bytes = vec![0xFF, 0xFE];
    for unit in xml.encode_utf16() {
        bytes.extend_from_slice(&unit.to_le_bytes());
    }
    let piece = collatio::ingest::read_bytes(
        std::path::Path::new("utf16.musicxml"),
        &bytes,
        &ReadOptions::default(),
    )
    .unwrap();
    assert_eq!(notes_of(&piece, 0), vec![(0.0, 4.0, 69.0)]);
}

/// Ties written with a start but no stop (as some notation programs export them; seen in real
/// files of the music21 corpus, e.g. `beethoven/opus132.mxl` with 752 starts and no stop):
/// the start carries the sound into the next note of that pitch in the same voice and staff.
#[test]
fn tie_start_without_stop_joins_the_next_note_of_its_voice() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions>\
         <time><beats>2</beats><beat-type>4</beat-type></time></attributes>{}{}</measure>\
         <measure number=\"2\">{}{}</measure>",
        note("C", 4, 1, "<voice>1</voice>"),
        note("E", 4, 1, "<tie type=\"start\"/><voice>1</voice>"),
        note("E", 4, 1, "<voice>1</voice>"),
        note("D", 4, 1, "<voice>1</voice>")
    ));
    let piece = read_xml(&xml).unwrap();
    assert_eq!(
        notes_of(&piece, 0),
        vec![(0.0, 1.0, 60.0), (1.0, 2.0, 64.0), (3.0, 1.0, 62.0)]
    );
    assert!(piece.warnings.iter().any(|w| w.contains("no stop")));
}

/// A tie into a bar that one part cut short (a 3-beat bar in 4/4): the stop still continues the
/// tied note of its voice when nothing else of that voice began in between.
#[test]
fn tie_across_a_short_gap_joins_when_nothing_intervenes() {
    let xml = one_part(&format!(
        "<measure number=\"1\"><attributes><divisions>1</divisions>\
         <time><beats>2</beats><beat-type>4</beat-type></time></attributes>{}{}\
         <forward><duration>1</duration></forward></measure>\
         <measure number=\"2\">{}{}</measure>",
        note("C", 4, 1, "<voice>1</voice>"),
        note("G", 4, 1, "<tie type=\"start\"/><voice>1</voice>"),
        note("G", 4, 1, "<tie type=\"stop\"/><voice>1</voice>"),
        note("E", 4, 1, "<voice>1</voice>")
    ));
    let piece = read_xml(&xml).unwrap();
    let notes = notes_of(&piece, 0);
    assert_eq!(notes.len(), 3, "{notes:?}");
    assert_eq!(notes[1], (1.0, 3.0, 67.0));
}

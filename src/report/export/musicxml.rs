//! A passage as a MusicXML 4.0 partwise score: both works' bars as two parts.

use super::mark_color;
use crate::compare::Passage;
use crate::report::exhibit::prepared::Exhibit;
use crate::report::notation::{Clef, Mark, PassageView, StaffView};
use std::fmt::Write as _;

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
        crate::report::format::bars_text(&passage.a.bars[0], &passage.a.bars[1]),
        crate::report::format::bars_text(&passage.b.bars[0], &passage.b.bars[1])
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
        // The run's document digest, also in the PDF and the JSON record: files of two runs
        // told apart.
        ("document-digest", ex.digest().to_string()),
        (
            "colours",
            "navy #1A386B matched; vermilion #CC421A differs or has no counterpart; grey #A0A0A8 outside the passage".into(),
        ),
        ("a-shown", format!("{} (the work is in {})", view.a.shown_key, view.a.own_key)),
        ("b-shown", format!("{} (the work is in {})", view.b.shown_key, view.b.own_key)),
        ("caution", crate::report::cautions::ONE_LINE.to_string()),
    ];
    for (name, value) in fields {
        let _ = writeln!(
            x,
            "      <miscellaneous-field name=\"{name}\">{}</miscellaneous-field>",
            esc(&value)
        );
    }
    x.push_str("    </miscellaneous>\n  </identification>\n");
    // The caution printed on the page as well, under the music (a credit of page 1).
    let _ = writeln!(
        x,
        "  <credit page=\"1\">\n    <credit-words valign=\"bottom\" font-size=\"7\">{}</credit-words>\n  </credit>",
        esc(crate::report::cautions::ONE_LINE)
    );
    x.push_str("  <part-list>\n");
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
                x.push_str(&harmony_xml(text));
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

/// A chord symbol as a MusicXML 4.0 `<harmony>` element (root, kind with the printed suffix as
/// its `text`, bass), so that notation editors read it as a chord; text that names no root
/// stays a `<words>` direction.
fn harmony_xml(text: &str) -> String {
    let Some(c) = crate::theory::parse_chord_symbol(text) else {
        return format!(
            "      <direction placement=\"above\">\n        <direction-type>\n          <words>{}</words>\n        </direction-type>\n      </direction>\n",
            esc(text)
        );
    };
    let alter = |a: i32, tag: &str| {
        if a == 0 {
            String::new()
        } else {
            format!("<{tag}>{a}</{tag}>")
        }
    };
    let bass = c.bass.map_or_else(String::new, |(step, a)| {
        format!(
            "        <bass>\n          <bass-step>{}</bass-step>{}\n        </bass>\n",
            step.letter(),
            alter(a, "bass-alter")
        )
    });
    format!(
        "      <harmony placement=\"above\">\n        <root>\n          <root-step>{}</root-step>{}\n        </root>\n        <kind text=\"{}\">{}</kind>\n{bass}      </harmony>\n",
        c.root.letter(),
        alter(c.root_alter, "root-alter"),
        esc(&c.suffix),
        c.kind
    )
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

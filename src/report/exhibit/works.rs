//! The templates' view of one work: its file, what was compared and where nothing matched.

use crate::report::format::{bars_text, size_text, trim_number};
use crate::timeline::Piece;
use serde::Serialize;
use std::path::Path;

/// One work as the templates see it.
#[derive(Debug, Serialize)]
pub struct WorkContext {
    /// `A` or `B`.
    pub tag: String,
    /// Label.
    pub label: String,
    /// Title in the file.
    pub title: String,
    /// Composer in the file.
    pub composer: String,
    /// Path as given.
    pub path: String,
    /// File name only.
    pub file_name: String,
    /// Format description.
    pub format: String,
    /// Container details.
    pub detail: String,
    /// Size text.
    pub size: String,
    /// SHA-256, hex.
    pub sha256: String,
    /// Part compared (id and name).
    pub part: String,
    /// What was selected and why.
    pub selection: String,
    /// Restrictions given (voice, staff, bars), as text; empty when none.
    pub restrictions: String,
    /// Notes in the melody compared.
    pub notes: usize,
    /// Notes in no passage.
    pub unmatched: usize,
    /// Bars in the work (first and last label).
    pub bar_span: String,
    /// Key at the start.
    pub key: String,
    /// Tempo at the start, quarter notes per minute.
    pub tempo: String,
    /// Time signature at the start.
    pub time: String,
    /// Repeats unfolded.
    pub unfolded: bool,
    /// Warnings met while reading.
    pub warnings: Vec<String>,
    /// Bar ranges outside every passage, as text.
    pub uncovered: String,
    /// Where a recording's melody extractor was unsure, as text; empty when nowhere.
    pub unsure: String,
    /// How a recording was transcribed (every setting and estimate); empty for scores and MIDI.
    pub transcription: String,
}

/// A work as the templates see it.
pub fn work_context(
    tag: &str,
    label: &str,
    piece: &Piece,
    notes: usize,
    unmatched: usize,
    ranges: &[[usize; 2]],
) -> WorkContext {
    let part = piece.parts.get(piece.selection.part);
    let sel = &piece.selection;
    let mut restrictions = Vec::new();
    if let Some(s) = sel.staff {
        restrictions.push(format!("staff {s}"));
    }
    if let Some(v) = &sel.voice {
        restrictions.push(format!("voice {v}"));
    }
    if let Some((f, l)) = &sel.bars {
        restrictions.push(bars_text(f, l));
    }
    if sel.skyline {
        restrictions.push("chords reduced to their top note".into());
    }
    let key = piece.key_at(0).map_or_else(
        || "not stated".to_string(),
        |k| crate::theory::key_name(k.fifths, k.mode),
    );
    let time = piece.time_signatures.first().map_or_else(
        || "4/4 (assumed)".to_string(),
        |t| format!("{}/{}", t.numerator, t.denominator),
    );
    // A recording's one tempo figure is the tracked tempo, the one its bars were built on.
    let tempo = match &piece.transcription {
        Some(t) if t.estimated_tempo_bpm > 0.0 => {
            format!("{} (tracked)", trim_number(t.estimated_tempo_bpm, 1))
        }
        _ => piece
            .tempo
            .changes
            .first()
            .map_or_else(String::new, |c| trim_number(c.bpm(), 1)),
    };
    WorkContext {
        tag: tag.into(),
        label: label.into(),
        title: piece.title.clone().unwrap_or_default(),
        composer: piece.composer.clone().unwrap_or_default(),
        path: piece.provenance.path.clone(),
        file_name: Path::new(&piece.provenance.path)
            .file_name()
            .map_or_else(String::new, |n| n.to_string_lossy().into_owned()),
        format: piece.provenance.format.describe().into(),
        detail: piece.provenance.detail.clone(),
        size: size_text(piece.provenance.bytes),
        sha256: piece.provenance.sha256.clone(),
        part: part.map_or_else(String::new, |p| {
            if p.name.is_empty() {
                p.id.clone()
            } else {
                format!("{} ({})", p.name, p.id)
            }
        }),
        selection: sel.reason.clone(),
        restrictions: restrictions.join(", "),
        notes,
        unmatched,
        bar_span: match (piece.bars.first(), piece.bars.last()) {
            (Some(f), Some(l)) => bars_text(&f.label, &l.label),
            _ => "no bars".into(),
        },
        key,
        tempo,
        time,
        unfolded: piece.repeats_unfolded,
        warnings: piece.warnings.clone(),
        uncovered: uncovered_bars(piece, ranges),
        unsure: unsure_text(piece),
        transcription: piece
            .transcription
            .as_ref()
            .map_or_else(String::new, transcription_text),
    }
}

/// Every setting and estimate of a recording's transcription, as one line: what a reader needs
/// to repeat it.
pub fn transcription_text(t: &crate::timeline::Transcription) -> String {
    let seconds = |x: Option<f64>, none: &str| {
        x.map_or_else(|| none.to_string(), |s| format!("{} s", trim_number(s, 2)))
    };
    let mut parts = vec![
        format!("A4 = {} Hz", trim_number(t.a4_hz, 2)),
        format!(
            "melody searched from {} to {} Hz",
            trim_number(t.fmin_hz, 1),
            trim_number(t.fmax_hz, 1)
        ),
        format!(
            "range {} to {} ({} s analysed at {} Hz; at most {} s)",
            seconds(t.from_seconds, "the start"),
            seconds(t.to_seconds, "the end"),
            trim_number(t.analysed_seconds, 2),
            t.analysis_rate_hz,
            trim_number(t.max_seconds, 0)
        ),
        format!(
            "melody tracker {} (asked: {})",
            t.melody_used, t.melody_requested
        ),
        match t.tempo_hint_bpm {
            Some(b) => format!("tempo hint {} beats per minute", trim_number(b, 1)),
            None => "no tempo hint".into(),
        },
        match t.meter {
            Some((n, d)) => format!("meter {n}/{d} as given"),
            None => "meter 4/4 assumed".into(),
        },
        match t.downbeat_seconds {
            Some(d) => format!("first downbeat at {} s as given", trim_number(d, 3)),
            None => "downbeats estimated".into(),
        },
        format!(
            "estimated tuning {:+} cents from A4",
            (t.estimated_tuning_semitones * 100.0).round() as i64
        ),
    ];
    if t.estimated_tempo_bpm > 0.0 {
        parts.push(format!(
            "tracked tempo {} beats per minute",
            trim_number(t.estimated_tempo_bpm, 1)
        ));
    } else {
        parts.push("no steady beat found".into());
    }
    parts.join("; ")
}

/// The unsure spans of a recording's transcription: each span as seconds with its bar, at most
/// twelve listed, then how many more and their total length.
fn unsure_text(piece: &Piece) -> String {
    const LISTED: usize = 12;
    let spans = &piece.unsure_spans;
    if spans.is_empty() {
        return String::new();
    }
    let mut parts: Vec<String> = spans
        .iter()
        .take(LISTED)
        .map(|[a, b]| {
            let bar = piece
                .bars
                .get(piece.bar_at_seconds(*a))
                .map_or_else(String::new, |b| format!(" (bar {})", b.label));
            format!("{}–{} s{bar}", trim_number(*a, 1), trim_number(*b, 1))
        })
        .collect();
    if spans.len() > LISTED {
        parts.push(format!("and {} more", spans.len() - LISTED));
    }
    let total: f64 = spans.iter().map(|[a, b]| b - a).sum();
    format!(
        "{} ({} s in all); notes there may be wrong",
        parts.join(", "),
        trim_number(total, 1)
    )
}

/// Bar ranges of the work whose melody notes lie in no passage, e.g. `0–8, 17–24`.
fn uncovered_bars(piece: &Piece, ranges: &[[usize; 2]]) -> String {
    let mut covered = vec![false; piece.melody.len()];
    for r in ranges {
        for c in covered.iter_mut().take(r[1] + 1).skip(r[0]) {
            *c = true;
        }
    }
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for (i, n) in piece.melody.iter().enumerate() {
        if covered[i] {
            continue;
        }
        match runs.last_mut() {
            Some(run) if run.1 + 1 >= n.bar && !covered_between(piece, &covered, run.1, n.bar) => {
                run.1 = n.bar
            }
            _ => runs.push((n.bar, n.bar)),
        }
    }
    let label = |i: usize| {
        piece
            .bars
            .get(i)
            .map_or_else(String::new, |b| b.label.clone())
    };
    runs.iter()
        .map(|&(f, l)| {
            if f == l {
                label(f)
            } else {
                format!("{}–{}", label(f), label(l))
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

fn covered_between(piece: &Piece, covered: &[bool], from_bar: usize, to_bar: usize) -> bool {
    piece
        .melody
        .iter()
        .zip(covered)
        .any(|(n, &c)| c && n.bar > from_bar && n.bar < to_bar)
}

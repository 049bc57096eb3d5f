//! The `compare` report: a short table of passages for people, or the JSON record
//! (schema in `docs/compare-json.md`).

use super::cautions::{chance_caution, chance_words, short_text};
use super::format::{bar_span, format_e_value, format_empirical_p, trim_number};
use crate::align::AlignParams;
use crate::compare::harmony::HarmonicSide;
use crate::compare::sync::MIN_AGREEING_NOTES;
use crate::compare::{PairKind, PassageSide};
use crate::findings::{Finding, Findings};
use crate::theory::{describe_transposition, pitch_name};
use crate::timeline::{ChromaSource, Piece};
use serde::Serialize;

/// Version of the compare JSON layout.
pub const COMPARE_SCHEMA_VERSION: u32 = 2;

/// One input work as the record describes it.
#[derive(Debug, Serialize)]
pub struct WorkRecord {
    /// Path, size, SHA-256, format.
    pub source: crate::timeline::Provenance,
    /// Title from the file.
    pub title: Option<String>,
    /// Part id of the melody compared.
    pub part: String,
    /// The line compared: part, staff and voice in words.
    pub line: String,
    /// Note when the two most melody-like lines of the work are close (`null` otherwise).
    pub close_candidates: Option<String>,
    /// Candidate lines no pairing checked (less melody-like than those paired), each with its
    /// melody-likeness.
    pub lines_not_checked: Vec<String>,
    /// What was compared and why.
    pub selection: String,
    /// Notes in the melody compared.
    pub notes: usize,
    /// Notes inside no passage.
    pub unmatched_notes: usize,
    /// Warnings met while reading.
    pub warnings: Vec<String>,
    /// How a recording was turned into notes: settings and estimates (`null` for scores and
    /// MIDI files).
    pub transcription: Option<crate::timeline::Transcription>,
}

/// The JSON record of `collatio compare`.
#[derive(Debug, Serialize)]
pub struct CompareRecord {
    /// Layout version.
    pub schema_version: u32,
    /// Tool identity.
    pub tool: super::inspect::ToolInfo,
    /// The document digest that every file of the run carries (the PDF, this record, the
    /// passage exports; see [`super::exhibit::Exhibit::digest`]); `null` in a record printed by
    /// a run that wrote no file (no `--pdf`, `--json` or `--export` naming a file or folder).
    pub document_digest: Option<String>,
    /// Work A.
    pub a: WorkRecord,
    /// Work B.
    pub b: WorkRecord,
    /// Every alignment parameter used.
    pub parameters: AlignParams,
    /// Relatedness of the two melodies as wholes, with its scores.
    pub relatedness: crate::compare::Relatedness,
    /// Coverage of the shorter melody by the passages, in [0, 1].
    pub coverage: f64,
    /// How the passages were searched for: `full` (every note pair under every
    /// transposition) or `seeded` (long works; with its figures).
    pub search: crate::align::SearchMethod,
    /// The null model behind the E-values (`null` when not computed).
    pub chance: Option<crate::stats::chance::ChanceSummary>,
    /// The reference corpus consulted (`null` when none was given).
    pub corpus: Option<crate::corpus::CorpusSummary>,
    /// Shared passages, strongest first.
    pub passages: Vec<Finding>,
    /// Harmonic (chroma) evidence (`null` when not computed).
    pub harmony: Option<crate::compare::harmony::HarmonicEvidence>,
    /// The alignment of a recording to a score (`null` unless one work is each).
    pub synchronisation: Option<crate::compare::sync::SyncSummary>,
    /// Every pairing of candidate melody lines checked, with its figures; the one compared is
    /// marked `chosen`. With more than one, the E-values are multiplied by their number.
    pub pairings: Vec<crate::compare::pairing::PairingCheck>,
    /// The pairings other than the one reported that also share a passage (`A <line> × B
    /// <line>`): their passages are not in `passages` (a tune moving between parts).
    pub also_sharing: Vec<String>,
    /// The usual cautions, in short: what the record does not show.
    pub cautions: Vec<&'static str>,
}

/// The label of the line compared (the candidate whose selection it is), or the part.
pub fn line_compared(piece: &Piece) -> String {
    crate::compare::pairing::line_label(piece)
}

fn work(
    tag: &str,
    piece: &Piece,
    findings: &Findings,
    notes: usize,
    unmatched: usize,
) -> WorkRecord {
    WorkRecord {
        source: piece.provenance.clone(),
        title: piece.title.clone(),
        part: piece
            .parts
            .get(piece.selection.part)
            .map_or_else(String::new, |p| p.id.clone()),
        line: line_compared(piece),
        close_candidates: super::pairings::close_note(tag, piece),
        lines_not_checked: super::pairings::lines_not_checked(piece, &findings.pairings, tag),
        selection: piece.selection.reason.clone(),
        notes,
        unmatched_notes: unmatched,
        warnings: piece.warnings.clone(),
        transcription: piece.transcription.clone(),
    }
}

/// Builds the record.
pub fn record(findings: &Findings) -> CompareRecord {
    let (a, b, result) = (&findings.a, &findings.b, findings);
    CompareRecord {
        schema_version: COMPARE_SCHEMA_VERSION,
        tool: super::inspect::ToolInfo {
            name: "collatio",
            version: env!("CARGO_PKG_VERSION"),
        },
        document_digest: None,
        a: work("A", a, result, result.notes_a, result.unmatched_a),
        b: work("B", b, result, result.notes_b, result.unmatched_b),
        parameters: findings.settings.align.clone(),
        relatedness: result.relatedness,
        coverage: result.coverage,
        search: result.search,
        chance: result.chance.clone(),
        corpus: result.corpus.clone(),
        passages: result.passages.clone(),
        harmony: result.harmony.clone(),
        synchronisation: result.synchronisation.clone(),
        pairings: result.pairings.clone(),
        also_sharing: super::pairings::also_sharing(&result.pairings),
        cautions: super::cautions::SHORT.to_vec(),
    }
}

/// The human listing of a run that wrote exhibit files: [`render_text`], then the document
/// digest that those files carry, so that a listing kept beside them is matched to them.
pub fn render_text_marked(findings: &Findings, digest: &str) -> String {
    let mut out = render_text(findings);
    out.push_str(&format!(
        "\nDocument digest: {digest}\n (carried by the PDF, the JSON record and the passage exports of this run)\n"
    ));
    out
}

fn bars(side: &PassageSide) -> String {
    bar_span(&side.bars[0], &side.bars[1], '-')
}

fn note_name(piece: &Piece, index: usize) -> String {
    piece
        .melody
        .get(index)
        .map_or_else(String::new, |n| match &n.spelling {
            Some(s) => s.name(),
            None => pitch_name(n.pitch.0),
        })
}

/// The human listing.
pub fn render_text(findings: &Findings) -> String {
    let (a, b, result) = (&findings.a, &findings.b, findings);
    let mut out = String::new();
    let describe = |tag: &str, piece: &Piece, notes: usize| {
        let title = piece
            .title
            .as_ref()
            .map_or_else(String::new, |t| format!(" \"{t}\""));
        format!(
            "{tag}  {}{title}\n   {}; {notes} notes\n",
            piece.provenance.path, piece.selection.reason
        )
    };
    out.push_str(&describe("A", a, result.notes_a));
    out.push_str(&describe("B", b, result.notes_b));
    out.push('\n');
    out.push_str(&format!(
        "relatedness {:.2} (0 = nothing shared, 1 = the same melody); coverage {:.2} of the shorter melody; {} passage{}\n",
        result.relatedness.value,
        result.coverage,
        result.passages.len(),
        if result.passages.len() == 1 { "" } else { "s" }
    ));
    if result.search != crate::align::SearchMethod::Full {
        out.push_str(&format!("search: {}\n", result.search.describe()));
    }
    if let Some(corpus) = &result.corpus {
        out.push_str(&format!(
            "corpus {}; corpus-weighted similarity {:.2}\n",
            corpus.source.line(),
            corpus.weighted_similarity
        ));
    }
    out.push_str(&render_synchronisation(result));
    out.push_str(&super::pairings::render(result));
    if result.passages.is_empty() {
        out.push_str("\nNo shared melodic passage reaches the reporting threshold.\n");
        out.push_str(&super::pairings::render_nothing_shared(result));
        out.push_str(&render_harmony(result));
        out.push_str(&short_text());
        return out;
    }
    out.push_str(&format!(
        "\n {:>2}  {:<16} {:<16} {:>9}  {:<24} {:>8}  {:>5}  {:>5}  {:>8}\n",
        "#", "in A", "in B", "notes A/B", "B relative to A", "tempo", "score", "PMI", "E-value"
    ));
    for f in &result.passages {
        let p = &f.passage;
        out.push_str(&format!(
            " {:>2}  {:<16} {:<16} {:>9}  {:<24} {:>7.2}x  {:>5}  {:>5.1}  {:>8}\n",
            p.rank,
            bars(&p.a),
            bars(&p.b),
            format!("{}/{}", p.a.notes, p.b.notes),
            p.transposition,
            p.tempo_ratio,
            p.score,
            p.pmi,
            f.significance
                .as_ref()
                .map_or_else(|| "-".to_string(), |s| format_e_value(s.e_value))
        ));
    }
    out.push_str(&format!(
        "\n B relative to A: the shift that takes A's notes to B's; tempo: {}; PMI: percent \
         melodic identity (identical notes after transposing, both sides counted)\n",
        tempo_words(a, b)
    ));
    if let Some(chance) = &result.chance {
        out.push_str(&format!(
            " E-value: how many passages this strong to expect by chance. {}\n",
            chance_words(chance)
        ));
        let caution = chance_caution(chance);
        if !caution.is_empty() {
            out.push_str(&format!(" {caution}\n"));
        }
    }
    for f in &result.passages {
        out.push_str(&render_passage(a, b, &f.passage));
        if let Some(c) = &f.commonness {
            out.push_str(&format!(
                "  In the reference corpus: {} of {} melodies hold the figure exactly, {} within \
                 the alignment's tolerance\n",
                c.exact, c.corpus_melodies, c.similar
            ));
        }
    }
    out.push_str(&render_harmony(result));
    out.push_str(&short_text());
    out
}

/// What the tempo column measures: the performed tempo when a recording is involved, the
/// tempo written in the files otherwise (a score's or MIDI file's tempo marking is an
/// instruction, not a performance).
fn tempo_words(a: &Piece, b: &Piece) -> &'static str {
    match (a.transcription.is_some(), b.transcription.is_some()) {
        (false, false) => {
            "how much faster B's passage goes than A's at the tempos written in the files \
             (notated tempo, not a performance)"
        }
        (true, true) => "how much faster B performs the passage than A",
        _ => {
            "how much faster B's passage goes than A's, one side as performed and the other \
              at its written tempo"
        }
    }
}

/// How a recording follows a score, when one work is each.
fn render_synchronisation(result: &Findings) -> String {
    let Some(s) = &result.synchronisation else {
        return String::new();
    };
    let recording = s.recording.letter();
    let score = s.score.letter();
    if !s.follows {
        return format!(
            "\n{recording} (recording) does not follow {score} (score) closely enough to take its \
             bars (chroma cost ratio {:.2}, {:.0}% of its melody notes agree with the score's, {} \
             of them; a performance needs 80% and {}); its bars are estimated from tracked \
             beats.\n",
            s.cost_ratio,
            100.0 * s.melody_agreement,
            s.agreeing_notes,
            MIN_AGREEING_NOTES
        );
    }
    let (first, last) = (s.bar_map.first(), s.bar_map.last());
    format!(
        "\n{recording} (recording) follows {score} (score): chroma cost ratio {:.2}, {:.0}% of its \
         melody notes agree with the score's ({} notes), {}; bars {}–{} of {score} placed at {:.2}–{:.2} s of \
         {recording}{}\n",
        s.cost_ratio,
        100.0 * s.melody_agreement,
        s.agreeing_notes,
        describe_transposition(s.transposition_semitones),
        first.map_or("", |b| b.label.as_str()),
        last.map_or("", |b| b.label.as_str()),
        first.map_or(0.0, |b| b.recording_seconds),
        last.map_or(0.0, |b| b.recording_seconds),
        if s.bars_from_score {
            "; the recording's bars are the score's"
        } else {
            ""
        }
    )
}

/// The harmonic passages, when computed.
fn render_harmony(result: &Findings) -> String {
    let Some(h) = &result.harmony else {
        return String::new();
    };
    let mut out = format!(
        "\nHarmonic evidence (chroma of {} in A, of {} in B; B {} by the optimal transposition \
         index): {} passage{}\n",
        chroma_source(h.sources[0]),
        chroma_source(h.sources[1]),
        h.transposition,
        h.passages.len(),
        if h.passages.len() == 1 { "" } else { "s" }
    );
    if h.passages.is_empty() {
        return out;
    }
    out.push_str(&format!(
        " {:>2}  {:<26} {:<26} {:>7}  {:>5}  {:>6}  {:>7}  {}\n",
        "#", "in A", "in B", "tempo", "Qmax", "cosine", "p", "confirms"
    ));
    for p in &h.passages {
        let span = |s: &HarmonicSide| {
            format!(
                "{} ({:.1}–{:.1} s)",
                bar_span(&s.bars[0], &s.bars[1], '–'),
                s.seconds[0],
                s.seconds[1]
            )
        };
        out.push_str(&format!(
            " {:>2}  {:<26} {:<26} {:>6.2}x  {:>5.0}  {:>6.2}  {:>7}  {}\n",
            p.rank,
            span(&p.a),
            span(&p.b),
            p.tempo_ratio,
            p.score,
            p.similarity,
            format_empirical_p(p.empirical_p, h.parameters.shuffles),
            p.confirms
                .map_or_else(|| "-".to_string(), |r| format!("melodic #{r}"))
        ));
    }
    out
}

fn chroma_source(source: ChromaSource) -> &'static str {
    match source {
        ChromaSource::Recording => "the recording",
        ChromaSource::Notes => "all notated parts",
    }
}

/// One passage: where, then the aligned notes in rows with a marker line.
fn render_passage(a: &Piece, b: &Piece, p: &crate::compare::Passage) -> String {
    let mut out = format!(
        "\nPassage {}: A {} (beat {} to beat {}) and B {} (beat {} to beat {})\n",
        p.rank,
        bars(&p.a),
        trim_number(p.a.start_beat, 2),
        trim_number(p.a.end_beat, 2),
        bars(&p.b),
        trim_number(p.b.start_beat, 2),
        trim_number(p.b.end_beat, 2),
    );
    let keys = match (&p.a.key, &p.b.key) {
        (Some(x), Some(y)) => format!(" (A in {x}, B in {y})"),
        _ => String::new(),
    };
    out.push_str(&format!(
        "  B is {}{keys}; {}; pitch classes agree {:.0}%, intervals {:.0}%, rhythm {:.0}%, metric position {:.0}%\n",
        p.transposition,
        if (p.note_value_ratio - 1.0).abs() < 0.01 {
            "same note values".to_string()
        } else {
            format!("B's note values are {} times A's", trim_number(p.note_value_ratio, 2))
        },
        100.0 * p.agreement.pitch_class,
        100.0 * p.agreement.interval,
        100.0 * p.agreement.rhythm,
        100.0 * p.agreement.metric_position
    ));
    let mut cells: Vec<(String, String, char)> = Vec::new();
    for pair in &p.pairs {
        let join = |piece: &Piece, notes: &[usize]| {
            notes
                .iter()
                .map(|&i| note_name(piece, i))
                .collect::<Vec<_>>()
                .join("+")
        };
        let mark = match pair.kind {
            PairKind::Match => '=',
            PairKind::Mismatch => 'x',
            PairKind::Fragmentation | PairKind::Consolidation => {
                if pair.equal {
                    '~'
                } else {
                    'x'
                }
            }
            _ => '-',
        };
        let left = if pair.a.is_empty() {
            ".".to_string()
        } else {
            join(a, &pair.a)
        };
        let right = if pair.b.is_empty() {
            ".".to_string()
        } else {
            join(b, &pair.b)
        };
        cells.push((left, right, mark));
    }
    const ROW_WIDTH: usize = 76;
    let mut i = 0;
    while i < cells.len() {
        let mut width = 4;
        let mut j = i;
        while j < cells.len() {
            let w = cells[j].0.len().max(cells[j].1.len()) + 1;
            if width + w > ROW_WIDTH && j > i {
                break;
            }
            width += w;
            j += 1;
        }
        let (mut ra, mut rb, mut rm) = (
            String::from("  A "),
            String::from("  B "),
            String::from("    "),
        );
        for (x, y, m) in &cells[i..j] {
            let w = x.len().max(y.len());
            ra.push_str(&format!("{x:<w$} "));
            rb.push_str(&format!("{y:<w$} "));
            rm.push_str(&format!("{:<w$} ", m.to_string()));
        }
        out.push_str(&format!(
            "{}\n{}\n{}\n",
            ra.trim_end(),
            rb.trim_end(),
            rm.trim_end()
        ));
        i = j;
    }
    out.push_str("  = same note after transposing, x different, ~ one note split into repeated notes, - no counterpart\n");
    out
}

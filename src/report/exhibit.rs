//! The exhibit: the PDF report, the JSON record written to a file, and the passage exports,
//! as one library call.
//!
//! In: the two [`Piece`]s, the [`AlignParams`] used, the [`Comparison`], [`ExhibitOptions`]
//! (paper, labels, case label, date, common key) and [`Outputs`] (which files to write). Out:
//! the files, written atomically (a temporary file in the same directory, then a rename), and
//! the list of paths written. No output may replace an input file.
//!
//! Determinism: identical inputs and options give byte-identical files. The date printed is
//! the one given, else the one `SOURCE_DATE_EPOCH` names, else none: never the clock. The PDF's
//! document identifier is derived from the inputs' SHA-256 hashes and the options.
//!
//! ```no_run
//! use collatio::report::exhibit::{write_exhibit, ExhibitOptions, Outputs};
//! # fn demo(a: &collatio::timeline::Piece, b: &collatio::timeline::Piece) -> Result<(), Box<dyn std::error::Error>> {
//! let params = collatio::align::AlignParams::default();
//! let result = collatio::compare::compare(a, b, &params);
//! let outputs = Outputs { pdf: Some("exhibit.pdf".into()), ..Outputs::default() };
//! write_exhibit(a, b, &params, &result, &ExhibitOptions::default(), &outputs)?;
//! # Ok(()) }
//! ```

use crate::align::AlignParams;
use crate::compare::{Comparison, Passage};
use crate::report::notation::{self, Mark, PassageView};
use crate::report::pdf::layout::Paper;
use crate::timeline::Piece;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// What the exhibit looks like and says.
#[derive(Debug, Clone)]
pub struct ExhibitOptions {
    /// Paper size. Default A4.
    pub paper: Paper,
    /// Case label printed on every page (e.g. `Holloway v. Wren, No. 24-1234`). Default none.
    pub case_label: Option<String>,
    /// Label of work A. Default: its title, else its file name.
    pub label_a: Option<String>,
    /// Label of work B. Default: its title, else its file name.
    pub label_b: Option<String>,
    /// The date printed, `YYYY-MM-DD`; see [`resolve_date`]. Default none.
    pub date: Option<String>,
    /// Tonic of the common key the passages are shown in, as a name (`C`, `Eb`, `F#`).
    /// Default `C`.
    pub common_key: String,
    /// Draw piano rolls instead of staves for every passage. Default false (rolls only where
    /// pitch is unstable).
    pub piano_roll: bool,
}

impl Default for ExhibitOptions {
    fn default() -> Self {
        ExhibitOptions {
            paper: Paper::A4,
            case_label: None,
            label_a: None,
            label_b: None,
            date: None,
            common_key: "C".into(),
            piano_roll: false,
        }
    }
}

/// Which files to write.
#[derive(Debug, Clone, Default)]
pub struct Outputs {
    /// The PDF exhibit.
    pub pdf: Option<PathBuf>,
    /// The JSON record (the same as `compare --format json`).
    pub json: Option<PathBuf>,
    /// A folder for the passage exports (MusicXML and MIDI per passage); created if missing.
    pub export_dir: Option<PathBuf>,
}

/// Why the exhibit could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ExhibitError {
    /// An output path names one of the input files.
    #[error("output: {path} is an input file; refusing to overwrite it")]
    WouldOverwriteInput {
        /// The output path.
        path: PathBuf,
    },
    /// Two outputs name the same file.
    #[error("output: {path} is named by two outputs")]
    SameOutputTwice {
        /// The path.
        path: PathBuf,
    },
    /// A date that is not `YYYY-MM-DD`, or a `SOURCE_DATE_EPOCH` that is not a number of
    /// seconds.
    #[error("output: {0}")]
    BadDate(String),
    /// A common key that is not a note name.
    #[error("output: --common-key '{0}' is not a key; use a note name such as C, G, Eb or F#")]
    BadKey(String),
    /// A template failed to render (a bug in a template).
    #[error("template {name}: {message}")]
    Template {
        /// Template name.
        name: String,
        /// The engine's message.
        message: String,
    },
    /// The PDF could not be serialised.
    #[error("pdf: {0}")]
    Pdf(String),
    /// Writing a file failed.
    #[error("output: {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The system error.
        source: std::io::Error,
    },
    /// A MIDI export could not be serialised.
    #[error("midi export: {0}")]
    Midi(String),
    /// The JSON record could not be serialised.
    #[error("json: {0}")]
    Json(#[from] serde_json::Error),
}

impl ExhibitError {
    /// Whether the error is the user's choice of options (exit code 2) rather than a failure.
    pub fn is_usage(&self) -> bool {
        matches!(
            self,
            ExhibitError::WouldOverwriteInput { .. }
                | ExhibitError::SameOutputTwice { .. }
                | ExhibitError::BadDate(_)
                | ExhibitError::BadKey(_)
        )
    }
}

/// The date to print: `flag` if given (must be `YYYY-MM-DD`), else the UTC date of
/// `source_date_epoch` (seconds since 1970, the reproducible-builds convention), else none.
pub fn resolve_date(
    flag: Option<&str>,
    source_date_epoch: Option<&str>,
) -> Result<Option<String>, ExhibitError> {
    if let Some(text) = flag {
        let parts: Vec<&str> = text.split('-').collect();
        let ok = parts.len() == 3
            && parts[0].len() == 4
            && parts[1].len() == 2
            && parts[2].len() == 2
            && parts.iter().all(|p| p.chars().all(|c| c.is_ascii_digit()));
        let (m, d) = (
            parts
                .get(1)
                .and_then(|p| p.parse::<u32>().ok())
                .unwrap_or(0),
            parts
                .get(2)
                .and_then(|p| p.parse::<u32>().ok())
                .unwrap_or(0),
        );
        if !ok || !(1..=12).contains(&m) || !(1..=31).contains(&d) {
            return Err(ExhibitError::BadDate(format!(
                "--date '{text}' is not a date in the form YYYY-MM-DD"
            )));
        }
        return Ok(Some(text.to_string()));
    }
    match source_date_epoch.map(str::trim).filter(|s| !s.is_empty()) {
        None => Ok(None),
        Some(text) => {
            let secs: i64 = text.parse().map_err(|_| {
                ExhibitError::BadDate(format!(
                    "SOURCE_DATE_EPOCH '{text}' is not a whole number of seconds"
                ))
            })?;
            let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
            Ok(Some(format!("{y:04}-{m:02}-{d:02}")))
        }
    }
}

/// Gregorian date of a day count from 1970-01-01 (H. Hinnant's `civil_from_days`).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// Default label of a work: its title, else its file name.
pub fn default_label(piece: &Piece) -> String {
    piece.title.clone().unwrap_or_else(|| {
        Path::new(&piece.provenance.path).file_name().map_or_else(
            || piece.provenance.path.clone(),
            |n| n.to_string_lossy().into_owned(),
        )
    })
}

/// Everything the renderers need, computed once.
#[derive(Debug, Clone)]
pub struct Exhibit<'a> {
    /// Work A.
    pub a: &'a Piece,
    /// Work B.
    pub b: &'a Piece,
    /// Alignment parameters used.
    pub params: &'a AlignParams,
    /// The comparison.
    pub result: &'a Comparison,
    /// Options.
    pub options: &'a ExhibitOptions,
    /// Label of A.
    pub label_a: String,
    /// Label of B.
    pub label_b: String,
    /// Tonic pitch class of the common key.
    pub target_tonic: i32,
    /// The notation of each passage, in rank order.
    pub views: Vec<PassageView>,
}

impl<'a> Exhibit<'a> {
    /// Prepares an exhibit.
    pub fn new(
        a: &'a Piece,
        b: &'a Piece,
        params: &'a AlignParams,
        result: &'a Comparison,
        options: &'a ExhibitOptions,
    ) -> Result<Exhibit<'a>, ExhibitError> {
        let target_tonic = crate::theory::parse_tonic(&options.common_key)
            .ok_or_else(|| ExhibitError::BadKey(options.common_key.clone()))?;
        let label_a = options.label_a.clone().unwrap_or_else(|| default_label(a));
        let label_b = options.label_b.clone().unwrap_or_else(|| default_label(b));
        let views = result
            .passages
            .iter()
            .map(|p| {
                let mut v = notation::passage_view(a, b, p, (&label_a, &label_b), target_tonic);
                if options.piano_roll {
                    v.a.unstable_pitch = true;
                }
                v
            })
            .collect();
        Ok(Exhibit {
            a,
            b,
            params,
            result,
            options,
            label_a,
            label_b,
            target_tonic,
            views,
        })
    }

    /// A digest of everything the output depends on, lower-case hex (SHA-256).
    pub fn fingerprint(&self) -> String {
        use sha2::{Digest, Sha256};
        let mut h = Sha256::new();
        h.update(self.a.provenance.sha256.as_bytes());
        h.update(self.b.provenance.sha256.as_bytes());
        h.update(
            serde_json::to_string(self.params)
                .unwrap_or_default()
                .as_bytes(),
        );
        let o = self.options;
        for part in [
            o.paper.name(),
            o.case_label.as_deref().unwrap_or(""),
            &self.label_a,
            &self.label_b,
            o.date.as_deref().unwrap_or(""),
            &o.common_key,
            env!("CARGO_PKG_VERSION"),
        ] {
            h.update(part.as_bytes());
            h.update([0u8]);
        }
        h.update(self.a.selection.reason.as_bytes());
        h.update(self.b.selection.reason.as_bytes());
        // The statistics, harmony and score-following settings shape the document as well.
        let r = self.result;
        for settings in [
            serde_json::to_string(&r.null_model),
            serde_json::to_string(&r.harmony.as_ref().map(|x| &x.parameters)),
            serde_json::to_string(&r.synchronisation.as_ref().map(|x| &x.parameters)),
        ] {
            h.update(settings.unwrap_or_default().as_bytes());
            h.update([0u8]);
        }
        h.finalize().iter().map(|b| format!("{b:02x}")).collect()
    }
}

/// Formats a number with at most `digits` decimals, trailing zeros trimmed.
pub fn trim_number(value: f64, digits: usize) -> String {
    let text = format!("{value:.digits$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// `bar 9` or `bars 9–16`.
pub fn bars_text(first: &str, last: &str) -> String {
    if first == last {
        format!("bar {first}")
    } else {
        format!("bars {first}–{last}")
    }
}

/// Human file size.
fn size_text(bytes: u64) -> String {
    if bytes < 10_000 {
        format!("{bytes} bytes")
    } else if bytes < 10_000_000 {
        format!(
            "{} KB ({bytes} bytes)",
            trim_number(bytes as f64 / 1000.0, 1)
        )
    } else {
        format!("{} MB ({bytes} bytes)", trim_number(bytes as f64 / 1e6, 1))
    }
}

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
}

fn work_context(
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
    let tempo = piece
        .tempo
        .changes
        .first()
        .map_or_else(String::new, |c| trim_number(c.bpm(), 1));
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
    }
}

/// Bar ranges of the work whose melody notes lie in no passage, e.g. `bars 0–8, 17–24`.
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

/// One row of parameters.
#[derive(Debug, Serialize)]
pub struct ParamRow {
    /// Name as in the JSON record.
    pub name: String,
    /// The command-line flag.
    pub flag: String,
    /// Value.
    pub value: String,
    /// What it does.
    pub meaning: String,
}

fn param_rows(p: &AlignParams) -> Vec<ParamRow> {
    let row = |name: &str, value: String, meaning: &str| ParamRow {
        name: name.into(),
        flag: format!("--{}", name.replace('_', "-")),
        value,
        meaning: meaning.into(),
    };
    vec![
        row(
            "pitch_match",
            p.pitch_match.to_string(),
            "points for the same pitch class after transposing",
        ),
        row(
            "pitch_near",
            p.pitch_near.to_string(),
            "points for a pitch one semitone off",
        ),
        row(
            "pitch_mismatch",
            p.pitch_mismatch.to_string(),
            "points for any other pitch",
        ),
        row(
            "interval_match",
            p.interval_match.to_string(),
            "points for the same interval into both notes",
        ),
        row(
            "interval_near",
            p.interval_near.to_string(),
            "points for intervals in one direction within two semitones",
        ),
        row(
            "interval_mismatch",
            p.interval_mismatch.to_string(),
            "points for other intervals",
        ),
        row(
            "rhythm_match",
            p.rhythm_match.to_string(),
            "points for the same duration ratio to the previous note",
        ),
        row(
            "rhythm_near",
            p.rhythm_near.to_string(),
            "points for ratios within a factor of two",
        ),
        row(
            "rhythm_mismatch",
            p.rhythm_mismatch.to_string(),
            "points for other ratios",
        ),
        row(
            "metric_match",
            p.metric_match.to_string(),
            "points for the same metric level",
        ),
        row(
            "gap_open",
            p.gap_open.to_string(),
            "cost of a note with no counterpart",
        ),
        row(
            "gap_extend",
            p.gap_extend.to_string(),
            "cost of each further such note in a row",
        ),
        row(
            "fragment_penalty",
            p.fragment_penalty.to_string(),
            "cost per extra note when one note is split",
        ),
        row(
            "max_fragments",
            p.max_fragments.to_string(),
            "most repeated notes one note may be split into",
        ),
        row(
            "min_score",
            p.min_score.to_string(),
            "lowest score reported as a passage",
        ),
        row(
            "min_notes",
            p.min_notes.to_string(),
            "fewest notes on each side of a passage",
        ),
        row(
            "max_passages",
            p.max_passages.to_string(),
            "most passages reported",
        ),
    ]
}

/// A difference between the two sides of a passage, for the templates to word.
#[derive(Debug, Serialize)]
pub struct Difference {
    /// `pitch`, `only_a`, `only_b`, `split`, `merge`, `rhythm`, `placement`, `grace_a`,
    /// `grace_b`.
    pub kind: String,
    /// A's bar label.
    pub a_bar: String,
    /// A's beat in the bar.
    pub a_beat: String,
    /// A's note name(s).
    pub a_name: String,
    /// A's scale degree(s).
    pub a_degree: String,
    /// A's length in quarter notes.
    pub a_length: String,
    /// B's bar label.
    pub b_bar: String,
    /// B's beat in the bar.
    pub b_beat: String,
    /// B's note name(s).
    pub b_name: String,
    /// B's scale degree(s).
    pub b_degree: String,
    /// B's length in quarter notes.
    pub b_length: String,
    /// Notes involved on the split or merged side.
    pub count: usize,
}

/// One passage as the templates see it.
#[derive(Debug, Serialize)]
pub struct PassageContext {
    /// Rank.
    pub rank: usize,
    /// A's bars text.
    pub a_bars: String,
    /// B's bars text.
    pub b_bars: String,
    /// First and last bar labels of A.
    pub a_first: String,
    /// Last bar label of A.
    pub a_last: String,
    /// First bar label of B.
    pub b_first: String,
    /// Last bar label of B.
    pub b_last: String,
    /// A's start beat.
    pub a_beat: String,
    /// B's start beat.
    pub b_beat: String,
    /// Seconds of A.
    pub a_time: String,
    /// Seconds of B.
    pub b_time: String,
    /// Notes of A.
    pub a_notes: usize,
    /// Notes of B.
    pub b_notes: usize,
    /// Unmatched in A.
    pub a_unmatched: usize,
    /// Unmatched in B.
    pub b_unmatched: usize,
    /// Keys.
    pub a_key: String,
    /// Keys.
    pub b_key: String,
    /// Transposition text.
    pub transposition: String,
    /// Semitones.
    pub semitones: i32,
    /// Tempo ratio.
    pub tempo: String,
    /// Note value ratio.
    pub note_values: String,
    /// Same note values (ratio 1).
    pub same_values: bool,
    /// Score.
    pub score: i32,
    /// PMI.
    pub pmi: String,
    /// Agreement percentages.
    pub agree_pitch: String,
    /// Intervals.
    pub agree_interval: String,
    /// Rhythm.
    pub agree_rhythm: String,
    /// Metric position.
    pub agree_metric: String,
    /// Identical pairs.
    pub identical: usize,
    /// Aligned pairs.
    pub aligned: usize,
    /// E-value, or empty when not computed.
    pub e_value: String,
    /// p-value, or empty.
    pub p_value: String,
    /// Corpus commonness, or empty.
    pub corpus: String,
    /// Whether significance was computed.
    pub has_significance: bool,
    /// Whether commonness was computed.
    pub has_corpus: bool,
    /// How A is shown: key and shift.
    pub a_shown: String,
    /// How B is shown.
    pub b_shown: String,
    /// Shown key of A.
    pub a_shown_key: String,
    /// Shown key of B.
    pub b_shown_key: String,
    /// Whether a piano roll is drawn instead of staves.
    pub piano_roll: bool,
    /// Differences, in order.
    pub differences: Vec<Difference>,
}

fn percent(x: f64) -> String {
    format!("{:.0}%", 100.0 * x)
}

/// E-values in plain notation: `0.0021`, `3.1e-7`.
pub fn sci(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.abs() >= 0.001 && x.abs() < 10_000.0 {
        trim_number(x, 4)
    } else {
        let e = x.abs().log10().floor() as i32;
        let m = x / 10f64.powi(e);
        format!("{}×10^{e}", trim_number(m, 2))
    }
}

fn shift_text(shift: i32) -> String {
    if shift == 0 {
        "at pitch".into()
    } else {
        crate::theory::describe_transposition(shift)
    }
}

fn passage_context(ex: &Exhibit<'_>, p: &Passage, view: &PassageView) -> PassageContext {
    let identical = p.pairs.iter().filter(|x| x.equal).count();
    let aligned = p
        .pairs
        .iter()
        .filter(|x| !matches!(x.kind, "only_a" | "only_b"))
        .count();
    let (e_value, p_value) = match &p.significance {
        Some(s) => (sci(s.e_value), sci(s.p_value)),
        None => (String::new(), String::new()),
    };
    let corpus = match &p.commonness {
        Some(c) => format!(
            "{} of {} melodies exactly, {} within tolerance",
            c.exact, c.corpus_melodies, c.similar
        ),
        None => String::new(),
    };
    PassageContext {
        rank: p.rank,
        a_bars: bars_text(&p.a.bars[0], &p.a.bars[1]),
        b_bars: bars_text(&p.b.bars[0], &p.b.bars[1]),
        a_first: p.a.bars[0].clone(),
        a_last: p.a.bars[1].clone(),
        b_first: p.b.bars[0].clone(),
        b_last: p.b.bars[1].clone(),
        a_beat: trim_number(p.a.start_beat, 2),
        b_beat: trim_number(p.b.start_beat, 2),
        a_time: format!(
            "{}–{} s",
            trim_number(p.a.onset_seconds, 2),
            trim_number(p.a.end_seconds, 2)
        ),
        b_time: format!(
            "{}–{} s",
            trim_number(p.b.onset_seconds, 2),
            trim_number(p.b.end_seconds, 2)
        ),
        a_notes: p.a.notes,
        b_notes: p.b.notes,
        a_unmatched: p.a.unmatched,
        b_unmatched: p.b.unmatched,
        a_key: p.a.key.clone().unwrap_or_else(|| "not stated".into()),
        b_key: p.b.key.clone().unwrap_or_else(|| "not stated".into()),
        transposition: p.transposition.clone(),
        semitones: p.transposition_semitones,
        tempo: trim_number(p.tempo_ratio, 2),
        note_values: trim_number(p.note_value_ratio, 2),
        same_values: (p.note_value_ratio - 1.0).abs() < 0.01,
        score: p.score,
        pmi: trim_number(p.pmi, 1),
        agree_pitch: percent(p.agreement.pitch_class),
        agree_interval: percent(p.agreement.interval),
        agree_rhythm: percent(p.agreement.rhythm),
        agree_metric: percent(p.agreement.metric_position),
        identical,
        aligned,
        has_significance: p.significance.is_some(),
        has_corpus: p.commonness.is_some(),
        e_value,
        p_value,
        corpus,
        a_shown: shift_text(view.a.shift),
        b_shown: shift_text(view.b.shift),
        a_shown_key: view.a.shown_key.clone(),
        b_shown_key: view.b.shown_key.clone(),
        piano_roll: view.a.unstable_pitch || view.b.unstable_pitch,
        differences: differences(ex, p, view),
    }
}

/// Offset of a note within a nominal bar: a pickup's notes sit at the end of a full bar.
fn metric_offset(piece: &Piece, index: usize) -> Option<f64> {
    let n = piece.melody.get(index)?;
    let bar = piece.bars.get(n.bar)?;
    let res = f64::from(piece.resolution.max(1));
    let nominal = f64::from(bar.time_signature.0) * 4.0 / f64::from(bar.time_signature.1.max(1));
    let actual = bar.length_ticks as f64 / res;
    let lead = if bar.pickup {
        (nominal - actual).max(0.0)
    } else {
        0.0
    };
    Some(n.offset_in_bar.0 + lead)
}

fn differences(ex: &Exhibit<'_>, p: &Passage, view: &PassageView) -> Vec<Difference> {
    let (a, b) = (ex.a, ex.b);
    let info = |piece: &Piece, side: &notation::StaffView, i: usize| {
        let n = side.notes.iter().find(|n| n.index == i);
        let note = piece.melody.get(i);
        (
            n.map_or_else(String::new, |n| n.bar_label.clone()),
            n.map_or_else(String::new, |n| trim_number(n.beat_in_bar, 2)),
            n.map_or_else(String::new, |n| n.name.clone()),
            n.map_or_else(String::new, |n| n.degree.clone()),
            note.map_or_else(String::new, |n| trim_number(n.duration.0, 3)),
        )
    };
    let names = |piece: &Piece, side: &notation::StaffView, idx: &[usize]| {
        idx.iter()
            .map(|&i| info(piece, side, i).2)
            .collect::<Vec<_>>()
            .join(" ")
    };
    let mut out = Vec::new();
    let ratio = if p.note_value_ratio > 0.0 {
        p.note_value_ratio
    } else {
        1.0
    };
    for pair in &p.pairs {
        let first_a = pair.a.first().copied();
        let first_b = pair.b.first().copied();
        let ia = first_a.map(|i| info(a, &view.a, i));
        let ib = first_b.map(|i| info(b, &view.b, i));
        let make = |kind: &str, count: usize| {
            let (ab, abeat, an, ad, al) = ia.clone().unwrap_or_default();
            let (bb, bbeat, bn, bd, bl) = ib.clone().unwrap_or_default();
            Difference {
                kind: kind.into(),
                a_bar: ab,
                a_beat: abeat,
                a_name: an,
                a_degree: ad,
                a_length: al,
                b_bar: bb,
                b_beat: bbeat,
                b_name: bn,
                b_degree: bd,
                b_length: bl,
                count,
            }
        };
        match pair.kind {
            "mismatch" => out.push(make("pitch", 1)),
            "only_a" => out.push(make("only_a", 1)),
            "only_b" => out.push(make("only_b", 1)),
            "fragmentation" => {
                let mut d = make("split", pair.b.len());
                d.b_name = names(b, &view.b, &pair.b);
                out.push(d);
            }
            "consolidation" => {
                let mut d = make("merge", pair.a.len());
                d.a_name = names(a, &view.a, &pair.a);
                out.push(d);
            }
            _ => {
                let (Some(i), Some(j)) = (first_a, first_b) else {
                    continue;
                };
                let (Some(na), Some(nb)) = (a.melody.get(i), b.melody.get(j)) else {
                    continue;
                };
                // Lengths compared in B's note values: A's length times the passage's ratio.
                let la = na.duration.0 * ratio;
                let lb = nb.duration.0;
                if (la - lb).abs() > 0.02 * la.max(lb).max(0.01) {
                    out.push(make("rhythm", 1));
                }
                if let (Some(oa), Some(ob)) = (metric_offset(a, i), metric_offset(b, j)) {
                    if (oa * ratio - ob).abs() > 1e-6 {
                        out.push(make("placement", 1));
                    }
                }
            }
        }
    }
    // Grace notes in the passage's bars (kept out of the comparison).
    for (tag, side) in [("grace_a", &view.a), ("grace_b", &view.b)] {
        for bar in &side.bars {
            for g in &bar.graces {
                let in_passage = bar.events.iter().any(|e| {
                    e.start == g.start
                        && e.note
                            .and_then(|k| side.notes.get(k))
                            .is_some_and(|n| n.mark != Mark::Outside)
                });
                if !in_passage {
                    continue;
                }
                let beat =
                    1.0 + g.start as f64 / side.resolution as f64 * f64::from(bar.time.1) / 4.0;
                let name = crate::theory::pitch_name(f64::from(g.pitch - side.shift));
                let mut d = Difference {
                    kind: tag.into(),
                    a_bar: String::new(),
                    a_beat: String::new(),
                    a_name: String::new(),
                    a_degree: String::new(),
                    a_length: String::new(),
                    b_bar: String::new(),
                    b_beat: String::new(),
                    b_name: String::new(),
                    b_degree: String::new(),
                    b_length: String::new(),
                    count: 1,
                };
                if tag == "grace_a" {
                    (d.a_bar, d.a_beat, d.a_name) = (bar.label.clone(), trim_number(beat, 2), name);
                } else {
                    (d.b_bar, d.b_beat, d.b_name) = (bar.label.clone(), trim_number(beat, 2), name);
                }
                out.push(d);
            }
        }
    }
    out
}

/// The whole context of the templates.
#[derive(Debug, Serialize)]
pub struct ExhibitContext {
    /// Tool name.
    pub tool: String,
    /// Tool version.
    pub version: String,
    /// Case label, or empty.
    pub case_label: String,
    /// Date, or empty.
    pub date: String,
    /// Paper name.
    pub paper: String,
    /// Common key tonic as given.
    pub common_key: String,
    /// Work A.
    pub a: WorkContext,
    /// Work B.
    pub b: WorkContext,
    /// Overall similarity.
    pub similarity: String,
    /// Passages.
    pub passages: Vec<PassageContext>,
    /// Parameters.
    pub parameters: Vec<ParamRow>,
    /// Parameters two to a row, for the cover: `[flag, value, flag, value]`.
    pub parameter_pairs: Vec<[String; 4]>,
    /// Any passage with significance computed.
    pub any_significance: bool,
    /// Any passage with commonness computed.
    pub any_corpus: bool,
    /// Any input from audio (estimated bars).
    pub any_audio: bool,
    /// Fingerprint of inputs and options (SHA-256, hex).
    pub fingerprint: String,
    /// The statistics stage's summary of its null model, as `name = value` pairs (empty when
    /// it did not run).
    pub null_model: String,
    /// A caution when the null model's shuffles gave few distinct pitch orders (empty
    /// otherwise).
    pub shuffle_caution: String,
    /// Harmonic evidence, when computed.
    pub harmony: Option<super::evidence::HarmonyContext>,
    /// A recording placed on a score, when one work is each.
    pub sync: Option<super::evidence::SyncContext>,
}

/// The scalar fields of a serialised summary as `name = value, ...` (numbers to 4 places).
fn summary_text(value: &serde_json::Value) -> String {
    match value {
        serde_json::Value::Object(map) => map
            .iter()
            .filter_map(|(k, v)| {
                let text = match v {
                    serde_json::Value::Number(n) => n
                        .as_i64()
                        .map(|i| i.to_string())
                        .or_else(|| n.as_u64().map(|u| u.to_string()))
                        .unwrap_or_else(|| trim_number(n.as_f64().unwrap_or(0.0), 4)),
                    serde_json::Value::String(s) => s.clone(),
                    serde_json::Value::Bool(b) => b.to_string(),
                    _ => return None,
                };
                Some(format!("{} = {text}", k.replace('_', " ")))
            })
            .collect::<Vec<_>>()
            .join(", "),
        _ => String::new(),
    }
}

/// Builds the templates' context.
pub fn context(ex: &Exhibit<'_>) -> ExhibitContext {
    let r = ex.result;
    let ranges_a: Vec<[usize; 2]> = r.passages.iter().map(|p| p.a.note_range).collect();
    let ranges_b: Vec<[usize; 2]> = r.passages.iter().map(|p| p.b.note_range).collect();
    ExhibitContext {
        tool: "collatio".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        case_label: ex.options.case_label.clone().unwrap_or_default(),
        date: ex.options.date.clone().unwrap_or_default(),
        paper: ex.options.paper.name().into(),
        common_key: ex.options.common_key.clone(),
        a: work_context("A", &ex.label_a, ex.a, r.notes_a, r.unmatched_a, &ranges_a),
        b: work_context("B", &ex.label_b, ex.b, r.notes_b, r.unmatched_b, &ranges_b),
        similarity: trim_number(r.similarity, 2),
        passages: r
            .passages
            .iter()
            .zip(&ex.views)
            .map(|(p, v)| passage_context(ex, p, v))
            .collect(),
        parameters: param_rows(ex.params),
        parameter_pairs: param_rows(ex.params)
            .chunks(2)
            .map(|c| {
                let get = |k: usize| {
                    c.get(k).map_or((String::new(), String::new()), |r| {
                        (r.flag.clone(), r.value.clone())
                    })
                };
                let ((f1, v1), (f2, v2)) = (get(0), get(1));
                [f1, v1, f2, v2]
            })
            .collect(),
        any_significance: r.passages.iter().any(|p| p.significance.is_some()),
        any_corpus: r.passages.iter().any(|p| p.commonness.is_some()),
        any_audio: ex.a.bars.iter().chain(&ex.b.bars).any(|b| b.estimated),
        fingerprint: ex.fingerprint(),
        null_model: serde_json::to_value(&r.null_model)
            .map(|v| summary_text(&v))
            .unwrap_or_default(),
        shuffle_caution: r
            .null_model
            .as_ref()
            .map(shuffle_caution)
            .unwrap_or_default(),
        harmony: super::evidence::harmony_context(r.harmony.as_ref()),
        sync: super::evidence::sync_context(r.synchronisation.as_ref()),
    }
}

/// The caution stated when the null model's shuffles gave few distinct pitch orders
/// ([`crate::stats::null::NullSummary::few_orders`]); empty otherwise.
pub fn shuffle_caution(null: &crate::stats::null::NullSummary) -> String {
    if !null.few_orders() {
        return String::new();
    }
    let few = |n: usize| 2 * n < null.shuffles;
    let which = match (few(null.distinct_a), few(null.distinct_b)) {
        (true, true) => format!(
            "A and B in only {} and {} distinct ways",
            null.distinct_a, null.distinct_b
        ),
        (true, false) => format!("A in only {} distinct ways", null.distinct_a),
        _ => format!("B in only {} distinct ways", null.distinct_b),
    };
    format!(
        "The shuffles behind the chance figures could reorder the pitches of {which} out of {} \
         drawn: keeping runs of {} pitches leaves such a melody little freedom, so the shuffled \
         melodies keep much of the originals, including what the two works share. The chance \
         figures are therefore conservative: they make a passage look more likely to arise by \
         chance than it is (shorter runs, `--shuffle-runs {}`, free the shuffles at the price of \
         more chance agreement between melodies of one idiom).",
        null.shuffles,
        null.run_length,
        null.run_length.saturating_sub(1).max(2)
    )
}

/// What [`write_exhibit`] wrote.
#[derive(Debug, Clone, Default)]
pub struct Written {
    /// Paths written, in order.
    pub files: Vec<PathBuf>,
    /// Pages of the PDF, when one was written.
    pub pdf_pages: usize,
}

/// The absolute form of a path whose file may not exist yet.
fn absolute(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    let parent = path.parent().filter(|p| !p.as_os_str().is_empty());
    let base = match parent {
        Some(dir) => std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf()),
        None => std::env::current_dir().unwrap_or_default(),
    };
    match path.file_name() {
        Some(name) => base.join(name),
        None => base,
    }
}

/// Refuses outputs that name an input or each other.
pub fn check_outputs(inputs: &[&Path], outputs: &[PathBuf]) -> Result<(), ExhibitError> {
    let inputs: Vec<PathBuf> = inputs.iter().map(|p| absolute(p)).collect();
    let mut seen: Vec<PathBuf> = Vec::new();
    for out in outputs {
        let abs = absolute(out);
        if inputs.contains(&abs) {
            return Err(ExhibitError::WouldOverwriteInput { path: out.clone() });
        }
        if seen.contains(&abs) {
            return Err(ExhibitError::SameOutputTwice { path: out.clone() });
        }
        seen.push(abs);
    }
    Ok(())
}

/// Writes bytes atomically: a temporary file beside the target, then a rename over it. The
/// target's folder is created when missing.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), ExhibitError> {
    use std::io::Write;
    let io = |source| ExhibitError::Io {
        path: path.to_path_buf(),
        source,
    };
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map_or_else(|| PathBuf::from("."), Path::to_path_buf);
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        std::fs::create_dir_all(&dir)?;
        let mut file = std::fs::File::create(&tmp)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(io(e));
    }
    Ok(())
}

/// Writes the requested outputs. The JSON is the record `compare --format json` prints.
pub fn write_exhibit(
    a: &Piece,
    b: &Piece,
    params: &AlignParams,
    result: &Comparison,
    options: &ExhibitOptions,
    outputs: &Outputs,
) -> Result<Written, ExhibitError> {
    let exhibit = Exhibit::new(a, b, params, result, options)?;
    let inputs = [Path::new(&a.provenance.path), Path::new(&b.provenance.path)];
    let export_files: Vec<(PathBuf, PathBuf)> = match &outputs.export_dir {
        Some(dir) => result
            .passages
            .iter()
            .map(|p| {
                (
                    dir.join(crate::report::export::file_stem(p.rank) + ".musicxml"),
                    dir.join(crate::report::export::file_stem(p.rank) + ".mid"),
                )
            })
            .collect(),
        None => Vec::new(),
    };
    let mut all: Vec<PathBuf> = outputs.pdf.iter().chain(&outputs.json).cloned().collect();
    for (x, m) in &export_files {
        all.push(x.clone());
        all.push(m.clone());
    }
    check_outputs(&inputs, &all)?;
    let mut written = Written::default();
    if let Some(path) = &outputs.json {
        let record = crate::report::compare::record(a, b, params, result);
        let mut json = serde_json::to_string_pretty(&record)?;
        json.push('\n');
        write_atomic(path, json.as_bytes())?;
        written.files.push(path.clone());
    }
    if let Some(dir) = &outputs.export_dir {
        std::fs::create_dir_all(dir).map_err(|source| ExhibitError::Io {
            path: dir.clone(),
            source,
        })?;
        for (((xml_path, mid_path), view), p) in export_files
            .iter()
            .zip(&exhibit.views)
            .zip(&result.passages)
        {
            let xml = crate::report::export::musicxml(&exhibit, p, view);
            write_atomic(xml_path, xml.as_bytes())?;
            written.files.push(xml_path.clone());
            let midi = crate::report::export::midi(&exhibit, p, view)?;
            write_atomic(mid_path, &midi)?;
            written.files.push(mid_path.clone());
        }
    }
    if let Some(path) = &outputs.pdf {
        let (bytes, pages) = crate::report::pdf::render(&exhibit)?;
        write_atomic(path, &bytes)?;
        written.files.push(path.clone());
        written.pdf_pages = pages;
    }
    Ok(written)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates() {
        assert_eq!(
            resolve_date(Some("2025-03-01"), Some("0"))
                .unwrap()
                .as_deref(),
            Some("2025-03-01")
        );
        assert!(resolve_date(Some("2025-3-1"), None).is_err());
        assert!(resolve_date(Some("2025-13-01"), None).is_err());
        assert_eq!(
            resolve_date(None, Some("0")).unwrap().as_deref(),
            Some("1970-01-01")
        );
        // 2024-02-29T12:00:00Z
        assert_eq!(
            resolve_date(None, Some("1709208000")).unwrap().as_deref(),
            Some("2024-02-29")
        );
        assert_eq!(resolve_date(None, None).unwrap(), None);
        assert!(resolve_date(None, Some("yesterday")).is_err());
    }

    #[test]
    fn numbers() {
        assert_eq!(trim_number(1.50, 2), "1.5");
        assert_eq!(trim_number(2.0, 2), "2");
        assert_eq!(sci(0.00021), "2.1×10^-4");
        assert_eq!(sci(0.5), "0.5");
    }

    #[test]
    fn outputs_never_replace_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("a.mid");
        std::fs::write(&input, b"x").unwrap();
        let err = check_outputs(&[&input], &[dir.path().join("./a.mid")]).unwrap_err();
        assert!(err.is_usage());
        assert!(check_outputs(&[&input], &[dir.path().join("b.pdf")]).is_ok());
        assert!(check_outputs(
            &[&input],
            &[dir.path().join("b.pdf"), dir.path().join("b.pdf")]
        )
        .is_err());
    }
}

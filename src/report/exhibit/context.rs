//! The templates' view of an exhibit: every figure as the text it is printed as.

use super::evidence::{harmony_context, sync_context, HarmonyContext, SyncContext};
use super::params::{param_rows, ParamRow};
use super::passages::{passage_context, PassageContext};
use super::prepared::Exhibit;
use super::works::{work_context, WorkContext};
use crate::report::cautions::{chance_caution, chance_words};
use crate::report::format::trim_number;
use serde::Serialize;

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
    /// Relatedness of the two melodies as wholes.
    pub relatedness: String,
    /// Coverage of the shorter melody by passages.
    pub coverage: String,
    /// How the passages were searched for, in a sentence, when not over the full matrix
    /// (empty for the full search).
    pub seeded_search: String,
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
    /// Both works are scores or MIDI files: their tempo is the one written in the file, not a
    /// performance.
    pub tempo_written: bool,
    /// The reference corpus consulted, in one sentence with its identity (empty when none).
    pub corpus: String,
    /// Document digest: SHA-256 of the inputs, settings, options and findings (hex).
    pub digest: String,
    /// What the chance figures rest on, in sentences (empty when they were not computed).
    pub chance: String,
    /// The caution that goes with the null used (empty when none).
    pub chance_caution: String,
    /// Harmonic evidence, when computed.
    pub harmony: Option<HarmonyContext>,
    /// A recording placed on a score, when one work is each.
    pub sync: Option<SyncContext>,
    /// Every pairing of candidate melody lines checked, as sentences (one entry when only one
    /// line of each work was compared).
    pub pairings: Vec<String>,
    /// Notes on works whose most melody-like lines are close.
    pub close_candidates: Vec<String>,
    /// Which other pairings share a passage too, and that their passages are not reported
    /// (empty when none does).
    pub elsewhere: String,
    /// Candidate lines no pairing checked, per work (`A: …; B: …`; empty when none).
    pub unchecked: String,
}

/// Builds the templates' context.
pub fn context(ex: &Exhibit<'_>) -> ExhibitContext {
    let r = ex.findings;
    let ranges_a: Vec<[usize; 2]> = r.passages.iter().map(|f| f.passage.a.note_range).collect();
    let ranges_b: Vec<[usize; 2]> = r.passages.iter().map(|f| f.passage.b.note_range).collect();
    ExhibitContext {
        tool: "collatio".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        case_label: ex.options.case_label.clone().unwrap_or_default(),
        date: ex.options.date.clone().unwrap_or_default(),
        paper: ex.options.paper.name().into(),
        common_key: ex.options.common_key.clone(),
        a: work_context("A", &ex.label_a, ex.a, r.notes_a, r.unmatched_a, &ranges_a),
        b: work_context("B", &ex.label_b, ex.b, r.notes_b, r.unmatched_b, &ranges_b),
        relatedness: trim_number(r.relatedness.value, 2),
        coverage: trim_number(r.coverage, 2),
        seeded_search: match r.search {
            crate::align::SearchMethod::Full => String::new(),
            seeded => seeded.describe(),
        },
        passages: r
            .passages
            .iter()
            .zip(&ex.views)
            .map(|(p, v)| passage_context(ex, p, v))
            .collect(),
        parameters: param_rows(&r.settings.align),
        parameter_pairs: param_rows(&r.settings.align)
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
        tempo_written: ex.a.transcription.is_none() && ex.b.transcription.is_none(),
        corpus: r.corpus.as_ref().map(corpus_sentence).unwrap_or_default(),
        digest: ex.digest().to_string(),
        chance: r.chance.as_ref().map(chance_words).unwrap_or_default(),
        chance_caution: r.chance.as_ref().map(chance_caution).unwrap_or_default(),
        harmony: harmony_context(r.harmony.as_ref()),
        pairings: crate::report::pairings::sentences(&r.pairings),
        close_candidates: [("A", ex.a), ("B", ex.b)]
            .iter()
            .filter_map(|(tag, piece)| crate::report::pairings::close_note(tag, piece))
            .collect(),
        sync: sync_context(r.synchronisation.as_ref()),
        elsewhere: crate::report::pairings::elsewhere_note(&r.pairings).unwrap_or_default(),
        unchecked: [("A", ex.a), ("B", ex.b)]
            .iter()
            .map(|(tag, piece)| {
                (
                    tag,
                    crate::report::pairings::lines_not_checked(piece, &r.pairings, tag),
                )
            })
            .filter(|(_, lines)| !lines.is_empty())
            .map(|(tag, lines)| format!("{tag}: {}", lines.join(", ")))
            .collect::<Vec<_>>()
            .join("; "),
    }
}

/// The reference corpus as a sentence: the index file, its hash and how it was built, and the
/// corpus-weighted similarity of the two melodies.
fn corpus_sentence(c: &crate::corpus::CorpusSummary) -> String {
    let src = &c.source;
    format!(
        "The reference corpus was the index `{}` ({} melodies; figures of {} intervals; index \
         format {}; {}; SHA-256 of its {} `{}`). Weighting the figures the two melodies share by their \
         rarity in that corpus (after Müllensiefen & Pendzich 2009) gives a corpus-weighted \
         similarity of {} (0 = nothing shared, 1 = the same figures throughout).",
        src.path,
        src.melodies,
        src.figure_length,
        src.format_version,
        crate::report::format::size_text(src.bytes),
        src.sha256_covers,
        src.sha256,
        trim_number(c.weighted_similarity, 2)
    )
}

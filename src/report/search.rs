//! The `search` report: the best matches of a query in a corpus, as a table for people or as
//! the JSON record (schema in `docs/compare-json.md`, section "search").

use super::cautions::{absence_caution, chance_words, short_text};
use super::format::format_e_value;
use crate::findings::{Hit, SearchFindings};
use serde::Serialize;

/// Version of the search JSON layout.
pub const SEARCH_SCHEMA_VERSION: u32 = 2;

/// The JSON record of `search`.
#[derive(Debug, Serialize)]
pub struct SearchRecord<'a> {
    /// Layout version.
    pub schema_version: u32,
    /// The query file.
    pub query: &'a crate::timeline::Provenance,
    /// The corpus index used: path, SHA-256, size, format, figure length and melodies.
    pub corpus: &'a crate::corpus::IndexSource,
    /// What the hits' chance figures rest on.
    pub chance: Option<&'a crate::stats::chance::ChanceSummary>,
    /// The query's candidate melody lines searched for, most melody-like first (with more
    /// than one, each hit's E-value and empirical p are multiplied by their number).
    pub query_lines: &'a [String],
    /// Best first.
    pub hits: &'a [Hit],
    /// The usual cautions, in short.
    pub cautions: Vec<&'static str>,
}

/// Builds the record.
pub fn record(found: &SearchFindings) -> SearchRecord<'_> {
    SearchRecord {
        schema_version: SEARCH_SCHEMA_VERSION,
        query: &found.query.provenance,
        corpus: &found.corpus,
        chance: found.chance.as_ref(),
        query_lines: &found.query_lines,
        hits: &found.hits,
        cautions: super::cautions::SHORT.to_vec(),
    }
}

/// The human table.
pub fn render_text(found: &SearchFindings) -> String {
    let mut out = format!(
        "query   {}\ncorpus  {}\n",
        found.query.provenance.path,
        found.corpus.line()
    );
    out.push_str(&format!(
        "lines   {}{}\n\n",
        found.query_lines.join("; "),
        if found.query_lines.len() > 1 {
            format!(
                " (the query's {} most melody-like lines, each searched for; E-values \
                 multiplied by {})",
                found.query_lines.len(),
                found.query_lines.len()
            )
        } else {
            String::new()
        }
    ));
    if found.hits.is_empty() {
        out.push_str(
            "No melody of the corpus shares a passage with the query lines searched for.\n",
        );
        out.push_str(&format!("{}\n", absence_caution(found.corpus.melodies)));
        out.push_str(&short_text());
        return out;
    }
    out.push_str(&format!(
        " {:>2}  {:>11}  {:>8}  {:<40} {}\n",
        "#", "relatedness", "E-value", "melody", "best passage (query bars / corpus bars)"
    ));
    for (i, h) in found.hits.iter().enumerate() {
        let best = h.passages.first().map_or_else(String::new, |f| {
            let p = &f.passage;
            format!(
                "{}-{} / {}-{}, {} notes, PMI {:.0}",
                p.a.bars[0], p.a.bars[1], p.b.bars[0], p.b.bars[1], p.a.notes, p.pmi
            )
        });
        let name: String = h.path.chars().take(40).collect();
        // The lines matched, on a line of their own: the corpus line (an index holds up to
        // `--melody-candidates` lines of each file) and, with several, the query line.
        let mut lines = format!("corpus line {}", h.corpus_line);
        if found.query_lines.len() > 1 {
            lines.push_str(&format!("; query line {}", h.query_line));
        }
        let e = h
            .passages
            .first()
            .and_then(|f| f.significance.as_ref())
            .map_or_else(|| "-".to_string(), |s| format_e_value(s.e_value));
        out.push_str(&format!(
            " {:>2}  {:>11.2}  {:>8}  {:<40} {}\n",
            i + 1,
            h.relatedness.value,
            e,
            name,
            best
        ));
        out.push_str(&format!("     {:>11}  {:>8}  {lines}\n", "", ""));
    }
    out.push_str(
        "\n relatedness: the best shared passage's score over the geometric mean of each \
         melody's score against itself (1 = the same melody, 0 = nothing shared)\n",
    );
    if let Some(chance) = &found.chance {
        out.push_str(&format!(
            " E-value: how many passages this strong to expect by chance. {}\n",
            chance_words(chance)
        ));
    }
    out.push_str(&format!(" {}\n", absence_caution(found.corpus.melodies)));
    out.push_str(&short_text());
    out
}

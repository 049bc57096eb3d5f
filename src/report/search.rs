//! The `search` report: the best matches of a query in a corpus, as a table for people or as
//! the JSON record (schema in `docs/compare-json.md`, section "search").

use crate::findings::{Hit, SearchFindings};
use serde::Serialize;

/// Version of the search JSON layout.
pub const SEARCH_SCHEMA_VERSION: u32 = 1;

/// The JSON record of `search`.
#[derive(Debug, Serialize)]
pub struct SearchRecord<'a> {
    /// Layout version.
    pub schema_version: u32,
    /// The query file.
    pub query: &'a crate::timeline::Provenance,
    /// The corpus index used.
    pub corpus: &'a str,
    /// Melodies in the corpus.
    pub corpus_melodies: usize,
    /// Best first.
    pub hits: &'a [Hit],
}

/// Builds the record.
pub fn record(found: &SearchFindings) -> SearchRecord<'_> {
    SearchRecord {
        schema_version: SEARCH_SCHEMA_VERSION,
        query: &found.query.provenance,
        corpus: &found.corpus,
        corpus_melodies: found.corpus_melodies,
        hits: &found.hits,
    }
}

/// The human table.
pub fn render_text(found: &SearchFindings) -> String {
    let mut out = format!(
        "query   {}\ncorpus  {} ({} melodies)\n\n",
        found.query.provenance.path, found.corpus, found.corpus_melodies
    );
    if found.hits.is_empty() {
        out.push_str("No melody of the corpus shares a passage with the query.\n");
        return out;
    }
    out.push_str(&format!(
        " {:>2}  {:>10}  {:<40} {}\n",
        "#", "similarity", "melody", "best passage (query bars / corpus bars)"
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
        out.push_str(&format!(
            " {:>2}  {:>10.2}  {:<40} {}\n",
            i + 1,
            h.similarity,
            name,
            best
        ));
    }
    out
}

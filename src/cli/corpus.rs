//! `collatio corpus build` and `collatio search`: a reference corpus of prior art.

use super::args::{LimitArgs, OutputFormat, SelectionSpec};
use anyhow::{Context, Result};
use clap::{Args, Subcommand};
use collatio::align::AlignParams;
use collatio::compare::compare;
use collatio::features::Sequence;
use collatio::ingest::{read_file, ReadOptions};
use collatio::stats::corpus::{build_from_dir, CorpusIndex};
use serde::Serialize;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// Working with a corpus index.
#[derive(Debug, Subcommand)]
pub enum CorpusCommand {
    /// Read every MIDI, MusicXML and audio file under a folder and write an index.
    #[command(after_long_help = "Examples:
  collatio corpus build demo/corpus -o target/demo/corpus.idx
  collatio search new-song.musicxml --corpus target/demo/corpus.idx")]
    Build(BuildArgs),
}

/// `corpus build`.
#[derive(Debug, Args)]
pub struct BuildArgs {
    /// Folder to read (recursively; hidden files and folders are skipped).
    pub dir: PathBuf,
    /// Index file to write (atomically; never over an input).
    #[arg(short, long, value_name = "FILE")]
    pub output: PathBuf,
    #[command(flatten)]
    pub limits: LimitArgs,
}

/// `search`.
#[derive(Debug, Args)]
pub struct SearchArgs {
    /// The melody to look for: MusicXML, .mxl, MIDI or audio.
    pub query: PathBuf,
    /// Corpus index written by `collatio corpus build`.
    #[arg(long, value_name = "FILE")]
    pub corpus: PathBuf,
    /// Melody of the query, e.g. part=P1,bars=9-16.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select: Option<SelectionSpec>,
    /// Best matches listed.
    #[arg(long, default_value_t = 10, help_heading = "SEARCH")]
    pub top: usize,
    /// Candidates retrieved by shared figures and then aligned in full (raise it to look
    /// deeper in corpora full of near-duplicates; each costs one full alignment).
    #[arg(long, default_value_t = 20, help_heading = "SEARCH")]
    pub candidates: usize,
    #[command(flatten)]
    pub limits: LimitArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,
}

/// Reads an index file with the file named in errors.
pub fn load_index(path: &Path) -> Result<CorpusIndex> {
    let bytes = std::fs::read(path).with_context(|| format!("{}: cannot read", path.display()))?;
    CorpusIndex::from_bytes(&bytes).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))
}

/// Runs `corpus build`.
pub fn build(args: &BuildArgs) -> Result<i32> {
    let options = ReadOptions {
        limits: args.limits.limits(),
        ..ReadOptions::default()
    };
    let files = collatio::stats::corpus::corpus_files(&args.dir)
        .with_context(|| format!("{}: cannot list the folder", args.dir.display()))?;
    if files.iter().any(|f| same_file(f, &args.output)) {
        anyhow::bail!(
            "{}: the index would overwrite a file of the corpus; write it elsewhere",
            args.output.display()
        );
    }
    let bar = if std::io::stderr().is_terminal() {
        let bar = indicatif::ProgressBar::new(files.len() as u64);
        bar.set_style(
            indicatif::ProgressStyle::with_template("reading {pos}/{len} files {wide_bar} {eta}")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        Some(bar)
    } else {
        None
    };
    let tick = || {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let built = build_from_dir(&args.dir, &options, &tick)
        .with_context(|| format!("{}: cannot read the folder", args.dir.display()))?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let bytes = built.index.to_bytes()?;
    collatio::report::exhibit::write_atomic(&args.output, &bytes)?;
    eprintln!(
        "collatio: indexed {} melodies from {} files into {} ({} bytes, {} figures)",
        built.index.melodies.len(),
        built.files,
        args.output.display(),
        bytes.len(),
        built.index.postings.len()
    );
    if !built.skipped.is_empty() {
        eprintln!("collatio: {} files skipped:", built.skipped.len());
        for s in &built.skipped {
            eprintln!("  {s}");
        }
        return Ok(super::EXIT_PARTIAL);
    }
    Ok(super::EXIT_OK)
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// One search result.
#[derive(Debug, Serialize)]
pub struct Hit {
    /// Path of the melody inside the corpus.
    pub path: String,
    /// Title, when the file had one.
    pub title: Option<String>,
    /// Similarity to the query in [0, 1] (as `compare` defines it).
    pub similarity: f64,
    /// Shared passages in `compare`'s form.
    pub passages: Vec<collatio::compare::Passage>,
}

/// The JSON record of `search`.
#[derive(Debug, Serialize)]
pub struct SearchRecord {
    /// Layout version.
    pub schema_version: u32,
    /// The query file.
    pub query: collatio::timeline::Provenance,
    /// The corpus index used and its size.
    pub corpus: String,
    /// Melodies in the corpus.
    pub corpus_melodies: usize,
    /// Best first.
    pub hits: Vec<Hit>,
}

/// Runs `search`.
pub fn search(args: &SearchArgs) -> Result<i32> {
    let index = load_index(&args.corpus)?;
    let options = ReadOptions {
        limits: args.limits.limits(),
        choice: args.select.clone().unwrap_or_default().0,
        ..ReadOptions::default()
    };
    let query = read_file(&args.query, &options)?;
    let params = AlignParams::default();
    let hits = run_search(&query, &index, &params, args.candidates, args.top);
    let record = SearchRecord {
        schema_version: 1,
        query: query.provenance.clone(),
        corpus: args.corpus.display().to_string(),
        corpus_melodies: index.melodies.len(),
        hits,
    };
    let text = match args.format {
        OutputFormat::Json => {
            let mut s = serde_json::to_string_pretty(&record)?;
            s.push('\n');
            s
        }
        OutputFormat::Text => render(&record),
    };
    super::write_stdout(&text)?;
    Ok(super::EXIT_OK)
}

/// Retrieves candidates by shared figures, aligns each in full, and ranks by similarity
/// (ties: stronger top passage, then path).
pub fn run_search(
    query: &collatio::timeline::Piece,
    index: &CorpusIndex,
    params: &AlignParams,
    candidates: usize,
    top: usize,
) -> Vec<Hit> {
    use rayon::prelude::*;
    let seq = Sequence::from_piece(query);
    let pool = index.candidates(&seq, candidates);
    let mut hits: Vec<Hit> = pool
        .par_iter()
        .map(|&(m, _)| {
            let entry = &index.melodies[m as usize];
            let piece = entry.to_piece();
            let result = compare(query, &piece, params);
            Hit {
                path: entry.path.clone(),
                title: entry.title.clone(),
                similarity: result.similarity,
                passages: result.passages,
            }
        })
        .filter(|h| !h.passages.is_empty())
        .collect();
    hits.sort_by(|a, b| {
        b.similarity
            .total_cmp(&a.similarity)
            .then_with(|| {
                let top = |h: &Hit| h.passages.first().map_or(0, |p| p.score);
                top(b).cmp(&top(a))
            })
            .then_with(|| a.path.cmp(&b.path))
    });
    hits.truncate(top);
    hits
}

fn render(record: &SearchRecord) -> String {
    let mut out = format!(
        "query   {}\ncorpus  {} ({} melodies)\n\n",
        record.query.path, record.corpus, record.corpus_melodies
    );
    if record.hits.is_empty() {
        out.push_str("No melody of the corpus shares a passage with the query.\n");
        return out;
    }
    out.push_str(&format!(
        " {:>2}  {:>10}  {:<40} {}\n",
        "#", "similarity", "melody", "best passage (query bars / corpus bars)"
    ));
    for (i, h) in record.hits.iter().enumerate() {
        let best = h.passages.first().map_or_else(String::new, |p| {
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

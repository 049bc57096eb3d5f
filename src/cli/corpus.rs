//! `collatio corpus build` and `collatio search`: a reference corpus of prior art.

use super::args::{BuildArgs, OutputFormat, SearchArgs};
use anyhow::{Context, Result};
use collatio::corpus::{build_from_dir, corpus_files, CorpusIndex, IndexSource};
use collatio::ingest::{read_file, ReadOptions};
use collatio::pipeline::{search as search_corpus, CorpusRef, SearchSettings};
use collatio::report::output::{same_file, write_atomic};
use std::io::IsTerminal;
use std::path::Path;

/// Reads an index file with the file named in errors, and the identity of the file as read.
pub fn load_index(path: &Path) -> Result<(CorpusIndex, IndexSource)> {
    let bytes = std::fs::read(path).with_context(|| format!("{}: cannot read", path.display()))?;
    let index =
        CorpusIndex::from_bytes(&bytes).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))?;
    let source = IndexSource::new(&path.display().to_string(), &bytes, &index);
    Ok((index, source))
}

/// Runs `corpus build`.
pub fn build(args: &BuildArgs) -> Result<i32> {
    let options = ReadOptions {
        limits: args.limits.limits(),
        ..ReadOptions::default()
    };
    let files = corpus_files(&args.dir)
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
    write_atomic(&args.output, &bytes)?;
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

/// Runs `search`.
pub fn search(args: &SearchArgs) -> Result<i32> {
    let (index, source) = load_index(&args.corpus)?;
    let options = ReadOptions {
        limits: args.limits.limits(),
        choice: args.select.clone().unwrap_or_default().0,
        ..ReadOptions::default()
    };
    let query = read_file(&args.query, &options)?;
    let settings = SearchSettings {
        melody_candidates: usize::from(args.melody_candidates),
        align: args.alignment.params(),
        candidates: args.candidates,
        top: args.top,
        chance: collatio::stats::chance::ChanceParams {
            null: if args.no_chance {
                collatio::stats::chance::NullChoice::Off
            } else {
                collatio::stats::chance::NullChoice::Auto
            },
            references: args.references as usize,
            ..Default::default()
        },
    };
    let corpus = CorpusRef {
        index: &index,
        source: &source,
    };
    let found = search_corpus(query, corpus, &settings);
    let text = match args.format {
        OutputFormat::Json => {
            let mut s = serde_json::to_string_pretty(&collatio::report::search::record(&found))?;
            s.push('\n');
            s
        }
        OutputFormat::Text => collatio::report::search::render_text(&found),
    };
    super::write_stdout(&text)?;
    Ok(super::EXIT_OK)
}

//! `collatio corpus build` and `collatio search`: a reference corpus of prior art.

use super::args::{BuildArgs, OutputFormat, SearchArgs, VerifyArgs};
use super::progress::Reporter;
use anyhow::{Context, Result};
use collatio::corpus::index::MAX_INDEX_BYTES;
use collatio::corpus::mapped::version_of;
use collatio::corpus::{
    build_from_dir, corpus_files, Corpus, CorpusIndex, IndexBytes, IndexError, IndexSource,
    MappedIndex, VERSION,
};
use collatio::ingest::ReadOptions;
use collatio::pipeline::{search_with, CorpusRef, SearchSettings};
use collatio::progress::Progress;
use collatio::report::output::{check_outputs, write_all_with};
use collatio::timeline::RecordPaths;
use std::io::Write;
use std::path::Path;

/// An index as opened: read in place (format 3) or whole (the previous format).
#[derive(Debug)]
pub enum LoadedIndex {
    /// Read in place; sections checked as they are touched.
    Mapped(MappedIndex),
    /// Read whole and checked on load.
    Whole(CorpusIndex),
}

impl LoadedIndex {
    /// The index for a search or a comparison.
    pub fn corpus(&self) -> &dyn Corpus {
        match self {
            LoadedIndex::Mapped(m) => m,
            LoadedIndex::Whole(w) => w,
        }
    }

    /// Refuses findings computed from an index found corrupt while reading it.
    pub fn check(&self, path: &Path) -> Result<()> {
        match self {
            LoadedIndex::Mapped(m) => match m.failure() {
                Some(e) => Err(anyhow::anyhow!("{}: {e}", path.display())),
                None => Ok(()),
            },
            LoadedIndex::Whole(_) => Ok(()),
        }
    }
}

/// Opens an index file with the file named in errors, and the identity of the file as read.
/// A format-3 index is mapped and only its header and section table are checked here; the
/// previous format is read whole and checked in full. `record` says how its path is recorded.
pub fn load_index(path: &Path, record: RecordPaths) -> Result<(LoadedIndex, IndexSource)> {
    use std::io::Read;
    let named = |e: String| anyhow::anyhow!("{}: {e}", path.display());
    collatio::ingest::regular_file(path).map_err(|e| named(e.to_string()))?;
    let file =
        std::fs::File::open(path).with_context(|| format!("{}: cannot read", path.display()))?;
    let too_big = |size: u64| {
        named(format!(
            "the index file is {size} bytes, above the limit of {MAX_INDEX_BYTES} bytes"
        ))
    };
    let size = file.metadata()?.len();
    if size > MAX_INDEX_BYTES {
        return Err(too_big(size));
    }
    let mut head = Vec::new();
    (&file)
        .take(64)
        .read_to_end(&mut head)
        .with_context(|| format!("{}: cannot read", path.display()))?;
    let version = version_of(&head).or_else(|e| match e {
        // Too short to hold a version: read whole below, which names the problem.
        IndexError::Corrupt(_) => Ok(0),
        e => Err(named(e.to_string())),
    })?;
    if version == VERSION {
        let bytes =
            IndexBytes::map(&file).with_context(|| format!("{}: cannot read", path.display()))?;
        let index = MappedIndex::open(bytes).map_err(|e| named(e.to_string()))?;
        let source = IndexSource::of_mapped(&record.apply(path), &index);
        return Ok((LoadedIndex::Mapped(index), source));
    }
    let mut bytes = head;
    file.take(MAX_INDEX_BYTES + 1)
        .read_to_end(&mut bytes)
        .with_context(|| format!("{}: cannot read", path.display()))?;
    if bytes.len() as u64 > MAX_INDEX_BYTES {
        return Err(too_big(bytes.len() as u64));
    }
    let index = CorpusIndex::from_bytes(&bytes).map_err(|e| named(e.to_string()))?;
    let mut source = IndexSource::new(&record.apply(path), &bytes, &index);
    source.format_version = version;
    Ok((LoadedIndex::Whole(index), source))
}

/// Runs `corpus verify`: every section's checksum and every field of an index.
pub fn verify(args: &VerifyArgs) -> Result<i32> {
    let (index, source) = load_index(&args.index, RecordPaths::AsGiven)?;
    if let LoadedIndex::Mapped(m) = &index {
        m.verify()
            .map_err(|e| anyhow::anyhow!("{}: {e}", args.index.display()))?;
    }
    say!(
        "collatio: {}: a sound index of {} melodies (format {}, {} bytes): every section and field checked",
        args.index.display(),
        source.melodies,
        source.format_version,
        source.bytes
    );
    Ok(super::EXIT_OK)
}

/// Runs `corpus build`.
pub fn build(args: &BuildArgs) -> Result<i32> {
    let options = ReadOptions {
        limits: args.limits.limits(),
        ..ReadOptions::default()
    };
    let files = corpus_files(&args.dir)
        .with_context(|| format!("{}: cannot list the folder", args.dir.display()))?;
    let to_stdout = args.output.as_os_str() == "-";
    if !to_stdout {
        // The same refusal as compare's outputs, and before any file is read.
        let inputs: Vec<&Path> = files.iter().map(|f| f.as_path()).collect();
        check_outputs(&inputs, std::slice::from_ref(&args.output))?;
    }
    if files.is_empty() {
        say!(
            "collatio: warning: {}: no MIDI, MusicXML or audio files found; the index will be empty",
            args.dir.display()
        );
    }
    let reporter = Reporter::new(args.progress.no_progress);
    let lines = usize::from(args.melody_candidates);
    let built = build_from_dir(&args.dir, &options, lines, &reporter)
        .with_context(|| format!("{}: cannot read the folder", args.dir.display()))?;
    reporter.step("writing the index", None);
    let bytes = built.index.to_bytes()?;
    let size = bytes.len();
    if to_stdout {
        let mut stdout = std::io::stdout().lock();
        stdout.write_all(&bytes)?;
        stdout.flush()?;
    } else {
        let files = [(args.output.clone(), bytes)];
        let cleaned = write_all_with(&files, &super::lock_wait(&reporter))?;
        reporter.clear();
        super::say_cleaned(&cleaned, &[]);
    }
    drop(reporter);
    say!(
        "collatio: indexed {} melodies from {} files into {} ({} bytes, {} figures; {})",
        built.index.melodies.len(),
        built.files,
        if to_stdout {
            "standard output".to_string()
        } else {
            args.output.display().to_string()
        },
        size,
        built.index.postings.len(),
        if lines > 1 {
            format!(
                "the {lines} most melody-like lines of each file, where it has that many \
                 (--melody-candidates)"
            )
        } else {
            "the most melody-like line of each file".to_string()
        }
    );
    if built.index.melodies.is_empty() {
        say!("collatio: warning: the index holds no melodies; searches in it will find nothing");
    }
    if !built.skipped.is_empty() {
        say!("collatio: {} files skipped:", built.skipped.len());
        for s in &built.skipped {
            say!("  {s}");
        }
        return Ok(super::EXIT_PARTIAL);
    }
    Ok(if built.index.melodies.is_empty() {
        super::EXIT_PARTIAL
    } else {
        super::EXIT_OK
    })
}

/// Runs `search`.
pub fn search(args: &SearchArgs) -> Result<i32> {
    let reporter = Reporter::new(args.progress.no_progress);
    let record = args.paths.record();
    reporter.step("reading the corpus index", None);
    let (index, source) = load_index(&args.corpus, record)?;
    let options = ReadOptions {
        limits: args.limits.limits(),
        choice: args.select.clone().unwrap_or_default().0,
        ..ReadOptions::default()
    };
    let query = super::read_recorded(&args.query, &options, record, &reporter)?;
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
        index: index.corpus(),
        source: &source,
    };
    let empty = source.melodies == 0;
    if empty {
        reporter.clear();
        say!(
            "collatio: warning: {}: the corpus index holds no melodies; nothing can match",
            args.corpus.display()
        );
    }
    let found = search_with(query, corpus, &settings, &reporter);
    drop(reporter);
    index.check(&args.corpus)?;
    let text = match args.format {
        OutputFormat::Json => {
            let mut s = serde_json::to_string_pretty(&collatio::report::search::record(&found))?;
            s.push('\n');
            s
        }
        OutputFormat::Text => collatio::report::search::render_text(&found),
    };
    super::write_stdout(&text)?;
    Ok(if empty {
        super::EXIT_PARTIAL
    } else {
        super::EXIT_OK
    })
}

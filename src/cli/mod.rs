//! The command line: raw arguments (clap) are validated once into library options, the
//! library does the work, and errors map to documented exit codes.
//!
//! Exit codes: 0 success; 1 the command ran but some input was unreadable or partly skipped;
//! 2 usage error; 3 input error (nothing could be read).

/// Prints one line to standard error with control characters escaped: file names, titles,
/// track names and index paths come from outside and may hold terminal escape sequences.
macro_rules! say {
    ($($arg:tt)*) => {
        eprintln!("{}", collatio::report::format::printable(&format!($($arg)*)))
    };
}

mod args;
mod corpus;
mod progress;

use anyhow::Result;
use args::{Cli, Command, CompareArgs, InspectArgs, OutputFormat};
use clap::Parser;
use collatio::ingest::{read_file, IngestError, Problem, ReadOptions};
use collatio::pipeline::{compare_works_with, CorpusRef};
use collatio::progress::Progress;
use collatio::report::output::{
    check_outputs, check_replaceable, same_file, write_all_with, LockWait,
};
use progress::Reporter;
use std::io::Write;
use std::time::Duration;

/// Success.
pub const EXIT_OK: i32 = 0;
/// Ran, but some input was partly skipped.
pub const EXIT_PARTIAL: i32 = 1;
/// Usage error.
pub const EXIT_USAGE: i32 = 2;
/// Input error: nothing could be read.
pub const EXIT_INPUT: i32 = 3;

/// Parses the command line, runs it and returns the process exit code.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { EXIT_USAGE } else { EXIT_OK };
            let _ = e.print();
            return code;
        }
    };
    match run(cli) {
        Ok(code) => code,
        Err(error) => {
            let code = exit_code_of(&error);
            say!("collatio: error: {error}");
            for cause in error.chain().skip(1) {
                say!("  caused by: {cause}");
            }
            code
        }
    }
}

fn exit_code_of(error: &anyhow::Error) -> i32 {
    match error.downcast_ref::<IngestError>() {
        Some(IngestError {
            problem: Problem::Selection(_),
            ..
        }) => EXIT_USAGE,
        Some(_) => EXIT_INPUT,
        None if error.downcast_ref::<args::UsageError>().is_some() => EXIT_USAGE,
        None => match (
            error.downcast_ref::<collatio::report::exhibit::ExhibitError>(),
            error.downcast_ref::<collatio::report::output::OutputError>(),
        ) {
            (Some(e), _) if e.is_usage() => EXIT_USAGE,
            (_, Some(e)) if e.is_usage() => EXIT_USAGE,
            _ => EXIT_INPUT,
        },
    }
}

fn run(cli: Cli) -> Result<i32> {
    match cli.command {
        Command::Inspect(args) => inspect(*args),
        Command::Compare(args) => compare(*args),
        Command::Corpus(args::CorpusCommand::Build(args)) => corpus::build(&args),
        Command::Corpus(args::CorpusCommand::Verify(args)) => corpus::verify(&args),
        Command::Search(args) => corpus::search(&args),
    }
}

fn compare(args: CompareArgs) -> Result<i32> {
    let (options_a, options_b) = args.read_options()?;
    let settings = args.settings()?;
    // Output options are checked before any file is read.
    let exhibit = if args.exhibit.any() {
        let epoch = std::env::var("SOURCE_DATE_EPOCH").ok();
        Some(args.exhibit.options(epoch.as_deref())?)
    } else {
        None
    };
    check_compare_outputs(&args)?;
    let reporter = Reporter::new(args.progress.no_progress);
    let record = args.paths.record();
    // The two works are read at once (a recording's analysis runs mostly on one core); A's
    // error is reported first when both fail, as when they were read in turn.
    let (a, b) = rayon::join(
        || read_recorded(&args.a, &options_a, record, &reporter),
        || read_recorded(&args.b, &options_b, record, &reporter),
    );
    let (a, b) = (a?, b?);
    let index = match &args.statistics.corpus {
        Some(path) => {
            reporter.step("reading the corpus index", None);
            Some(corpus::load_index(path, record)?)
        }
        None => None,
    };
    let corpus = index.as_ref().map(|(index, source)| CorpusRef {
        index: index.corpus(),
        source,
    });
    let findings = compare_works_with(a, b, &settings, corpus, &reporter);
    if let (Some((index, _)), Some(path)) = (&index, &args.statistics.corpus) {
        index.check(path)?;
    }
    let json_to_stdout = args.exhibit.json_to_stdout();
    // Prepared once for the files, the PDF on standard output and the digest of the record.
    let prepared = match &exhibit {
        Some((options, _)) => Some(collatio::report::exhibit::Exhibit::new(&findings, options)?),
        None => None,
    };
    // Files to write; the listing and the record printed then carry their digest.
    let files = exhibit.as_ref().map(|(_, o)| o).filter(|o| o.any());
    let marked = prepared.as_ref().filter(|_| files.is_some());
    if let (Some(ex), Some(outputs)) = (marked, files) {
        reporter.step("writing the exhibit", None);
        let wait = lock_wait(&reporter);
        let written = collatio::report::exhibit::write_prepared(ex, outputs, &wait)?;
        reporter.clear();
        for path in &written.files {
            say!("collatio: wrote {}", path.display());
        }
        for path in &written.removed {
            say!(
                "collatio: removed {} (a passage of an earlier run)",
                path.display()
            );
        }
        say_cleaned(&written.leftovers, &written.unlocked);
    }
    if let Some(ex) = prepared.as_ref().filter(|_| args.exhibit.pdf_to_stdout()) {
        // The PDF in place of the listing.
        reporter.step("rendering the exhibit", None);
        let (bytes, _) = collatio::report::pdf::render(ex)?;
        reporter.clear();
        let warned = warn_pieces(&args, &findings);
        write_stdout_bytes(&bytes)?;
        return Ok(if warned { EXIT_PARTIAL } else { EXIT_OK });
    }
    let text = match (args.format, marked) {
        (OutputFormat::Text, Some(ex)) if !json_to_stdout => {
            collatio::report::compare::render_text_marked(&findings, ex.digest())
        }
        (OutputFormat::Text, None) if !json_to_stdout => {
            collatio::report::compare::render_text(&findings)
        }
        (_, marked) => {
            let record = match marked {
                Some(ex) => ex.record(),
                None => collatio::report::compare::record(&findings),
            };
            let mut json = serde_json::to_string_pretty(&record)?;
            json.push('\n');
            json
        }
    };
    reporter.clear();
    let warned = warn_pieces(&args, &findings);
    write_stdout(&text)?;
    Ok(if warned { EXIT_PARTIAL } else { EXIT_OK })
}

/// How long to wait for another run writing into the same output folders, shown as a step of
/// `progress`: `COLLATIO_LOCK_WAIT` seconds (0 to 86,400; 0 gives up at once), else
/// [`collatio::report::output::DEFAULT_WAIT`].
fn lock_wait(progress: &dyn Progress) -> LockWait<'_> {
    let limit = std::env::var("COLLATIO_LOCK_WAIT")
        .ok()
        .and_then(|s| s.trim().parse::<f64>().ok())
        .filter(|s| s.is_finite() && (0.0..=86_400.0).contains(s))
        .map_or(
            collatio::report::output::DEFAULT_WAIT,
            Duration::from_secs_f64,
        );
    LockWait { limit, progress }
}

/// Names the temporary files of killed runs that a write removed, and the folders written
/// without a lock.
fn say_cleaned(leftovers: &[std::path::PathBuf], unlocked: &[std::path::PathBuf]) {
    for path in leftovers {
        say!(
            "collatio: removed {} (a temporary file of an interrupted run)",
            path.display()
        );
    }
    for dir in unlocked {
        say!(
            "collatio: note: {} has no file locks; written without the lock that keeps other \
             collatio runs out",
            dir.display()
        );
    }
}

/// Reads a file, shown as a step of `progress`, with its path recorded as `record` asks.
fn read_recorded(
    path: &std::path::Path,
    options: &ReadOptions,
    record: collatio::timeline::RecordPaths,
    progress: &dyn Progress,
) -> Result<collatio::timeline::Piece> {
    let name = collatio::timeline::RecordPaths::Names.apply(path);
    progress.step(&format!("reading {name}"), None);
    let mut piece = read_file(path, options)?;
    piece.provenance.record_paths(record);
    Ok(piece)
}

/// Prints the warnings of both works (summarised); whether there were any.
fn warn_pieces(args: &CompareArgs, findings: &collatio::findings::Findings) -> bool {
    let mut warned = false;
    for (path, piece) in [(&args.a, &findings.a), (&args.b, &findings.b)] {
        warned |= !piece.warnings.is_empty();
        for warning in collatio::report::warnings::summarise(&piece.warnings) {
            say!("collatio: warning: {}: {warning}", path.display());
        }
    }
    warned
}

/// Refuses, before any file is read, output paths that name an input or each other or that are
/// not regular files (an export folder must be a folder).
fn check_compare_outputs(args: &CompareArgs) -> Result<()> {
    let mut inputs = vec![args.a.as_path(), args.b.as_path()];
    if let Some(corpus) = &args.statistics.corpus {
        inputs.push(corpus.as_path());
    }
    let files: Vec<std::path::PathBuf> = [
        (&args.exhibit.pdf, args.exhibit.pdf_to_stdout()),
        (&args.exhibit.json, args.exhibit.json_to_stdout()),
    ]
    .into_iter()
    .filter(|(_, to_stdout)| !to_stdout)
    .filter_map(|(path, _)| path.clone())
    .collect();
    check_outputs(&inputs, &files)?;
    if args.exhibit.pdf_to_stdout() && args.exhibit.json_to_stdout() {
        return Err(args::UsageError(
            "--pdf - and --json - both ask for standard output; write one of them to a file".into(),
        )
        .into());
    }
    if let Some(dir) = &args.exhibit.export {
        if dir.as_os_str() == "-" {
            return Err(
                args::UsageError("--export needs a folder, not standard output".into()).into(),
            );
        }
        if dir.exists() && !dir.is_dir() {
            return Err(
                args::UsageError(format!("--export {} is not a folder", dir.display())).into(),
            );
        }
    }
    Ok(())
}

/// Writes the melody of `piece` as a Standard MIDI File at `target`, atomically and under the
/// lock of its folder (the target was checked before the input was read).
fn export_midi(piece: &collatio::timeline::Piece, target: &std::path::Path) -> Result<()> {
    let bytes = collatio::report::export::melody_to_smf(piece)?;
    let files = [(target.to_path_buf(), bytes)];
    let cleaned = write_all_with(&files, &lock_wait(&collatio::progress::NoProgress))
        .map_err(|e| anyhow::anyhow!("cannot write {}: {e}", target.display()))?;
    say_cleaned(&cleaned, &[]);
    Ok(())
}

/// Writes a report to standard output with control characters other than line breaks and tabs
/// escaped ([`collatio::report::format::printable_text`]); a closed pipe (`| head`) is not an
/// error.
fn write_stdout(text: &str) -> Result<()> {
    write_stdout_bytes(collatio::report::format::printable_text(text).as_bytes())
}

/// Writes bytes (a file asked for as `-`) to standard output; a closed pipe is not an error.
fn write_stdout_bytes(bytes: &[u8]) -> Result<()> {
    let mut stdout = std::io::stdout().lock();
    match stdout.write_all(bytes).and_then(|()| stdout.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

fn inspect(args: InspectArgs) -> Result<i32> {
    let options: ReadOptions = args.read_options()?;
    let midi_to_stdout = args.export_midi.as_deref() == Some(std::path::Path::new("-"));
    if let Some(target) = args.export_midi.as_ref().filter(|_| !midi_to_stdout) {
        if same_file(&args.file, target) {
            return Err(args::UsageError(format!(
                "--export-midi {} would overwrite the input",
                target.display()
            ))
            .into());
        }
        check_replaceable(target)?;
    }
    let reporter = Reporter::new(args.progress.no_progress);
    let piece = read_recorded(&args.file, &options, args.paths.record(), &reporter)?;
    drop(reporter);
    if midi_to_stdout {
        // The MIDI file in place of the listing.
        let bytes = collatio::report::export::melody_to_smf(&piece)?;
        for warning in collatio::report::warnings::summarise(&piece.warnings) {
            say!("collatio: warning: {}: {warning}", args.file.display());
        }
        write_stdout_bytes(&bytes)?;
        return Ok(if piece.warnings.is_empty() {
            EXIT_OK
        } else {
            EXIT_PARTIAL
        });
    }
    if let Some(target) = &args.export_midi {
        export_midi(&piece, target)?;
    }
    let text = match args.format {
        OutputFormat::Text => collatio::report::inspect::render_text(&piece),
        OutputFormat::Json => {
            let mut json =
                serde_json::to_string_pretty(&collatio::report::inspect::record(&piece))?;
            json.push('\n');
            json
        }
    };
    for warning in collatio::report::warnings::summarise(&piece.warnings) {
        say!("collatio: warning: {}: {warning}", args.file.display());
    }
    write_stdout(&text)?;
    Ok(if piece.warnings.is_empty() {
        EXIT_OK
    } else {
        EXIT_PARTIAL
    })
}

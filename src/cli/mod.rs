//! The command line: raw arguments (clap) are validated once into library options, the
//! library does the work, and errors map to documented exit codes.
//!
//! Exit codes: 0 success; 1 the command ran but some input was unreadable or partly skipped;
//! 2 usage error; 3 input error (nothing could be read).

mod args;
mod corpus;

use anyhow::Result;
use args::{Cli, Command, CompareArgs, InspectArgs, OutputFormat};
use clap::Parser;
use collatio::ingest::{read_file, IngestError, Problem, ReadOptions};
use std::io::Write;

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
            eprintln!("collatio: error: {error}");
            for cause in error.chain().skip(1) {
                eprintln!("  caused by: {cause}");
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
        None => match error.downcast_ref::<collatio::report::exhibit::ExhibitError>() {
            Some(e) if e.is_usage() => EXIT_USAGE,
            _ => EXIT_INPUT,
        },
    }
}

fn run(cli: Cli) -> Result<i32> {
    match cli.command {
        Command::Inspect(args) => inspect(*args),
        Command::Compare(args) => compare(*args),
        Command::Corpus(corpus::CorpusCommand::Build(args)) => corpus::build(&args),
        Command::Search(args) => corpus::search(&args),
    }
}

fn compare(args: CompareArgs) -> Result<i32> {
    let (options_a, options_b) = args.read_options()?;
    let params = args.alignment.params();
    // Output options are checked before any file is read.
    let exhibit = if args.exhibit.any() {
        let epoch = std::env::var("SOURCE_DATE_EPOCH").ok();
        Some(args.exhibit.options(epoch.as_deref())?)
    } else {
        None
    };
    if !(0.0..=1.0).contains(&args.harmony.harmony_max_p) {
        return Err(args::UsageError("--harmony-max-p must lie between 0 and 1".into()).into());
    }
    let mut a = read_file(&args.a, &options_a)?;
    let mut b = read_file(&args.b, &options_b)?;
    let synchronisation = if args.harmony.keep_recording_bars {
        None
    } else {
        follow_score(&mut a, &mut b)
    };
    let index = match &args.statistics.corpus {
        Some(path) => Some(corpus::load_index(path)?),
        None => None,
    };
    let mut result = collatio::compare::compare(&a, &b, &params);
    result.synchronisation = synchronisation;
    let (seq_a, seq_b) = (
        collatio::features::Sequence::from_piece(&a),
        collatio::features::Sequence::from_piece(&b),
    );
    collatio::stats::null::assess(
        &mut result,
        &seq_a,
        &seq_b,
        &params,
        &args.statistics.null_params(),
    );
    if let (Some(index), Some(path)) = (&index, &args.statistics.corpus) {
        collatio::stats::corpus::annotate(
            &mut result,
            &seq_a,
            &seq_b,
            index,
            &path.display().to_string(),
            &params,
        );
    }
    if !args.harmony.no_harmony {
        collatio::compare::harmony::add_harmony(&mut result, &a, &b, &args.harmony.params());
    }
    if let Some((options, outputs)) = &exhibit {
        let written =
            collatio::report::exhibit::write_exhibit(&a, &b, &params, &result, options, outputs)?;
        for path in &written.files {
            eprintln!("collatio: wrote {}", path.display());
        }
    }
    let text = match args.format {
        OutputFormat::Text => collatio::report::compare::render_text(&a, &b, &result),
        OutputFormat::Json => {
            let record = collatio::report::compare::record(&a, &b, &params, &result);
            let mut json = serde_json::to_string_pretty(&record)?;
            json.push('\n');
            json
        }
    };
    let mut warned = false;
    for (path, piece) in [(&args.a, &a), (&args.b, &b)] {
        for warning in &piece.warnings {
            warned = true;
            eprintln!("collatio: warning: {}: {warning}", path.display());
        }
    }
    write_stdout(&text)?;
    Ok(if warned { EXIT_PARTIAL } else { EXIT_OK })
}

/// When one work is a recording and the other a score or MIDI file, aligns the recording to
/// the score and, if it performs it, gives it the score's bars.
fn follow_score(
    a: &mut collatio::timeline::Piece,
    b: &mut collatio::timeline::Piece,
) -> Option<collatio::compare::sync::SyncSummary> {
    let params = collatio::align::sync::SyncParams::default();
    match (
        a.provenance.format.is_audio(),
        b.provenance.format.is_audio(),
    ) {
        (false, true) => collatio::compare::sync::follow_score(a, b, "a", &params),
        (true, false) => collatio::compare::sync::follow_score(b, a, "b", &params),
        _ => None,
    }
}

/// Writes the melody of `piece` as a Standard MIDI File at `target`, atomically (a temporary
/// file in the same folder, then a rename), refusing to overwrite the input.
fn export_midi(
    piece: &collatio::timeline::Piece,
    input: &std::path::Path,
    target: &std::path::Path,
) -> Result<()> {
    let same = match (std::fs::canonicalize(input), std::fs::canonicalize(target)) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if same {
        return Err(args::UsageError(format!(
            "--export-midi {} would overwrite the input",
            target.display()
        ))
        .into());
    }
    let bytes = collatio::audio::export::melody_to_smf(piece)?;
    let folder = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = target
        .file_name()
        .map_or_else(|| "melody.mid".into(), |n| n.to_string_lossy().into_owned());
    let temporary = folder.join(format!(".{name}.{}.tmp", std::process::id()));
    std::fs::write(&temporary, &bytes)
        .and_then(|()| std::fs::rename(&temporary, target))
        .map_err(|e| {
            let _ = std::fs::remove_file(&temporary);
            anyhow::anyhow!("cannot write {}: {e}", target.display())
        })?;
    Ok(())
}

/// Writes to standard output; a closed pipe (`| head`) is not an error.
fn write_stdout(text: &str) -> Result<()> {
    let mut stdout = std::io::stdout().lock();
    match stdout.write_all(text.as_bytes()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

fn inspect(args: InspectArgs) -> Result<i32> {
    let options: ReadOptions = args.read_options()?;
    let piece = read_file(&args.file, &options)?;
    if let Some(target) = &args.export_midi {
        export_midi(&piece, &args.file, target)?;
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
    for warning in &piece.warnings {
        eprintln!("collatio: warning: {}: {warning}", args.file.display());
    }
    write_stdout(&text)?;
    Ok(if piece.warnings.is_empty() {
        EXIT_OK
    } else {
        EXIT_PARTIAL
    })
}

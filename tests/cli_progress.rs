//! Progress on standard error (`--no-progress`) and the paths recorded in the outputs
//! (`--record-paths`), as a user runs them.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::Path;
use std::process::{Command, Output};

/// Runs collatio in `dir` with standard error a pipe (not a terminal); `after` sets
/// `COLLATIO_PROGRESS_AFTER`, the seconds a step runs before it is shown.
fn run_in(dir: &Path, args: &[&str], after: Option<&str>) -> Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_collatio"));
    command.current_dir(dir).args(args);
    command.env_remove("COLLATIO_PROGRESS_AFTER");
    if let Some(after) = after {
        command.env("COLLATIO_PROGRESS_AFTER", after);
    }
    command.output().unwrap()
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

#[test]
fn plain_progress_lines_on_stderr_leave_stdout_unchanged() {
    let root = common::fixture("tune_family");
    let a = root.join("twinkle_c_4-4.musicxml").display().to_string();
    let b = root
        .join("alphabet_song_g_4-4.musicxml")
        .display()
        .to_string();
    let here = Path::new(".");
    // Every step shown at once, so that the test does not depend on the machine's speed.
    let shown = run_in(here, &["compare", &a, &b, "--format", "json"], Some("0"));
    let quiet = run_in(
        here,
        &["compare", &a, &b, "--format", "json", "--no-progress"],
        Some("0"),
    );
    assert_eq!(shown.status.code(), Some(0), "{}", text(&shown.stderr));
    let stderr = text(&shown.stderr);
    for step in [
        "collatio: progress: reading twinkle_c_4-4.musicxml",
        "collatio: progress: aligning the melodies",
        "collatio: progress: chance figures",
    ] {
        assert!(stderr.contains(step), "{step} in {stderr}");
    }
    assert_eq!(
        shown.stdout, quiet.stdout,
        "progress changed standard output"
    );
    assert!(
        !text(&quiet.stderr).contains("progress"),
        "{}",
        text(&quiet.stderr)
    );
    // With the default delay of a second, short steps print nothing.
    let fast = run_in(here, &["compare", &a, &b], None);
    assert!(
        !text(&fast.stderr).contains("progress:"),
        "{}",
        text(&fast.stderr)
    );
}

#[test]
fn search_inspect_and_corpus_build_show_progress_and_can_be_silenced() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = common::fixture("tune_family").display().to_string();
    let index = dir.path().join("tunes.idx").display().to_string();
    let built = run_in(
        dir.path(),
        &["corpus", "build", &corpus, "-o", &index],
        Some("0"),
    );
    assert_eq!(built.status.code(), Some(0), "{}", text(&built.stderr));
    assert!(
        text(&built.stderr).contains("collatio: progress: reading files 0/8"),
        "{}",
        text(&built.stderr)
    );
    let query = common::fixture("tune_family/twinkle_c_4-4.musicxml")
        .display()
        .to_string();
    let search = ["search", &query, "--corpus", &index];
    let shown = run_in(dir.path(), &search, Some("0"));
    let quiet = run_in(
        dir.path(),
        &[&search[..], &["--no-progress"]].concat(),
        Some("0"),
    );
    assert!(text(&shown.stderr).contains("collatio: progress: scanning candidates"));
    assert!(!text(&quiet.stderr).contains("progress"));
    assert_eq!(shown.stdout, quiet.stdout);
    let inspect = run_in(dir.path(), &["inspect", &query], Some("0"));
    assert!(text(&inspect.stderr).contains("collatio: progress: reading twinkle"));
}

#[test]
fn names_only_paths_give_the_same_pdf_and_json_from_any_folder() {
    let dir = tempfile::tempdir().unwrap();
    let root = common::fixture("tune_family");
    let (a, b) = ("twinkle_c_4-4.musicxml", "alphabet_song_g_4-4.musicxml");
    let outputs = |tag: &str| {
        (
            dir.path().join(format!("{tag}.pdf")).display().to_string(),
            dir.path().join(format!("{tag}.json")).display().to_string(),
        )
    };
    let (pdf_rel, json_rel) = outputs("relative");
    let (pdf_abs, json_abs) = outputs("absolute");
    let relative = run_in(
        &root,
        &["compare", a, b, "--pdf", &pdf_rel, "--json", &json_rel],
        None,
    );
    assert_eq!(
        relative.status.code(),
        Some(0),
        "{}",
        text(&relative.stderr)
    );
    let (abs_a, abs_b) = (
        root.join(a).display().to_string(),
        root.join(b).display().to_string(),
    );
    let absolute = run_in(
        dir.path(),
        &[
            "compare", &abs_a, &abs_b, "--pdf", &pdf_abs, "--json", &json_abs,
        ],
        None,
    );
    assert_eq!(
        absolute.status.code(),
        Some(0),
        "{}",
        text(&absolute.stderr)
    );
    let read = |p: &str| std::fs::read(p).unwrap();
    assert!(read(&pdf_rel) == read(&pdf_abs), "PDFs differ");
    assert_eq!(text(&read(&json_rel)), text(&read(&json_abs)));
    assert_eq!(relative.stdout, absolute.stdout);
    let folder = root.display().to_string();
    let json = text(&read(&json_abs));
    assert!(!json.contains(&folder), "{json}");
    assert!(
        json.contains("\"path\": \"twinkle_c_4-4.musicxml\""),
        "{json}"
    );

    // As given: the folder is recorded, and the document identifier follows it.
    let (pdf_given, json_given) = outputs("given");
    let given = run_in(
        dir.path(),
        &[
            "compare",
            &abs_a,
            &abs_b,
            "--pdf",
            &pdf_given,
            "--json",
            &json_given,
            "--record-paths",
            "as-given",
        ],
        None,
    );
    assert_eq!(given.status.code(), Some(0), "{}", text(&given.stderr));
    assert!(text(&read(&json_given)).contains(&folder));
    let id = |pdf: &[u8]| {
        let s = String::from_utf8_lossy(pdf).into_owned();
        let at = s.rfind("/ID").expect("a document identifier");
        s[at..at + 80].to_string()
    };
    assert_ne!(id(&read(&pdf_given)), id(&read(&pdf_abs)));
}

#[test]
fn a_step_over_a_second_is_named_on_a_plain_line_by_default() {
    // The demo pair with a shuffle null of 10,000 shuffles: several seconds of chance figures.
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo");
    let args = [
        "compare",
        "pierside-lamps.musicxml",
        "millstream-boats.musicxml",
        "--null",
        "shuffles",
        "--shuffles",
        "10000",
        "--format",
        "json",
    ];
    let shown = run_in(&demo, &args, None);
    assert_eq!(shown.status.code(), Some(0), "{}", text(&shown.stderr));
    let stderr = text(&shown.stderr);
    assert!(
        stderr.contains("collatio: progress: chance figures ("),
        "{stderr}"
    );
    // At most one line every five seconds per step, each naming its step.
    let lines: Vec<&str> = stderr
        .lines()
        .filter(|l| l.starts_with("collatio: progress: "))
        .collect();
    assert!(lines.iter().all(|l| l.ends_with(" s)")), "{stderr}");
    let json: serde_json::Value = serde_json::from_slice(&shown.stdout).unwrap();
    assert!(json["chance"].is_object(), "the JSON record is whole");
}

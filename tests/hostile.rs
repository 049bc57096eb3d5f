//! Hostile and huge inputs through the real executable: crafted files, damaged indexes, absurd
//! option values and odd output paths. Every case ends in a clear message naming the file and
//! the problem with a documented exit code (2 usage, 3 input), never in a panic or an abort.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::io::Write;
use std::path::Path;

/// Runs collatio: (exit code, stdout, stderr); a signal (abort) gives -1.
fn run(args: &[&str]) -> (i32, String, String) {
    common::run_cli(args)
}

fn write(dir: &Path, name: &str, bytes: &[u8]) -> String {
    let path = dir.join(name);
    std::fs::write(&path, bytes).unwrap();
    path.display().to_string()
}

/// Checks an error exit: the code, the file named and the phrase, and no panic.
fn assert_error(result: &(i32, String, String), code: i32, file: &str, phrase: &str) {
    let (got, _, stderr) = result;
    assert_eq!(*got, code, "stderr was {stderr}");
    assert!(stderr.contains(file), "the file is not named: {stderr}");
    assert!(stderr.contains(phrase), "expected '{phrase}' in: {stderr}");
    assert!(!stderr.contains("panicked"), "{stderr}");
}

fn fixture(name: &str) -> String {
    common::fixture(name).display().to_string()
}

fn nested(levels: usize, closed: bool) -> String {
    let mut text = String::from("<score-partwise version=\"4.0\">");
    text.push_str(&"<part>".repeat(levels));
    if closed {
        text.push_str(&"</part>".repeat(levels));
        text.push_str("</score-partwise>");
    }
    text
}

#[test]
fn deeply_nested_musicxml_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let deep = write(dir.path(), "deep.musicxml", nested(20_000, true).as_bytes());
    assert_error(&run(&["inspect", &deep]), 3, &deep, "nesting too deep");
    let open = write(
        dir.path(),
        "open.musicxml",
        nested(1_000_000, false).as_bytes(),
    );
    assert_error(&run(&["inspect", &open]), 3, &open, "nesting too deep");
}

#[test]
fn deeply_nested_container_of_an_mxl_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("deep.mxl");
    {
        let mut zip = zip::ZipWriter::new(std::fs::File::create(&path).unwrap());
        let options = zip::write::SimpleFileOptions::default()
            .compression_method(zip::CompressionMethod::Deflated);
        zip.start_file("META-INF/container.xml", options).unwrap();
        zip.write_all(b"<container>").unwrap();
        zip.write_all("<rootfiles>".repeat(100_000).as_bytes())
            .unwrap();
        zip.start_file("score.musicxml", options).unwrap();
        zip.write_all(
            std::fs::read(fixture("ties_chords.musicxml"))
                .unwrap()
                .as_slice(),
        )
        .unwrap();
        zip.finish().unwrap();
    }
    let p = path.display().to_string();
    assert_error(
        &run(&["inspect", &p]),
        3,
        &p,
        "mxl: META-INF/container.xml: nesting too deep",
    );
}

/// `corpus build` reads on worker threads with smaller stacks: a deep file is skipped with a
/// warning and the index of the other files is written (exit 1).
#[test]
fn corpus_build_skips_a_deeply_nested_file() {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("corpus");
    std::fs::create_dir(&folder).unwrap();
    std::fs::copy(
        fixture("tune_family/twinkle_c_4-4.musicxml"),
        folder.join("good.musicxml"),
    )
    .unwrap();
    std::fs::write(folder.join("deep.musicxml"), nested(5_000, true)).unwrap();
    let index = dir.path().join("c.idx").display().to_string();
    let (code, _, stderr) = run(&[
        "corpus",
        "build",
        &folder.display().to_string(),
        "-o",
        &index,
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("deep.musicxml") && stderr.contains("nesting too deep"),
        "{stderr}"
    );
    assert!(stderr.contains("indexed 1 melodies"), "{stderr}");
    assert!(Path::new(&index).is_file());
}

/// An index edited and given a fresh checksum: every field is checked on load.
#[test]
fn edited_index_is_corrupt_not_a_crash() {
    use collatio::corpus::{CorpusIndex, MelodyEntry};
    let piece = collatio::ingest::read_file(
        &common::fixture("tune_family/twinkle_c_4-4.musicxml"),
        &collatio::ingest::ReadOptions::default(),
    )
    .unwrap();
    let good = CorpusIndex::build(vec![MelodyEntry::from_piece(&piece, "twinkle".into())]);
    assert!(CorpusIndex::from_bytes(&good.to_bytes().unwrap()).is_ok());
    type Edit = Box<dyn Fn(&mut CorpusIndex)>;
    let edits: Vec<(&str, Edit)> = vec![
        ("figure length 0", Box::new(|i| i.ngram = 0)),
        (
            "posting out of range",
            Box::new(|i| i.postings[0].1 = vec![7]),
        ),
        (
            "posting with no melodies",
            Box::new(|i| i.postings[0].1.clear()),
        ),
        ("no melodies", Box::new(|i| i.melodies.clear())),
        ("figures out of order", Box::new(|i| i.postings.reverse())),
        (
            "note in no bar",
            Box::new(|i| i.melodies[0].notes[0].bar = 9_999),
        ),
        (
            "pitch",
            Box::new(|i| i.melodies[0].notes[0].pitch = f32::NAN),
        ),
        (
            "duration",
            Box::new(|i| i.melodies[0].notes[0].duration = -1.0),
        ),
        (
            "meter",
            Box::new(|i| i.melodies[0].bars[0].time_signature = (4, 0)),
        ),
        ("key", Box::new(|i| i.melodies[0].key = Some((-128, false)))),
    ];
    let dir = tempfile::tempdir().unwrap();
    let query = fixture("tune_family/twinkle_c_4-4.musicxml");
    for (what, edit) in edits {
        let mut index = good.clone();
        edit(&mut index);
        let bytes = index.to_bytes().unwrap();
        let err = CorpusIndex::from_bytes(&bytes).expect_err(what);
        assert!(err.to_string().contains("corrupt index"), "{what}: {err}");
        let path = write(dir.path(), "edited.idx", &bytes);
        assert_error(
            &run(&["search", &query, "--corpus", &path]),
            3,
            &path,
            "corrupt index",
        );
    }
}

/// Numeric options are checked by the parser against a range (exit 2), never overflow later.
#[test]
fn numeric_options_out_of_range_are_usage_errors() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/baa_baa_black_sheep_f_2-4.musicxml");
    let cases: [&[&str]; 9] = [
        &["--gap-open", "2147483647", "--gap-extend", "2147483647"],
        &["--pitch-match", "-2147483648"],
        &["--min-notes", "0"],
        &["--harmony-max-p", "NaN"],
        &["--a4", "1e300"],
        &["--tempo", "0"],
        &["--max-file-mb", "18446744073709551615"],
        &["--max-notes", "0"],
        &["--max-passages", "99999999999"],
    ];
    for extra in cases {
        let mut args = vec!["compare", a.as_str(), b.as_str()];
        args.extend_from_slice(extra);
        let (code, _, stderr) = run(&args);
        assert_eq!(code, 2, "{extra:?}: {stderr}");
        assert!(stderr.contains(extra[0]), "{extra:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
    // The largest file size allowed is not read as "empty" by an overflow.
    let (code, _, stderr) = run(&["inspect", &a, "--max-file-mb", "1048576"]);
    assert_eq!(code, 0, "{stderr}");
}

/// Absurd values in one bar of the demo score are refused with a warning naming the bar (exit 1
/// with the rest read), never read as they stand.
#[test]
fn absurd_musicxml_values_are_warned_with_their_bar() {
    let demo = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("demo/pierside-lamps.musicxml"),
    )
    .unwrap();
    let cases = [
        ("<octave>4</octave>", "<octave>2147483647</octave>", "<octave> 2147483647"),
        ("<octave>4</octave>", "<alter>1e300</alter><octave>4</octave>", "<alter> 1e300"),
        ("<sound tempo=\"96\"/>", "<sound tempo=\"1e-300\"/>", "tempo 1e-300"),
        ("<sound tempo=\"96\"/>", "<sound tempo=\"0\"/>", "tempo 0"),
        ("<fifths>1</fifths>", "<fifths>2000000000</fifths>", "<fifths> 2e9"),
        ("<beats>4</beats>", "<beats>4294967295</beats>", "4294967295/4 is not a usable time signature"),
        ("<beat-type>4</beat-type>", "<beat-type>0</beat-type>", "<time> is not a usable time signature"),
        (
            "<divisions>4</divisions>",
            "<divisions>4</divisions><transpose><diatonic>0</diatonic><chromatic>2000000000</chromatic></transpose>",
            "<transpose> of 2e9 semitones",
        ),
    ];
    let dir = tempfile::tempdir().unwrap();
    for (from, to, phrase) in cases {
        let text = demo.replacen(from, to, 1);
        assert_ne!(text, demo, "{from} is in the demo");
        let path = write(dir.path(), "edited.musicxml", text.as_bytes());
        let (code, stdout, stderr) = run(&["inspect", &path]);
        assert_eq!(code, 1, "{phrase}: {stderr}");
        assert!(stderr.contains(&path), "{stderr}");
        assert!(
            stderr.contains("measure 0:") && stderr.contains(phrase),
            "{phrase}: {stderr}"
        );
        assert!(
            !stdout.contains("infx") && !stdout.contains("NaN"),
            "{phrase}: {stdout}"
        );
    }
}

fn midi_with_meta(meta: &[u8]) -> Vec<u8> {
    // SMF 1.0 header: MThd, length 6, format 0, one track, 96 ticks per quarter.
    let mut bytes = b"MThd\0\0\0\x06\0\0\0\x01\0\x60MTrk".to_vec();
    let mut track = vec![0x00];
    track.extend_from_slice(meta);
    track.extend_from_slice(&[
        0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0, 0x00, 0xFF, 0x2F, 0x00,
    ]);
    bytes.extend_from_slice(&(track.len() as u32).to_be_bytes());
    bytes.extend_from_slice(&track);
    bytes
}

/// SMF 1.0: Set Tempo is FF 51 03 and 24 bits of µs per quarter note (0 is no tempo); Key
/// Signature is FF 59 02 sf mi with sf from -7 to 7.
#[test]
fn absurd_midi_tempo_and_key_are_warned() {
    let dir = tempfile::tempdir().unwrap();
    let cases: [(&[u8], &str); 2] = [
        (&[0xFF, 0x51, 0x03, 0, 0, 0], "Set Tempo of 0"),
        (&[0xFF, 0x59, 0x02, 0x80, 0], "key signature of -128"),
    ];
    for (meta, phrase) in cases {
        let path = write(dir.path(), "odd.mid", &midi_with_meta(meta));
        let (code, stdout, stderr) = run(&["inspect", &path]);
        assert_eq!(code, 1, "{phrase}: {stderr}");
        assert!(
            stderr.contains(&path) && stderr.contains(phrase),
            "{stderr}"
        );
        assert!(stderr.contains("track 1, tick 0"), "{stderr}");
        assert!(
            !stdout.contains("infx") && !stdout.contains("NaN"),
            "{stdout}"
        );
    }
}

/// Runs collatio, failing the test (and ending the process) if it has not finished in a minute:
/// for inputs that used to block forever.
fn run_bounded(args: &[&str]) -> (i32, String, String) {
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_collatio"))
        .args(args)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let start = std::time::Instant::now();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > std::time::Duration::from_secs(60) {
            child.kill().unwrap();
            panic!("collatio {args:?} did not finish within a minute");
        }
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    let out = child.wait_with_output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn mkfifo(path: &Path) {
    let status = std::process::Command::new("mkfifo")
        .arg(path)
        .status()
        .unwrap();
    assert!(status.success());
}

/// A named pipe or a device where a file is expected is refused at once, and skipped inside a
/// corpus folder.
#[cfg(unix)]
#[test]
fn inputs_that_are_not_regular_files_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe.mid");
    mkfifo(&fifo);
    let fifo = fifo.display().to_string();
    let query = fixture("tune_family/twinkle_c_4-4.musicxml");
    assert_error(
        &run_bounded(&["inspect", &fifo]),
        3,
        &fifo,
        "not a regular file",
    );
    assert_error(
        &run_bounded(&["compare", &query, &fifo]),
        3,
        &fifo,
        "not a regular file",
    );
    assert_error(
        &run_bounded(&["search", &query, "--corpus", &fifo]),
        3,
        &fifo,
        "not a regular file",
    );
    assert_error(
        &run_bounded(&["search", &query, "--corpus", "/dev/zero"]),
        3,
        "/dev/zero",
        "not a regular file",
    );

    let folder = dir.path().join("corpus");
    std::fs::create_dir(&folder).unwrap();
    std::fs::copy(&query, folder.join("good.musicxml")).unwrap();
    mkfifo(&folder.join("pipe.mid"));
    let index = dir.path().join("c.idx").display().to_string();
    let (code, _, stderr) = run_bounded(&[
        "corpus",
        "build",
        &folder.display().to_string(),
        "-o",
        &index,
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("pipe.mid") && stderr.contains("not a regular file"),
        "{stderr}"
    );
    assert!(stderr.contains("indexed 1 melodies"), "{stderr}");
}

/// Output paths are checked before any input is read: a refusal comes first even when an input
/// is unreadable (exit 2, not 3), and nothing is written.
#[test]
fn outputs_are_checked_before_any_work() {
    let dir = tempfile::tempdir().unwrap();
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let missing = dir.path().join("missing.mid").display().to_string();
    let (code, _, stderr) = run(&["compare", &a, &missing, "--pdf", &a]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("is an input file"), "{stderr}");

    // A JSON file beside an export "folder" that is a file: refused before any work, and the
    // JSON is not written either.
    let json = dir.path().join("findings.json");
    let not_a_folder = write(dir.path(), "exports", b"a file");
    let (code, _, stderr) = run(&[
        "compare",
        &a,
        &missing,
        "--json",
        &json.display().to_string(),
        "--export",
        &not_a_folder,
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("is not a folder"), "{stderr}");
    assert!(!json.exists());

    let (code, _, stderr) = run(&["inspect", &missing, "--export-midi", &missing]);
    assert_eq!(code, 2, "{stderr}");
}

/// An output that is a symbolic link, a device or a folder is never replaced by a file.
#[cfg(unix)]
#[test]
fn outputs_that_are_not_regular_files_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/baa_baa_black_sheep_f_2-4.musicxml");
    let victim = write(dir.path(), "victim.txt", b"keep me");
    let link = dir.path().join("exhibit.pdf");
    std::os::unix::fs::symlink(&victim, &link).unwrap();
    let link = link.display().to_string();
    let folder = dir.path().display().to_string();
    for (flag, target, kind) in [
        ("--pdf", link.as_str(), "a symbolic link"),
        ("--json", "/dev/null", "a device"),
        ("--json", folder.as_str(), "a folder"),
    ] {
        let (code, _, stderr) = run(&["compare", &a, &b, flag, target]);
        assert_eq!(code, 2, "{target}: {stderr}");
        assert!(stderr.contains(target) && stderr.contains(kind), "{stderr}");
    }
    assert_eq!(std::fs::read(&victim).unwrap(), b"keep me");
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    let null = std::fs::metadata("/dev/null").unwrap();
    assert!(!null.file_type().is_file());

    let (code, _, stderr) = run(&["inspect", &a, "--export-midi", &link]);
    assert_eq!(code, 2, "{stderr}");
    assert_eq!(std::fs::read(&victim).unwrap(), b"keep me");
}

/// Writing leaves only the outputs: no temporary file beside them.
#[test]
fn outputs_leave_no_temporary_files() {
    let dir = tempfile::tempdir().unwrap();
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/twinkle_d_2-2_doubled.musicxml");
    let json = dir.path().join("f.json").display().to_string();
    let pdf = dir.path().join("f.pdf").display().to_string();
    let (code, _, stderr) = run(&["compare", &a, &b, "--json", &json, "--pdf", &pdf]);
    assert_eq!(code, 0, "{stderr}");
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["f.json", "f.pdf"]);
}

/// `corpus build -o` naming a corpus file is the same usage error (exit 2) as in compare; `-o -`
/// writes the index to standard output.
#[test]
fn corpus_build_outputs() {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("corpus");
    std::fs::create_dir(&folder).unwrap();
    let inside = folder.join("good.musicxml");
    std::fs::copy(fixture("tune_family/twinkle_c_4-4.musicxml"), &inside).unwrap();
    let folder = folder.display().to_string();
    let inside = inside.display().to_string();
    let (code, _, stderr) = run(&["corpus", "build", &folder, "-o", &inside]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("is an input file"), "{stderr}");

    let out = common::run_collatio(&["corpus", "build", &folder, "-o", "-"]);
    assert_eq!(out.status.code(), Some(0));
    assert!(out.stdout.starts_with(collatio::corpus::MAGIC));
    assert!(collatio::corpus::CorpusIndex::from_bytes(&out.stdout).is_ok());
}

/// An empty corpus is announced when it is built and in every search.
#[test]
fn empty_corpus_is_announced() {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("empty");
    std::fs::create_dir(&folder).unwrap();
    let index = dir.path().join("empty.idx").display().to_string();
    let (code, _, stderr) = run(&[
        "corpus",
        "build",
        &folder.display().to_string(),
        "-o",
        &index,
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("no MIDI, MusicXML or audio files"),
        "{stderr}"
    );
    let query = fixture("tune_family/twinkle_c_4-4.musicxml");
    for format in ["text", "json"] {
        let (code, _, stderr) = run(&["search", &query, "--corpus", &index, "--format", format]);
        assert_eq!(code, 1, "{stderr}");
        assert!(
            stderr.contains(&index) && stderr.contains("holds no melodies"),
            "{stderr}"
        );
    }
}

/// Terminal escape sequences in a track name and in a file name are shown escaped, never sent
/// raw to the terminal (SMF 1.0: FF 03 is the Sequence/Track Name meta event).
#[test]
fn control_characters_are_escaped_in_everything_printed() {
    let dir = tempfile::tempdir().unwrap();
    let name = b"\x1b[2J\x1b[31mFAKE";
    let mut meta = vec![0xFF, 0x03, name.len() as u8];
    meta.extend_from_slice(name);
    let path = write(dir.path(), "named.mid", &midi_with_meta(&meta));
    let (code, stdout, stderr) = run(&["inspect", &path]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stdout.contains('\x1b'), "{stdout}");
    assert!(stdout.contains("\\u{1b}[2J"), "{stdout}");

    let odd = write(dir.path(), "odd\x1b[31m.mid", b"MThd\0\0");
    let (code, stdout, stderr) = run(&["inspect", &odd]);
    assert_eq!(code, 3, "{stderr}");
    assert!(
        !stderr.contains('\x1b') && !stdout.contains('\x1b'),
        "{stderr}"
    );
    assert!(stderr.contains("odd\\u{1b}[31m.mid"), "{stderr}");
}

/// SOURCE_DATE_EPOCH beyond the last date a PDF can hold is refused (exit 2) before any work.
#[test]
fn source_date_epoch_out_of_range_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let pdf = dir.path().join("x.pdf").display().to_string();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_collatio"))
        .args(["compare", &a, &a, "--pdf", &pdf])
        .env("SOURCE_DATE_EPOCH", "253402300800")
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("SOURCE_DATE_EPOCH"), "{stderr}");
    assert!(!Path::new(&pdf).exists());
}

/// The committed crafted inputs (`tests/fixtures/hostile/`, see its README): each gives the
/// outcome listed there, with the file named.
#[test]
fn committed_hostile_fixtures() {
    let cases = [
        ("midi_tempo_zero.mid", 1, "Set Tempo of 0"),
        ("midi_key_minus_128.mid", 1, "key signature of -128"),
        ("midi_track_name_escapes.mid", 0, ""),
        ("octave_2147483647.musicxml", 1, "<octave> 2147483647"),
        ("alter_1e300.musicxml", 1, "<alter> 1e300"),
        ("tempo_1e-300.musicxml", 1, "tempo 1e-300"),
        ("fifths_2e9.musicxml", 1, "<fifths> 2e9"),
        ("transpose_2e9.musicxml", 1, "<transpose> of 2e9"),
        ("nested_300.musicxml", 3, "nesting too deep"),
        ("entity_markup_deep.musicxml", 3, "nesting too deep"),
        ("container_nested_300.mxl", 3, "nesting too deep"),
    ];
    for (name, code, phrase) in cases {
        let path = fixture(&format!("hostile/{name}"));
        let (got, stdout, stderr) = run(&["inspect", &path]);
        assert_eq!(got, code, "{name}: {stderr}");
        if code != 0 {
            assert!(stderr.contains(&path), "{name}: {stderr}");
        }
        assert!(stderr.contains(phrase), "{name}: {stderr}");
        assert!(
            !stdout.contains('\x1b') && !stderr.contains('\x1b'),
            "{name}"
        );
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
}

/// 200,000 attributes on one element and a 5 KB entity used 5,000 times are refused before the
/// tree is built, quickly.
#[test]
fn huge_attribute_lists_and_entity_expansions_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let attrs: String = (0..200_000).map(|k| format!(" a{k}=\"1\"")).collect();
    let many = write(
        dir.path(),
        "attributes.musicxml",
        format!("<score-partwise version=\"4.0\"{attrs}></score-partwise>").as_bytes(),
    );
    assert_error(
        &run_bounded(&["inspect", &many]),
        3,
        &many,
        "more than 1000 attributes",
    );
    let value = "x".repeat(5_000);
    let expanding = write(
        dir.path(),
        "entities.musicxml",
        format!(
            "<!DOCTYPE score-partwise [<!ENTITY e \"{value}\">]><score-partwise version=\"4.0\"><work><work-title>{}</work-title></work></score-partwise>",
            "&e;".repeat(5_000)
        )
        .as_bytes(),
    );
    assert_error(
        &run_bounded(&["inspect", &expanding]),
        3,
        &expanding,
        "entity references could expand",
    );
}

/// A thousand parts without `<divisions>` give a few warning lines and a count, not a thousand
/// lines; the JSON record keeps every warning.
#[test]
fn repeated_warnings_are_summarised() {
    let parts = 1_000;
    let mut text = String::from("<score-partwise version=\"4.0\"><part-list>");
    for k in 1..=parts {
        text.push_str(&format!(
            "<score-part id=\"P{k}\"><part-name>p</part-name></score-part>"
        ));
    }
    text.push_str("</part-list>");
    for k in 1..=parts {
        text.push_str(&format!(
            "<part id=\"P{k}\"><measure number=\"1\"><note><pitch><step>C</step><octave>4</octave></pitch><duration>1</duration></note></measure></part>"
        ));
    }
    text.push_str("</score-partwise>");
    let dir = tempfile::tempdir().unwrap();
    let path = write(dir.path(), "parts.musicxml", text.as_bytes());
    let (code, stdout, stderr) = run(&["inspect", &path]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.lines().count() < 10, "{stderr}");
    assert!(
        stderr.contains("997 more warnings like the one above (1000 in all)"),
        "{stderr}"
    );
    assert!(
        stdout.lines().count() < 200 + parts,
        "{}",
        stdout.lines().count()
    );
    let (_, json, _) = run(&["inspect", &path, "--format", "json"]);
    let record: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(record["warnings"].as_array().unwrap().len(), parts);
}

/// The note limit is applied to the `<note>` elements before the XML tree is built, so a
/// container holding far more notes than allowed is refused without reading them into memory.
#[test]
fn note_limit_is_checked_before_the_tree_is_built() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("many.mxl");
    {
        let mut zip = zip::ZipWriter::new(std::fs::File::create(&path).unwrap());
        let options = zip::write::SimpleFileOptions::default()
            .compression_method(zip::CompressionMethod::Deflated);
        zip.start_file("score.musicxml", options).unwrap();
        zip.write_all(b"<score-partwise version=\"4.0\"><part-list><score-part id=\"P1\"><part-name>p</part-name></score-part></part-list><part id=\"P1\">").unwrap();
        let note =
            b"<note><pitch><step>C</step><octave>4</octave></pitch><duration>1</duration></note>";
        // 300 bars of 1,000 notes: a reader that counts bar by bar stops at 101,000 notes; the
        // count before the tree is built sees all 300,000.
        for bar in 1..=300 {
            zip.write_all(format!("<measure number=\"{bar}\">").as_bytes())
                .unwrap();
            for _ in 0..1_000 {
                zip.write_all(note).unwrap();
            }
            zip.write_all(b"</measure>").unwrap();
        }
        zip.write_all(b"</part></score-partwise>").unwrap();
        zip.finish().unwrap();
    }
    let p = path.display().to_string();
    assert_error(
        &run_bounded(&["inspect", &p, "--max-notes", "100000"]),
        3,
        &p,
        "number of notes is 300000",
    );
}

/// A file above the size limit is refused naming its size on disk, also for audio, which is
/// read in a stream (RIFF/WAVE: "RIFF", a length, "WAVE").
#[test]
fn size_error_names_the_file_size() {
    let dir = tempfile::tempdir().unwrap();
    let size = (1 << 20) + (1 << 19);
    let mut wav = b"RIFF\0\0\0\0WAVEfmt ".to_vec();
    wav.resize(size, 0);
    let p = write(dir.path(), "big.wav", &wav);
    assert_error(
        &run(&["inspect", &p, "--max-file-mb", "1"]),
        3,
        &p,
        &format!("file size in bytes is {size}"),
    );
}

/// `-` writes a file output to standard output where a run has one thing to print: the JSON
/// record or the PDF of compare (not both), the MIDI file of inspect, the index of corpus
/// build; never a file named `-`.
#[test]
fn dash_writes_to_standard_output() {
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/twinkle_d_2-2_doubled.musicxml");
    let (code, stdout, stderr) = run(&["compare", &a, &b, "--json", "-"]);
    assert_eq!(code, 0, "{stderr}");
    let (_, expected, _) = run(&["compare", &a, &b, "--format", "json"]);
    assert_eq!(stdout, expected);
    assert!(!Path::new("-").exists());

    let out = common::run_collatio(&["compare", &a, &b, "--pdf", "-"]);
    assert_eq!(out.status.code(), Some(0));
    assert!(out.stdout.starts_with(b"%PDF-"));
    let (code, _, stderr) = run(&["compare", &a, &b, "--pdf", "-", "--json", "-"]);
    assert_eq!(code, 2, "{stderr}");
    let (code, _, stderr) = run(&["compare", &a, &b, "--export", "-"]);
    assert_eq!(code, 2, "{stderr}");

    let out = common::run_collatio(&["inspect", &a, "--export-midi", "-"]);
    assert_eq!(out.status.code(), Some(0));
    // SMF 1.0: a Standard MIDI File starts with the header chunk "MThd".
    assert!(out.stdout.starts_with(b"MThd"));
}

/// Exports into a folder used before: the passages of the earlier run that this run does not
/// write are removed, other files are left alone.
#[test]
fn exports_replace_an_earlier_run() {
    let dir = tempfile::tempdir().unwrap();
    let exports = dir.path().join("exports");
    std::fs::create_dir(&exports).unwrap();
    for name in ["passage-97.musicxml", "passage-97.mid", "notes.txt"] {
        std::fs::write(exports.join(name), b"earlier").unwrap();
    }
    let a = fixture("tune_family/twinkle_c_4-4.musicxml");
    let b = fixture("tune_family/twinkle_d_2-2_doubled.musicxml");
    let (code, _, stderr) = run(&[
        "compare",
        &a,
        &b,
        "--export",
        &exports.display().to_string(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(exports.join("passage-01.musicxml").is_file(), "{stderr}");
    assert!(!exports.join("passage-97.musicxml").exists(), "{stderr}");
    assert!(!exports.join("passage-97.mid").exists());
    assert!(
        stderr.contains("removed") && stderr.contains("passage-97.mid"),
        "{stderr}"
    );
    assert_eq!(
        std::fs::read(exports.join("notes.txt")).unwrap(),
        b"earlier"
    );
}

/// Symbolic links that lead back up a corpus folder are not followed: two such links would
/// double the tree at every level and the listing would never end.
#[cfg(unix)]
#[test]
fn corpus_build_does_not_follow_links_to_folders() {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("corpus");
    std::fs::create_dir(&folder).unwrap();
    std::fs::copy(
        fixture("tune_family/twinkle_c_4-4.musicxml"),
        folder.join("good.musicxml"),
    )
    .unwrap();
    std::os::unix::fs::symlink(&folder, folder.join("up")).unwrap();
    std::os::unix::fs::symlink(&folder, folder.join("again")).unwrap();
    let index = dir.path().join("c.idx").display().to_string();
    let (code, _, stderr) = run_bounded(&[
        "corpus",
        "build",
        &folder.display().to_string(),
        "-o",
        &index,
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("indexed 1 melodies from 1 files"),
        "{stderr}"
    );
}

/// A pitch that sounds outside MIDI notes 0-127 after transposition (here B9 moved up four
/// octaves) is skipped with a warning naming the bar.
#[test]
fn pitches_sounding_outside_midi_are_warned() {
    let demo = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("demo/pierside-lamps.musicxml"),
    )
    .unwrap();
    let text = demo
        .replacen(
            "<divisions>4</divisions>",
            "<divisions>4</divisions><transpose><diatonic>0</diatonic><chromatic>0</chromatic><octave-change>4</octave-change></transpose>",
            1,
        )
        .replacen("<step>D</step><octave>4</octave>", "<step>B</step><octave>9</octave>", 1);
    let dir = tempfile::tempdir().unwrap();
    let path = write(dir.path(), "high.musicxml", text.as_bytes());
    let (code, _, stderr) = run(&["inspect", &path]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("measure 0:") && stderr.contains("sounding MIDI notes 0-127"),
        "{stderr}"
    );
}

//! `collatio corpus build`, `collatio search` and `compare --corpus` as a user runs them.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use serde_json::Value;

fn run(args: &[&str]) -> (i32, String, String) {
    common::run_cli(args)
}

fn build_index(dir: &std::path::Path) -> String {
    let index = dir.join("tunes.idx").display().to_string();
    let corpus = common::fixture("tune_family").display().to_string();
    let (code, _, stderr) = run(&["corpus", "build", &corpus, "-o", &index]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("indexed 8 melodies"), "{stderr}");
    index
}

#[test]
fn search_ranks_the_tune_family_first() {
    let tmp = tempfile::tempdir().unwrap();
    let index = build_index(tmp.path());
    let query = common::fixture("tune_family/twinkle_d_2-2_doubled.musicxml")
        .display()
        .to_string();
    let (code, stdout, stderr) = run(&["search", &query, "--corpus", &index, "--format", "json"]);
    assert_eq!(code, 0, "{stderr}");
    let v: Value = serde_json::from_str(&stdout).unwrap();
    let hits = v["hits"].as_array().unwrap();
    let paths: Vec<&str> = hits.iter().map(|h| h["path"].as_str().unwrap()).collect();
    // The query itself (in the corpus) and the other Twinkle first, then the rest of the family.
    assert!(paths[0].starts_with("twinkle"), "{paths:?}");
    assert!(paths[1].starts_with("twinkle"), "{paths:?}");
    for p in &paths[2..4] {
        assert!(
            p.starts_with("alphabet") || p.starts_with("baa_baa"),
            "{paths:?}"
        );
    }
    for h in hits {
        let s = h["relatedness"]["value"].as_f64().unwrap();
        assert!((0.0..=1.0).contains(&s));
        assert!(h["passages"].is_array());
    }
}

#[test]
fn compare_with_a_corpus_reports_commonness() {
    let tmp = tempfile::tempdir().unwrap();
    let index = build_index(tmp.path());
    let a = common::fixture("tune_family/twinkle_c_4-4.musicxml")
        .display()
        .to_string();
    let b = common::fixture("tune_family/alphabet_song_g_4-4.musicxml")
        .display()
        .to_string();
    let (code, stdout, stderr) = run(&["compare", &a, &b, "--corpus", &index, "--format", "json"]);
    assert_eq!(code, 0, "{stderr}");
    let v: Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["corpus"]["melodies"], 8);
    // The index is identified: its file name (no folder of the machine), SHA-256 of its bytes,
    // size and build settings.
    let bytes = std::fs::read(&index).unwrap();
    assert_eq!(v["corpus"]["path"], "tunes.idx");
    assert_eq!(v["corpus"]["bytes"], bytes.len() as u64);
    assert_eq!(v["corpus"]["sha256"].as_str().unwrap().len(), 64);
    assert!(v["corpus"]["figure_length"].as_u64().unwrap() > 0);
    let weighted = v["corpus"]["weighted_similarity"].as_f64().unwrap();
    assert!((0.0..=1.0).contains(&weighted));
    let common = &v["passages"][0]["commonness"];
    assert_eq!(common["corpus_melodies"], 8);
    // The whole tune is in the corpus twice exactly (the two Twinkle files) — it is the figure.
    assert!(common["exact"].as_u64().unwrap() >= 2, "{common}");
    // The text report names the corpus and gives its figures too.
    let (code, text, stderr) = run(&["compare", &a, &b, "--corpus", &index]);
    assert_eq!(code, 0, "{stderr}");
    assert!(text.contains("corpus-weighted similarity"), "{text}");
    assert!(text.contains("melodies hold the figure exactly"), "{text}");
    assert!(
        text.contains(&v["corpus"]["sha256"].as_str().unwrap()[..16]),
        "{text}"
    );
    // The exhibit identifies the corpus too (read back with poppler's pdftotext when present).
    let pdf = tmp.path().join("exhibit.pdf");
    let (code, _, stderr) = run(&[
        "compare",
        &a,
        &b,
        "--corpus",
        &index,
        "--pdf",
        &pdf.display().to_string(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    match std::process::Command::new("pdftotext")
        .arg("-raw")
        .arg(&pdf)
        .arg("-")
        .output()
    {
        Ok(out) => {
            let words = String::from_utf8_lossy(&out.stdout)
                .split_whitespace()
                .collect::<Vec<_>>()
                .join(" ");
            assert!(
                words.contains("The reference corpus was the index"),
                "{words}"
            );
            assert!(
                words.contains(v["corpus"]["sha256"].as_str().unwrap()),
                "{words}"
            );
        }
        Err(_) => println!("notice: pdftotext (poppler-utils) not found; PDF text check skipped"),
    }
}

#[test]
fn damaged_index_and_unreadable_corpus_files_are_reported() {
    let tmp = tempfile::tempdir().unwrap();
    let bad = tmp.path().join("bad.idx");
    std::fs::write(&bad, b"COLLATIO-CORPUS\0 truncated").unwrap();
    let query = common::fixture("tune_family/twinkle_c_4-4.musicxml")
        .display()
        .to_string();
    let bad = bad.display().to_string();
    let (code, _, stderr) = run(&["search", &query, "--corpus", &bad]);
    assert_eq!(code, 3, "{stderr}");
    assert!(
        stderr.contains(&bad) && stderr.contains("corrupt index"),
        "{stderr}"
    );

    // A folder with one good file and one broken one: indexed with a list of what was skipped.
    let folder = tmp.path().join("mixed");
    std::fs::create_dir(&folder).unwrap();
    std::fs::copy(
        common::fixture("tune_family/twinkle_c_4-4.musicxml"),
        folder.join("good.musicxml"),
    )
    .unwrap();
    std::fs::write(folder.join("broken.mid"), b"MThd\0\0").unwrap();
    let out = tmp.path().join("mixed.idx").display().to_string();
    let (code, _, stderr) = run(&["corpus", "build", &folder.display().to_string(), "-o", &out]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("1 files skipped") && stderr.contains("broken.mid"),
        "{stderr}"
    );
}

/// `corpus verify` checks every section (exit 0), names a damaged one (exit 3), and an index of
/// the previous format is still searched.
#[test]
fn verify_and_the_previous_format() {
    let tmp = tempfile::tempdir().unwrap();
    let index = build_index(tmp.path());
    let (code, _, stderr) = run(&["corpus", "verify", &index]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("8 melodies"), "{stderr}");
    let mut bytes = std::fs::read(&index).unwrap();
    let last = bytes.len() - 1;
    bytes[last] ^= 0xff;
    let damaged = tmp.path().join("damaged.idx").display().to_string();
    std::fs::write(&damaged, &bytes).unwrap();
    let (code, _, stderr) = run(&["corpus", "verify", &damaged]);
    assert_eq!(code, 3, "{stderr}");
    assert!(
        stderr.contains(&damaged) && stderr.contains("corrupt index"),
        "{stderr}"
    );
    // The damaged section holds a melody every search of this small corpus reads (the corpus
    // null samples all of them): the search fails the same way, its findings discarded.
    let query = common::fixture("tune_family/twinkle_c_4-4.musicxml")
        .display()
        .to_string();
    let (code, stdout, stderr) = run(&["search", &query, "--corpus", &damaged]);
    assert_eq!(code, 3, "{stderr}");
    assert!(
        stdout.is_empty() && stderr.contains("corrupt index"),
        "{stderr}"
    );

    let whole = collatio::corpus::CorpusIndex::from_bytes(&std::fs::read(&index).unwrap()).unwrap();
    let legacy = tmp.path().join("legacy.idx").display().to_string();
    std::fs::write(&legacy, whole.to_legacy_bytes().unwrap()).unwrap();
    let search = |path: &str| {
        let (code, stdout, stderr) = run(&["search", &query, "--corpus", path, "--format", "json"]);
        assert_eq!(code, 0, "{stderr}");
        let v: Value = serde_json::from_str(&stdout).unwrap();
        (v["hits"].clone(), v["corpus"]["format_version"].as_u64())
    };
    let (new_hits, new_version) = search(&index);
    let (old_hits, old_version) = search(&legacy);
    assert_eq!(new_hits, old_hits);
    assert_eq!((new_version, old_version), (Some(3), Some(2)));
}

/// `corpus build` indexes the best few candidate lines of each file, each naming its line, and
/// a search hit names the corpus line it matched: every line of an arrangement is found through
/// itself, whatever its rank, and the plain tune through the tune's track. Fixtures: tunes of
/// "Ryan's Mammoth Collection" (1883) arranged by
/// `tests/fixtures/melody_choice/make_melody_choice_fixtures.py` on four tracks named "Part 1"
/// (a line of half notes above the tune), "Part 2" (the tune), "Part 3" (a bass) and drums.
#[test]
fn corpus_build_indexes_several_lines_of_each_file() {
    let tmp = tempfile::tempdir().unwrap();
    let corpus = tmp.path().join("arrangements");
    std::fs::create_dir(&corpus).unwrap();
    for k in 1..=3 {
        let name = format!("tune{k}-neutral.mid");
        std::fs::copy(
            common::fixture(&format!("melody_choice/{name}")),
            corpus.join(&name),
        )
        .unwrap();
    }
    let build = |lines: &str, file: &str| {
        let index = tmp.path().join(file).display().to_string();
        let (code, _, stderr) = run(&[
            "corpus",
            "build",
            &corpus.display().to_string(),
            "-o",
            &index,
            "--melody-candidates",
            lines,
            "--no-progress",
        ]);
        assert_eq!(code, 0, "{stderr}");
        (index, stderr)
    };
    // Three pitched tracks in each file (the drums are no candidate).
    let (three, stderr) = build("3", "three.idx");
    assert!(
        stderr.contains("indexed 9 melodies from 3 files"),
        "{stderr}"
    );
    let (one, stderr) = build("1", "one.idx");
    assert!(
        stderr.contains("indexed 3 melodies from 3 files"),
        "{stderr}"
    );
    let query = common::fixture("melody_choice/tune2-neutral.mid")
        .display()
        .to_string();
    let search = |index: &str, line: &str| -> Value {
        let (code, stdout, stderr) = run(&[
            "search",
            &query,
            "--corpus",
            index,
            "--select",
            &format!("part={line}"),
            "--no-chance",
            "--format",
            "json",
        ]);
        assert!(code == 0 || code == 1, "{stderr}");
        serde_json::from_str(&stdout).unwrap()
    };
    let through = |v: &Value, line: &str| {
        v["hits"].as_array().unwrap().iter().any(|h| {
            h["path"] == "tune2-neutral.mid"
                && h["corpus_line"]
                    .as_str()
                    .unwrap()
                    .contains(&format!("\"{line}\""))
                && h["relatedness"]["value"].as_f64().unwrap() > 0.99
        })
    };
    // The file's rank order of its lines, as the reader gives it.
    let (_, stdout, _) = run(&["inspect", &query, "--format", "json"]);
    let inspected: Value = serde_json::from_str(&stdout).unwrap();
    let ranked: Vec<String> = inspected["candidates"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["label"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(ranked.len(), 3, "{ranked:?}");
    for line in ["Part 1", "Part 2", "Part 3"] {
        let first = ranked[0].contains(&format!("\"{line}\""));
        assert!(through(&search(&three, line), line), "{line} in {three}");
        // With one line per file, only the most melody-like is there to be found.
        assert_eq!(
            through(&search(&one, line), line),
            first,
            "{line}: {ranked:?}"
        );
    }
    // The plain tune finds its arrangement through the tune's track, and the text names it.
    let plain = common::fixture("melody_choice/tune2-plain.mid")
        .display()
        .to_string();
    let (code, stdout, stderr) = run(&["search", &plain, "--corpus", &three, "--no-chance"]);
    assert_eq!(code, 0, "{stderr}");
    let first_hit = stdout
        .lines()
        .skip_while(|l| !l.contains("tune2-neutral.mid"))
        .nth(1)
        .unwrap_or_default()
        .to_string();
    assert!(first_hit.contains("corpus line track"), "{stdout}");
    assert!(first_hit.contains("\"Part 2\""), "{stdout}");
}

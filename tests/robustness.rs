//! Damaged inputs never panic: every fixture truncated and with bytes changed (a fixed,
//! seeded set of mutations), plus the crashing inputs the fuzzers once found
//! (`tests/fixtures/fuzz/`) and the crafted hostile inputs (`tests/fixtures/hostile/`), are read
//! to a result or a clean error.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::ingest::{read_bytes, Limits, ReadOptions};
use std::path::{Path, PathBuf};

fn files_in(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    files.retain(|p| p.is_file() && !p.extension().is_some_and(|e| e == "py" || e == "md"));
    files.sort();
    files
}

fn options() -> ReadOptions {
    ReadOptions {
        limits: Limits {
            max_notes: 100_000,
            max_bars: 10_000,
            ..Limits::default()
        },
        ..ReadOptions::default()
    }
}

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        self.0 >> 33
    }
}

#[test]
fn mutated_fixtures_never_panic() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let files = files_in(&root);
    assert!(files.len() >= 12, "fixtures missing");
    let mut rng = Lcg(0x5eed);
    let mut errors = 0usize;
    let mut total = 0usize;
    for path in files {
        let bytes = std::fs::read(&path).unwrap();
        let mut cases: Vec<Vec<u8>> = Vec::new();
        for k in 1..=16 {
            cases.push(bytes[..bytes.len() * k / 17].to_vec());
        }
        for _ in 0..48 {
            let mut b = bytes.clone();
            for _ in 0..1 + rng.next() % 4 {
                let i = (rng.next() as usize) % b.len();
                b[i] = rng.next() as u8;
            }
            cases.push(b);
        }
        for case in cases {
            total += 1;
            let outcome = std::panic::catch_unwind(|| {
                let mut o = options();
                read_bytes(&path, &case, &o).is_err() || {
                    o.unfold_repeats = true;
                    read_bytes(&path, &case, &o).is_err()
                }
            });
            match outcome {
                Ok(true) => errors += 1,
                Ok(false) => {}
                Err(_) => panic!("{}: a mutated copy made the reader panic", path.display()),
            }
        }
    }
    // Damage must be noticed at least sometimes: a reader that accepts everything is broken.
    assert!(
        errors > 0 && errors < total,
        "{errors} errors in {total} cases"
    );
}

#[test]
fn fuzz_regressions_read_cleanly() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let mut files = files_in(&root.join("fuzz"));
    // The crafted hostile inputs, which are also the fuzzers' seeds.
    let hostile = files_in(&root.join("hostile"));
    assert!(hostile.len() >= 10, "{hostile:?}");
    files.extend(hostile);
    for path in files {
        let bytes = std::fs::read(&path).unwrap();
        let result = std::panic::catch_unwind(|| read_bytes(&path, &bytes, &options()).is_ok());
        assert!(result.is_ok(), "{} panics", path.display());
    }
}

#!/usr/bin/env python3
"""Time reading MusicXML with collatio against music21 on a fixed set of corpus files.

The files: `--count` (default 40) files of music21's bundled corpus spread evenly over
log(file size), from the smallest (~2 KiB) to the largest (~1.2 MiB), so small chorales and
large scores are both represented; the list is deterministic for a given music21 version and
printed.

Measured:
* collatio, per process: wall time of `collatio inspect FILE --format json` (stdout
  discarded), median of `--repeat` runs after one warm-up run; also the start-up cost of
  the process (`collatio --version`, median) so the parse share can be estimated;
* collatio, in process (with `--in-process`): a throw-away Rust program built in a temporary
  directory against this crate (path dependency, release profile) times
  `collatio::ingest::read_file` per file (median of `--repeat`, after a warm-up), i.e.
  reading + melody selection without process start and without JSON output (set
  CARGO_TARGET_DIR to reuse a build directory between runs). This is independent of the
  criterion bench in benches/ (which exists separately);
* music21: `converter.parse(path, forceSource=True)` in this one process, after
  `import music21` and one warm-up parse (both excluded), once per file (`forceSource` keeps
  music21's pickle cache out of it).

Usage:
  .venv/bin/python scripts/speed_vs_music21.py [--collatio target/release/collatio]
      [--count 40] [--repeat 3] [--in-process]
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
import warnings

EXTENSIONS = (".xml", ".mxl", ".musicxml")
REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

PROBE_MAIN = r"""
use std::time::Instant;
fn main() {
    let mut args = std::env::args().skip(1);
    let repeat: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(3).max(1);
    let options = collatio::ingest::ReadOptions::default();
    for path in args {
        let p = std::path::Path::new(&path);
        let ok = collatio::ingest::read_file(p, &options).is_ok(); // warm-up
        let mut times = Vec::with_capacity(repeat);
        for _ in 0..repeat {
            let t = Instant::now();
            let r = collatio::ingest::read_file(p, &options);
            times.push(t.elapsed().as_secs_f64());
            std::hint::black_box(&r);
        }
        times.sort_by(|a, b| a.partial_cmp(b).unwrap_or(std::cmp::Ordering::Equal));
        println!("{}\t{}\t{}", times[times.len() / 2], ok, path);
    }
}
"""


def corpus_dir() -> str:
    import music21

    return os.path.join(os.path.dirname(music21.__file__), "corpus")


def pick_files(root: str, count: int) -> list[str]:
    """`count` files spread evenly over log(file size), from the smallest to the largest:
    for each of `count` geometrically spaced target sizes, the nearest file not yet taken
    (ties broken by path).  Deterministic; returned sorted by path."""
    files = []
    for dirpath, _d, names in os.walk(root):
        for n in names:
            if n.lower().endswith(EXTENSIONS):
                full = os.path.join(dirpath, n)
                files.append((os.path.getsize(full), os.path.relpath(full, root)))
    files.sort()
    if count >= len(files):
        return sorted(rel for _s, rel in files)
    lo, hi = math.log(files[0][0]), math.log(files[-1][0])
    chosen: set[str] = set()
    for i in range(count):
        target = lo + (hi - lo) * i / (count - 1)
        best = min((f for f in files if f[1] not in chosen),
                   key=lambda f: (abs(math.log(f[0]) - target), f[1]))
        chosen.add(best[1])
    return sorted(chosen)


def time_process(cmd: list[str], repeat: int) -> float:
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)  # warm-up
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def in_process_times(paths: list[str], repeat: int) -> dict[str, float] | None:
    """Builds and runs the Rust probe; returns {path: seconds} or None if it cannot build."""
    with tempfile.TemporaryDirectory(prefix="collatio-speed-") as tmp:
        os.makedirs(os.path.join(tmp, "src"))
        with open(os.path.join(tmp, "Cargo.toml"), "w") as f:
            f.write(
                "[package]\nname = \"collatio-speed-probe\"\nversion = \"0.0.0\"\n"
                "edition = \"2021\"\npublish = false\n\n[dependencies]\n"
                f"collatio = {{ path = {REPO!r} }}\n\n[workspace]\n"
            )
        with open(os.path.join(tmp, "src", "main.rs"), "w") as f:
            f.write(PROBE_MAIN)
        print("building the in-process probe (release) ...", file=sys.stderr, flush=True)
        build = subprocess.run(["cargo", "build", "--release", "--quiet"], cwd=tmp,
                               capture_output=True, text=True)
        if build.returncode != 0:
            print(f"in-process probe did not build:\n{build.stderr[-2000:]}", file=sys.stderr)
            return None
        target = os.environ.get("CARGO_TARGET_DIR") or os.path.join(tmp, "target")
        exe = os.path.join(target, "release", "collatio-speed-probe")
        run = subprocess.run([exe, str(repeat), *paths], capture_output=True, text=True)
        out = {}
        for line in run.stdout.splitlines():
            secs, _ok, path = line.split("\t", 2)
            out[path] = float(secs)
        return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--collatio", default="target/release/collatio")
    ap.add_argument("--count", type=int, default=40, help="number of corpus files (default 40)")
    ap.add_argument("--repeat", type=int, default=3, help="collatio runs per file (median)")
    ap.add_argument("--in-process", action="store_true",
                    help="also time collatio in process (builds a small probe with cargo)")
    args = ap.parse_args()
    if args.count < 2 or args.repeat < 1:
        ap.error("--count must be at least 2 and --repeat at least 1")
    binary = os.path.abspath(args.collatio)
    if not os.access(binary, os.X_OK):
        ap.error(f"collatio binary not found: {binary}")

    t_import = time.perf_counter()
    import music21
    from music21 import converter

    t_import = time.perf_counter() - t_import
    warnings.simplefilter("ignore")
    root = corpus_dir()
    rels = pick_files(root, args.count)
    paths = [os.path.join(root, r) for r in rels]
    print(f"music21 {music21.__version__} (import {t_import:.2f} s, excluded); "
          f"collatio {binary}; {len(rels)} files; collatio median of {args.repeat} runs")

    startup = time_process([binary, "--version"], max(args.repeat, 5))

    col = {p: time_process([binary, "inspect", p, "--format", "json"], args.repeat)
           for p in paths}

    converter.parse(paths[0], forceSource=True)  # warm-up, excluded
    m21 = {}
    for p in paths:
        t = time.perf_counter()
        try:
            converter.parse(p, forceSource=True)
        except Exception as e:  # noqa: BLE001
            print(f"music21 failed on {p}: {e}", file=sys.stderr)
        m21[p] = time.perf_counter() - t

    inproc = in_process_times(paths, args.repeat) if args.in_process else None

    head = f"{'file':58} {'KiB':>7} {'collatio ms':>11} {'music21 ms':>11} {'ratio':>7}"
    if inproc is not None:
        head += f" {'in-proc ms':>10}"
    print(head)
    for rel, p in zip(rels, paths):
        line = (f"{rel[:58]:58} {os.path.getsize(p) / 1024:7.0f} {col[p] * 1e3:11.1f} "
                f"{m21[p] * 1e3:11.1f} {m21[p] / col[p]:7.1f}")
        if inproc is not None:
            line += f" {inproc.get(p, float('nan')) * 1e3:10.2f}"
        print(line)

    tc, tm = sum(col.values()), sum(m21.values())
    print()
    print(f"collatio per process:   {tc:8.3f} s total ({tc / len(paths) * 1e3:.1f} ms/file; "
          f"process start-up alone {startup * 1e3:.1f} ms)")
    print(f"collatio minus start-up:{tc - startup * len(paths):8.3f} s (estimate)")
    if inproc is not None:
        ti = sum(inproc.values())
        print(f"collatio in process:    {ti:8.3f} s total (read_file only, no JSON output)")
    print(f"music21 converter.parse:{tm:8.3f} s total ({tm / len(paths) * 1e3:.1f} ms/file)")
    print(f"ratio music21/collatio: {tm / tc:8.1f}x per process"
          + (f", {tm / sum(inproc.values()):.1f}x in process" if inproc else ""))
    return 0


if __name__ == "__main__":
    sys.exit(main())

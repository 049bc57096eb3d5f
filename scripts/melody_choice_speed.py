#!/usr/bin/env python3
"""Time `collatio compare` of two three-minute multi-part scores, pairing 3 × 3 candidate melody
lines (the default) against 1 × 1 (issue 17's target: under 1 s).

Builds, under target/melody-choice-speed/ (nothing is committed), score_a.mid and score_b.mid:
larkfield.mid and glimmerfen.mid of tests/fixtures/arrangements (multi-part arrangements)
repeated with mido until each lasts about 180 s. Then runs, best of --runs, with
/usr/bin/time (wall, user CPU, peak RSS):
  collatio compare score_a.mid score_b.mid --format json [--melody-candidates 1]
on all cores and with RAYON_NUM_THREADS=1 (one core).

Usage: .venv/bin/python scripts/melody_choice_speed.py [--collatio target/release/collatio]
"""

import argparse
import os
import pathlib
import subprocess
import sys

import mido

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
from arrangement_speed import repeat_midi  # noqa: E402

ROOT = pathlib.Path(__file__).resolve().parent.parent
FIX = ROOT / "tests/fixtures/arrangements"
OUT = ROOT / "target/melody-choice-speed"


def timed(binary, args, threads):
    env = dict(os.environ)
    if threads:
        env["RAYON_NUM_THREADS"] = str(threads)
    proc = subprocess.run(["/usr/bin/time", "-f", "%e %U %M", binary, *args],
                          capture_output=True, text=True, env=env)
    wall, user, rss = proc.stderr.strip().splitlines()[-1].split()
    return float(wall), float(user), int(rss) / 1024.0


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--collatio", default=str(ROOT / "target/release/collatio"))
    ap.add_argument("--runs", type=int, default=5)
    args = ap.parse_args()
    OUT.mkdir(parents=True, exist_ok=True)
    a, b = OUT / "score_a.mid", OUT / "score_b.mid"
    repeat_midi(FIX / "larkfield.mid", a)
    repeat_midi(FIX / "glimmerfen.mid", b)
    print(f"inputs: {a.name} {mido.MidiFile(a).length:.1f} s, {b.name} {mido.MidiFile(b).length:.1f} s")
    for threads in (None, 1):
        for n in (3, 1):
            runs = [timed(args.collatio, ["compare", str(a), str(b), "--format", "json",
                                          "--melody-candidates", str(n)], threads)
                    for _ in range(args.runs)]
            wall, user, rss = min(runs)
            cores = "one core" if threads else "all cores"
            print(f"{n}x{n} pairings, {cores}: wall {wall:.2f} s, user {user:.2f} s, {rss:.0f} MiB")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Time `collatio compare` on three-minute recordings of full arrangements, on one core.

Builds, under target/arrangement-speed/ (nothing is committed):
  - rec_a.wav: the larkfield, weirmoor and tidewrack renders of tests/fixtures/arrangements
    joined by SoX until they last 180 s (mono, 22,050 Hz);
  - rec_b.wav: the cinderpath_rearranged and glimmerfen renders joined likewise, then SoX
    `tempo 1.1` (another tempo) and `pitch 200` (another key);
  - score_a.mid: larkfield.mid repeated by mido until it lasts about 180 s (all parts);
  - rec_score_a.wav: the FluidSynth render of score_a.mid (a recording of that score).

Then runs, with RAYON_NUM_THREADS=1 and /usr/bin/time (wall, user CPU, peak RSS):
  collatio compare rec_a.wav rec_b.wav            (recording against recording)
  collatio compare score_a.mid rec_score_a.wav    (score against a recording of it)
  collatio compare score_a.mid rec_b.wav          (score against another recording)
each with the default statistics (the fitted real-melody null for melodic E-values, 99 harmonic
shuffles). Target: under 1 s each on one core.

Usage: .venv/bin/python scripts/arrangement_speed.py [--runs 3]
Needs: sox, fluidsynth, fluid-soundfont-gm; mido (scripts/requirements.txt); a release build.
"""

import argparse
import json
import os
import pathlib
import re
import subprocess
import sys

import mido

ROOT = pathlib.Path(__file__).resolve().parent.parent
FIX = ROOT / "tests/fixtures/arrangements"
OUT = ROOT / "target/arrangement-speed"
BIN = ROOT / "target/release/collatio"
SOUNDFONT = "/usr/share/sounds/sf2/FluidR3_GM.sf2"
SECONDS = 180.0


def run(*args):
    subprocess.run([str(a) for a in args], check=True, capture_output=True)


def duration(path):
    out = subprocess.run(["soxi", "-D", str(path)], check=True, capture_output=True, text=True)
    return float(out.stdout)


def join_to(paths, target, effects=(), stretch=1.0):
    """Join renders (in turn, repeating) until SECONDS (times `stretch`, for an effect that
    shortens), then apply SoX effects and keep the first SECONDS."""
    chosen, total = [], 0.0
    while total < SECONDS * stretch:
        for p in paths:
            chosen.append(p)
            total += duration(p)
            if total >= SECONDS * stretch:
                break
    run("sox", *chosen, "-r", "22050", "-c", "1", target, *effects, "trim", "0", str(SECONDS))


def repeat_midi(source, target):
    """Repeat every track of a MIDI file until it lasts about SECONDS."""
    mid = mido.MidiFile(source)
    length = mid.length
    times = max(1, int(-(-SECONDS // length)))
    out = mido.MidiFile(type=mid.type, ticks_per_beat=mid.ticks_per_beat)
    for track in mid.tracks:
        events = [m for m in track if m.type != "end_of_track"]
        end_gap = sum(m.time for m in track) - sum(m.time for m in events)
        new = mido.MidiTrack()
        for k in range(times):
            for i, m in enumerate(events):
                if k > 0 and m.is_meta and m.type in ("track_name", "time_signature", "key_signature", "set_tempo") and sum(e.time for e in events[: i + 1]) == 0:
                    continue
                new.append(m.copy())
        new.append(mido.MetaMessage("end_of_track", time=end_gap))
        out.tracks.append(new)
    out.save(target)


def timed(args):
    env = dict(os.environ, RAYON_NUM_THREADS="1")
    proc = subprocess.run(
        ["/usr/bin/time", "-f", "%e %U %M", str(BIN), *args],
        capture_output=True, text=True, env=env,
    )
    last = proc.stderr.strip().splitlines()[-1]
    wall, user, rss = last.split()
    return float(wall), float(user), int(rss) / 1024.0, proc


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    OUT.mkdir(parents=True, exist_ok=True)
    rec_a = OUT / "rec_a.wav"
    rec_b = OUT / "rec_b.wav"
    score_a = OUT / "score_a.mid"
    rec_score_a = OUT / "rec_score_a.wav"
    join_to([FIX / "larkfield.ogg", FIX / "weirmoor.ogg", FIX / "tidewrack.ogg"], rec_a)
    join_to([FIX / "cinderpath_rearranged.ogg", FIX / "glimmerfen.ogg"], rec_b,
            ("tempo", "1.1", "pitch", "200"), stretch=1.1)
    repeat_midi(FIX / "larkfield.mid", score_a)
    raw = OUT / "rec_score_a_44k.wav"
    run("fluidsynth", "-ni", "-g", "0.6", "-r", "44100", "-F", raw, SOUNDFONT, score_a)
    run("sox", raw, "-r", "22050", "-c", "1", rec_score_a, "gain", "-n", "-1")
    cases = [
        ("recording vs recording", [rec_a, rec_b]),
        ("score vs its recording", [score_a, rec_score_a]),
        ("score vs another recording", [score_a, rec_b]),
    ]
    print(f"inputs: {rec_a.name} {duration(rec_a):.1f} s, {rec_b.name} {duration(rec_b):.1f} s, "
          f"{score_a.name} {mido.MidiFile(score_a).length:.1f} s, {rec_score_a.name} {duration(rec_score_a):.1f} s")
    for name, files in cases:
        results = [timed(["compare", str(files[0]), str(files[1]), "--format", "json"]) for _ in range(args.runs)]
        best = min(results, key=lambda r: r[0])
        proc = best[3]
        if proc.returncode not in (0, 1):
            print(proc.stderr, file=sys.stderr)
            sys.exit(1)
        record = json.loads(proc.stdout)
        harmony = record.get("harmony") or {}
        sync = record.get("synchronisation") or {}
        print(f"{name}: wall {best[0]:.2f} s (best of {args.runs}), user CPU {best[1]:.2f} s, "
              f"peak RSS {best[2]:.0f} MiB; melodic passages {len(record['passages'])}, "
              f"harmonic passages {len(harmony.get('passages', []))}"
              + (f", follows {sync.get('follows')}" if sync else ""))


if __name__ == "__main__":
    main()

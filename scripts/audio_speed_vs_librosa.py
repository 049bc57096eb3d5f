#!/usr/bin/env python3
"""Time collatio's audio analysis against librosa doing the equivalent work.

Test signals (deterministic; SoX with -R, written under target/audio-speed/):
  a 32-note phrase of sawtooth notes (C3-C6 range, durations 0.2-0.8 s, 50 ms gaps of
  silence, 5 ms attack / 20 ms release), 44.1 kHz, 16-bit, mono WAV, repeated and trimmed
  to exactly 3 minutes (melody_3min.wav) and 10 minutes (melody_10min.wav); a 10-second
  excerpt (warmup_10s.wav) is used only to warm librosa up.

Measured:
* collatio: `collatio inspect FILE --format json` (stdout discarded) on both files, one
  untimed warm-up run (page cache), then `--repeat` runs under `/usr/bin/time -v`; wall
  time is the median of those runs (measured here with perf_counter around the process),
  CPU time the median of user + system seconds as /usr/bin/time reports them, peak memory
  the largest "Maximum resident set size" among them.
* librosa, in this process, on the 3-minute file: librosa.load(sr=22050, mono=True) +
  librosa.pyin(y, fmin=C2, fmax=C7, sr=22050) + librosa.feature.chroma_stft(y, sr) +
  librosa.beat.beat_track(y, sr). `import librosa` is excluded; one warm-up of the whole
  pipeline on the 10-second excerpt (numba JIT, resampler, FFT plans) is excluded; then up
  to `--repeat` timed runs, stopping after the first if it took more than 120 s (that
  single run is then reported). Per-step times are printed too, and the process CPU time
  (time.process_time, all threads) of each run.

On a shared, loaded machine the CPU-time ratio is the fairer comparison; both are printed.

Usage:
  .venv/bin/python scripts/audio_speed_vs_librosa.py [--collatio target/release/collatio]
      [--repeat 3]
"""

from __future__ import annotations

import argparse
import os
import re
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
OUT = ROOT / "target" / "audio-speed"
SR_IN = 44100
SR = 22050
GAP = 0.05
SLOW_RUN = 120.0

# (MIDI note, duration in seconds including the gap): a fixed 32-note phrase.
PHRASE = [
    (60, 0.5), (62, 0.5), (64, 0.5), (65, 0.5), (67, 1.0), (67, 0.5), (69, 0.25), (71, 0.25),
    (72, 0.75), (71, 0.25), (69, 0.5), (67, 0.5), (64, 0.5), (60, 0.5), (55, 1.0), (48, 0.5),
    (52, 0.5), (55, 0.5), (59, 0.25), (62, 0.25), (65, 0.5), (69, 0.5), (74, 0.75), (79, 0.25),
    (84, 0.5), (81, 0.5), (77, 0.5), (72, 0.5), (67, 0.5), (63, 0.5), (58, 0.5), (60, 1.0),
]


def midi_hz(m: int) -> float:
    return 440.0 * 2.0 ** ((m - 69) / 12.0)


def sox(*args: str) -> None:
    subprocess.run(["sox", "-R", *args], check=True, capture_output=True)


def synthesize() -> tuple[Path, Path, Path]:
    OUT.mkdir(parents=True, exist_ok=True)
    notes_dir = OUT / "notes"
    notes_dir.mkdir(exist_ok=True)
    note_files = []
    for i, (m, dur) in enumerate(PHRASE):
        tone = dur - GAP
        f = notes_dir / f"n{i:02d}.wav"
        sox("-n", "-r", str(SR_IN), "-c", "1", "-b", "16", str(f),
            "synth", f"{tone:.3f}", "sawtooth", f"{midi_hz(m):.4f}",
            "vol", "0.5", "fade", "t", "0.005", f"{tone:.3f}", "0.02", "pad", "0", f"{GAP:.3f}")
        note_files.append(str(f))
    phrase = OUT / "phrase.wav"
    sox(*note_files, str(phrase))
    plen = sum(d for _, d in PHRASE)
    outs = []
    for name, secs in (("melody_3min.wav", 180), ("melody_10min.wav", 600)):
        reps = int(secs // plen) + 1
        p = OUT / name
        sox(str(phrase), str(p), "repeat", str(reps), "trim", "0", str(secs))
        outs.append(p)
    warm = OUT / "warmup_10s.wav"
    sox(str(outs[0]), str(warm), "trim", "0", "10")
    return outs[0], outs[1], warm


def soxi_duration(p: Path) -> float:
    return float(subprocess.run(["soxi", "-D", str(p)], check=True, capture_output=True,
                                text=True).stdout.strip())


def time_collatio(exe: str, path: Path, repeat: int) -> tuple[list[float], list[float], int]:
    cmd = [exe, "inspect", str(path), "--format", "json"]
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)  # warm-up (page cache)
    walls, cpus, rss = [], [], 0
    for _ in range(repeat):
        t0 = time.perf_counter()
        r = subprocess.run(["/usr/bin/time", "-v", *cmd], stdout=subprocess.DEVNULL,
                           stderr=subprocess.PIPE, text=True)
        walls.append(time.perf_counter() - t0)
        if r.returncode != 0:
            sys.exit(f"collatio failed on {path}:\n{r.stderr}")
        m = re.search(r"Maximum resident set size \(kbytes\): (\d+)", r.stderr)
        rss = max(rss, int(m.group(1)))
        user = re.search(r"User time \(seconds\): ([0-9.]+)", r.stderr)
        system = re.search(r"System time \(seconds\): ([0-9.]+)", r.stderr)
        cpus.append(float(user.group(1)) + float(system.group(1)))
    return walls, cpus, rss


def librosa_pipeline(librosa, path: Path) -> dict[str, float]:
    t = {}
    c0 = time.process_time()
    t0 = time.perf_counter()
    y, sr = librosa.load(str(path), sr=SR, mono=True)
    t["load"] = time.perf_counter() - t0
    t1 = time.perf_counter()
    librosa.pyin(y, fmin=librosa.note_to_hz("C2"), fmax=librosa.note_to_hz("C7"), sr=sr)
    t["pyin"] = time.perf_counter() - t1
    t1 = time.perf_counter()
    librosa.feature.chroma_stft(y=y, sr=sr)
    t["chroma_stft"] = time.perf_counter() - t1
    t1 = time.perf_counter()
    librosa.beat.beat_track(y=y, sr=sr)
    t["beat_track"] = time.perf_counter() - t1
    t["total"] = time.perf_counter() - t0
    t["cpu"] = time.process_time() - c0
    return t


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--collatio", default=str(ROOT / "target" / "release" / "collatio"))
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    if not os.path.exists(args.collatio):
        sys.exit(f"{args.collatio} not found (build it with cargo build --release)")

    print(f"load average at start (1/5/15 min): {' '.join(f'{x:.2f}' for x in os.getloadavg())}"
          f"; CPUs: {os.cpu_count()}")
    f3, f10, warm = synthesize()
    for p in (f3, f10):
        print(f"signal: {p.relative_to(ROOT)}  {soxi_duration(p):.1f} s, {p.stat().st_size} bytes")

    res = {}
    for p in (f3, f10):
        walls, cpus, rss = time_collatio(args.collatio, p, args.repeat)
        res[p] = (statistics.median(walls), statistics.median(cpus), rss)
        print(f"collatio inspect {p.name} --format json: wall "
              f"{', '.join(f'{w:.3f}' for w in walls)} s -> median {statistics.median(walls):.3f} s;"
              f" CPU (user + system) {', '.join(f'{c:.2f}' for c in cpus)} s;"
              f" peak RSS {rss} KiB ({rss / 1024:.1f} MiB)")

    import librosa  # noqa: E402  (import time excluded)
    import numpy
    print(f"librosa {librosa.__version__}, numpy {numpy.__version__}, python {sys.version.split()[0]}")
    tw = librosa_pipeline(librosa, warm)
    print(f"librosa warm-up on {warm.name} (excluded): {tw['total']:.2f} s")
    runs = []
    for i in range(args.repeat):
        t = librosa_pipeline(librosa, f3)
        runs.append(t)
        print(f"librosa run {i + 1} on {f3.name}: total {t['total']:.2f} s, CPU {t['cpu']:.2f} s  ("
              + ", ".join(f"{k} {v:.2f}" for k, v in t.items() if k not in ("total", "cpu"))
              + ")")
        if t["total"] > SLOW_RUN:
            print(f"  run took > {SLOW_RUN:.0f} s: reporting this single run")
            break
    lib = statistics.median(r["total"] for r in runs)
    lib_cpu = statistics.median(r["cpu"] for r in runs)
    c3, cpu3, rss3 = res[f3]
    c10, cpu10, rss10 = res[f10]

    print()
    print("== summary ==")
    print(f"librosa version: {librosa.__version__}")
    print(f"load average at end (1/5/15 min): {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    print(f"3-min file, collatio inspect --format json (median of {args.repeat}): {c3:.3f} s")
    print(f"3-min file, librosa load+pyin+chroma_stft+beat_track "
          f"({'median of ' + str(len(runs)) if len(runs) > 1 else 'single run'}): {lib:.2f} s")
    print(f"speed ratio librosa / collatio (wall): {lib / c3:.1f}x")
    print(f"3-min file, CPU seconds (user + system): collatio {cpu3:.2f} s, librosa {lib_cpu:.2f} s;"
          f" ratio {lib_cpu / max(cpu3, 1e-9):.1f}x; collatio {180.0 / max(cpu3, 1e-9):.0f}x real time")
    print(f"10-min file, collatio wall (median of {args.repeat}): {c10:.3f} s")
    print(f"10-min file, collatio peak RSS: {rss10} KiB ({rss10 / 1024:.1f} MiB)"
          f"  [3-min: {rss3 / 1024:.1f} MiB]")


if __name__ == "__main__":
    main()

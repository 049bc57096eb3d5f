#!/usr/bin/env python3
"""Local-alignment speed of a general-purpose SIMD library (parasail) beside collatio's kernel.

What is compared: cells of the Smith–Waterman (Gotoh, affine gaps) matrix per second, single
thread, on the sizes of collatio's criterion benchmark `benches/align.rs`
("align/kernel 1000x1000 x 12 transpositions"): two 1,000-note sequences, all 12
transpositions, score only, i.e. 1000 x 1000 x 12 = 12,000,000 cells per run.

CAVEAT: this is not the same work per cell. parasail looks up one entry of a 12 x 12
substitution matrix per cell (pitch class only). collatio's kernel evaluates a richer
substitution function per cell (pitch class under the transposition, interval, rhythm,
metric level) plus fragmentation/consolidation checks, and its scores differ. The ratio
below therefore says how far collatio's cells/s are from what a vectorised library reaches
on a reduced (pitch-class-only) problem of the same shape; it is not a like-for-like score
comparison.

Data: the same 64-bit LCG and pitch walk as `random_sequence` in `benches/align.rs`
(state = state * 6364136223846793005 + 1442695040888963407 mod 2^64, value = state >> 33;
step = value % 11 - 5, pitch clamped to 55..84, one draw each for rhythm and metre as
there, so the stream is identical), seeds 1 (A) and 2 (B); only the pitch classes are kept,
written as letters A..L (pitch class 0..11).

Scoring (collatio's pitch term, `AlignParams::default()`): same pitch class +8, one semitone
away (circularly, mod 12) -4, other -8; a gap of length k costs 16 + 8 (k - 1).
parasail's `open`/`extend` arguments follow the same convention (its recurrences are
E = max(E - extend, H - open), so the first gap position costs `open`, each further one
`extend`); the script does not rely on that: it checks it against a plain-Python Gotoh
reference on small inputs and on a hand-made case that tells the conventions apart, and
stops if parasail disagrees. So open=16, extend=8 are passed unchanged.

Transposition t means B = A + t (as in collatio): B's letters are shifted by -t mod 12 and
aligned against A with the same matrix; over all 12 values of t this is the same set of
runs as shifting by +t.

Timed (time.perf_counter, one "run" = the 12 transpositions back to back, `--warmup` runs
discarded, median and min of `--repeat` runs; the 12 shifted strings are built beforehand):
* sw_striped_16   Farrar striped, 16-bit lanes, CPU dispatch (AVX2 where available);
* sw_striped_sat  8-bit lanes first, recomputed with 16-bit if the 8-bit pass saturates;
* sw_scan_16      Rognes/Seeberg-style prefix scan, 16-bit lanes;
* sw_diag_16      anti-diagonal vectorisation, 16-bit lanes;
* sw_striped_profile_16  striped 16-bit with A's query profile built once (outside the
                  timing) and reused for the 12 transpositions;
* sw              parasail's scalar (non-SIMD) reference implementation, for scale;
* the striped and scan variants again with B = `with_shared_passages(A)` (the bench's other
                  input, ten 30-note passages of A), since their speed depends on the data;
* sw_trace_striped_16  one alignment with traceback (best transposition only, N x M
                  cells), alone and with the CIGAR extracted.

collatio's numbers come from criterion's estimates.json of the benchmark above (mean point
estimate in ns per iteration; produce it with `cargo bench --bench align -- kernel`).

Usage:
  .venv/bin/pip install -r scripts/requirements-bench.txt
  .venv/bin/python scripts/align_vs_parasail.py [--n 1000] [--repeat 15] [--warmup 2]
      [--collatio-bench-json "target/criterion/align/kernel 1000x1000 x 12 transpositions/new/estimates.json"]
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import sys
import time

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
BENCH_ID = "kernel 1000x1000 x 12 transpositions"
DEFAULT_ESTIMATES = os.path.join(REPO, "target", "criterion", "align", BENCH_ID, "new", "estimates.json")

ALPHABET = "ABCDEFGHIJKL"  # pitch class 0..11
MATCH, NEAR, MISMATCH = 8, -4, -8
GAP_OPEN, GAP_EXTEND = 16, 8  # gap of length k costs GAP_OPEN + GAP_EXTEND * (k - 1)
MASK64 = (1 << 64) - 1


def random_pitch_classes(length: int, seed: int) -> list[int]:
    """Pitch classes of `random_sequence(length, seed)` in benches/align.rs (same draws)."""
    state = seed

    def next_value() -> int:
        nonlocal state
        state = (state * 6364136223846793005 + 1442695040888963407) & MASK64
        return state >> 33  # < 2^31, so Rust's `%` on i64 and Python's agree

    pitch = 67
    classes = []
    for _ in range(length):
        step = next_value() % 11 - 5
        new_pitch = min(max(pitch + step, 55), 84)
        next_value()  # inter-onset interval draw
        next_value()  # metric level draw
        classes.append(new_pitch % 12)
        pitch = new_pitch
    return classes


def with_shared_passages(a: list[int], length: int) -> list[int]:
    """`with_shared_passages` of benches/align.rs: ten 30-note segments of A in seed-99 noise."""
    noise = random_pitch_classes(length, 99)
    segment, stride = 30, length // 10
    out: list[int] = []
    for k in range(10):
        out += noise[k * stride:(k + 1) * stride - segment]
        out += a[k * stride:k * stride + segment]
    return out


def pitch_score(a: int, b: int) -> int:
    d = (b - a) % 12
    if d == 0:
        return MATCH
    if d in (1, 11):
        return NEAR
    return MISMATCH


def to_letters(classes: list[int], shift: int = 0) -> str:
    return "".join(ALPHABET[(c + shift) % 12] for c in classes)


def reference_sw(a: str, b: str, first: int, further: int) -> int:
    """Plain Gotoh local alignment score; a gap of length k costs first + further*(k-1)."""
    neg = -(10**9)
    idx = {ch: i for i, ch in enumerate(ALPHABET)}
    ai = [idx[c] for c in a]
    bi = [idx[c] for c in b]
    m = len(bi)
    h_prev = [0] * (m + 1)
    f = [neg] * (m + 1)  # gap in b (vertical)
    best = 0
    for x in ai:
        h = [0] * (m + 1)
        e = neg  # gap in a (horizontal)
        for j in range(1, m + 1):
            e = max(e - further, h[j - 1] - first)
            f[j] = max(f[j] - further, h_prev[j] - first)
            v = max(0, h_prev[j - 1] + pitch_score(x, bi[j - 1]), e, f[j])
            h[j] = v
            if v > best:
                best = v
        h_prev = h
    return best


def cpu_model() -> str:
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            for line in fh:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def load_average() -> str:
    try:
        one, five, fifteen = os.getloadavg()
        return f"{one:.2f} {five:.2f} {fifteen:.2f} (1/5/15 min) on {os.cpu_count()} logical CPUs"
    except OSError:
        return "unavailable"


def make_matrix(parasail):
    matrix = parasail.matrix_create(ALPHABET, MATCH, MISMATCH)
    for i in range(12):
        for j in range(12):
            matrix[i, j] = pitch_score(i, j)
    # Row/column 12 is parasail's wildcard '*'; our strings never contain it.
    return matrix


def check_gap_convention(parasail, matrix) -> None:
    """Stop unless parasail's open/extend means first gap position = open, further = extend."""
    # Hand-made case: two exact 12-note blocks with 1- and 2-note insertions in between.
    p, q, r = "ABCDEFGHIJKL", "LKJIHGFEDCBA", "ACEGIKBDFHJL"
    cases = [(p + q + r, p + "C" + q + "FA" + r)]
    # Random small cases of the benchmark's statistics, all 12 transpositions.
    a = random_pitch_classes(60, 11)
    b = random_pitch_classes(60, 12)
    cases += [(to_letters(a), to_letters(b, -t)) for t in range(12)]
    for s1, s2 in cases:
        want = reference_sw(s1, s2, GAP_OPEN, GAP_EXTEND)
        blast_style = reference_sw(s1, s2, GAP_OPEN + GAP_EXTEND, GAP_EXTEND)
        for name in ("sw", "sw_striped_16", "sw_scan_16", "sw_diag_16", "sw_trace_striped_16"):
            got = getattr(parasail, name)(s1, s2, GAP_OPEN, GAP_EXTEND, matrix).score
            if got != want:
                sys.exit(
                    f"parasail.{name} scored {got}, the reference with gap(k) = {GAP_OPEN} + "
                    f"{GAP_EXTEND}(k-1) scored {want} (open+k*extend would give {blast_style}): "
                    "convention differs, adjust the conversion"
                )
    s1, s2 = cases[0]
    print(
        "gap convention check: parasail(open=16, extend=8) == reference with gap(k) = 16 + 8(k-1) "
        f"on {len(cases)} cases (hand-made case: {reference_sw(s1, s2, GAP_OPEN, GAP_EXTEND)}, "
        f"which open+k*extend would score {reference_sw(s1, s2, GAP_OPEN + GAP_EXTEND, GAP_EXTEND)})"
    )


def time_runs(fn, warmup: int, repeat: int) -> list[float]:
    for _ in range(warmup):
        fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return times


def fmt_rate(cells_per_s: float) -> str:
    return f"{cells_per_s / 1e6:10.1f} M cells/s"


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--n", type=int, default=1000, help="length of A and B (default 1000, as the bench)")
    ap.add_argument("--repeat", type=int, default=15, help="timed runs per variant (median reported)")
    ap.add_argument("--warmup", type=int, default=2, help="untimed runs per variant first")
    ap.add_argument(
        "--collatio-bench-json",
        default=DEFAULT_ESTIMATES,
        help="criterion estimates.json of 'align/%s' (default: the one under target/criterion)" % BENCH_ID,
    )
    args = ap.parse_args()

    try:
        import parasail
    except ImportError:
        sys.exit("parasail is not installed: .venv/bin/pip install -r scripts/requirements-bench.txt")
    try:
        import numpy

        numpy_version = numpy.__version__
    except ImportError:
        numpy_version = "not installed"

    n = args.n
    print("== environment")
    print(f"python {platform.python_version()}, parasail {parasail.__version__} "
          f"(C library {'.'.join(map(str, parasail.version()))}), numpy {numpy_version} "
          "(used by parasail's binding only)")
    print(f"CPU: {cpu_model()}; parasail can use AVX2: {parasail.can_use_avx2()}, "
          f"SSE4.1: {parasail.can_use_sse41()} (the *_16 / *_sat dispatchers pick the widest)")
    print(f"load average at start: {load_average()}")
    print("single thread (parasail's functions run in the calling thread)")

    print("\n== parameters")
    print(f"sequences: A = random_sequence({n}, seed 1), B = random_sequence({n}, seed 2) "
          "(benches/align.rs LCG), pitch classes only, letters A..L")
    print(f"substitution: same pitch class {MATCH:+d}, one semitone away (mod 12) {NEAR:+d}, "
          f"other {MISMATCH:+d} (12x12 matrix via parasail.matrix_create + set values)")
    print(f"gaps: length k costs {GAP_OPEN} + {GAP_EXTEND}(k-1); passed to parasail as "
          f"open={GAP_OPEN}, extend={GAP_EXTEND}")
    print(f"work per run: {n} x {n} x 12 transpositions = {n * n * 12:,} cells; "
          f"{args.warmup} warm-up + {args.repeat} timed runs per variant, median (min)")

    matrix = make_matrix(parasail)
    print()
    check_gap_convention(parasail, matrix)

    a_pc = random_pitch_classes(n, 1)
    b_pc = random_pitch_classes(n, 2)
    a = to_letters(a_pc)
    b_by_t = [to_letters(b_pc, -t) for t in range(12)]  # transposition t: B = A + t
    cells = n * n * 12

    # Scores per transposition; every variant must agree.
    scores = [parasail.sw_striped_16(a, bt, GAP_OPEN, GAP_EXTEND, matrix).score for bt in b_by_t]
    sat8 = [parasail.sw_striped_8(a, bt, GAP_OPEN, GAP_EXTEND, matrix).saturated for bt in b_by_t]
    for name in ("sw_scan_16", "sw_diag_16", "sw_striped_sat", "sw"):
        other = [getattr(parasail, name)(a, bt, GAP_OPEN, GAP_EXTEND, matrix).score for bt in b_by_t]
        if other != scores:
            sys.exit(f"{name} disagrees with sw_striped_16: {other} vs {scores}")
    best_t = max(range(12), key=lambda t: (scores[t], -t))
    print(f"scores by transposition t=0..11: {scores} (all variants agree); best t={best_t}")
    print(f"8-bit pass saturates on {sum(sat8)} of 12 transpositions "
          "(sw_striped_sat then recomputes those with 16 bits)")

    def run_plain(name):
        fn = getattr(parasail, name)

        def run():
            for bt in b_by_t:
                fn(a, bt, GAP_OPEN, GAP_EXTEND, matrix)

        return run

    t0 = time.perf_counter()
    profile = parasail.profile_create_16(a, matrix)
    profile_s = time.perf_counter() - t0

    def run_profile():
        for bt in b_by_t:
            parasail.sw_striped_profile_16(profile, bt, GAP_OPEN, GAP_EXTEND)

    variants = [
        ("sw_striped_16", run_plain("sw_striped_16")),
        ("sw_striped_sat", run_plain("sw_striped_sat")),
        ("sw_scan_16", run_plain("sw_scan_16")),
        ("sw_diag_16", run_plain("sw_diag_16")),
        ("sw_striped_profile_16", run_profile),
        ("sw (scalar)", run_plain("sw")),
    ]

    print("\n== parasail, score only, 12 transpositions per run")
    results = {}
    for name, fn in variants:
        times = time_runs(fn, args.warmup, args.repeat)
        med, best = statistics.median(times), min(times)
        results[name] = med
        print(f"{name:24s} median {med * 1e3:8.2f} ms ({best * 1e3:8.2f}) "
              f"{fmt_rate(cells / med)} ({fmt_rate(cells / best).strip()} at min)")
    print(f"(profile_create_16 for A, outside the timing: {profile_s * 1e3:.3f} ms)")

    # Striped and scan kernels are data-dependent (the lazy-F loop / corrections run more
    # often where scores are high). The kernel bench's two unrelated melodies score low
    # everywhere; B made of ten 30-note passages of A (the bench's other input) does not.
    if n >= 300:
        shared = with_shared_passages(a_pc, n)
        shared_by_t = [to_letters(shared, -t) for t in range(12)]
        shared_scores = [parasail.sw_striped_16(a, st, GAP_OPEN, GAP_EXTEND, matrix).score
                         for st in shared_by_t]
        print(f"\n== data dependence: B = with_shared_passages(A, {n}) (ten 30-note passages of A), "
              f"scores by t: {shared_scores}")
        for name in ("sw_striped_16", "sw_striped_sat", "sw_scan_16"):
            fn = getattr(parasail, name)

            def run_shared(fn=fn):
                for st in shared_by_t:
                    fn(a, st, GAP_OPEN, GAP_EXTEND, matrix)

            times = time_runs(run_shared, args.warmup, args.repeat)
            med = statistics.median(times)
            print(f"{name:24s} median {med * 1e3:8.2f} ms ({min(times) * 1e3:8.2f}) {fmt_rate(cells / med)}")

    print(f"\n== parasail, with traceback, best transposition t={best_t} only ({n * n:,} cells)")
    bt = b_by_t[best_t]
    trace_times = time_runs(lambda: parasail.sw_trace_striped_16(a, bt, GAP_OPEN, GAP_EXTEND, matrix),
                            args.warmup, args.repeat)

    def trace_and_cigar():
        res = parasail.sw_trace_striped_16(a, bt, GAP_OPEN, GAP_EXTEND, matrix)
        return res.cigar.decode

    cigar_times = time_runs(trace_and_cigar, args.warmup, args.repeat)
    res = parasail.sw_trace_striped_16(a, bt, GAP_OPEN, GAP_EXTEND, matrix)
    cig = res.cigar
    for label, times in (("sw_trace_striped_16", trace_times), ("  + CIGAR extraction", cigar_times)):
        med = statistics.median(times)
        print(f"{label:24s} median {med * 1e3:8.2f} ms ({min(times) * 1e3:8.2f}) {fmt_rate(n * n / med)}")
    print(f"best local alignment: score {res.score}, A[{cig.beg_query}..{res.end_query}] "
          f"B[{cig.beg_ref}..{res.end_ref}], CIGAR {cig.decode.decode() if isinstance(cig.decode, bytes) else cig.decode}")
    print(f"load average at end: {load_average()}")

    print("\n== collatio (criterion, benches/align.rs)")
    path = args.collatio_bench_json
    if not os.path.isfile(path):
        print(f"no criterion estimate at {path!r}; produce it with:")
        print("  cargo bench --bench align -- kernel")
        print("then re-run this script (or pass --collatio-bench-json PATH).")
        return 0
    with open(path, encoding="utf-8") as fh:
        est = json.load(fh)
    mean_ns = est["mean"]["point_estimate"]
    lo = est["mean"]["confidence_interval"]["lower_bound"]
    hi = est["mean"]["confidence_interval"]["upper_bound"]
    bench_cells = 1000 * 1000 * 12
    bench_json = os.path.join(os.path.dirname(path), "benchmark.json")
    if os.path.isfile(bench_json):
        with open(bench_json, encoding="utf-8") as fh:
            bench_cells = json.load(fh).get("throughput", {}).get("Elements", bench_cells)
    mtime = time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime(os.path.getmtime(path)))
    collatio_rate = bench_cells / (mean_ns * 1e-9)
    print(f"{path}")
    print(f"  written {mtime}; mean {mean_ns / 1e6:.2f} ms per iteration "
          f"(95% CI {lo / 1e6:.2f}..{hi / 1e6:.2f}) for {bench_cells:,} cells")
    print(f"collatio kernel          {fmt_rate(collatio_rate)} "
          f"(CI {bench_cells / (hi * 1e-9) / 1e6:.1f}..{bench_cells / (lo * 1e-9) / 1e6:.1f})")
    fastest_rate = None
    sample_json = os.path.join(os.path.dirname(path), "sample.json")
    if os.path.isfile(sample_json):
        with open(sample_json, encoding="utf-8") as fh:
            sample = json.load(fh)
        per_iter = [t / i for t, i in zip(sample["times"], sample["iters"]) if i]
        if per_iter:
            fastest_rate = bench_cells / (min(per_iter) * 1e-9)
            print(f"  fastest of its {len(per_iter)} samples: {min(per_iter) / 1e6:.2f} ms per iteration "
                  f"= {fastest_rate / 1e6:.1f} M cells/s (least disturbed by other load)")
    if bench_cells != cells:
        print(f"note: the bench did {bench_cells:,} cells per iteration, this run {cells:,} (--n {n});"
              " cells/s are compared anyway")
    print("\nratio collatio / parasail in cells/s (collatio: criterion mean; parasail: median; "
          "< 1 means collatio is slower):")
    for name, med in results.items():
        line = f"  vs {name:24s} {collatio_rate / (cells / med):6.3f}  (parasail {cells / med / collatio_rate:5.1f}x collatio)"
        if fastest_rate:
            line += f"; with collatio's fastest sample {fastest_rate / (cells / med):6.3f}"
        print(line)
    print("caveat: collatio's kernel computes pitch + interval + rhythm + metre terms and "
          "fragmentation checks per cell; parasail here only a 12x12 pitch-class lookup. "
          "Both were timed on the same 2-core machine, possibly at different moments and loads.")
    return 0


if __name__ == "__main__":
    sys.exit(main())

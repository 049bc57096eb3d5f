#!/usr/bin/env python3
"""Textbook baseline for the relatedness development sets (docs/relatedness-data.md): numbers
for collatio to beat on telling real variants of a tune (tune families) from unrelated tunes.

Method: Smith-Waterman local alignment over INTERVAL sequences (semitone differences between
consecutive notes, rests skipped). Substitution +2 for equal intervals, +1 for intervals that
differ by exactly one semitone, -1 otherwise. Affine gaps: a gap of k positions costs
2 + (k - 1), i.e. the first gapped position -2 and each further one -1. The score of a pair is
the raw best local score (no normalisation for length).

Measures, per set (dance, chorales):
  family AUC   related pairs = every pair within a family; unrelated pairs = each family
               member against N background tunes (a seeded sample per member, N = 10 by
               default, so >= 2,000 unrelated pairs per set). AUC = P(score(related) >
               score(unrelated)) + P(tie) / 2 (Mann-Whitney). Also reported: the same AUC
               with the unrelated tunes drawn only from the set's own idiom (dance: the three
               dance collections; chorales: the remaining Bach chorales).
  search MAP   each family member queries a pool of every other family member of the set plus
               the whole background; the pool is ranked by score, descending; average
               precision of the query's family-mates; mean over queries. Ties are broken
               pessimistically: at equal score every unrelated tune ranks before the
               family-mates (the optimistic figure, family-mates first, is in the JSON too).

Engines: parasail (scripts/requirements-bench.txt; Farrar striped SIMD, 16-bit, one query
profile per family member), or --engine numpy (plain numpy, one query against all targets at
once, row by row; slower). Before the run the script checks the engine against a plain-Python
Gotoh reference on hand-made cases that tell gap conventions apart and on real pairs, and stops
on any difference. Work is split over --jobs processes (default 2).

Input: target/relatedness/{dance,chorales,background}.json from
scripts/make_relatedness_sets.py, or --subset for the committed
tests/fixtures/relatedness/subset.json (600 background tunes only, so its MAP pool is small and
its numbers are not the reference ones). Output: a table on stdout and
target/relatedness/baseline.json (--out to change).

Run: .venv/bin/python scripts/relatedness_baseline.py [--jobs 2] [--engine parasail|numpy]
         [--unrelated-per-member 10] [--subset]
"""

import argparse
import json
import multiprocessing as mp
import os
import pathlib
import random
import sys
import time
from collections import Counter, defaultdict

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parent.parent
DATA = ROOT / "target" / "relatedness"
SUBSET = ROOT / "tests" / "fixtures" / "relatedness" / "subset.json"
SEED = 2026
MATCH, NEAR, MISMATCH = 2, 1, -1
GAP_OPEN, GAP_EXTEND = 2, 1  # first gapped position -2, each further one -1
IDIOM = {"dance": {"ryansMammoth", "oneills1850", "airdsAirs"}, "chorales": {"bach"}}
# parasail maps letters case-insensitively and keeps '*' for its wildcard.
SYMBOLS = "".join(chr(c) for c in range(33, 127) if chr(c) != "*" and not chr(c).islower())


def intervals(melody):
    pitches = [p for p, _ in melody["events"] if p is not None]
    return [b - a for a, b in zip(pitches, pitches[1:])]


def substitution(a, b):
    return MATCH if a == b else NEAR if abs(a - b) == 1 else MISMATCH


def reference_sw(x, y, gap_open=GAP_OPEN, gap_extend=GAP_EXTEND):
    """Plain-Python Gotoh local alignment: the definition the engines are checked against."""
    neg = -10**9
    best = 0
    h_prev = [0] * (len(y) + 1)
    f_prev = [neg] * (len(y) + 1)
    for i in range(1, len(x) + 1):
        h = [0] * (len(y) + 1)
        f = [neg] * (len(y) + 1)
        e = neg
        for j in range(1, len(y) + 1):
            e = max(e - gap_extend, h[j - 1] - gap_open)
            f[j] = max(f_prev[j] - gap_extend, h_prev[j] - gap_open)
            h[j] = max(0, h_prev[j - 1] + substitution(x[i - 1], y[j - 1]), e, f[j])
            best = max(best, h[j])
        h_prev, f_prev = h, f
    return best


# ---------------------------------------------------------------------------------------------
# Engines: score one query against many targets


class ParasailEngine:
    name = "parasail"

    def __init__(self, values):
        import parasail

        self.parasail = parasail
        if len(values) > len(SYMBOLS):
            raise ValueError(f"{len(values)} distinct intervals, parasail alphabet has "
                             f"{len(SYMBOLS)} symbols")
        self.code = {v: SYMBOLS[i] for i, v in enumerate(values)}
        alphabet = "".join(self.code[v] for v in values)
        self.matrix = parasail.matrix_create(alphabet, MATCH, MISMATCH)
        for i, a in enumerate(values):
            for j, b in enumerate(values):
                self.matrix[i, j] = substitution(a, b)
        self.version = parasail.__version__

    def encode(self, seq):
        return "".join(self.code[v] for v in seq)

    def scores(self, query, targets):
        q = self.encode(query)
        if not q:
            return [0] * len(targets)
        profile = self.parasail.profile_create_16(q, self.matrix)
        out = []
        for t in targets:
            if not t:
                out.append(0)
                continue
            r = self.parasail.sw_striped_profile_16(profile, self.encode(t), GAP_OPEN,
                                                    GAP_EXTEND)
            if r.saturated:
                raise RuntimeError("16-bit score saturated")
            out.append(r.score)
        return out


class NumpyEngine:
    """One query against a batch of targets: the DP runs row by row over the query, with all
    targets (padded to the batch's longest) as one array. Within a row the horizontal gap
    term is a running maximum: E[j] = max_{k<j} (H0[k] - open - (j-1-k) extend), where H0 is
    the cell without E; this is exact because open >= extend (a gap opened right after
    another gap is never better than extending it)."""

    name = "numpy"
    BATCH_CELLS = 4_000_000

    def __init__(self, values):
        self.version = np.__version__

    def scores(self, query, targets):
        out = np.zeros(len(targets), dtype=np.int64)
        if not query:
            return out.tolist()
        batch = []
        for k in sorted(range(len(targets)), key=lambda k: len(targets[k])):
            if batch and (len(batch) + 1) * max(1, len(targets[k])) > self.BATCH_CELLS:
                out[batch] = self._batch(query, [targets[b] for b in batch])
                batch = []
            batch.append(k)
        if batch:
            out[batch] = self._batch(query, [targets[b] for b in batch])
        return out.tolist()

    @staticmethod
    def _batch(query, targets):
        n = len(targets)
        width = max(1, max(len(t) for t in targets))
        pad = 10**6  # scores -1 against every interval; never feeds a real cell
        tarr = np.full((n, width), pad, dtype=np.int64)
        for k, t in enumerate(targets):
            tarr[k, :len(t)] = t
        neg = -10**9
        h_prev = np.zeros((n, width + 1), dtype=np.int64)
        f_prev = np.full((n, width + 1), neg, dtype=np.int64)
        best = np.zeros(n, dtype=np.int64)
        ramp = np.arange(width + 1, dtype=np.int64) * GAP_EXTEND
        for qi in query:
            diff = np.abs(tarr - qi)
            sub = np.where(diff == 0, MATCH, np.where(diff == 1, NEAR, MISMATCH))
            f = np.maximum(f_prev - GAP_EXTEND, h_prev - GAP_OPEN)
            h0 = np.zeros((n, width + 1), dtype=np.int64)
            h0[:, 1:] = np.maximum(np.maximum(h_prev[:, :-1] + sub, f[:, 1:]), 0)
            # E[j] = max_{k<j} (h0[k] + k*ext) - open - (j-1)*ext
            g = np.maximum.accumulate(h0 + ramp, axis=1)
            e = np.full((n, width + 1), neg, dtype=np.int64)
            e[:, 1:] = g[:, :-1] - GAP_OPEN - ramp[:-1]
            h = np.maximum(h0, e)
            h[:, 0] = 0
            best = np.maximum(best, h.max(axis=1))
            h_prev, f_prev = h, f
        return best


ENGINES = {"parasail": ParasailEngine, "numpy": NumpyEngine}


# Hand-made: two 8-interval blocks joined by 1- and 3-interval insertions, so that
# gap(k) = 2 + (k-1) and gap(k) = 2 + k (open + k*extend) give different scores.
_A = [2, 2, 1, 2, 2, 2, 1, -12]
_B = [-5, 3, 4, -2, 0, 7, -7, 5]
HAND_CASES = [([*_A, *_B], [*_A, 9, *_B]), ([*_A, *_B], [*_A, 9, 11, 12, *_B]),
              ([1, 2, 3, 4, 5, 6], [1, 2, 3, 12, 4, 5, 6]), ([0, 0, 0], [1, 1, 1]), ([], [1, 2])]
HAND_VALUES = {v for x, y in HAND_CASES for v in x + y}


def check_engine(engine, seqs, values, rng):
    """Stop unless the engine agrees with reference_sw (hand-made and real cases)."""
    cases = list(HAND_CASES)
    pool = [s for s in seqs if 0 < len(s) <= 120]
    for _ in range(40):
        x, y = rng.choice(pool), rng.choice(pool)
        cases.append((x, y))
        # a related-looking pair: y = x with a few edits
        z = list(x)
        for _ in range(3):
            k = rng.randrange(len(z) + 1)
            op = rng.randrange(3)
            if op == 0:
                z.insert(k, rng.choice(values))
            elif op == 1 and k < len(z):
                del z[k]
            elif k < len(z):
                z[k] = z[k] + 1 if z[k] + 1 in values else rng.choice(values)
        cases.append((x, z))
    for x, y in cases:
        want = reference_sw(x, y)
        got = engine.scores(x, [y])[0]
        if got != want:
            sys.exit(f"engine {engine.name} scored {got}, the reference {want} on {x} / {y}: "
                     "stopping")
    alt = reference_sw(cases[0][0], cases[0][1], GAP_OPEN + GAP_EXTEND, GAP_EXTEND)
    return (f"{engine.name} agrees with the reference on {len(cases)} cases (hand-made case "
            f"{reference_sw(cases[0][0], cases[0][1])}; gap(k) = open + k*extend would give "
            f"{alt})")


_WORKER = {}


def _init(engine_name, values):
    _WORKER["engine"] = ENGINES[engine_name](values)


def _score_row(task):
    key, query, targets = task
    start = time.process_time()
    scores = _WORKER["engine"].scores(query, targets)
    return key, scores, time.process_time() - start


# ---------------------------------------------------------------------------------------------
# Measures


def auc(pos, neg):
    """Mann-Whitney AUC with ties counted half."""
    scores = np.concatenate([np.asarray(pos, float), np.asarray(neg, float)])
    order = scores.argsort(kind="mergesort")
    ranks = np.empty(len(scores))
    sorted_scores = scores[order]
    i = 0
    while i < len(scores):
        j = i
        while j + 1 < len(scores) and sorted_scores[j + 1] == sorted_scores[i]:
            j += 1
        ranks[order[i:j + 1]] = (i + j) / 2 + 1
        i = j + 1
    n_pos, n_neg = len(pos), len(neg)
    return float((ranks[:n_pos].sum() - n_pos * (n_pos + 1) / 2) / (n_pos * n_neg))


def average_precision(scores, relevant, pessimistic=True):
    """AP of the relevant items when the pool is ranked by score, descending; at equal score
    relevant items come last (pessimistic) or first."""
    tie = 1 if pessimistic else -1
    order = sorted(range(len(scores)), key=lambda k: (-scores[k], tie * relevant[k], k))
    hits, total = 0, 0.0
    for rank, k in enumerate(order, 1):
        if relevant[k]:
            hits += 1
            total += hits / rank
    n_rel = sum(relevant)
    return total / n_rel if n_rel else 0.0


def load(path):
    doc = json.loads(path.read_text(encoding="utf-8"))
    return doc


def main(argv):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--engine", choices=sorted(ENGINES), default="parasail")
    ap.add_argument("--unrelated-per-member", type=int, default=10)
    ap.add_argument("--subset", action="store_true",
                    help=f"use {SUBSET.relative_to(ROOT)} instead of the full sets")
    ap.add_argument("--out", type=pathlib.Path, default=DATA / "baseline.json")
    args = ap.parse_args(argv)
    t0 = time.time()

    if args.subset:
        doc = load(SUBSET)
        sets = defaultdict(list)
        for m in doc["melodies"]:
            sets[m["set"]].append(m)
        source = str(SUBSET.relative_to(ROOT))
        versions = {doc["music21_version"]}
    else:
        sets, versions = {}, set()
        for name in ("dance", "chorales", "background"):
            path = DATA / f"{name}.json"
            if not path.exists():
                sys.exit(f"error: {path} is missing: run scripts/make_relatedness_sets.py first")
            doc = load(path)
            sets[name] = doc["melodies"]
            versions.add(doc["music21_version"])
        source = "target/relatedness/{dance,chorales,background}.json"
    background = sets["background"]
    seqs = {}
    for name in ("dance", "chorales", "background"):
        for m in sets[name]:
            seqs[m["source"]] = intervals(m)
    values = sorted({v for s in seqs.values() for v in s} | HAND_VALUES)
    engine_cls = ENGINES[args.engine]
    try:
        engine = engine_cls(values)
    except ImportError:
        sys.exit("parasail is not installed: .venv/bin/pip install -r "
                 "scripts/requirements-bench.txt (or use --engine numpy)")
    check = check_engine(engine, list(seqs.values()), values, random.Random(SEED))
    print(check)
    print(f"data: {source} (music21 {', '.join(sorted(versions))}); background "
          f"{len(background)} tunes; engine {engine.name} {engine.version}; {args.jobs} processes",
          flush=True)

    bg_sources = [m["source"] for m in background]
    results = {}
    tasks = []
    plan = {}
    for name in ("dance", "chorales"):
        members = sets[name]
        pool = [m["source"] for m in members] + bg_sources
        plan[name] = pool
        for q in members:
            tasks.append(((name, q["source"]), seqs[q["source"]], [seqs[s] for s in pool]))
    n_align = sum(len(t[2]) for t in tasks)
    print(f"{n_align:,} alignments ({len(tasks)} queries)...", flush=True)
    t1 = time.time()
    rows, cpu = {}, 0.0
    # Longest queries first so that the processes finish together.
    tasks.sort(key=lambda t: -len(t[1]) * sum(map(len, t[2])))
    ctx = mp.get_context("fork")
    with ctx.Pool(args.jobs, initializer=_init, initargs=(args.engine, values)) as pool:
        for done, (key, scores, secs) in enumerate(pool.imap_unordered(_score_row, tasks), 1):
            rows[key] = scores
            cpu += secs
            if done % 100 == 0:
                print(f"  {done}/{len(tasks)} queries, {time.time() - t1:.0f} s", flush=True)
    align_secs = time.time() - t1

    for name in ("dance", "chorales"):
        members = sets[name]
        pool = plan[name]
        index = {s: k for k, s in enumerate(pool)}
        family = {m["source"]: m["family"] for m in members}
        n_members = len(members)
        related, unrelated, unrelated_idiom = [], [], []
        near_identical = 0  # related pairs scoring >= 90% of the shorter tune's self-score
        idiom_bg = [s for s, m in zip(bg_sources, background) if m["collection"] in IDIOM[name]]
        aps, aps_opt = [], []
        for q in members:
            src = q["source"]
            scores = rows[(name, src)]
            for other in members:
                if other["source"] > src and family[other["source"]] == q["family"]:
                    score = scores[index[other["source"]]]
                    related.append(score)
                    shorter = min(len(seqs[src]), len(seqs[other["source"]]))
                    near_identical += score >= 0.9 * MATCH * shorter
            rng = random.Random(f"{SEED}-{name}-{src}")
            for s in rng.sample(bg_sources, min(args.unrelated_per_member, len(bg_sources))):
                unrelated.append(scores[index[s]])
            rng = random.Random(f"{SEED}-{name}-idiom-{src}")
            for s in rng.sample(idiom_bg, min(args.unrelated_per_member, len(idiom_bg))):
                unrelated_idiom.append(scores[index[s]])
            keep = [k for k, s in enumerate(pool) if s != src]
            sc = [scores[k] for k in keep]
            rel = [k < n_members and family[pool[k]] == q["family"] for k in keep]
            aps.append(average_precision(sc, rel, pessimistic=True))
            aps_opt.append(average_precision(sc, rel, pessimistic=False))
        fams = Counter(m["family"] for m in members)
        results[name] = {
            "families": len(fams),
            "members": n_members,
            "related_pairs": len(related),
            "unrelated_pairs": len(unrelated),
            "auc": auc(related, unrelated),
            "auc_same_idiom": auc(related, unrelated_idiom) if unrelated_idiom else None,
            "unrelated_pairs_same_idiom": len(unrelated_idiom),
            "same_idiom_background": len(idiom_bg),
            "map": float(np.mean(aps)),
            "map_optimistic_ties": float(np.mean(aps_opt)),
            "queries": n_members,
            "pool": len(pool) - 1,
            "related_near_identical_share": near_identical / len(related),
            "median_score_related": float(np.median(related)),
            "median_score_unrelated": float(np.median(unrelated)),
        }
        print(f"{name}: {near_identical} of {len(related)} related pairs score >= 90% of the "
              "shorter tune's self-score (near-identical printings)")
        if len(unrelated) < 2000:
            print(f"note: {name}: only {len(unrelated)} unrelated pairs (< 2,000)")
        if len(bg_sources) < 5000:
            print(f"note: {name}: MAP pool has only {len(bg_sources)} background tunes (< 5,000)")

    total = time.time() - t0
    print()
    print(f"{'set':9s} {'fams':>5s} {'members':>7s} {'related':>8s} {'unrel.':>7s} {'AUC':>6s} "
          f"{'AUC idiom':>9s} {'MAP':>6s} {'MAP opt':>7s} {'pool':>6s}")
    for name in ("dance", "chorales"):
        r = results[name]
        print(f"{name:9s} {r['families']:5d} {r['members']:7d} {r['related_pairs']:8d} "
              f"{r['unrelated_pairs']:7d} {r['auc']:6.3f} {r['auc_same_idiom']:9.3f} "
              f"{r['map']:6.3f} {r['map_optimistic_ties']:7.3f} {r['pool']:6d}")
    print(f"\nAUC: related pairs vs each member against {args.unrelated_per_member} seeded "
          "background tunes (AUC idiom: background of the same idiom only); MAP: ties broken "
          "pessimistically (MAP opt: family-mates first at equal score).")
    print(f"time: {align_secs:.0f} s aligning ({n_align:,} alignments, {cpu:.0f} s CPU in "
          f"{args.jobs} processes), {total:.0f} s in all; load average "
          f"{' '.join(f'{x:.2f}' for x in os.getloadavg())}")

    out = {
        "generator": "scripts/relatedness_baseline.py",
        "data": source,
        "music21_version": sorted(versions)[0] if len(versions) == 1 else sorted(versions),
        "method": {
            "sequence": "intervals (semitones between consecutive notes, rests skipped)",
            "substitution": {"equal": MATCH, "differ_by_1": NEAR, "other": MISMATCH},
            "gap": {"first_position": -GAP_OPEN, "each_further_position": -GAP_EXTEND},
            "score": "raw best local score",
            "unrelated_per_member": args.unrelated_per_member,
            "seed": SEED,
            "map_ties": "pessimistic (unrelated before family-mates at equal score)",
            "engine": f"{engine.name} {engine.version}",
            "engine_check": check,
        },
        "background": len(background),
        "sets": results,
        "timing": {"align_seconds": round(align_secs, 1), "cpu_seconds": round(cpu, 1),
                   "total_seconds": round(total, 1), "jobs": args.jobs,
                   "alignments": n_align},
    }
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(out, indent=1) + "\n", encoding="utf-8")
    print(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

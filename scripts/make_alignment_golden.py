#!/usr/bin/env python3
"""Golden local-alignment scores from a general-purpose alignment library (parasail).

Writes tests/golden/alignment/parasail_local.json, read by tests/align_golden.rs, which runs
collatio's aligner in the equivalent plain configuration and checks the scores.

The library: parasail (Daily 2016, "Parasail: SIMD C library for global, semi-global, and
local pairwise sequence alignments", BMC Bioinformatics 17:81), Python binding from PyPI,
version pinned in scripts/requirements.txt. Its `sw` is the plain (non-vectorised)
Smith-Waterman with affine gaps; `sw_table` also returns the full score table, used here to
tell whether the best cell is unique. `sw_striped_16` and `sw_scan_16` must agree with `sw`.

Two plain modes of collatio's pair score (src/align/score.rs), each reduced to one symbol per
note and a substitution matrix:

* pitch only: interval, rhythm and metric terms 0, fragmentation off (max_fragments 1). A
  note is its pitch class, written as one of 12 letters; the matrix scores same class
  `pitch_match`, one semitone away (mod 12) `pitch_near`, other `pitch_mismatch`. Under
  transposition t (B = A + t) B's letters are shifted by -t. collatio's best score is the
  best over the 12 transpositions, and its first passage takes the transposition with the
  highest score, the lowest t among equals; the golden records both.
* interval only: pitch, rhythm and metric terms 0, fragmentation off. A note is the interval
  into it in semitones, clamped to +-24, or "none" for the first note of a melody: 50 symbols.
  Same interval `interval_match`; same direction within two semitones `interval_near`; other
  `interval_mismatch`; "none" against anything 0. The transposition plays no part.

Gaps: a gap of k notes costs gap_open + (k - 1) gap_extend in collatio. parasail's open and
extend arguments follow the same convention (first gap position costs `open`); the script
checks that on a hand-made case before writing anything and stops otherwise.

End positions (0-based note indices of the last aligned pair) are written only when they are
unambiguous: the best score is reached in exactly one cell of parasail's score table (and, in
pitch-only mode, under one transposition only). Otherwise they are null.

The melodies: real tunes from music21's bundled corpus as already converted in
tests/fixtures/calibration/melodies.json (Ryan's Mammoth Collection, 1883, and O'Neill's
"Music of Ireland", 1903; by scripts/make_calibration_melodies.py), first 60 notes; copies of
some of them changed by seeded edits (substitutions, insertions, deletions, a transposition)
so that gaps of several lengths occur; and a few short hand-made cases.

Run from the repository root:  .venv/bin/python scripts/make_alignment_golden.py
Deterministic: re-running gives the same file.
"""

from __future__ import annotations

import json
import random
import sys
from pathlib import Path

import parasail

REPO = Path(__file__).resolve().parent.parent
OUT = REPO / "tests" / "golden" / "alignment" / "parasail_local.json"
MELODIES = REPO / "tests" / "fixtures" / "calibration" / "melodies.json"
NOTES = 60

# Symbols of the interval alphabet: parasail folds lower case onto upper case, so digits, upper
# case letters and punctuation (not '*', parasail's wildcard).
INTERVAL_ALPHABET = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ!#$%&()+,-./:;"
PITCH_ALPHABET = "ABCDEFGHIJKL"
assert len(INTERVAL_ALPHABET) == 50 and len(set(INTERVAL_ALPHABET)) == 50

# Parameter sets: (name, mode, terms, gap_open, gap_extend).
CONFIGS = [
    ("pitch_default", "pitch", {"match": 8, "near": -4, "mismatch": -8}, 16, 8),
    ("pitch_cheap_gaps", "pitch", {"match": 8, "near": -4, "mismatch": -8}, 10, 2),
    ("interval_default", "interval", {"match": 4, "near": 0, "mismatch": -4}, 16, 8),
    ("interval_cheap_gaps", "interval", {"match": 6, "near": 2, "mismatch": -5}, 7, 1),
]


def pitch_matrix(terms):
    m = parasail.matrix_create(PITCH_ALPHABET, terms["match"], terms["mismatch"])
    for i in range(12):
        for j in range(12):
            d = (j - i) % 12
            m[i, j] = terms["match"] if d == 0 else terms["near"] if d in (1, 11) else terms["mismatch"]
    return m


def decode_interval(code: int):
    return None if code == 0 else code - 25


def interval_code(interval) -> int:
    return 0 if interval is None else max(-24, min(24, interval)) + 25


def interval_term(terms, x, y) -> int:
    if x is None or y is None:
        return 0
    if x == y:
        return terms["match"]
    if (x > 0) == (y > 0) and (x < 0) == (y < 0) and abs(x - y) <= 2:
        return terms["near"]
    return terms["mismatch"]


def interval_matrix(terms):
    m = parasail.matrix_create(INTERVAL_ALPHABET, terms["match"], terms["mismatch"])
    for i in range(50):
        for j in range(50):
            m[i, j] = interval_term(terms, decode_interval(i), decode_interval(j))
    return m


def pitch_letters(pitches, shift=0) -> str:
    return "".join(PITCH_ALPHABET[(p + shift) % 12] for p in pitches)


def interval_letters(pitches) -> str:
    out = [INTERVAL_ALPHABET[interval_code(None)]] if pitches else []
    for prev, cur in zip(pitches, pitches[1:]):
        out.append(INTERVAL_ALPHABET[interval_code(cur - prev)])
    return "".join(out)


def local(s1: str, s2: str, gap_open: int, gap_extend: int, matrix):
    """parasail's plain score with its end cell and the number of cells reaching it."""
    res = parasail.sw_table(s1, s2, gap_open, gap_extend, matrix)
    plain = parasail.sw(s1, s2, gap_open, gap_extend, matrix)
    for name in ("sw_striped_16", "sw_scan_16"):
        other = getattr(parasail, name)(s1, s2, gap_open, gap_extend, matrix).score
        if other != plain.score:
            sys.exit(f"parasail.{name} scored {other}, parasail.sw {plain.score}")
    if res.score != plain.score:
        sys.exit(f"parasail.sw_table scored {res.score}, parasail.sw {plain.score}")
    if res.score <= 0:
        return 0, None, 0
    table = res.score_table  # rows: s1 (A), columns: s2 (B)
    cells = int((table == res.score).sum())
    return int(res.score), (int(res.end_query), int(res.end_ref)), cells


def check_gap_convention() -> None:
    """Stop unless parasail(open, extend) costs a k-note gap open + (k - 1) extend."""
    m = pitch_matrix({"match": 8, "near": -4, "mismatch": -8})
    block = "ABCDEFGHIJKL"
    # Twelve equal notes, two extra notes in B, twelve equal notes: 96 - (16 + 8) + 96 = 168
    # with open + (k - 1) extend; open + k extend would give 160.
    a, b = block + "LKJIHGFEDCBA", block + "CE" + "LKJIHGFEDCBA"
    got = parasail.sw(a, b, 16, 8, m).score
    if got != 168:
        sys.exit(f"parasail scored the two-note gap case {got}, expected 168 (160 would mean "
                 "open + k*extend): the gap convention differs, adjust the conversion")


def edited(pitches, rng: random.Random):
    """A copy with seeded substitutions, insertions and deletions of 1-3 notes, transposed."""
    out = list(pitches)
    for _ in range(4):
        kind = rng.choice(["sub", "ins", "del"])
        at = rng.randrange(5, len(out) - 5)
        k = rng.randint(1, 3)
        if kind == "sub":
            out[at] += rng.choice([-2, -1, 1, 2, 5])
        elif kind == "ins":
            out[at:at] = [out[at] + rng.randint(-4, 4) for _ in range(k)]
        else:
            del out[at:at + k]
    shift = rng.randint(-5, 6)
    return [p + shift for p in out]


def melodies():
    doc = json.loads(MELODIES.read_text(encoding="utf-8"))
    out = []
    for m in doc["melodies"]:
        pitches = [e[0] for e in m["events"] if e[0] is not None][:NOTES]
        out.append((m["source"], pitches))
    return out


def cases():
    tunes = melodies()
    ryans = [t for t in tunes if t[0].startswith("ryansMammoth/")]
    oneills = [t for t in tunes if t[0].startswith("oneills1850/")]
    rng = random.Random(20261204)
    out = []
    # Unrelated real pairs, one tune of each collection.
    for (sa, pa), (sb, pb) in zip(rng.sample(ryans, 6), rng.sample(oneills, 6)):
        out.append({"name": f"{sa} / {sb}", "a": pa, "b": pb})
    # A real tune against an edited, transposed copy of itself.
    for source, pitches in rng.sample(ryans + oneills, 6):
        out.append({"name": f"{source} / edited copy", "a": pitches, "b": edited(pitches, rng)})
    # Hand-made: a scale against itself a fourth up with two notes left out; a repeated-note
    # line; one note against one; nothing in common.
    scale = [60, 62, 64, 65, 67, 69, 71, 72, 74, 76]
    out.append({"name": "scale / scale up a fourth, two notes out",
                "a": scale, "b": [p + 5 for p in scale[:4] + scale[6:]]})
    out.append({"name": "repeated notes", "a": [67] * 8, "b": [67] * 5 + [69] + [67] * 5})
    out.append({"name": "one note each", "a": [60], "b": [61]})
    out.append({"name": "one interval each, different", "a": [60, 61], "b": [60, 72]})
    return out


def dump(doc) -> str:
    """JSON with one line per case and per result."""
    lines = ["{"]
    keys = list(doc)
    for n, key in enumerate(keys):
        comma = "," if n + 1 < len(keys) else ""
        value = doc[key]
        if isinstance(value, list):
            lines.append(f" {json.dumps(key)}: [")
            lines += [f"  {json.dumps(item)}" + ("," if k + 1 < len(value) else "")
                      for k, item in enumerate(value)]
            lines.append(f" ]{comma}")
        else:
            lines.append(f" {json.dumps(key)}: {json.dumps(value)}{comma}")
    lines.append("}")
    return "\n".join(lines) + "\n"


def main() -> int:
    check_gap_convention()
    results = []
    for config_name, mode, terms, gap_open, gap_extend in CONFIGS:
        matrix = pitch_matrix(terms) if mode == "pitch" else interval_matrix(terms)
        for case in cases():
            a, b = case["a"], case["b"]
            entry = {"config": config_name, "case": case["name"]}
            if mode == "pitch":
                per_t = [local(pitch_letters(a), pitch_letters(b, -t), gap_open, gap_extend, matrix)
                         for t in range(12)]
                scores = [s for s, _, _ in per_t]
                best = max(scores)
                best_t = scores.index(best)
                _, end, cells = per_t[best_t]
                unique = best > 0 and scores.count(best) == 1 and cells == 1
                entry.update({"scores_by_transposition": scores, "best_score": best,
                              "best_transposition": best_t})
            else:
                best, end, cells = local(interval_letters(a), interval_letters(b),
                                         gap_open, gap_extend, matrix)
                unique = best > 0 and cells == 1
                entry.update({"best_score": best})
            entry["end"] = list(end) if unique else None
            results.append(entry)

    doc = {
        "generator": "scripts/make_alignment_golden.py",
        "library": "parasail",
        "library_version": parasail.__version__,
        "library_c_version": ".".join(map(str, parasail.version())),
        "functions": "parasail.sw (plain Smith-Waterman, affine gaps), checked against "
                     "sw_striped_16 and sw_scan_16; sw_table for the end cell's uniqueness",
        "gap_convention": "a gap of k notes costs gap_open + (k - 1) * gap_extend",
        "melodies": "first 60 notes of tunes of tests/fixtures/calibration/melodies.json "
                    "(music21's corpus: ryansMammoth, oneills1850), seeded edited copies, "
                    "hand-made cases",
        "configs": {name: {"mode": mode, **{f"{mode}_{k}": v for k, v in terms.items()},
                           "gap_open": go, "gap_extend": ge}
                    for name, mode, terms, go, ge in CONFIGS},
        "cases": cases(),
        "results": results,
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(dump(doc), encoding="utf-8")
    unique = sum(1 for r in results if r["end"] is not None)
    print(f"wrote {OUT.relative_to(REPO)}: {len(results)} results ({unique} with a unique end), "
          f"parasail {parasail.__version__}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

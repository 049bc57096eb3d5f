#!/usr/bin/env python3
"""Retrieval benchmark for `collatio corpus build` / `collatio search` on real melodies.

Source material: the public-domain dance-tune and folk-song collections bundled with music21
(ABC files; version pinned in scripts/requirements.txt): ryansMammoth, oneills1850,
essenFolksong, airdsAirs, miscFolk, nottingham-dataset.  Nobody here wrote these melodies.

Steps:

1. Extraction (cached in target/retrieval/melodies.json).  Every tune of every ABC file is
   parsed with music21 (2 worker processes).  Melody: the first part, ties stripped, grace
   notes skipped, chord symbols skipped, the top note of chords, one note at a time (a note
   that starts while the previous one still sounds cuts it), time signatures kept (a tune with
   "M: none" gets 4/4), a pickup bar padded with a leading rest so bar lines fall where the
   meter says.  Tunes with < 16 notes are skipped, and so are exact duplicates (the same
   interval and rhythm sequence, whatever the key and tempo) and tunes that music21 gave a
   bar shorter than a quarter note (misread free-rhythm passages).  From the pool of distinct
   melodies a seeded sample of --melodies (default 5,000) goes to target/retrieval/corpus/
   <collection>/<name>.mid and a second sample of --big (default 10,000; the first sample
   plus more tunes, topped up with transposed copies only if the pool is too small) to
   target/retrieval/corpus_big/.  MIDI files: format 0, 480 ticks per quarter, time-signature
   meta(s), tempo 120, one note at a time.
2. Queries: 50 originals drawn from the main corpus with random.Random(2026); one variant of
   each, the kinds taken in turn: transposed (+-1..6 semitones), tempo-scaled (every duration
   x2 or x0.5, meter scaled with it), notes changed (2-3 pitches moved by 1-2 semitones),
   ornaments (2-3 short notes before beats, taking their time from the previous note), split
   notes (3-4 notes split into two repeated notes of half length) and a 4-bar excerpt from
   the middle.  Written to target/retrieval/queries/, ground truth in
   target/retrieval/ground_truth.json.  The 50 originals themselves are also searched as a
   control ("identity"; not part of the gated metrics).
3. `collatio corpus build` of both corpora (wall clock, index size), then one `collatio
   search QUERY --corpus IDX --format json --top 20` per query (wall clock of the whole
   process, i.e. including loading the index).
4. Metrics: mean average precision (one relevant item per query: AP = 1/rank of the original,
   0 when it is not among the hits) and the share of queries with the original first,
   overall and per kind; also on the big corpus (when it holds only real tunes).  Also shown:
   how many originals were first only by a tie in similarity, and the smallest similarity
   margin between an original ranked first and the next hit.  Search times are wall clock
   and CPU time (user + system) of the collatio process; note the load average printed.  Failures are listed with what ranked above
   the original.  Everything is written to target/retrieval/results.json.

Usage:
  .venv/bin/python scripts/retrieval_benchmark.py [--melodies 5000] [--big 10000]
      [--skip-extract] [--collatio target/release/collatio] [--jobs 2] [--queries 50]
      [--candidates N (passed to collatio search)]

Exit status: 0; 1 when MAP < 0.90 or the top-1 share < 0.90 on the main corpus (after
printing everything); 2 on errors (no melodies, a failed build, ...).
"""

from __future__ import annotations

import argparse
import json
import math
import multiprocessing as mp
import os
import pathlib
import random
import resource
import shutil
import signal
import statistics
import subprocess
import sys
import time
import warnings
from fractions import Fraction

ROOT = pathlib.Path(__file__).resolve().parent.parent
OUT = ROOT / "target" / "retrieval"
COLLECTIONS = ["nottingham-dataset", "ryansMammoth", "oneills1850", "essenFolksong",
               "airdsAirs", "miscFolk"]
TPQ = 480  # ticks per quarter note
MIN_NOTES = 16
SEED = 2026
KINDS = ["transposed", "tempo", "changed", "ornaments", "split", "excerpt"]
TOP = 20
FILE_TIMEOUT = 600  # seconds for music21 to read one ABC file
CACHE_VERSION = 1
TARGET_MAP = 0.90
TARGET_TOP1 = 0.90


# ----------------------------------------------------------------------------------------
# 1. Extraction with music21
# ----------------------------------------------------------------------------------------

class Music21Timeout(BaseException):
    """Raised by SIGALRM inside a worker; a BaseException so music21 cannot swallow it."""


def _alarm(signum, frame):  # noqa: ARG001
    raise Music21Timeout()


def corpus_root() -> pathlib.Path:
    import music21

    return pathlib.Path(music21.__file__).resolve().parent / "corpus"


def abc_files() -> list[tuple[str, str]]:
    root = corpus_root()
    found = []
    for collection in COLLECTIONS:
        folder = root / collection
        if not folder.is_dir():
            print(f"warning: music21 corpus folder {collection} missing", file=sys.stderr)
            continue
        for path in sorted(folder.rglob("*")):
            if path.suffix.lower() == ".abc" and path.is_file():
                found.append((collection, str(path)))
    return found


def _ticks(quarter_length) -> int:
    return int(round(Fraction(quarter_length).limit_denominator(10000) * TPQ))


def melody_of(score) -> dict | None:
    """The melody of one music21 Score (or Part-like stream), or None when unusable."""
    from music21 import chord, harmony, meter, note

    part = score.parts[0] if hasattr(score, "parts") and score.parts else score
    measures = list(part.getElementsByClass("Measure"))
    flat = part.flatten()
    sigs = []
    for ts in flat.getElementsByClass(meter.TimeSignature):
        num, den = ts.numerator, ts.denominator
        if den <= 0 or den & (den - 1):  # MIDI needs a power of two
            return None
        sigs.append((_ticks(ts.getOffsetInHierarchy(flat)), num, den))
    has_meter = bool(sigs)
    if not sigs or sigs[0][0] != 0:
        sigs.insert(0, (0, 4, 4))
    # Pickup: pad the first (short) measure with a leading rest.
    lead = 0
    if has_meter and measures:
        first = measures[0]
        pad = Fraction(first.paddingLeft or 0).limit_denominator(10000)
        if pad > 0:
            lead = _ticks(pad)
        else:
            bar = Fraction(4 * sigs[0][1], sigs[0][2])
            dur = Fraction(first.duration.quarterLength).limit_denominator(10000)
            if 0 < dur < bar:
                lead = _ticks(bar - dur)
    stripped = part.stripTies(inPlace=False).flatten()
    notes: list[list[int]] = []  # [onset, duration, pitch]
    for el in stripped.notes:
        if isinstance(el, harmony.Harmony) or el.duration.isGrace:
            continue
        if isinstance(el, chord.Chord):
            pitches = [p.midi for p in el.pitches]
            if not pitches:
                continue
            pitch = max(pitches)
        elif isinstance(el, note.Note):
            pitch = el.pitch.midi
        else:
            continue
        onset = _ticks(el.getOffsetInHierarchy(stripped)) + lead
        dur = _ticks(el.duration.quarterLength)
        if dur <= 0 or not 0 <= pitch <= 127:
            continue
        if notes and onset < notes[-1][0] + notes[-1][1]:
            prev = notes[-1]
            if onset <= prev[0]:  # same onset (or earlier): keep the higher note
                if pitch > prev[2]:
                    notes[-1] = [prev[0], max(dur, 1), pitch]
                continue
            prev[1] = onset - prev[0]  # the new note cuts the sounding one
        notes.append([onset, dur, pitch])
    if len(notes) < MIN_NOTES:
        return None
    sigs = [(t + (lead if t > 0 else 0), n, d) for t, n, d in sigs]
    return {"meter_in_source": has_meter, "sigs": [list(s) for s in sigs], "notes": notes}


def extract_file(task: tuple[str, str]) -> tuple[str, str, list[dict], str | None, float]:
    """Worker: every tune of one ABC file."""
    collection, path = task
    start = time.time()
    signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(FILE_TIMEOUT)
    out: list[dict] = []
    error = None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            from music21 import converter

            parsed = converter.parse(path, format="abc", forceSource=True)
            scores = list(parsed.scores) if hasattr(parsed, "scores") and len(parsed.scores) else [parsed]
            multi = len(scores) > 1
            stem = pathlib.Path(path).stem
            for index, score in enumerate(scores, 1):
                try:
                    m = melody_of(score)
                except Music21Timeout:
                    raise
                except Exception:  # noqa: BLE001 - skip what music21 cannot read
                    m = None
                if m is None:
                    continue
                md = score.metadata
                title = (md.title if md is not None and md.title else "") or stem
                name = f"{stem}_{index:04d}" if multi else stem
                m.update({"collection": collection, "name": name, "title": title,
                          "source": f"{collection}/{pathlib.Path(path).name}#{index}"})
                out.append(m)
    except Music21Timeout:
        error = f"timeout after {FILE_TIMEOUT} s"
    except Exception as exc:  # noqa: BLE001
        error = f"{type(exc).__name__}: {exc}"[:300]
    finally:
        signal.alarm(0)
    return collection, path, out, error, time.time() - start


def dedup_key(m: dict) -> tuple:
    notes = m["notes"]
    g = 0
    for onset, dur, _ in notes:
        g = math.gcd(g, dur)
    for a, b in zip(notes, notes[1:]):
        g = math.gcd(g, b[0] - a[0])
    g = g or 1
    return (tuple(b[2] - a[2] for a, b in zip(notes, notes[1:])),
            tuple((b[0] - a[0]) // g for a, b in zip(notes, notes[1:])),
            tuple(n[1] // g for n in notes))


def extract(jobs: int, cache: pathlib.Path) -> list[dict]:
    tasks = abc_files()
    if not tasks:
        raise SystemExit("error: no ABC files found in music21's corpus")
    # Big files first so the two workers finish together.
    tasks.sort(key=lambda t: -os.path.getsize(t[1]))
    print(f"extracting melodies from {len(tasks)} ABC files with {jobs} workers "
          f"(music21 is slow: several minutes)...", flush=True)
    start = time.time()
    melodies: list[dict] = []
    errors = []
    done = 0
    ctx = mp.get_context("fork")
    with ctx.Pool(jobs, maxtasksperchild=50) as pool:
        for collection, path, found, error, secs in pool.imap_unordered(extract_file, tasks):
            done += 1
            melodies.extend(found)
            if error:
                errors.append((path, error))
            if done % 25 == 0 or done == len(tasks) or secs > 5:
                print(f"  [{done}/{len(tasks)} files, {time.time() - start:6.0f} s] "
                      f"{melodies.__len__()} melodies so far; last: {collection}/"
                      f"{pathlib.Path(path).name} ({len(found)} tunes, {secs:.1f} s)"
                      + (f" ERROR {error}" if error else ""), flush=True)
    for path, error in errors:
        print(f"  could not read {path}: {error}", file=sys.stderr)
    melodies.sort(key=lambda m: (m["collection"], m["name"]))
    distinct, seen, dups = [], set(), 0
    names = set()
    for m in melodies:
        key = dedup_key(m)
        if key in seen:
            dups += 1
            continue
        seen.add(key)
        base, k = m["name"], 2
        while (m["collection"], m["name"]) in names:
            m["name"] = f"{base}_{k}"
            k += 1
        names.add((m["collection"], m["name"]))
        distinct.append(m)
    per = {}
    for m in distinct:
        per[m["collection"]] = per.get(m["collection"], 0) + 1
    print(f"extracted {len(melodies)} melodies ({dups} exact duplicates dropped): "
          f"{len(distinct)} distinct in {time.time() - start:.0f} s; per collection: {per}",
          flush=True)
    cache.parent.mkdir(parents=True, exist_ok=True)
    tmp = cache.with_suffix(".tmp")
    tmp.write_text(json.dumps({"version": CACHE_VERSION, "tpq": TPQ, "melodies": distinct},
                              separators=(",", ":")), encoding="utf-8")
    tmp.replace(cache)
    return distinct


def clean(melodies: list[dict]) -> list[dict]:
    """Drops repeated time signatures and the tunes music21 gave a bar shorter than a quarter
    note (misread free-rhythm passages)."""
    out = []
    for m in melodies:
        sigs = []
        for t, num, den in sorted(m["sigs"]):
            if sigs and sigs[-1][0] == t:
                sigs[-1] = [t, num, den]
            elif not sigs or (sigs[-1][1], sigs[-1][2]) != (num, den):
                sigs.append([t, num, den])
        if any(4 * num < den for _, num, den in sigs):
            continue
        out.append(dict(m, sigs=sigs))
    return out


def load_cache(cache: pathlib.Path) -> list[dict] | None:
    if not cache.exists():
        return None
    try:
        doc = json.loads(cache.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if doc.get("version") != CACHE_VERSION or doc.get("tpq") != TPQ:
        return None
    return doc["melodies"]


# ----------------------------------------------------------------------------------------
# MIDI writing
# ----------------------------------------------------------------------------------------

def write_midi(path: pathlib.Path, sigs: list, notes: list) -> None:
    import mido

    events = []  # (tick, order, message)
    for tick, num, den in sigs:
        events.append((tick, 0, mido.MetaMessage("time_signature", numerator=num,
                                                 denominator=den, clocks_per_click=24,
                                                 notated_32nd_notes_per_beat=8)))
    events.append((0, 1, mido.MetaMessage("set_tempo", tempo=500000)))
    for onset, dur, pitch in notes:
        events.append((onset, 3, mido.Message("note_on", note=pitch, velocity=80)))
        events.append((onset + dur, 2, mido.Message("note_off", note=pitch, velocity=0)))
    events.sort(key=lambda e: (e[0], e[1]))
    track = mido.MidiTrack()
    last = 0
    for tick, _, msg in events:
        track.append(msg.copy(time=tick - last))
        last = tick
    track.append(mido.MetaMessage("end_of_track", time=0))
    mid = mido.MidiFile(type=0, ticks_per_beat=TPQ)
    mid.tracks.append(track)
    path.parent.mkdir(parents=True, exist_ok=True)
    mid.save(str(path))


def rel_path(m: dict) -> str:
    return f"{m['collection']}/{m['name']}.mid"


def write_corpus(folder: pathlib.Path, melodies: list[dict]) -> None:
    """Makes `folder` hold exactly these melodies (files already there are kept)."""
    wanted = {rel_path(m): m for m in melodies}
    have = set()
    if folder.exists():
        for p in folder.rglob("*"):
            if p.is_file():
                rel = p.relative_to(folder).as_posix()
                if rel in wanted:
                    have.add(rel)
                else:
                    p.unlink()
    missing = [r for r in wanted if r not in have]
    for rel in missing:
        m = wanted[rel]
        write_midi(folder / rel, m["sigs"], m["notes"])
    print(f"corpus {folder.relative_to(ROOT)}: {len(wanted)} melodies "
          f"({len(have)} files already there, {len(missing)} written)", flush=True)


# ----------------------------------------------------------------------------------------
# 2. Query variants
# ----------------------------------------------------------------------------------------

def bar_starts(sigs: list, end: int) -> list[int]:
    starts, t, i = [], 0, 0
    sigs = sorted(sigs)
    while t < end:
        while i + 1 < len(sigs) and sigs[i + 1][0] <= t:
            i += 1
        _, num, den = sigs[i]
        starts.append(t)
        t += TPQ * 4 * num // den
    return starts


def sig_at(sigs: list, tick: int) -> tuple[int, int]:
    cur = sigs[0]
    for s in sorted(sigs):
        if s[0] <= tick:
            cur = s
    return cur[1], cur[2]


def beat_ticks(num: int, den: int) -> int:
    whole = TPQ * 4
    if num % 3 == 0 and num > 3 and den >= 8:  # compound meter: dotted beats
        return 3 * whole // den
    return whole // den


def make_variant(kind: str, m: dict, rng: random.Random) -> tuple[list, list, dict]:
    sigs = [list(s) for s in m["sigs"]]
    notes = [list(n) for n in m["notes"]]
    info: dict = {}
    if kind == "transposed":
        shift = rng.choice([s for s in range(-6, 7) if s != 0])
        for n in notes:
            n[2] += shift
        info["semitones"] = shift
    elif kind == "tempo":
        factor = rng.choice([2, 0.5])
        new_sigs = []
        for t, num, den in sigs:
            if factor == 2:
                num, den = (num, den // 2) if den >= 2 else (num * 2, den)
            else:
                num, den = (num // 2, den) if num % 2 == 0 and num > 2 else (num, den * 2)
            new_sigs.append([int(t * factor), num, den])
        sigs = new_sigs
        notes = [[int(round(o * factor)), max(1, int(round(d * factor))), p] for o, d, p in notes]
        info["factor"] = factor
        info["meter"] = f"{m['sigs'][0][1]}/{m['sigs'][0][2]} -> {sigs[0][1]}/{sigs[0][2]}"
    elif kind == "changed":
        k = rng.choice([2, 3])
        idx = sorted(rng.sample(range(len(notes)), k))
        moves = []
        for i in idx:
            d = rng.choice([-2, -1, 1, 2])
            notes[i][2] += d
            moves.append([i, d])
        info["changed"] = moves
    elif kind == "ornaments":
        g = 60  # a 32nd note
        cand = []
        for i in range(1, len(notes)):
            onset = notes[i][0]
            prev = notes[i - 1]
            num, den = sig_at(sigs, onset)
            starts = bar_starts(sigs, onset + 1)
            pos = onset - starts[-1]
            if pos % beat_ticks(num, den) == 0 and prev[0] + prev[1] == onset and prev[1] >= 2 * g:
                cand.append(i)
        k = min(rng.choice([2, 3]), len(cand))
        idx = sorted(rng.sample(cand, k))
        inserted = []
        for i in reversed(idx):
            d = rng.choice([2, 1, -1, -2])
            notes[i - 1][1] -= g
            notes.insert(i, [notes[i][0] - g, g, notes[i][2] + d])
            inserted.append([i, d])
        info["ornaments"] = sorted(inserted)
    elif kind == "split":
        cand = [i for i, n in enumerate(notes) if n[1] >= 240 and n[1] % 2 == 0]
        if len(cand) < 4:
            cand = [i for i, n in enumerate(notes) if n[1] >= 2 and n[1] % 2 == 0]
        k = min(rng.choice([3, 4]), len(cand))
        idx = sorted(rng.sample(cand, k))
        for i in reversed(idx):
            o, d, p = notes[i]
            notes[i:i + 1] = [[o, d // 2, p], [o + d // 2, d // 2, p]]
        info["split"] = idx
    elif kind == "excerpt":
        end = max(o + d for o, d, _ in notes)
        starts = bar_starts(sigs, end)
        first = max(0, len(starts) // 2 - 2)
        s = starts[first]
        e = starts[first + 4] if first + 4 < len(starts) else end
        notes = [[o - s, min(d, e - o), p] for o, d, p in notes if s <= o < e]
        num, den = sig_at(sigs, s)
        sigs = [[0, num, den]] + [[t - s, n, d] for t, n, d in sigs if s < t < e]
        info["bars"] = f"{first + 1}-{first + 4} of {len(starts)}"
        info["notes"] = len(notes)
    else:
        raise ValueError(kind)
    for n in notes:
        n[2] = min(127, max(0, n[2]))
    return sigs, notes, info


def make_queries(corpus: list[dict], count: int, qdir: pathlib.Path) -> list[dict]:
    rng = random.Random(SEED)
    ordered = sorted(corpus, key=lambda m: (m["collection"], m["name"]))
    originals = rng.sample(ordered, count)
    if qdir.exists():
        shutil.rmtree(qdir)
    qdir.mkdir(parents=True)
    queries = []
    for i, m in enumerate(originals):
        kind = KINDS[i % len(KINDS)]
        sigs, notes, info = make_variant(kind, m, rng)
        qname = f"q{i + 1:02d}_{kind}_{m['collection']}_{m['name']}.mid"
        write_midi(qdir / qname, sigs, notes)
        queries.append({"query": f"queries/{qname}", "kind": kind, "original": rel_path(m),
                        "title": m["title"], "source": m["source"], "variant": info,
                        "notes": len(notes)})
        # Control: the original itself.
        cname = f"c{i + 1:02d}_identity_{m['collection']}_{m['name']}.mid"
        write_midi(qdir / cname, m["sigs"], m["notes"])
        queries.append({"query": f"queries/{cname}", "kind": "identity",
                        "original": rel_path(m), "title": m["title"], "source": m["source"],
                        "variant": {}, "notes": len(m["notes"])})
    return queries


# ----------------------------------------------------------------------------------------
# 3. collatio
# ----------------------------------------------------------------------------------------

def loadavg() -> str:
    try:
        return " ".join(f"{x:.2f}" for x in os.getloadavg())
    except OSError:
        return "?"


def child_cpu() -> float:
    ru = resource.getrusage(resource.RUSAGE_CHILDREN)
    return ru.ru_utime + ru.ru_stime


def build_index(collatio: str, folder: pathlib.Path, index: pathlib.Path) -> dict:
    if index.exists():
        index.unlink()
    load = loadavg()
    cpu = child_cpu()
    start = time.perf_counter()
    proc = subprocess.run([collatio, "corpus", "build", str(folder), "-o", str(index)],
                          capture_output=True, text=True)
    secs = time.perf_counter() - start
    cpu = child_cpu() - cpu
    if proc.returncode != 0 or not index.exists():
        print(proc.stdout[-3000:], proc.stderr[-3000:], file=sys.stderr)
        raise SystemExit(f"error: collatio corpus build {folder} failed "
                         f"(exit {proc.returncode})")
    files = sum(1 for p in folder.rglob("*.mid"))
    out = {"folder": str(folder.relative_to(ROOT)), "files": files, "seconds": secs,
           "cpu_seconds": cpu,
           "bytes": index.stat().st_size, "load_before": load, "load_after": loadavg(),
           "stderr_tail": proc.stderr.strip().splitlines()[-3:]}
    print(f"built {index.relative_to(ROOT)}: {files} files in {secs:.2f} s (CPU {cpu:.2f} s), "
          f"{out['bytes']:,} bytes (load average before {load}, after {out['load_after']})",
          flush=True)
    return out


def run_searches(collatio: str, index: pathlib.Path, queries: list[dict], label: str,
                 candidates: int | None = None) -> list[dict]:
    results = []
    print(f"searching {len(queries)} queries in {index.relative_to(ROOT)} "
          f"(load average {loadavg()})...", flush=True)
    for q in queries:
        qpath = OUT / q["query"]
        cpu = child_cpu()
        start = time.perf_counter()
        proc = subprocess.run([collatio, "search", str(qpath), "--corpus", str(index),
                               "--format", "json", "--top", str(TOP)]
                              + (["--candidates", str(candidates)] if candidates else []),
                              capture_output=True, text=True)
        secs = time.perf_counter() - start
        cpu = child_cpu() - cpu
        hits, error = [], None
        if proc.returncode not in (0,):
            error = f"exit {proc.returncode}: {proc.stderr.strip()[-500:]}"
        try:
            doc = json.loads(proc.stdout)
            hits = doc.get("hits", [])
        except ValueError:
            error = error or f"no JSON: {proc.stderr.strip()[-500:]}"
        paths = [h.get("path", "").replace("\\", "/") for h in hits]
        rank = paths.index(q["original"]) + 1 if q["original"] in paths else None
        own = relatedness(hits[rank - 1]) if rank else None
        # Other melodies scoring exactly as high as the original (ties broken by collatio).
        ties = sum(1 for p, h in zip(paths, hits)
                   if own is not None and p != q["original"] and relatedness(h) == own)
        r = dict(q)
        r.update({"corpus": label, "seconds": secs, "cpu_seconds": cpu, "rank": rank,
                  "ties": ties, "ap": 1.0 / rank if rank else 0.0, "error": error,
                  "hits": [{"path": p, "similarity": relatedness(h)}
                           for p, h in zip(paths, hits)]})
        results.append(r)
        if error:
            print(f"  {q['query']}: {error}", file=sys.stderr, flush=True)
    return results


def relatedness(hit: dict) -> float | None:
    """The figure a hit is ranked by: its relatedness (JSON schema 2), or the similarity of
    schema 1."""
    value = hit.get("relatedness")
    if isinstance(value, dict):
        return value.get("value")
    return hit.get("similarity")


# ----------------------------------------------------------------------------------------
# 4. Metrics and report
# ----------------------------------------------------------------------------------------

def metrics(results: list[dict]) -> dict:
    if not results:
        return {"n": 0, "map": 0.0, "top1": 0.0, "found": 0, "tied_first": 0, "margin_min": None}
    return {"n": len(results),
            "map": sum(r["ap"] for r in results) / len(results),
            "top1": sum(1 for r in results if r["rank"] == 1) / len(results),
            "found": sum(1 for r in results if r["rank"]) / len(results),
            "tied_first": sum(1 for r in results if r["rank"] == 1 and r["ties"]),
            "margin_min": min((margin(r) for r in results if r["rank"] == 1), default=None)}


def margin(r: dict) -> float:
    """Similarity of the original minus that of the best other hit."""
    own = r["hits"][r["rank"] - 1]["similarity"]
    others = [h["similarity"] for h in r["hits"] if h["path"] != r["original"]]
    return own - max(others) if others else own


def table(results: list[dict]) -> list[tuple[str, dict]]:
    rows = []
    gated = [r for r in results if r["kind"] != "identity"]
    for kind in KINDS:
        rows.append((kind, metrics([r for r in gated if r["kind"] == kind])))
    rows.append(("ALL variants", metrics(gated)))
    rows.append(("(identity)", metrics([r for r in results if r["kind"] == "identity"])))
    return rows


def print_table(title: str, results: list[dict]) -> None:
    print(f"\n{title}")
    print(f"  {'kind':<14}{'n':>4}{'MAP':>8}{'top-1':>8}{'in top 20':>11}"
          f"{'first by tie':>14}{'min margin':>12}")
    for name, mt in table(results):
        mm = "-" if mt["margin_min"] is None else f"{mt['margin_min']:.3f}"
        print(f"  {name:<14}{mt['n']:>4}{mt['map']:>8.3f}{mt['top1']:>8.1%}{mt['found']:>11.1%}"
              f"{mt['tied_first']:>14}{mm:>12}")
    print("  (min margin: smallest similarity gap between the original ranked first and the "
          "next hit)")


def times(results: list[dict], key: str = "seconds") -> dict:
    secs = [r[key] for r in results]
    return {"median": statistics.median(secs), "max": max(secs),
            "mean": sum(secs) / len(secs),
            "under_0.2s": sum(1 for x in secs if x < 0.2) / len(secs)} if secs else {}


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--melodies", type=int, default=5000, help="melodies in the main corpus")
    ap.add_argument("--big", type=int, default=10000,
                    help="melodies in the second (build-time) corpus; 0 to skip it")
    ap.add_argument("--skip-extract", action="store_true",
                    help="use target/retrieval/melodies.json from an earlier run")
    ap.add_argument("--collatio", default=str(ROOT / "target" / "release" / "collatio"))
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--queries", type=int, default=50)
    ap.add_argument("--candidates", type=int, default=None,
                    help="passed to collatio search (default: collatio's own default)")
    args = ap.parse_args(argv)
    if not os.access(args.collatio, os.X_OK):
        print(f"error: {args.collatio} not found (cargo build --release)", file=sys.stderr)
        return 2
    OUT.mkdir(parents=True, exist_ok=True)
    cache = OUT / "melodies.json"

    # 1. Extraction.
    pool = load_cache(cache)
    if pool is None:
        if args.skip_extract:
            print(f"error: --skip-extract but no usable {cache}", file=sys.stderr)
            return 2
        pool = extract(args.jobs, cache)
    else:
        print(f"using {len(pool)} cached melodies from {cache.relative_to(ROOT)}", flush=True)
    ordered = sorted(clean(pool), key=lambda m: (m["collection"], m["name"]))
    print(f"{len(ordered)} melodies after dropping {len(pool) - len(ordered)} with misread "
          f"meters", flush=True)
    if len(ordered) < args.melodies:
        print(f"error: only {len(ordered)} distinct melodies, --melodies {args.melodies}",
              file=sys.stderr)
        return 2
    shuffled = list(ordered)
    random.Random(SEED).shuffle(shuffled)
    main_set = shuffled[:args.melodies]
    write_corpus(OUT / "corpus", main_set)
    big_set: list[dict] = []
    big_real = True
    if args.big:
        big_set = shuffled[:args.big]
        if len(big_set) < args.big:  # top up with transposed copies
            big_real = False
            rng = random.Random(SEED + 1)
            k = 0
            while len(big_set) < args.big:
                m = shuffled[k % len(shuffled)]
                shift = rng.choice([s for s in range(-6, 7) if s != 0])
                big_set.append(dict(m, name=f"{m['name']}_t{shift:+d}_{k // len(shuffled)}",
                                    notes=[[o, d, p + shift] for o, d, p in m["notes"]]))
                k += 1
        write_corpus(OUT / "corpus_big", big_set)

    # 2. Queries.
    queries = make_queries(main_set, args.queries, OUT / "queries")
    (OUT / "ground_truth.json").write_text(json.dumps(
        [{"query": q["query"], "kind": q["kind"], "original": q["original"],
          "source": q["source"], "title": q["title"], "variant": q["variant"]}
         for q in queries], indent=1), encoding="utf-8")
    print(f"wrote {len(queries) // 2} queries + {len(queries) // 2} identity controls to "
          f"{(OUT / 'queries').relative_to(ROOT)}; ground truth in ground_truth.json", flush=True)

    # 3. Build and search.
    builds = {"main": build_index(args.collatio, OUT / "corpus", OUT / "corpus.idx")}
    if args.big:
        builds["big"] = build_index(args.collatio, OUT / "corpus_big", OUT / "corpus_big.idx")
    results = run_searches(args.collatio, OUT / "corpus.idx", queries, "main", args.candidates)
    big_results = []
    if args.big and big_real:
        big_results = run_searches(args.collatio, OUT / "corpus_big.idx", queries, "big",
                                   args.candidates)

    # 4. Report.
    titles = {rel_path(m): m["title"] for m in (big_set or main_set)}
    for m in main_set:
        titles[rel_path(m)] = m["title"]
    failures = []
    for r in results + big_results:
        if r["kind"] != "identity" and r["rank"] != 1:
            own = next((h["similarity"] for h in r["hits"] if h["path"] == r["original"]), None)
            above = r["hits"][: (r["rank"] - 1) if r["rank"] else 5]
            failures.append({"corpus": r["corpus"], "query": r["query"], "kind": r["kind"],
                             "original": r["original"], "title": r["title"],
                             "rank": r["rank"], "original_similarity": own,
                             "variant": r["variant"], "error": r["error"],
                             "above": [dict(h, title=titles.get(h["path"], "?"))
                                       for h in above]})
    summary = {"main": table(results), "big": table(big_results) if big_results else None}
    doc = {"melodies_pool": len(ordered), "candidates": args.candidates, "main_corpus": len(main_set),
           "big_corpus": len(big_set), "big_corpus_real_tunes": big_real,
           "builds": builds, "search_seconds_main": times(results),
           "search_seconds_big": times(big_results),
           "search_cpu_seconds_main": times(results, "cpu_seconds"),
           "search_cpu_seconds_big": times(big_results, "cpu_seconds"), "summary": summary,
           "failures": failures, "results": results + big_results,
           "load_average_end": loadavg(), "top": TOP}
    (OUT / "results.json").write_text(json.dumps(doc, indent=1), encoding="utf-8")

    print("\n" + "=" * 72)
    print(f"RETRIEVAL BENCHMARK  (pool {len(ordered)} distinct melodies; "
          f"candidates {args.candidates or 'default'}; "
          f"load average now {loadavg()} on {os.cpu_count()} cores)")
    for label, b in builds.items():
        print(f"  index build {label:<5}: {b['files']:>6} melodies  {b['seconds']:7.2f} s wall, "
              f"{b['cpu_seconds']:6.2f} s CPU, {b['bytes']:>12,} bytes   (load {b['load_before']})")
    for label, res in (("main", results), ("big", big_results)):
        if res:
            t, c = times(res), times(res, "cpu_seconds")
            print(f"  search {label:<5}: wall median {t['median']:.3f} s, max {t['max']:.3f} s, "
                  f"mean {t['mean']:.3f} s, {t['under_0.2s']:.0%} under 0.2 s; CPU median "
                  f"{c['median']:.3f} s, max {c['max']:.3f} s ({len(res)} searches)")
            kinds = {}
            for r in res:
                kinds.setdefault(r["kind"], []).append(r["seconds"])
            print("      wall median by kind: " + ", ".join(
                f"{k} {statistics.median(v):.3f}" for k, v in kinds.items()))
            slow = sorted(res, key=lambda r: -r["seconds"])[:3]
            print("      slowest: " + "; ".join(
                f"{pathlib.Path(r['query']).name} ({r['notes']} notes) {r['seconds']:.2f} s"
                for r in slow))
    print_table(f"Main corpus ({len(main_set)} melodies), targets MAP >= {TARGET_MAP}, "
                f"top-1 >= {TARGET_TOP1:.0%}", results)
    if big_results:
        print_table(f"Big corpus ({len(big_set)} melodies, same queries)", big_results)
    if failures:
        print("\nFailures (original not first):")
        for f in failures:
            print(f"  [{f['corpus']}] {f['query']}  kind={f['kind']} {f['variant']}")
            print(f"      original {f['original']} \"{f['title']}\" rank {f['rank']} "
                  f"similarity {f['original_similarity']}" + (f" ERROR {f['error']}" if f["error"] else ""))
            for h in f["above"][:5]:
                print(f"      above: {h['path']} \"{h['title']}\" similarity {h['similarity']}")
    allv = metrics([r for r in results if r["kind"] != "identity"])
    ok = allv["map"] >= TARGET_MAP and allv["top1"] >= TARGET_TOP1
    print(f"\nMAP {allv['map']:.3f}, top-1 {allv['top1']:.1%} over {allv['n']} queries: "
          + ("PASS" if ok else "FAIL") + f"  (details in {(OUT / 'results.json').relative_to(ROOT)})")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

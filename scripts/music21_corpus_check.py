#!/usr/bin/env python3
"""Cross-check `collatio inspect` against music21 on music21's bundled MusicXML corpus.

For every .xml/.mxl/.musicxml file of music21's corpus (sorted by path) this runs
`collatio inspect FILE --format json` and parses the same file with music21, then reports:

* the parse success rate of collatio (exit code 0 or 1 / all files);
* the share of files whose total note counts agree.  Counting rules on both sides: every
  sounding pitched note, each chord tone counts, tied notes merged into one (music21:
  `score.stripTies()`), grace notes excluded (`duration.isGrace`), unpitched notes and
  percussion chords excluded, rests excluded, and chord symbols (`harmony.Harmony`, which
  music21 makes a kind of Chord and lists among `.notes`) excluded.  NOTE: music21 10.x
  ignores `<cue/>` entirely (a cue note is imported as an ordinary, sounding note; only
  `<type size="cue">` sets `style.noteSize = 'cue'`), so music21's count includes cue notes
  while collatio's does not; the script counts `<cue/>` notes in the XML and shows them
  for every disagreement.
  Files music21 cannot read (exception or time-out) are listed and excluded from the
  agreement share; files collatio cannot read count as disagreeing;
* a melody timing check: the first 50 notes of collatio's melody of part 1 (`--part 1`)
  must exist in music21's stripped part with the same onset (quarter notes), MIDI pitch
  (concert) and duration (only <= music21's when collatio reduced the part to a skyline,
  which cuts a note where a higher one enters), and the same bar label (`bar` vs
  `measureNumberWithSuffix()`).  Known music21 quirks show up here too: music21 lays each
  part's measures end to end on its own (collatio keeps measures aligned across parts, as
  MusicXML requires unless `non-controlling="yes"`), and music21 stretches a measure to
  reach a `<direction>` whose `<offset>` (visual only without `sound="yes"`) points past
  its end;
* the lists of collatio failures (with stderr), count disagreements (with per-part counts and
  XML features that usually explain them) and melody mismatches.

Usage:
  .venv/bin/python scripts/music21_corpus_check.py [--collatio target/release/collatio]
      [--jobs 2] [--limit N] [--report out.json] [--min-parse 0.99] [--min-agree 0.99]

Exit status: 0, or 1 when a rate is below --min-parse / --min-agree (everything is printed
first), 2 on bad arguments.
"""

from __future__ import annotations

import argparse
import io
import json
import math
import multiprocessing as mp
import os
import re
import signal
import subprocess
import sys
import time
import warnings
import zipfile
import xml.etree.ElementTree as ET

EXTENSIONS = (".xml", ".mxl", ".musicxml")
MELODY_NOTES = 50
COLLATIO_TIMEOUT = 120
STDERR_KEEP = 600


class Music21Timeout(BaseException):
    """Raised by SIGALRM inside a worker; a BaseException so music21 cannot swallow it."""


def _alarm(signum, frame):  # noqa: ARG001
    raise Music21Timeout()


def corpus_dir() -> str:
    import music21

    return os.path.join(os.path.dirname(music21.__file__), "corpus")


def corpus_files(root: str) -> list[str]:
    found = []
    for dirpath, _dirs, names in os.walk(root):
        for name in names:
            if name.lower().endswith(EXTENSIONS):
                found.append(os.path.relpath(os.path.join(dirpath, name), root))
    return sorted(found)


# ----------------------------------------------------------------------------- collatio


def run_collatio(binary: str, path: str, extra: list[str]) -> dict:
    t0 = time.perf_counter()
    try:
        proc = subprocess.run(
            [binary, "inspect", path, "--format", "json", *extra],
            capture_output=True,
            timeout=COLLATIO_TIMEOUT,
        )
    except subprocess.TimeoutExpired:
        return {"rc": None, "stderr": f"timed out after {COLLATIO_TIMEOUT} s", "record": None,
                "seconds": time.perf_counter() - t0}
    out = {
        "rc": proc.returncode,
        "stderr": proc.stderr.decode("utf-8", "replace").strip()[:STDERR_KEEP],
        "record": None,
        "seconds": time.perf_counter() - t0,
    }
    if proc.returncode in (0, 1):
        try:
            out["record"] = json.loads(proc.stdout)
        except ValueError as e:
            out["rc"] = None
            out["stderr"] = f"exit {proc.returncode} but stdout is not JSON: {e}"
    return out


# ----------------------------------------------------------------------------- XML features


def _root_xml_bytes(path: str) -> bytes:
    if not path.lower().endswith(".mxl"):
        with open(path, "rb") as f:
            return f.read()
    with zipfile.ZipFile(path) as z:
        names = z.namelist()
        root = None
        if "META-INF/container.xml" in names:
            c = ET.fromstring(z.read("META-INF/container.xml"))
            for el in c.iter():
                if el.tag.endswith("rootfile") and el.get("full-path"):
                    root = el.get("full-path")
                    break
        if root is None:
            root = next(n for n in names if not n.startswith("META-INF") and n.endswith("xml"))
        return z.read(root)


def xml_features(path: str) -> dict:
    """Counts of MusicXML constructs that commonly explain count differences."""
    f = {k: 0 for k in (
        "notes", "cue", "grace", "grace_cue", "unpitched", "rest", "chord", "tie_start", "tie_stop",
        "tied_only", "tie_stop_in_chord", "print_object_no", "no_duration", "multi_lyric",
        "transpose", "repeat_backward", "voices_gt1_parts", "pitched_no_duration_zero",
        "duration_zero")}
    try:
        root = ET.parse(io.BytesIO(_root_xml_bytes(path))).getroot()
    except Exception as e:  # noqa: BLE001
        return {"error": str(e)}
    for el in root.iter("transpose"):
        f["transpose"] += 1
    for el in root.iter("repeat"):
        if el.get("direction") == "backward":
            f["repeat_backward"] += 1
    for part in root.iter("part"):
        voices = {v.text.strip() for v in part.iter("voice") if v.text}
        if len(voices) > 1:
            f["voices_gt1_parts"] += 1
    for n in root.iter("note"):
        f["notes"] += 1
        cue = n.find("cue") is not None
        grace = n.find("grace") is not None
        f["cue"] += cue and not grace
        f["grace"] += grace
        f["grace_cue"] += grace and cue
        f["unpitched"] += n.find("unpitched") is not None
        f["rest"] += n.find("rest") is not None
        f["chord"] += n.find("chord") is not None
        ties = n.findall("tie")
        f["tie_start"] += any(t.get("type") == "start" for t in ties)
        f["tie_stop"] += any(t.get("type") == "stop" for t in ties)
        if not ties and n.find("notations/tied") is not None:
            f["tied_only"] += 1
        if n.find("chord") is not None and any(t.get("type") == "stop" for t in ties):
            f["tie_stop_in_chord"] += 1
        f["print_object_no"] += n.get("print-object") == "no"
        d = n.find("duration")
        if d is None and not grace:
            f["no_duration"] += 1
        elif d is not None and not grace and (d.text or "").strip() in ("0", "0.0"):
            f["duration_zero"] += 1
        f["multi_lyric"] += len(n.findall("lyric")) > 1
    return f


# ----------------------------------------------------------------------------- music21


def _base_part_id(part) -> str:
    """The MusicXML part id of a music21 Part or PartStaff.  music21 sets `Part.id` to the
    instrument name; the XML id is kept in `.groups` ('P1', or 'P1-Staff2' for a staff of a
    multi-staff part) and in the instrument's `partId`."""
    for g in part.groups:
        return re.sub(r"-Staff\d+$", "", str(g))
    inst = part.getInstrument(returnDefault=False)
    if inst is not None and inst.partId:
        return str(inst.partId)
    return re.sub(r"-Staff\d+$", "", str(part.id))


def m21_counts(stripped) -> tuple[dict, dict]:
    """(note count per base part id, cue-size note count per base part id)."""
    from music21 import chord, harmony, note, percussion

    counts: dict[str, int] = {}
    cue_sized: dict[str, int] = {}
    for p in stripped.parts:
        pid = _base_part_id(p)
        c = cs = 0
        for n in p.recurse().notes:
            if isinstance(n, (note.Unpitched, percussion.PercussionChord, harmony.Harmony)):
                continue
            if n.duration.isGrace:
                continue
            k = len(n.pitches) if isinstance(n, chord.Chord) else 1
            c += k
            if getattr(n.style, "noteSize", None) == "cue":
                cs += k
        counts[pid] = counts.get(pid, 0) + c
        cue_sized[pid] = cue_sized.get(pid, 0) + cs
    return counts, cue_sized


def m21_events(stripped, part_id: str, until: float) -> dict:
    """Map (onset, midi) -> list of (duration, bar label) for the parts with this base id,
    at sounding pitch, for notes starting at or before `until` quarter notes."""
    from music21 import chord, harmony, note, percussion, stream

    events: dict[tuple, list] = {}
    for p in stripped.parts:
        if _base_part_id(p) != part_id:
            continue
        try:
            p = p.toSoundingPitch(inPlace=False)
        except Exception:  # noqa: BLE001
            pass
        for m in p.getElementsByClass(stream.Measure):
            mo = float(m.offset)
            if mo > until + 1e-9:
                break
            label = m.measureNumberWithSuffix()
            for n in m.recurse().notes:
                if (isinstance(n, (note.Unpitched, percussion.PercussionChord, harmony.Harmony))
                        or n.duration.isGrace):
                    continue
                onset = mo + float(n.getOffsetInHierarchy(m))
                for pitch in n.pitches:
                    key = (round(onset, 4), round(pitch.ps, 2))
                    events.setdefault(key, []).append((float(n.quarterLength), label))
    return events


def melody_check(record: dict, stripped) -> dict:
    """Checks the first notes of collatio's melody against music21's notes of the same part.
    When collatio reduced the part to a skyline (chords or overlapping voices), a melody note
    may be cut short where a higher note enters, so its duration need only be <= music21's."""
    notes = record.get("notes") or []
    selection = record.get("selection", {})
    part = selection.get("part")
    skyline = bool(selection.get("skyline"))
    notes = notes[:MELODY_NOTES]
    if not notes or part is None:
        return {"part": part, "checked": 0, "bad_notes": 0, "problems": []}
    until = max(n["onset_beats"] for n in notes)
    events = m21_events(stripped, part, until)
    problems = []
    bad = 0
    for n in notes:
        key = (round(n["onset_beats"], 4), round(n["midi"], 2))
        found = events.get(key)
        before = len(problems)
        if not found:
            problems.append(f"{n['name']} at {n['onset_beats']:g} (bar {n['bar']}): "
                            "no music21 note with that onset and pitch")
        else:
            d = n["duration_beats"]
            ok = any(math.isclose(m, d, abs_tol=1e-4) or (skyline and d < m + 1e-4)
                     for m, _ in found)
            if not ok:
                problems.append(f"{n['name']} at {n['onset_beats']:g}: duration "
                                f"{d:g} vs music21 {found[0][0]:g}")
            if not any(lbl == n["bar"] for _, lbl in found):
                problems.append(f"{n['name']} at {n['onset_beats']:g}: bar '{n['bar']}' vs "
                                f"music21 '{found[0][1]}'")
        bad += len(problems) > before
    return {"part": part, "skyline": skyline, "checked": len(notes), "bad_notes": bad,
            "problems": problems}


# ----------------------------------------------------------------------------- worker


def check_file(task: tuple) -> dict:
    rel, root, binary, m21_timeout = task
    path = os.path.join(root, rel)
    res: dict = {"file": rel}

    col = run_collatio(binary, path, [])
    res["collatio_rc"] = col["rc"]
    res["collatio_seconds"] = round(col["seconds"], 4)
    rec = col["record"]
    if rec is None:
        res["collatio_stderr"] = col["stderr"]
    else:
        res["collatio_parts"] = {p["id"]: p["note_count"] for p in rec["parts"]}
        res["collatio_percussion"] = [p["id"] for p in rec["parts"] if p.get("percussion")]
        res["collatio_total"] = sum(p["note_count"] for p in rec["parts"])
        res["collatio_warnings"] = rec.get("warnings", [])[:10]
    # Melody of part 1, for the timing check.
    mel = run_collatio(binary, path, ["--part", "1"]) if rec is not None else None
    mel_rec = mel["record"] if mel and mel["record"] is not None else rec

    warnings.simplefilter("ignore")
    old = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(m21_timeout)
    t0 = time.perf_counter()
    stage = "import"
    try:
        from music21 import converter

        stage = "parse"
        score = converter.parse(path, forceSource=True)
        stage = "stripTies/count"
        stripped = score.stripTies()
        counts, cue_sized = m21_counts(stripped)
        res["m21_parts"] = counts
        res["m21_total"] = sum(counts.values())
        res["m21_cue_sized"] = sum(cue_sized.values())
        if mel_rec is not None:
            stage = "melody check"
            res["melody"] = melody_check(mel_rec, stripped)
    except Music21Timeout:
        res["m21_error"] = f"{stage}: timed out after {m21_timeout} s"
    except Exception as e:  # noqa: BLE001
        res["m21_error"] = f"{stage}: {type(e).__name__}: {e}"[:STDERR_KEEP]
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
    res["m21_seconds"] = round(time.perf_counter() - t0, 3)
    if "m21_error" in res and "m21_total" in res:
        # Counting succeeded; only the melody check failed: keep the counts.
        res["melody"] = {"part": None, "checked": 0, "problems": [], "error": res.pop("m21_error")}

    if "m21_total" in res and res.get("collatio_total") != res["m21_total"]:
        res["xml_features"] = xml_features(path)
    return res


# ----------------------------------------------------------------------------- main


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--collatio", default="target/release/collatio", help="collatio binary")
    ap.add_argument("--jobs", type=int, default=2, help="parallel workers (default 2)")
    ap.add_argument("--limit", type=int, default=None, help="only the first N files")
    ap.add_argument("--report", default=None, help="write a JSON summary here")
    ap.add_argument("--min-parse", type=float, default=None,
                    help="exit 1 if collatio's parse rate is below this (e.g. 0.99)")
    ap.add_argument("--min-agree", type=float, default=None,
                    help="exit 1 if the note-count agreement share is below this (e.g. 0.99)")
    ap.add_argument("--m21-timeout", type=int, default=300,
                    help="seconds allowed for music21 per file (default 300; opus132 takes ~50 s alone "
                         "and over 120 s on a loaded machine)")
    ap.add_argument("--corpus", default=None, help="corpus directory (default: music21's)")
    args = ap.parse_args()
    if args.jobs < 1 or (args.limit is not None and args.limit < 1):
        ap.error("--jobs and --limit must be at least 1")
    binary = os.path.abspath(args.collatio)
    if not os.access(binary, os.X_OK):
        ap.error(f"collatio binary not found or not executable: {binary}")

    t_start = time.perf_counter()
    import music21

    root = args.corpus or corpus_dir()
    files = corpus_files(root)
    if args.limit:
        files = files[: args.limit]
    print(f"music21 {music21.__version__}; corpus {root}")
    print(f"collatio {binary}")
    print(f"{len(files)} files, {args.jobs} workers, music21 time limit {args.m21_timeout} s")
    sys.stdout.flush()

    # Largest files first so the pool finishes evenly; results are sorted afterwards.
    order = sorted(files, key=lambda r: -os.path.getsize(os.path.join(root, r)))
    tasks = [(rel, root, binary, args.m21_timeout) for rel in order]
    results: dict[str, dict] = {}
    ctx = mp.get_context("fork")
    with ctx.Pool(args.jobs, maxtasksperchild=25) as pool:
        pending = [(t[0], pool.apply_async(check_file, (t,))) for t in tasks]
        for i, (rel, fut) in enumerate(pending, 1):
            # Safety net beyond the in-worker alarm (e.g. a worker killed by the OS).
            try:
                results[rel] = fut.get(timeout=args.m21_timeout + 2 * COLLATIO_TIMEOUT + 60)
            except Exception as e:  # noqa: BLE001
                results[rel] = {"file": rel, "collatio_rc": None,
                                "collatio_stderr": "worker lost",
                                "m21_error": f"worker lost: {type(e).__name__}: {e}"}
            if i % 50 == 0:
                print(f"  ... {i}/{len(tasks)} done ({time.perf_counter() - t_start:.0f} s)",
                      file=sys.stderr, flush=True)

    rows = [results[r] for r in files]
    n = len(rows)
    parsed = [r for r in rows if r.get("collatio_rc") in (0, 1)]
    failed = [r for r in rows if r.get("collatio_rc") not in (0, 1)]
    with_warnings = [r for r in parsed if r["collatio_rc"] == 1]
    m21_bad = [r for r in rows if "m21_error" in r]
    comparable = [r for r in rows if "m21_total" in r]
    agree = [r for r in comparable if r.get("collatio_total") == r["m21_total"]]
    disagree = [r for r in comparable if r.get("collatio_total") != r["m21_total"]]
    mel_checked = [r for r in rows if r.get("melody", {}).get("checked")]
    mel_bad = [r for r in mel_checked if r["melody"]["problems"]]
    mel_err = [r for r in rows if r.get("melody", {}).get("error")]

    parse_rate = len(parsed) / n if n else 0.0
    agree_rate = len(agree) / len(comparable) if comparable else 0.0

    print()
    print("== collatio failures (exit code not 0/1) ==")
    for r in failed:
        print(f"{r['file']}: exit {r.get('collatio_rc')}: {r.get('collatio_stderr', '')}")
    if not failed:
        print("(none)")

    print()
    print("== music21 could not read (excluded from the agreement share) ==")
    for r in m21_bad:
        print(f"{r['file']}: {r['m21_error']}")
    if not m21_bad:
        print("(none)")

    print()
    print("== note count disagreements: collatio vs music21 (total; per part; XML features) ==")
    for r in disagree:
        col = r.get("collatio_parts")
        m21 = r["m21_parts"]
        print(f"{r['file']}: collatio {r.get('collatio_total')} vs music21 {r['m21_total']}"
              f" (diff {(r.get('collatio_total') or 0) - r['m21_total']:+d})")
        if col is None:
            print(f"    collatio failed: {r.get('collatio_stderr', '')}")
        else:
            ids = list(col) + [k for k in m21 if k not in col]
            per = ", ".join(f"{k}: {col.get(k, '-')}/{m21.get(k, '-')}" for k in ids
                            if col.get(k) != m21.get(k))
            print(f"    differing parts (collatio/music21): {per}")
        feats = r.get("xml_features", {})
        shown = {k: v for k, v in feats.items() if v and k != "notes"}
        print(f"    xml: {shown}; music21 cue-sized notes: {r.get('m21_cue_sized', 0)}")
    if not disagree:
        print("(none)")

    print()
    print(f"== melody check: first {MELODY_NOTES} notes of collatio's part 1 melody "
          "(onset, concert pitch, duration, bar label) vs music21 ==")
    for r in mel_bad:
        probs = r["melody"]["problems"]
        print(f"{r['file']} (part {r['melody']['part']}"
              f"{', skyline' if r['melody'].get('skyline') else ''}): "
              f"{r['melody']['bad_notes']} of {r['melody']['checked']} notes differ")
        for p in probs[:5]:
            print(f"    {p}")
    for r in mel_err:
        print(f"{r['file']}: melody check failed in music21: {r['melody']['error']}")
    if not mel_bad and not mel_err:
        print("(none)")

    elapsed = time.perf_counter() - t_start
    print()
    print("== summary ==")
    print(f"music21 version:        {music21.__version__}")
    print(f"files:                  {n}")
    print(f"collatio parse rate:    {len(parsed)}/{n} = {parse_rate:.4f} "
          f"({len(with_warnings)} with warnings, exit 1)")
    print(f"music21 could not read: {len(m21_bad)}")
    print(f"note counts agree:      {len(agree)}/{len(comparable)} = {agree_rate:.4f} "
          "(files music21 could read; a collatio failure counts as disagreement)")
    print(f"melody check:           {len(mel_checked) - len(mel_bad)}/{len(mel_checked)} files "
          f"with all first {MELODY_NOTES} part-1 notes matching")
    print(f"collatio time (sum):    {sum(r.get('collatio_seconds', 0) for r in rows):.1f} s")
    print(f"music21 time (sum):     {sum(r.get('m21_seconds', 0) for r in rows):.1f} s")
    print(f"total time:             {elapsed:.1f} s")

    if args.report:
        summary = {
            "music21_version": music21.__version__,
            "corpus": root,
            "collatio": binary,
            "files": n,
            "parse_rate": parse_rate,
            "agree_rate": agree_rate,
            "parsed": len(parsed),
            "parsed_with_warnings": len(with_warnings),
            "music21_failed": len(m21_bad),
            "compared": len(comparable),
            "agree": len(agree),
            "melody_checked": len(mel_checked),
            "melody_mismatch": len(mel_bad),
            "seconds": round(elapsed, 1),
            "results": rows,
        }
        with open(args.report, "w") as f:
            json.dump(summary, f, indent=1, sort_keys=True)
        print(f"report written to {args.report}")

    status = 0
    if args.min_parse is not None and parse_rate < args.min_parse:
        print(f"FAIL: parse rate {parse_rate:.4f} < {args.min_parse}")
        status = 1
    if args.min_agree is not None and agree_rate < args.min_agree:
        print(f"FAIL: agreement {agree_rate:.4f} < {args.min_agree}")
        status = 1
    return status


if __name__ == "__main__":
    sys.exit(main())

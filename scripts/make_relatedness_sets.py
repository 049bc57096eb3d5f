#!/usr/bin/env python3
"""Development data for melodic relatedness: real variants of one tune (tune families) against
unrelated tunes of the same idioms, all from public-domain collections bundled with music21
(version pinned in scripts/requirements.txt). See docs/relatedness-data.md.

Sets (melody records as in scripts/melody_events.py, at least 16 notes each):
  dance       members of the curated dance-tune families from Ryan's Mammoth Collection (1883),
              O'Neill's Music of Ireland (1903; music21's "oneills1850") and Aird's Airs
              (Glasgow, from 1778): tunes that share a title, checked by hand to be one tune.
  chorales    soprano melodies of Bach's chorales (music21's bach folder) grouped by hymn tune,
              curated the same way.
  background  every other usable tune of the dance collections, the Essen folk-song
              collection, miscFolk and the remaining chorales, minus: every family member;
              every tune with the same normalised title as a family member (titles that
              name no tune, GENERIC_TITLES, aside); the curated
              exclusions (a keyboard prelude); the Essen "variant" file, whose tunes are
              variants of one another by design.
Duplicate encodings are dropped first (dedupe(): O'Neill tunes filed twice, identical tunes,
several versions of one Bach movement).

The families are NOT found automatically here: they are read from the curated list
scripts/relatedness_families.json (first-pass families, plus the second pass's accepted
additions and new families: families_of()). The automatic matching that proposed the
first-pass candidates is kept for re-checking: --candidates dance|chorales [--bars N] prints the
candidate groups with their incipits as pitch names and as scale degrees relative to the last
note; scripts/relatedness_candidates.py proposes the second-pass candidates (fuzzy titles and
the alignment baseline).

Outputs: target/relatedness/{dance,chorales,background}.json (generated, not committed) and
tests/fixtures/relatedness/subset.json (committed, < 1 MB: whole families taken in a seeded
order until each set has 200 members, and a seeded sample of 600 background tunes).
Parsed tunes are cached per source file under target/relatedness/cache/ (keyed by the music21
version); --refresh ignores the cache. Parsing everything takes about 15 minutes with 2
processes; a cached run takes seconds.

Run: .venv/bin/python scripts/make_relatedness_sets.py [--jobs 2] [--refresh]
     .venv/bin/python scripts/make_relatedness_sets.py --candidates dance [--bars 8] > cands.txt
"""

import argparse
import json
import multiprocessing as mp
import os
import pathlib
import random
import re
import signal
import sys
import time
import unicodedata
import warnings
from collections import Counter, defaultdict

import music21

from melody_events import UNIT, corpus_root, melody_of

ROOT = pathlib.Path(__file__).resolve().parent.parent
OUT = ROOT / "target" / "relatedness"
CACHE = OUT / "cache"
CURATED = ROOT / "scripts" / "relatedness_families.json"
SUBSET = ROOT / "tests" / "fixtures" / "relatedness" / "subset.json"
GENERATOR = "scripts/make_relatedness_sets.py"
CACHE_VERSION = 1
MIN_NOTES = 16
DANCE = ["ryansMammoth", "oneills1850", "airdsAirs"]
FOLK = ["essenFolksong", "miscFolk", "nottingham-dataset"]
CHORALES = "bach"
EXCLUDED_FILES = {"essenFolksong/variant0.abc"}  # variants of one another by design
SEED = 2026
SUBSET_BACKGROUND = 600
SUBSET_MAX_FAMILY_MEMBERS = 400
FILE_TIMEOUT = 900  # seconds for music21 to read one file


# ---------------------------------------------------------------------------------------------
# Reading the corpus (cached)


def tasks():
    """(collection, path relative to the corpus root) of every file read, sorted."""
    root = corpus_root()
    out = []
    for collection in DANCE + FOLK:
        for path in sorted((root / collection).glob("*.abc")):
            out.append((collection, f"{collection}/{path.name}"))
    for path in sorted((root / CHORALES).iterdir()):
        if path.suffix in (".mxl", ".xml", ".krn") and path.name.startswith("bwv"):
            out.append((CHORALES, f"{CHORALES}/{path.name}"))
    return out


def abc_headers(text):
    """{X number: {"titles": [...], "notes": [...]}} from the headers of an ABC file."""
    tunes = {}
    current = None
    in_header = False
    for line in text.splitlines():
        m = re.match(r"\s*X:\s*(\S+)", line)
        if m:
            current = {"titles": [], "notes": []}
            number = m.group(1)
            tunes[str(int(number)) if number.isdigit() else number] = current  # "0001" -> "1"
            in_header = True
            continue
        if current is None or not in_header:
            continue
        if line.startswith("T:"):
            current["titles"].append(line[2:].strip())
        elif line.startswith("N:") and line[2:].strip():
            current["notes"].append(line[2:].strip())
        elif line.startswith("K:"):
            in_header = False
    return tunes


class _Timeout(Exception):
    pass


def _alarm(signum, frame):  # noqa: ARG001
    raise _Timeout()


_CHORALE_LIST = None


def chorale_list():
    """music21's list of Bach chorales by BWV number ("269", "248.12-2", ...)."""
    global _CHORALE_LIST
    if _CHORALE_LIST is None:
        from music21.corpus.chorales import ChoraleListRKBWV

        _CHORALE_LIST = {str(k): v for k, v in ChoraleListRKBWV().byBWV.items()}
    return _CHORALE_LIST


def soprano_of(score):
    """The chorale melody: the part named Soprano, else the part with the highest mean pitch."""
    parts = list(score.parts)
    for part in parts:
        if (part.partName or "").strip().lower().startswith("soprano"):
            return part
    best, best_mean = parts[0], None
    for part in parts:
        pitches = [p.midi for n in part.flatten().notes for p in n.pitches]
        if pitches:
            mean = sum(pitches) / len(pitches)
            if best_mean is None or mean > best_mean:
                best, best_mean = part, mean
    return best


def read_file(task):
    """Worker: every tune of one file, as records (melody or the reason it has none)."""
    collection, rel = task
    start = time.time()
    path = corpus_root() / rel
    records = []
    signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(FILE_TIMEOUT)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            from music21 import converter

            if collection == CHORALES:
                score = converter.parse(path, forceSource=True)
                stem = path.stem[3:]  # "bwv"
                md = score.metadata
                listed = chorale_list().get(stem)
                title = listed["title"] if listed else (
                    md.title if md is not None and md.title else None)
                part = soprano_of(score)
                rec = {"collection": collection, "source": rel, "title": title,
                       "bwv": stem, "part": part.partName}
                try:
                    m = melody_of(part, MIN_NOTES)
                except Exception as exc:  # noqa: BLE001
                    m, rec["reject"] = None, f"{type(exc).__name__}"
                if m is None:
                    rec.setdefault("reject", "convention")
                else:
                    rec.update(m)
                records.append(rec)
            else:
                headers = abc_headers(path.read_text(encoding="utf-8", errors="replace"))
                parsed = converter.parse(path, format="abc", forceSource=True)
                scores = list(parsed.scores) if hasattr(parsed, "scores") else [parsed]
                multi = len(headers) > 1
                for score in scores:
                    md = score.metadata
                    number = str(md.number) if md is not None and md.number is not None else None
                    head = headers.get(number, {"titles": [], "notes": []})
                    title = md.title if md is not None and md.title else (
                        head["titles"][0] if head["titles"] else path.stem)
                    source = f"{rel}#{number}" if multi else rel
                    rec = {"collection": collection, "source": source, "title": title,
                           "titles": head["titles"], "notes": head["notes"]}
                    try:
                        m = melody_of(score, MIN_NOTES)
                    except Exception as exc:  # noqa: BLE001 - skip what music21 cannot read
                        m, rec["reject"] = None, f"{type(exc).__name__}"
                    if m is None:
                        rec.setdefault("reject", "convention")
                    else:
                        rec.update(m)
                    records.append(rec)
        error = None
    except _Timeout:
        error = f"timeout after {FILE_TIMEOUT} s"
    except Exception as exc:  # noqa: BLE001
        error = f"{type(exc).__name__}: {exc}"[:300]
    finally:
        signal.alarm(0)
    return collection, rel, records, error, time.time() - start


def cache_path(rel):
    return CACHE / (rel.replace("/", "__") + ".json")


def load_corpus(jobs, refresh):
    """Every record of every file, in task order (parsing what is not cached)."""
    todo = []
    cached = {}
    for collection, rel in tasks():
        cp = cache_path(rel)
        if not refresh and cp.exists():
            doc = json.loads(cp.read_text(encoding="utf-8"))
            if doc.get("music21_version") == music21.__version__ and \
                    doc.get("cache_version") == CACHE_VERSION:
                cached[rel] = doc["records"]
                continue
        todo.append((collection, rel))
    if todo:
        CACHE.mkdir(parents=True, exist_ok=True)
        root = corpus_root()
        todo.sort(key=lambda t: (-os.path.getsize(root / t[1]), t[1]))  # big files first
        print(f"parsing {len(todo)} files with music21 ({jobs} processes; "
              f"{len(cached)} cached)...", file=sys.stderr, flush=True)
        start = time.time()
        ctx = mp.get_context("fork")
        with ctx.Pool(jobs, maxtasksperchild=100) as pool:
            for done, (collection, rel, records, error, secs) in enumerate(
                    pool.imap_unordered(read_file, todo), 1):
                if error:
                    print(f"  could not read {rel}: {error}", file=sys.stderr)
                    records = [{"collection": collection, "source": rel, "title": None,
                                "reject": error}]
                cache_path(rel).write_text(json.dumps(
                    {"music21_version": music21.__version__, "cache_version": CACHE_VERSION,
                     "records": records}, separators=(",", ":")), encoding="utf-8")
                cached[rel] = records
                if done % 100 == 0 or secs > 10 or done == len(todo):
                    print(f"  [{done}/{len(todo)} files, {time.time() - start:5.0f} s] {rel} "
                          f"({len(records)} tunes, {secs:.1f} s)", file=sys.stderr, flush=True)
    out = []
    root = corpus_root()
    for _, rel in tasks():
        records = cached[rel]
        if rel.endswith(".abc"):
            attach_headers(records, abc_headers(
                (root / rel).read_text(encoding="utf-8", errors="replace")))
        out.extend(records)
    return out


def attach_headers(records, headers):
    """Every T: and N: line of each tune's header (music21 keeps only the first title)."""
    only = next(iter(headers.values())) if len(headers) == 1 else None
    for rec in records:
        head = headers.get(rec["source"].partition("#")[2]) or only or {"titles": [], "notes": []}
        rec["titles"], rec["notes"] = head["titles"], head["notes"]


def chorale_movement(bwv):
    """"248.9-1" -> "248.9"; "69.6-a" stays (BWV 69a is another work)."""
    stem, _, suffix = bwv.partition("-")
    return bwv if suffix == "a" else stem


def dedupe(records):
    """Drops duplicate encodings of one printed tune: versions of one Bach chorale movement
    (see below); O'Neill's tunes that appear in two files of music21's oneills1850 folder under
    the same O'Neill number (overlapping files by different transcribers: the first usable copy
    in file order is kept); any tune whose meter and events equal an earlier tune's (e.g. a tune
    filed twice in ryansMammoth)."""
    usable = [r for r in records if "events" in r]
    out, dropped = [], Counter()
    # Bach: one record per chorale movement. "bwv248.9-1" and "bwv248.9-s", "bwv18.5-lz" and
    # "bwv18.5-w", "bwv190.7-inst" and "bwv190.7" are versions of one setting; "-a" marks
    # another work (BWV 69a, 120a, ...), so it stays. The version music21's chorale list names
    # is kept, else the first in file order.
    movements = defaultdict(list)
    for rec in usable:
        if rec["collection"] == CHORALES:
            movements[chorale_movement(rec["bwv"])].append(rec)
    keep = set()
    for recs in movements.values():
        titled = [r for r in recs if r.get("title")]
        keep.add((titled or recs)[0]["source"])
    n_before = len(usable)
    usable = [r for r in usable if r["collection"] != CHORALES or r["source"] in keep]
    if n_before > len(usable):
        dropped["another version of the same chorale movement"] += n_before - len(usable)
    seen_numbers, seen_events = set(), set()
    for rec in usable:
        if rec["collection"] == "oneills1850" and "#" in rec["source"]:
            number = rec["source"].split("#")[1]
            if number in seen_numbers:
                dropped["same O'Neill number in two files"] += 1
                continue
            seen_numbers.add(number)
        key = json.dumps([rec["meter"], rec["events"]])
        if key in seen_events:
            dropped["identical to an earlier tune"] += 1
            continue
        seen_events.add(key)
        out.append(rec)
    return out, dropped


# ---------------------------------------------------------------------------------------------
# Titles, incipits (for curation and for excluding same-title tunes from the background)

TYPE_WORDS = [
    "double jig", "single jig", "slip jig", "set dance", "long dance", "country dance",
    "highland fling", "walk around", "walkaround", "quick step", "quickstep", "quick march",
    "slow march", "clog dance", "jig", "reel", "hornpipe", "strathspey", "march", "polka",
    "waltz", "clog", "schottische", "fling", "galop", "mazurka", "quadrille", "minuet",
    "minuetto", "air", "song", "dance", "slide", "lancers", "varsovienne", "redowa", "breakdown",
    "contra dance", "cotillion", "rant", "gavotte", "lament", "planxty",
]
_TYPE_RE = re.compile(r"(?:\s+(?:a|an|the))?\s+(?:" + "|".join(
    re.escape(w) for w in sorted(TYPE_WORDS, key=len, reverse=True)) + r")$")


def norm_title(title):
    """Lower case, no accents or punctuation, no leading article, no trailing tune type."""
    if not title:
        return ""
    t = unicodedata.normalize("NFKD", title)
    t = "".join(c for c in t if not unicodedata.combining(c)).lower()
    t = t.replace("&", " and ").replace("'", "").replace("\u2019", "")
    t = re.sub(r"\(.*?\)", " ", t)  # "(2nd setting)", "(Irish)", ...
    t = re.sub(r"[^a-z0-9]+", " ", t).strip()
    t = re.sub(r"\b(no|number)\s+\d+$", "", t).strip()
    t = re.sub(r"\b\d+(st|nd|rd|th)?\s+(setting|version|part)$", "", t).strip()
    t = re.sub(r"\bsetting$", "", t).strip()
    for _ in range(4):
        t2 = re.sub(r"^(the|a|an)\s+", "", t)
        t2 = re.sub(r"\s+(the|a|an)$", "", t2)  # "Flowing Tide, The"
        t2 = _TYPE_RE.sub("", " " + t2).strip() or t2
        if t2 == t:
            break
        t = t2
    return t


# Normalised T: lines that name no tune: tune types, Aird's "Do." (ditto) and his notes on the
# instrument or the dancer. Ignored when the background is cleared of a family's titles.
GENERIC_TITLES = {
    "do", "irish", "highland", "german", "spanish", "sky", "favourite", "jig", "reel",
    "hornpipe", "strathspey", "march", "quick step", "air", "dance", "allemanda", "cotillon",
    "cottilon", "for the ger flute", "for the german flute", "for the violin", "new sett",
    "can be used as a clog", "danced by aldridge",
}


def record_titles(rec):
    titles = list(rec.get("titles") or [])
    if rec.get("title") and rec["title"] not in titles:
        titles.insert(0, rec["title"])
    return titles


NAMES = ["C", "C#", "D", "Eb", "E", "F", "F#", "G", "Ab", "A", "Bb", "B"]


def pitch_name(midi):
    return f"{NAMES[midi % 12]}{midi // 12 - 1}"


def incipit(rec, bars=4):
    """The first `bars` bars as pitch names with "|" at bar lines (leading rest counted)."""
    num, den = rec["meter"]
    bar = num * 4 * UNIT // den
    out, t = [], 0
    for pitch, length in rec["events"]:
        if t >= bars * bar:
            break
        if t > 0 and t % bar == 0:
            out.append("|")
        if pitch is not None:
            out.append(pitch_name(pitch))
        elif t > 0:
            out.append("r")
        t += length
    return " ".join(out)


DEGREES = ["1", "b2", "2", "b3", "3", "4", "#4", "5", "b6", "6", "b7", "7"]


def degree_incipit(rec, bars=4):
    """Like incipit(), as scale degrees relative to the last note (usually the tonic), so that
    transposed versions read alike: 1 2 3 ... with ' for each octave up and , for each down."""
    final = [p for p, _ in rec["events"] if p is not None][-1]
    num, den = rec["meter"]
    bar = num * 4 * UNIT // den
    out, t = [], 0
    for pitch, length in rec["events"]:
        if t >= bars * bar:
            break
        if t > 0 and t % bar == 0:
            out.append("|")
        if pitch is not None:
            octave, deg = divmod(pitch - final, 12)
            out.append(DEGREES[deg] + ("'" * octave if octave > 0 else "," * -octave))
        t += length
    return " ".join(out)


def merged_intervals(rec, n):
    """The first n intervals of the pitch sequence with repeated notes merged."""
    pitches = [p for p, _ in rec["events"] if p is not None]
    merged = [p for j, p in enumerate(pitches) if j == 0 or p != pitches[j - 1]]
    return [b - a for a, b in zip(merged, merged[1:])][:n]


def print_candidates(records, which, bars):
    """The automatic candidates that the curated list was checked from (see the module doc).

    dance: tunes of the three dance collections sharing a normalised title (any of their T:
    lines). chorales: chorales sharing a title (hymn text) or their first 8 intervals
    (repeated notes merged), groups with a common member joined; then every other chorale,
    sorted by title, to look for settings of a family's melody under another text."""
    good = [r for r in records if r["source"].split("#")[0] not in EXCLUDED_FILES]
    if which == "dance":
        groups = defaultdict(list)
        for r in good:
            if r["collection"] in DANCE:
                for k in sorted({norm_title(t) for t in record_titles(r)} - {""}):
                    groups[k].append(r)
        cands = sorted((k, v) for k, v in groups.items() if len(v) >= 2)
        singles = []
    else:
        chorales = [r for r in good if r["collection"] == CHORALES]
        parent = list(range(len(chorales)))

        def find(i):
            while parent[i] != i:
                parent[i] = parent[parent[i]]
                i = parent[i]
            return i

        seen = {}
        for i, r in enumerate(chorales):
            keys = ["iv " + " ".join(map(str, merged_intervals(r, 8)))]
            if r.get("title"):
                keys.append("title " + norm_title(r["title"]))
            for k in keys:
                if k in seen:
                    parent[find(i)] = find(seen[k])
                else:
                    seen[k] = i
        groups = defaultdict(list)
        for i, r in enumerate(chorales):
            groups[find(i)].append(r)
        cands = sorted((norm_title(v[0].get("title") or "~") + " / " + v[0]["source"], v)
                       for v in groups.values() if len(v) >= 2)
        singles = sorted((v[0] for v in groups.values() if len(v) == 1),
                         key=lambda r: (norm_title(r.get("title") or "~"), r["source"]))
    for k, members in cands:
        print(f"== {k!r} ({len(members)})")
        for r in members:
            print(f"  {r['source']}  [{r.get('title')}]  {r['meter'][0]}/{r['meter'][1]}  "
                  f"iv {' '.join(f'{x:+d}' for x in merged_intervals(r, 10))}")
            print(f"      {incipit(r, bars)}")
            print(f"      {degree_incipit(r, bars)}")
    if singles:
        print("== chorales in no group (title, first intervals, 3 bars as degrees)")
        for r in singles:
            print(f"  {r['source']:24s} [{(r.get('title') or '-')[:40]}]  "
                  f"iv {' '.join(f'{x:+d}' for x in merged_intervals(r, 8))}  "
                  f"{degree_incipit(r, 3)}")
    print(f"{len(cands)} candidate groups", file=sys.stderr)


# ---------------------------------------------------------------------------------------------
# Building the sets


def melody_record(rec, set_name, family):
    return {"set": set_name, "collection": rec["collection"], "source": rec["source"],
            "title": rec["title"], "family": family, "meter": rec["meter"],
            "events": rec["events"]}


def write_doc(path, melodies):
    path.parent.mkdir(parents=True, exist_ok=True)
    doc = {"generator": GENERATOR, "music21_version": music21.__version__, "divisions": UNIT,
           "melodies": melodies}
    path.write_text(json.dumps(doc, separators=(",", ":"), ensure_ascii=False) + "\n",
                    encoding="utf-8")
    return path.stat().st_size


def families_of(curated_set):
    """The curated families with the second pass applied (docs/relatedness-data.md, "Second
    pass"): each accepted addition joins its family, and the new families (background tunes
    found to be one tune) follow the first-pass families."""
    fams = [dict(f, members=list(f["members"])) for f in curated_set["families"]]
    by_name = {f["name"]: f for f in fams}
    for add in curated_set.get("additions", []):
        by_name[add["family"]]["members"].append(add["source"])
    fams.extend(dict(f, members=list(f["members"])) for f in curated_set.get("new_families", []))
    if len({f["name"] for f in fams}) != len(fams):
        raise SystemExit("error: two curated families share a name")
    return fams


def build(records, curated):
    by_source = {r["source"]: r for r in records}
    sets = {}
    members = set()
    family_titles = set()
    for set_name in ("dance", "chorales"):
        out = []
        for fam in families_of(curated[set_name]):
            for src in fam["members"]:
                rec = by_source.get(src)
                if rec is None or "events" not in rec:
                    raise SystemExit(f"error: curated member {src} ({fam['name']}) has no melody")
                if src in members:
                    raise SystemExit(f"error: {src} is in two families")
                members.add(src)
                out.append(melody_record(rec, set_name, fam["name"]))
                family_titles.update(norm_title(t) for t in record_titles(rec))
            if len(fam["members"]) < 2:
                raise SystemExit(f"error: family {fam['name']} has fewer than 2 members")
        sets[set_name] = out
    family_titles -= GENERIC_TITLES | {""}
    excluded = {e["source"] for name in ("dance", "chorales")
                for e in curated[name].get("exclude_from_background", [])}
    background = []
    dropped = Counter()
    for rec in records:
        src = rec["source"]
        if src in members:
            continue
        if src.split("#")[0] in EXCLUDED_FILES:
            dropped["in the Essen variant file"] += 1
            continue
        if src in excluded:
            dropped["curated exclusion"] += 1
            continue
        if {norm_title(t) for t in record_titles(rec)} & family_titles:
            dropped["same normalised title as a family member"] += 1
            continue
        background.append(melody_record(rec, "background", None))
    sets["background"] = background
    return sets, dropped


def subset_of(sets):
    """Family members (all of them, or whole families taken in a seeded order until each set
    has its half of SUBSET_MAX_FAMILY_MEMBERS) and a seeded sample of background tunes, in
    the order of the full sets."""
    fam = []
    total = len(sets["dance"]) + len(sets["chorales"])
    for set_name in ("dance", "chorales"):
        mel = sets[set_name]
        if total > SUBSET_MAX_FAMILY_MEMBERS:
            sizes = Counter(m["family"] for m in mel)
            names = sorted(sizes)
            random.Random(f"{SEED}-{set_name}").shuffle(names)
            keep, count = set(), 0
            for name in names:
                if count + sizes[name] <= SUBSET_MAX_FAMILY_MEMBERS // 2:
                    keep.add(name)
                    count += sizes[name]
            mel = [m for m in mel if m["family"] in keep]
        fam.extend(mel)
    bg = sets["background"]
    picked = sorted(random.Random(SEED).sample(range(len(bg)), SUBSET_BACKGROUND))
    return fam + [bg[i] for i in picked]


def main(argv):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--refresh", action="store_true", help="re-parse everything (ignore cache)")
    ap.add_argument("--candidates", choices=["dance", "chorales"],
                    help="print the automatic candidate groups with incipits, then stop")
    ap.add_argument("--bars", type=int, default=4, help="incipit length for --candidates")
    args = ap.parse_args(argv)
    start = time.time()
    records = load_corpus(args.jobs, args.refresh)
    n_all = len(records)
    n_usable = sum("events" in r for r in records)
    records, duplicates = dedupe(records)
    print(f"read {n_all} tunes ({n_usable} usable, {len(records)} after dropping duplicates) in "
          f"{time.time() - start:.0f} s", file=sys.stderr)
    for why, n in sorted(duplicates.items()):
        print(f"  dropped {n} ({why})", file=sys.stderr)
    if args.candidates:
        print_candidates(records, args.candidates, args.bars)
        return 0
    curated = json.loads(CURATED.read_text(encoding="utf-8"))
    sets, dropped = build(records, curated)
    for name in ("dance", "chorales", "background"):
        mel = sets[name]
        size = write_doc(OUT / f"{name}.json", mel)
        fams = len({m["family"] for m in mel if m["family"]})
        by = Counter(m["collection"] for m in mel)
        print(f"{name}: {len(mel)} melodies" + (f" in {fams} families" if fams else "") +
              f" ({', '.join(f'{c} {n}' for c, n in sorted(by.items()))}); "
              f"{size / 1e6:.1f} MB", file=sys.stderr)
    for why, n in sorted(dropped.items()):
        print(f"  background: dropped {n} ({why})", file=sys.stderr)
    sub = subset_of(sets)
    size = write_doc(SUBSET, sub)
    print(f"wrote {SUBSET.relative_to(ROOT)}: {len(sub)} melodies, {size / 1e6:.2f} MB "
          f"({time.time() - start:.0f} s in all)", file=sys.stderr)
    if size >= 1_000_000:
        print("error: the subset is over 1 MB", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

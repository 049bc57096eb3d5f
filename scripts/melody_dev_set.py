#!/usr/bin/env python3
"""Builds the development set of the melody choice and fits the melody-likeness weights.

Writes tests/fixtures/melody_choice/dev_set.json: for every file, its collection, its
corpus-relative source, its half ("fit" or "check"), and every candidate line collatio
considers (`collatio inspect --format json`, field `candidates`) with its statistics and its
label (1 when the line belongs to the part that carries the melody). Prints the fitted weights
as Rust constants for src/ingest/likeness.rs and the ranked-first accuracy per collection and
half (docs/melody-choice.md).

The statistics are computed by collatio itself, so that the weights apply to exactly what the
program measures. The files, all from music21's bundled public-domain corpus (version pinned in
scripts/requirements.txt), and where the melody is:

- chorales: Bach's four-part chorales (`bach/`), the part named Soprano (the chorale tune);
- songs: songs and arias with piano, a hymn and part-songs (SONGS below), the part with the
  tune;
- songs, voice an octave lower: the three songs for one voice and piano (SOLO_SONGS) with the
  voice an octave lower, as a tenor or baritone sings a part written in the treble clef
  (common practice), so that the piano's right hand lies above the tune;
- quartets: string quartets of Haydn, Mozart and Beethoven, the first violin (by the
  convention of the classical quartet, where it carries the tune);
- folk with chords: the folk tunes of O'Neill's "Music of Ireland" (oneills1850) written as a MIDI
  file with neutral track names, with an accompaniment built here in the manner of a lead
  sheet played on a keyboard; then the first three tunes of each file of the Essen folksong
  collection (essenFolksong), up to 120 tunes (a triad per bar, struck on every beat, closed position from F3
  upward, chosen as the triad of the key's I, IV or V holding most of the bar's melody notes;
  the chord root in octave 2 on each bar's downbeat), the tune;
- folk, accompaniment above: the fourth to twelfth tunes of each Essen file, up to 120 (none of
  them in "folk with chords"), each moved by octaves to a middle register (mean pitch in [60, 72)), with the
  same bass and, above the tune, either the triads in closed position from a fourth above the
  tune's mean pitch (a keyboard right hand) or a sustained line of one chord tone per bar
  about an octave above the tune (a pad or descant), chosen by the SHA-256 of the source.

The model has no absolute pitch: register enters only as a line's mean pitch above the work's
lowest line and below its highest voice-like line (at least half as busy as the busiest, a
single note at at least half its onsets), so transposing a whole work changes nothing; the two
"above" collections keep height alone from being a shortcut (issue 17).

Halves: within each collection, files sorted by the SHA-256 of their source path, alternately
"fit" and "check" (a fixed, content-free split). The weights are fitted on "fit" only:
logistic regression (Newton's method, L2 penalty 1.0 on the weights, fixed in advance), each
collection given equal total weight and each file equal weight within its collection.

Run: .venv/bin/python scripts/melody_dev_set.py --collatio target/release/collatio
"""

import argparse
import hashlib
import json
import pathlib
import re
import subprocess
import sys
import tempfile

import mido
import music21
import numpy as np
from music21 import converter, corpus

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
from melody_events import UNIT, corpus_root, first_score, melody_of  # noqa: E402

ROOT = pathlib.Path(__file__).resolve().parent.parent
OUT = ROOT / "tests" / "fixtures" / "melody_choice" / "dev_set.json"
FEATURES = [
    "single_onsets", "occupation", "density", "density_relative", "rhythm_variety", "range",
    "pitch_above_lowest", "pitch_below_voices", "pitch_spread", "interval_mean", "steps", "repeats",
    "leaps",
]
PENALTY = 1.0

# Songs with piano, and hymns and part-songs with a known tune, in the corpus: the part that
# carries the tune, by its name in the file (checked by reading each score).
SONGS = {
    "beach/prayer_of_a_tired_child.musicxml": "Soprano I",  # SSAA and piano: the first soprano
    "johnson_j_r/lift_every_voice.mxl": "Soprano",  # hymn setting: the soprano
    "liliuokalani/aloha_oe.mxl": "Solo Voice",  # solo voice, choir and piano: the solo
    "schubert/Lindenbaum.xml": "Voice",  # voice and piano
    "schumann_robert/dichterliebe_no2.xml": 1,  # voice and piano; parts unnamed: the first
    "handel/rinaldo/Lascia_chio_pianga.mxl": 1,  # voice and piano; the voice unnamed: the first
}


def inspect(collatio, path):
    out = subprocess.run([collatio, "inspect", "--format", "json", str(path)],
                         capture_output=True, timeout=120)
    if out.returncode not in (0, 1):
        return None
    return json.loads(out.stdout)


def labelled(record, melody_part):
    cands = record.get("candidates", [])
    if len(cands) < 2:
        return None
    rows = [{"part": c["part"], "line": c["label"], "label": int(c["part"] == melody_part),
             "x": [round(c["features"][f], 5) for f in FEATURES],
             # Reported statistics the model does not use (the previous model's height).
             "pitch_mean": round(c["features"]["pitch_mean"], 5),
             "pitch_mean_relative": round(c["features"]["pitch_mean_relative"], 5)}
            for c in cands]
    if not any(r["label"] for r in rows) or all(r["label"] for r in rows):
        return None
    return rows


def part_named(record, pattern):
    for p in record["parts"]:
        if pattern.search(p["name"] or "") or pattern.search(p["instrument"] or ""):
            return p["id"]
    return None


def chorales(collatio):
    root = corpus_root()
    for path in sorted(corpus.getComposer("bach")):
        path = pathlib.Path(path)
        if path.suffix not in (".mxl", ".xml", ".musicxml"):
            continue
        record = inspect(collatio, path)
        if not record or len(record["parts"]) != 4:
            continue
        melody = part_named(record, re.compile(r"^sopran", re.I))
        rows = melody and labelled(record, melody)
        if rows:
            yield str(path.relative_to(root)), rows


def songs(collatio):
    root = corpus_root()
    for rel, which in SONGS.items():
        record = inspect(collatio, root / rel)
        if not record:
            continue
        if isinstance(which, int):
            melody = record["parts"][which - 1]["id"]
        else:
            melody = next((p["id"] for p in record["parts"] if p["name"] == which), None)
        rows = melody and labelled(record, melody)
        if rows:
            yield rel, rows


# The songs for one voice and piano, whose voice a tenor or baritone may sing an octave lower.
SOLO_SONGS = ["schubert/Lindenbaum.xml", "schumann_robert/dichterliebe_no2.xml",
              "handel/rinaldo/Lascia_chio_pianga.mxl"]


def songs_voice_lower(collatio):
    """The songs for voice and piano with their voice an octave lower, as a tenor or baritone
    sings a part written in the treble clef (common practice): the piano's right hand then
    lies above the tune."""
    root = corpus_root()
    with tempfile.TemporaryDirectory() as tmp:
        for k, rel in enumerate(SOLO_SONGS):
            which = SONGS[rel]
            try:
                score = converter.parse(root / rel)
                parts = list(score.parts)
                if isinstance(which, int):
                    index = which - 1
                else:
                    index = next(i for i, p in enumerate(parts) if p.partName == which)
                parts[index].transpose(-12, inPlace=True)
                dest = pathlib.Path(tmp) / f"song{k}.musicxml"
                score.write("musicxml", fp=str(dest))
            except Exception:  # noqa: BLE001 - skip what music21 cannot read or write
                continue
            record = inspect(collatio, dest)
            if not record or len(record["parts"]) <= index:
                continue
            rows = labelled(record, record["parts"][index]["id"])
            if rows:
                yield rel, rows


def quartets(collatio):
    root = corpus_root()
    for composer in ["haydn", "mozart", "beethoven"]:
        for path in sorted(corpus.getComposer(composer)):
            path = pathlib.Path(path)
            if path.suffix not in (".mxl", ".xml", ".musicxml"):
                continue
            record = inspect(collatio, path)
            if not record or len(record["parts"]) != 4:
                continue
            names = " ".join((p["name"] or "") + " " + (p["instrument"] or "")
                             for p in record["parts"]).lower()
            if "viol" not in names or ("cello" not in names and "violoncello" not in names):
                continue
            rows = labelled(record, record["parts"][0]["id"])
            if rows:
                yield str(path.relative_to(root)), rows


TRIADS = {"I": 0, "IV": 5, "V": 7}


def accompanied_midi(events, meter, fifths_tonic, dest, above=None):
    """A MIDI file: track 1 the tune, track 2 keyboard triads on every beat, track 3 bass.

    `above`: None, the triads in closed position from F3 (under the tune); "chords", the tune
    moved by octaves to a middle register (mean pitch in [60, 72), where a voice sings it) and
    the triads in closed position from a fourth above the tune's mean pitch (a keyboard right
    hand above the tune); "line", the tune so moved and, instead of the triads, a sustained
    line above it, one chord tone per bar (the one nearest an octave above the tune's mean, a
    pad or descant)."""
    bar_units = meter[0] * UNIT * 4 // meter[1]
    beat_units = UNIT * 4 // meter[1]
    if meter[1] == 8 and meter[0] % 3 == 0:  # compound metre: the dotted quarter
        beat_units *= 3
    notes, t = [], 0
    for pitch, length in events:
        if pitch is not None:
            notes.append((t, length, pitch))
        t += length
    total = t
    floor = 53  # closed triads from F3
    if above is not None:
        mean = sum(p for (_, _, p) in notes) / max(1, len(notes))
        shift = 12 * int(np.floor((66 - mean) / 12 + 0.5))  # mean into [60, 72)
        notes = [(s, l, p + shift) for (s, l, p) in notes]
        mean += shift
        floor = int(round(mean)) + 5
    ticks = 480 // UNIT
    tracks = {1: [], 2: [], 3: []}
    for (s, l, p) in notes:
        tracks[1].append((s, l, p))
    for bar_start in range(0, total, bar_units):
        in_bar = [p for (s, l, p) in notes if bar_start <= s < bar_start + bar_units]
        best, best_count = 0, -1
        for name in ("I", "IV", "V"):
            root = (fifths_tonic + TRIADS[name]) % 12
            triad = {root, (root + 4) % 12, (root + 7) % 12}
            count = sum(1 for p in in_bar if p % 12 in triad)
            if count > best_count:
                best, best_count = root, count
        triad = [best, (best + 4) % 12, (best + 7) % 12]
        chord = sorted(floor + ((pc - floor) % 12) for pc in triad)  # closed, from the floor
        if above == "line":
            target = int(round(mean)) + 12
            tone = min((target + ((pc - target) % 12) - d for pc in triad for d in (0, 12)),
                       key=lambda p: (abs(p - target), p))
            tracks[2].append((bar_start, min(bar_units, total - bar_start), tone))
        else:
            for beat in range(bar_start, min(bar_start + bar_units, total), beat_units):
                for p in chord:
                    tracks[2].append((beat, beat_units, p))
        tracks[3].append((bar_start, min(bar_units, total - bar_start), 36 + best % 12))
    mid = mido.MidiFile(type=1, ticks_per_beat=480)
    for k in (1, 2, 3):
        track = mido.MidiTrack()
        track.append(mido.MetaMessage("track_name", name=f"Part {k}", time=0))
        evs = []
        for (s, l, p) in tracks[k]:
            evs.append((s * ticks, 1, p))
            evs.append(((s + l) * ticks, 0, p))
        evs.sort(key=lambda e: (e[0], e[1], e[2]))
        now = 0
        for (tick, on, p) in evs:
            kind = "note_on" if on else "note_off"
            track.append(mido.Message(kind, note=p, velocity=80 if on else 0, channel=k - 1,
                                      time=tick - now))
            now = tick
        mid.tracks.append(track)
    mid.save(dest)


def folk_scores(oneill=True, essen=(0, 3)):
    """(source, score): every tune of O'Neill's collection (with `oneill`), then the tunes
    `essen[0]` to `essen[1] - 1` of each file of the Essen folksong collection."""
    root = corpus_root()
    for path in sorted(corpus.getComposer("oneills1850")) if oneill else ():
        try:
            yield str(pathlib.Path(path).relative_to(root)), first_score(converter.parse(path))
        except Exception:  # noqa: BLE001 - skip what music21 cannot read
            continue
    for path in sorted(corpus.getComposer("essenFolksong")):
        try:
            parsed = converter.parse(path)
        except Exception:  # noqa: BLE001
            continue
        scores = list(getattr(parsed, "scores", [parsed]))[essen[0]:essen[1]]
        for k, score in enumerate(scores):
            yield f"{pathlib.Path(path).relative_to(root)}#{essen[0] + k + 1}", score


def folk_tunes(**which):
    """(source, melody, tonic pitch class of the major key) of every readable folk tune of
    `folk_scores(**which)`."""
    for source, score in folk_scores(**which):
        try:
            m = melody_of(score)
            key = score.analyze("key")
        except Exception:  # noqa: BLE001 - skip what music21 cannot read
            continue
        if m is None:
            continue
        tonic = key.tonic.pitchClass if key.mode == "major" else (key.tonic.pitchClass + 3) % 12
        yield source, m, tonic


def above_style(source):
    """"chords" or "line", by the SHA-256 of the source (fixed and content-free)."""
    return ("chords", "line")[hashlib.sha256(source.encode()).digest()[0] % 2]


def folk(collatio, count, tunes, above=False):
    """The next `count` usable tunes of `tunes`, accompanied under the tune, or (`above`) with
    the accompaniment above it (`accompanied_midi`)."""
    with tempfile.TemporaryDirectory() as tmp:
        taken = 0
        for source, m, tonic in tunes if count > 0 else ():
            dest = pathlib.Path(tmp) / f"tune{taken}.mid"
            style = above_style(source) if above else None
            accompanied_midi(m["events"], m["meter"], tonic, dest, style)
            record = inspect(collatio, dest)
            melody = next((p["id"] for p in record["parts"] if p["name"] == "Part 1"), None) \
                if record else None
            rows = melody and labelled(record, melody)
            if rows:
                yield source, rows
                taken += 1
                if taken >= count:
                    break


def melody_highest(f):
    """Whether the melody's line has the highest mean pitch of the file's candidate lines."""
    return any(r["label"] == 1 and r["pitch_mean_relative"] >= 0.0 for r in f["candidates"])


def half_of(files):
    order = sorted(files, key=lambda f: hashlib.sha256(f["source"].encode()).hexdigest())
    for i, f in enumerate(order):
        f["half"] = "fit" if i % 2 == 0 else "check"


def fit(files):
    X, y, w = [], [], []
    collections = sorted({f["collection"] for f in files})
    for c in collections:
        mine = [f for f in files if f["collection"] == c]
        for f in mine:
            for r in f["candidates"]:
                X.append([1.0] + r["x"])
                y.append(r["label"])
                w.append(1.0 / len(mine) / len(f["candidates"]))
    X, y, w = np.array(X), np.array(y, float), np.array(w)
    w = w / w.sum() * len(y)
    beta = np.zeros(X.shape[1])
    reg = np.eye(X.shape[1]) * PENALTY
    reg[0, 0] = 0.0
    for _ in range(100):
        p = 1.0 / (1.0 + np.exp(-X @ beta))
        grad = X.T @ (w * (y - p)) - reg @ beta
        hess = (X * (w * p * (1 - p))[:, None]).T @ X + reg
        step = np.linalg.solve(hess, grad)
        beta += step
        if np.abs(step).max() < 1e-10:
            break
    return beta


def ranked_first(files, beta):
    table = {}
    for f in files:
        z = [beta[0] + float(np.dot(beta[1:], r["x"])) for r in f["candidates"]]
        best = max(range(len(z)), key=lambda k: (z[k], -k))
        hit = f["candidates"][best]["label"] == 1
        key = (f["collection"], f["half"])
        n, k = table.get(key, (0, 0))
        table[key] = (n + 1, k + int(hit))
    return table


def main(argv):
    ap = argparse.ArgumentParser()
    ap.add_argument("--collatio", required=True)
    ap.add_argument("--folk", type=int, default=120)
    args = ap.parse_args(argv)
    files = []
    # The tunes accompanied above are other tunes than those accompanied below.
    below, above = folk_tunes(), folk_tunes(oneill=False, essen=(3, 12))
    for name, source in [("chorales", chorales(args.collatio)), ("songs", songs(args.collatio)),
                         ("songs, voice an octave lower", songs_voice_lower(args.collatio)),
                         ("quartets", quartets(args.collatio)),
                         ("folk with chords", folk(args.collatio, args.folk, below)),
                         ("folk, accompaniment above",
                          folk(args.collatio, args.folk, above, above=True))]:
        mine = [{"collection": name, "source": s, "candidates": rows} for s, rows in source]
        half_of(mine)
        files.extend(mine)
        print(f"{name}: {len(mine)} files", file=sys.stderr)
    beta = fit([f for f in files if f["half"] == "fit"])
    table = ranked_first(files, beta)
    for (c, h), (n, k) in sorted(table.items()):
        print(f"{c:18} {h:5} {k:4}/{n:<4} {100.0 * k / n:5.1f}%")
    check = [v for (c, h), v in table.items() if h == "check"]
    n, k = sum(v[0] for v in check), sum(v[1] for v in check)
    print(f"{'all':18} check {k:4}/{n:<4} {100.0 * k / n:5.1f}%")
    lower = [f for f in files if f["half"] == "check" and not melody_highest(f)]
    k = sum(ranked_first(lower, beta).get(key, (0, 0))[1]
            for key in {(f["collection"], "check") for f in lower})
    print(f"{'melody not highest':18} check {k:4}/{len(lower):<4} "
          f"{100.0 * k / max(1, len(lower)):5.1f}%")
    print(f"pub const INTERCEPT: f64 = {beta[0]:.6f};")
    print("pub const WEIGHTS: [f64; 13] = [" + ", ".join(f"{b:.6f}" for b in beta[1:]) + "];")
    doc = {"generator": "scripts/melody_dev_set.py", "music21_version": music21.__version__,
           "features": FEATURES, "intercept": round(float(beta[0]), 6),
           "weights": [round(float(b), 6) for b in beta[1:]], "files": files}
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(doc, separators=(",", ":")) + "\n", encoding="utf-8")
    print(f"wrote {OUT.relative_to(ROOT)}: {len(files)} files", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

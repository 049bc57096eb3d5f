#!/usr/bin/env python3
"""Writes tests/fixtures/calibration/repertoires.json: unrelated real melodies of three
collections, for the calibration test of the corpus null (tests/calibration.rs).

Source: the background of the relatedness development data (target/relatedness/background.json,
written by scripts/make_relatedness_sets.py from music21's public-domain collections; every
tune there is a member of no tune family, and tunes sharing a title with a family member are
left out). Taken: a seeded random sample of the tunes of O'Neill's "Music of Ireland" (1903),
James Aird's "Selection of Scotch, English, Irish and Foreign Airs" (1778-) and Ryan's Mammoth
Collection (1883), from the whole of each collection (its sections hold tunes of one kind:
airs, then jigs, reels, ...), each cut to its first 128 notes (rests kept), in the layout of
the other melody fixtures.

Run: .venv/bin/python scripts/make_relatedness_sets.py   (once)
     .venv/bin/python scripts/make_repertoire_melodies.py
"""

import json
import random
import pathlib
import sys

ROOT = pathlib.Path(__file__).resolve().parent.parent
SOURCE = ROOT / "target" / "relatedness" / "background.json"
OUT = ROOT / "tests" / "fixtures" / "calibration" / "repertoires.json"
TAKE = {"oneills1850": 300, "airdsAirs": 250, "ryansMammoth": 300}
NOTES = 128


def cut(events):
    out, notes = [], 0
    for pitch, length in events:
        if pitch is not None:
            if notes == NOTES:
                break
            notes += 1
        out.append([pitch, length])
    return out


def main():
    doc = json.loads(SOURCE.read_text(encoding="utf-8"))
    melodies = []
    for collection, count in TAKE.items():
        pool = sorted((m for m in doc["melodies"] if m["collection"] == collection),
                      key=lambda m: m["source"])
        picked = sorted(random.Random(f"repertoire-{collection}").sample(range(len(pool)), count))
        for m in (pool[k] for k in picked):
            melodies.append({"collection": collection, "source": m["source"], "title": m["title"],
                             "meter": m["meter"], "events": cut(m["events"])})
        print(f"{collection}: {min(count, len(pool))} melodies", file=sys.stderr)
    out = {"generator": "scripts/make_repertoire_melodies.py", "music21_version": doc["music21_version"],
           "divisions": doc["divisions"], "melodies": melodies}
    OUT.write_text(json.dumps(out, separators=(",", ":")) + "\n", encoding="utf-8")
    print(f"wrote {OUT.relative_to(ROOT)}: {len(melodies)} melodies", file=sys.stderr)


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Writes tests/fixtures/calibration/melodies.json: real melodies nobody here wrote, for the
calibration test of the null model (tests/calibration.rs).

Source: two public-domain dance-tune collections bundled with music21 (version pinned in
scripts/requirements.txt): "Ryan's Mammoth Collection" (ryansMammoth, 1883) and O'Neill's
"Music of Ireland" (oneills1850, 1903). The first tunes of each (sorted by file name) that
music21 reads as one melodic line in a single meter are taken. Each melody: its source, title,
meter, and events (MIDI pitch or null for a rest, length in twelfths of a quarter note), with a
leading rest that puts a pickup at the end of a full bar (the convention shared through
scripts/melody_events.py).

Run: .venv/bin/python scripts/make_calibration_melodies.py [--per-collection 150]
"""

import argparse
import json
import pathlib
import sys

import music21
from music21 import converter, corpus

from melody_events import UNIT, first_score, melody_of

ROOT = pathlib.Path(__file__).resolve().parent.parent
OUT = ROOT / "tests" / "fixtures" / "calibration" / "melodies.json"


def main(argv):
    ap = argparse.ArgumentParser()
    ap.add_argument("--per-collection", type=int, default=150)
    args = ap.parse_args(argv)
    melodies = []
    for collection in ["ryansMammoth", "oneills1850"]:
        paths = sorted(corpus.getComposer(collection))
        taken = 0
        for path in paths:
            if taken >= args.per_collection:
                break
            try:
                parsed = converter.parse(path)
            except Exception:  # noqa: BLE001 - skip what music21 cannot read
                continue
            score = first_score(parsed)
            m = melody_of(score)
            if m is None:
                continue
            rel = pathlib.Path(path).relative_to(pathlib.Path(corpus.getComposer(collection)[0]).parents[1])
            title = score.metadata.title if score.metadata and score.metadata.title else rel.stem
            melodies.append({"collection": collection, "source": str(rel), "title": title, **m})
            taken += 1
        print(f"{collection}: {taken} melodies", file=sys.stderr)
    doc = {"generator": "scripts/make_calibration_melodies.py",
           "music21_version": music21.__version__, "divisions": UNIT, "melodies": melodies}
    OUT.write_text(json.dumps(doc, separators=(",", ":")) + "\n", encoding="utf-8")
    print(f"wrote {OUT.relative_to(ROOT)}: {len(melodies)} melodies", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

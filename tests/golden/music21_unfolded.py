#!/usr/bin/env python3
"""Golden reading of repeats unfolded into performance order, by music21's expandRepeats().

For each fixture with repeat barlines, writes tests/golden/unfolded/<fixture>.json in the same
format as music21_reading.py (notes per part: midi, onset, duration, bar), after
`score.expandRepeats()`. Run with the project venv: .venv/bin/python tests/golden/music21_unfolded.py
"""

import json
import pathlib
import sys

import music21
from music21 import converter

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
import music21_reading as mr  # noqa: E402

FIXTURES = ["repeat_endings.musicxml"]


def main() -> int:
    out_dir = HERE / "unfolded"
    out_dir.mkdir(exist_ok=True)
    for name in FIXTURES:
        path = HERE.parent / "fixtures" / name
        score = converter.parse(path, forceSource=True).expandRepeats()
        sounding = score.toSoundingPitch(inPlace=False)
        parts = []
        for i, p in enumerate(sounding.parts):
            events, _ = mr.collect_events(sounding, p, {"chord_symbols": 0, "grace": 0, "unpitched": 0})
            parts.append({"index": i, "id": mr.music21_part_key(p, i),
                          "notes": mr.finish(mr.merge_ties(events))})
        doc = {"generator": "tests/golden/music21_unfolded.py",
               "music21_version": music21.__version__, "file": name, "kind": "musicxml",
               "unfolded": True, "parts": parts}
        (out_dir / f"{name}.json").write_text(mr.dump_json(doc), encoding="utf-8")
        print(name, sum(len(p["notes"]) for p in parts), "notes")
    return 0


if __name__ == "__main__":
    sys.exit(main())

#!/usr/bin/env python3
"""Writes tests/fixtures/calibration/melodies.json: real melodies nobody here wrote, for the
calibration test of the null model (tests/calibration.rs).

Source: two public-domain dance-tune collections bundled with music21 (version pinned in
scripts/requirements.txt): "Ryan's Mammoth Collection" (ryansMammoth, 1883) and O'Neill's
"Music of Ireland" (oneills1850, 1903). The first tunes of each (sorted by file name) that
music21 reads as one melodic line in a single meter are taken. Each melody: its source, title,
meter, and events (MIDI pitch or null for a rest, length in twelfths of a quarter note), with a
leading rest that puts a pickup at the end of a full bar.

Run: .venv/bin/python scripts/make_calibration_melodies.py [--per-collection 150]
"""

import argparse
import json
import pathlib
import sys
from fractions import Fraction

import music21
from music21 import converter, corpus, meter, note, chord

ROOT = pathlib.Path(__file__).resolve().parent.parent
OUT = ROOT / "tests" / "fixtures" / "calibration" / "melodies.json"
UNIT = 12  # divisions per quarter note


def melody_of(score):
    part = score.parts[0] if score.parts else score
    flat = part.flatten()
    sigs = list(flat.getElementsByClass(meter.TimeSignature))
    if len(sigs) != 1 and len({(s.numerator, s.denominator) for s in sigs}) != 1:
        return None
    ts = sigs[0] if sigs else meter.TimeSignature("4/4")
    stripped = part.stripTies(inPlace=False).flatten()
    events = []
    cursor = Fraction(0)
    for el in stripped.notesAndRests:
        if el.duration.isGrace:
            continue
        offset = Fraction(el.getOffsetInHierarchy(stripped)).limit_denominator(96)
        length = Fraction(el.duration.quarterLength).limit_denominator(96)
        if offset < cursor:  # overlapping voices: not a single line
            return None
        if offset > cursor:
            events.append([None, offset - cursor])
        if isinstance(el, chord.Chord):
            pitch = max(p.midi for p in el.pitches)
        elif isinstance(el, note.Note):
            pitch = el.pitch.midi
        else:
            pitch = None
        events.append([pitch, length])
        cursor = offset + length
    pitched = [e for e in events if e[0] is not None]
    if len(pitched) < 24:
        return None
    bar = Fraction(ts.barDuration.quarterLength)
    # A pickup: the first measure is shorter than a bar.
    measures = list(part.getElementsByClass("Measure"))
    lead = Fraction(0)
    if measures:
        first = Fraction(measures[0].duration.quarterLength).limit_denominator(96)
        if 0 < first < bar:
            lead = bar - first
    if lead:
        events.insert(0, [None, lead])
    out = []
    for pitch, length in events:
        units = length * UNIT
        if units.denominator != 1 or units <= 0:
            return None
        out.append([pitch, int(units)])
    return {"meter": [ts.numerator, ts.denominator], "events": out}


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
            scores = list(parsed.scores) if hasattr(parsed, "scores") else [parsed]
            score = scores[0] if scores else parsed
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

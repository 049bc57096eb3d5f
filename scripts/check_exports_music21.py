#!/usr/bin/env python3
"""Reads collatio's passage exports with music21 (an independent MusicXML reader) and writes
what it finds as golden JSON for tests/exhibit_exports.rs, so that `cargo test` can check,
without Python, that collatio's exports read back with the same notes in music21.

Usage (from the repository root, after `cargo build --release`):

    .venv/bin/python scripts/check_exports_music21.py --collatio target/release/collatio

It runs `collatio compare demo/pierside-lamps.musicxml demo/millstream-boats.musicxml --export DIR`
into a temporary folder, parses every exported .musicxml with music21.converter.parse, and writes
tests/golden/exports/<file>.music21.json: per part, the notes as [MIDI pitch, offset, duration]
in quarter notes from the start of the part (tied notes merged with stripTies, grace notes left
out, as collatio keeps them out of the melody), and the chord symbols it finds as
[root pitch class, bass pitch class, offset] (music21.harmony.ChordSymbol, read from the
exports' <harmony> elements). With --check it compares instead of writing and
exits 1 on a difference.
"""
import argparse
import json
import pathlib
import subprocess
import sys
import tempfile

import music21

ROOT = pathlib.Path(__file__).resolve().parent.parent
GOLDEN = ROOT / "tests" / "golden" / "exports"
DEMO = [ROOT / "demo" / "pierside-lamps.musicxml", ROOT / "demo" / "millstream-boats.musicxml"]


def read(path):
    score = music21.converter.parse(str(path))
    parts = []
    for part in score.parts:
        notes = []
        for n in part.stripTies().flatten().notes:
            # Chord symbols are chords to music21 (of no duration); they are read apart below.
            if n.duration.isGrace or isinstance(n, music21.harmony.ChordSymbol):
                continue
            pitches = [p.midi for p in n.pitches]
            notes.append([max(pitches), float(n.offset), float(n.quarterLength)])
        chords = []
        for c in part.flatten().getElementsByClass(music21.harmony.ChordSymbol):
            chords.append([c.root().pitchClass, c.bass().pitchClass, float(c.offset)])
        parts.append({"id": part.id, "name": part.partName, "notes": notes, "chords": chords})
    return {"music21_version": music21.__version__, "file": path.name, "parts": parts}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--collatio", default=str(ROOT / "target" / "release" / "collatio"))
    ap.add_argument("--check", action="store_true")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        out = pathlib.Path(tmp) / "passages"
        subprocess.run(
            [args.collatio, "compare", str(DEMO[0]), str(DEMO[1]), "--export", str(out)],
            check=True,
            stdout=subprocess.DEVNULL,
        )
        failed = False
        GOLDEN.mkdir(parents=True, exist_ok=True)
        for xml in sorted(out.glob("*.musicxml")):
            reading = read(xml)
            target = GOLDEN / (xml.name + ".music21.json")
            text = json.dumps(reading, indent=1) + "\n"
            if args.check:
                old = json.loads(target.read_text()) if target.exists() else None
                if old is None or old["parts"] != reading["parts"]:
                    print(f"{xml.name}: music21 reads different notes than the golden file")
                    failed = True
                else:
                    print(f"{xml.name}: {sum(len(p['notes']) for p in reading['parts'])} notes agree")
            else:
                target.write_text(text)
                print(f"wrote {target.relative_to(ROOT)}")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()

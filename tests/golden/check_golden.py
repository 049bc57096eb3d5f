#!/usr/bin/env python3
"""Check the golden JSONs against what each fixture was WRITTEN to mean.

music21_reading.py records music21's reading; this script holds the intended music,
worked out by hand from the fixtures (independently of music21), and fails if the two
disagree. Run it after regenerating the goldens, e.g. with another music21 version:

    .venv/bin/python tests/golden/music21_reading.py
    .venv/bin/python tests/golden/check_golden.py

Standard library only. Notes are (midi, onset, duration, bar); onsets and durations in
quarter notes from the start of the score.
"""

import json
import pathlib
import sys
from fractions import Fraction as F

GOLDEN = pathlib.Path(__file__).resolve().parent
FIXTURES = GOLDEN.parent / "fixtures"
T = F(1, 3)  # a triplet eighth

EXPECTED = {
    "ties_chords.musicxml": [("P1", "Chamber Organ", [
        (72, 0, 1, "1"),
        (65, 1, 2, "1"), (69, 1, 3, "1"), (72, 1, 2, "1"),   # A4 tied on its own into beat 4
        (74, 3, 3, "1"),                                      # D5 tied across the barline
        (64, 6, 3, "2"), (67, 6, 3, "2"), (72, 6, 3, "2"),    # whole chord tied twice
        (71, 9, F(1, 2), "3"), (69, F(19, 2), F(5, 2), "3"),
    ])],
    "two_voices_backup_forward.musicxml": [("P1", "Lute", [
        (76, 0, 2, "1"), (74, 2, 1, "1"), (72, 3, 1, "1"),    # voice 1
        (67, 1, 1, "1"), (69, 2, 2, "1"),                     # voice 2 after <forward> 4
        (71, 4, 3, "2"), (67, 4, F(1, 2), "2"), (65, F(9, 2), F(1, 2), "2"), (64, 5, 2, "2"),
        (72, 8, 1, "3"), (64, 8, 1, "3"), (74, 9, 2, "3"), (65, 9, 2, "3"), (76, 11, 1, "3"),
    ])],
    "piano_two_staves.musicxml": [("P1", "Piano", [
        (74, 0, 1, "1"), (76, 1, F(1, 2), "1"), (78, F(3, 2), F(1, 2), "1"), (79, 2, 1, "1"),
        (43, 0, 2, "1"), (50, 0, 2, "1"), (47, 2, 1, "1"),
        (81, 3, F(3, 2), "2"), (79, F(9, 2), F(1, 2), "2"), (78, 5, 1, "2"),
        (48, 3, 1, "2"), (50, 4, 1, "2"), (38, 5, 1, "2"),
        (79, 6, 3, "3"), (43, 6, 3, "3"), (50, 6, 3, "3"), (55, 6, 3, "3"),
    ])],
    "triplets_tuplets.musicxml": [("P1", "Oboe", [
        (76, 0, T, "1"), (74, T, T, "1"), (72, 2 * T, T, "1"), (71, 1, 1, "1"),
        (69, 2, F(1, 2), "2"), (71, F(5, 2), F(1, 2), "2"),
        (72, 3, T, "2"), (74, 3 + T, T, "2"), (76, 3 + 2 * T, T, "2"),
        (77, 4, 2 * T, "3"), (76, 4 + 2 * T, 2 * T, "3"), (74, 4 + 4 * T, 2 * T, "3"),
        (72, 6, T, "4"), (72, 6 + 2 * T, T, "4"), (67, 7, 1, "4"),
    ])],
    "pickup_measure_numbers.musicxml": [("P1", "Violin", [
        (67, 0, 1, "0"),
        (72, 1, 2, "1"), (76, 3, 1, "1"),
        (74, 4, 1, "2"), (72, 5, F(1, 2), "2"), (71, F(11, 2), 1, "2"),  # B4 tied into "2a"
        (69, F(13, 2), F(1, 2), "2a"),
        (69, 7, 1, "3"), (71, 8, 1, "3"), (72, 9, 1, "3"),
        (72, 10, 2, "4"),
    ])],
    "transposing_instruments.musicxml": [
        ("P1", "Clarinet in B♭", [
            (65, 0, 1, "1"), (67, 1, 1, "1"), (69, 2, 1, "1"), (72, 3, 1, "1"),
            (74, 4, 2, "2"), (72, 6, 2, "2"),
            (65, 8, 2, "3"), (69, 10, 2, "3"),                   # now clarinet in A
            (67, 12, 1, "4"), (64, 13, 1, "4"), (65, 14, 2, "4"),
        ]),
        ("P2", "Double Bass", [
            (41, 0, 4, "1"), (36, 4, 4, "2"), (41, 8, 4, "3"), (36, 12, 2, "4"), (41, 14, 2, "4"),
        ]),
    ],
    "divisions_changes.musicxml": [("P1", "Recorder", [
        (72, 0, 1, "1"), (74, 1, 1, "1"), (76, 2, 2, "1"),
        (79, 4, F(1, 2), "2"), (77, F(9, 2), F(1, 2), "2"),
        (76, 5, T, "2"), (74, 5 + T, T, "2"), (72, 5 + 2 * T, T, "2"), (74, 6, 2, "2"),
        (76, 8, F(1, 4), "3"), (77, F(33, 4), F(1, 4), "3"), (79, F(17, 2), F(1, 2), "3"),
        (81, 9, F(3, 2), "3"), (79, 11, 3, "3"),                # tied into bar 4
        (72, 14, 2, "4"),
    ])],
    "grace_notes_rests.musicxml": [("P1", "Flute", [
        (72, 1, 1, "1"), (74, 2, 2, "1"),
        (76, 4, 1, "2"), (76, F(11, 2), F(1, 2), "2"), (74, 6, 2, "2"),
        (72, 12, 2, "4"),
    ])],
    "tempo_meter_key_changes.musicxml": [("P1", "Violin", [
        (72, 0, 1, "1"), (76, 1, 1, "1"), (79, 2, 2, "1"),
        (81, 4, 1, "2"), (79, 5, 1, "2"), (77, 6, 1, "2"), (76, 7, 1, "2"),
        (74, 8, 1, "3"), (78, 9, 1, "3"), (81, 10, 1, "3"),
        (83, 11, 2, "4"), (81, 13, 1, "4"),
        (75, 14, F(3, 2), "5"), (74, F(31, 2), F(1, 2), "5"), (72, 16, F(1, 2), "5"),
        (70, F(33, 2), F(1, 2), "5"),
        (72, 17, 3, "6"),
    ])],
    "lyrics_harmony.musicxml": [("P1", "Voice", [
        (64, 0, 1, "1"), (67, 1, 1, "1"), (69, 2, 2, "1"),
        (71, 4, 1, "2"), (74, 5, 1, "2"), (72, 6, 2, "2"),
        (72, 8, F(1, 2), "3"), (71, F(17, 2), F(1, 2), "3"), (69, 9, 1, "3"), (67, 10, 2, "3"),
    ])],
    "repeat_endings.musicxml": [("P1", "Mandolin", [
        (67, 0, 1, "1"), (69, 1, 1, "1"), (71, 2, 2, "2"),
        (72, 4, 1, "3"), (69, 5, 1, "3"), (74, 6, 2, "4"), (67, 8, 2, "5"),
    ])],
    "timewise_two_parts.musicxml": [
        ("P1", "Flute", [(76, 0, 2, "1"), (74, 2, 1, "1"), (72, 3, 1, "2"), (74, 4, 1, "2"),
                         (76, 5, 1, "2"), (72, 6, 3, "3")]),
        ("P2", "Cello", [(48, 0, 3, "1"), (43, 3, 3, "2"), (48, 6, 2, "3")]),
    ],
    "utf16_bom.musicxml": [("P1", "Flûte", [
        (69, 0, 1, "1"), (72, 1, 1, "1"), (76, 2, 1, "1"), (74, 3, 2, "2"), (72, 5, 1, "2"),
        (69, 6, 3, "3"),
    ])],
    "compressed_container.mxl": [("P1", "Vibraphone", [
        (72, 0, 1, "1"), (76, 1, F(1, 2), "1"), (79, F(3, 2), 1, "1"), (76, F(5, 2), F(1, 2), "1"),
        (77, 3, F(3, 2), "2"), (74, F(9, 2), F(3, 2), "2"),
        (72, 6, 3, "3"), (76, 6, 3, "3"), (79, 6, 3, "3"),
    ])],
    "midi_format0_no_tempo_vel0.mid": [("track0", "Meadow Gate Ditty", [
        (64, 0, 1, "1"), (67, 1, 1, "1"), (69, 2, F(1, 2), "1"), (67, F(5, 2), F(1, 2), "1"),
        (64, 3, 1, "1"), (48, 0, 4, "1"),
        (62, 4, 1, "2"), (62, 5, 1, "2"), (60, 6, 2, "2"), (43, 4, 2, "2"), (48, 6, 2, "2"),
    ])],
    "midi_tempo_meter_key_changes.mid": [
        ("track1", "Melody", [
            (74, 0, 1, "1"), (78, 1, 1, "1"), (81, 2, 2, "1"),
            (79, 4, 1, "2"), (78, 5, 1, "2"), (76, 6, 3, "2"),   # held across 4/4 -> 3/4
            (77, 9, 2, "3"), (79, 11, 1, "4"), (76, 12, 1, "4"), (77, 13, 1, "4"),
            (77, 14, 3, "5"),
        ]),
        ("track2", "Bass", [
            (50, 0, 4, "1"), (45, 4, 4, "2"), (41, 8, 3, "3"), (48, 11, 3, "4"), (41, 14, 3, "5"),
        ]),
    ],
    "midi_drums_lyrics.mid": [
        ("track1", "Singer", [
            (67, 0, 1, "1"), (69, 1, 1, "1"), (71, 2, 1, "1"), (74, 3, 1, "1"),
            (71, 4, 2, "2"), (67, 7, F(1, 2), "2"), (69, F(15, 2), F(1, 2), "2"),
            (69, 8, 1, "3"), (67, 9, 2, "3"),
        ]),
        ("track2", "Drum Kit", []),  # channel 10: unpitched, excluded
    ],
    # music21's pairing of re-struck notes: every note-on ends at the FIRST following
    # note-off of its pitch (see notes_on_reading in the golden).
    "midi_overlapping_restrike.mid": [("track1", "Keys", [
        (60, 0, 1, "1"), (60, F(1, 2), F(1, 2), "1"), (64, 0, 2, "1"),
        (67, 2, 1, "1"), (67, 3, 1, "1"),
        (69, 4, 1, "2"), (69, F(13, 3), F(2, 3), "2"),
        (72, 6, 2, "2"),
    ])],
    "midi_running_status.mid": [("track0", "Running Status Etude", [
        (60, 0, 1, "1"), (64, 0, 1, "1"), (67, 1, 1, "1"), (69, 2, 1, "1"),
        (71, 3, 1, "2"), (72, 4, 2, "2"), (76, 4, 1, "2"), (79, 5, 1, "2"),
    ])],
}


def norm(notes):
    rows = [(int(m), F(o), F(d), str(b)) for m, o, d, b in notes]
    return sorted(rows, key=lambda r: (r[1], r[0], r[2]))


def main() -> int:
    failures = 0
    fixtures = sorted(p.name for p in FIXTURES.iterdir()
                      if p.suffix in (".musicxml", ".xml", ".mxl", ".mid", ".midi"))
    missing = set(fixtures) - set(EXPECTED)
    if missing:
        print(f"no hand expectation for: {sorted(missing)}")
        failures += 1
    for name, parts in EXPECTED.items():
        doc = json.loads((GOLDEN / f"{name}.json").read_text(encoding="utf-8"))
        problems = []
        if doc["file"] != name:
            problems.append("file field")
        if len(doc["parts"]) != len(parts):
            problems.append(f"{len(doc['parts'])} parts, expected {len(parts)}")
        for i, (gp, (pid, pname, notes)) in enumerate(zip(doc["parts"], parts)):
            if gp["index"] != i or gp["id"] != pid or gp["name"] != pname:
                problems.append(f"part {i}: got {gp['index']}/{gp['id']}/{gp['name']!r}")
            got = gp["notes"]
            # golden order must be (onset, midi)
            keys = [(n["onset"], n["midi"]) for n in got]
            if keys != sorted(keys):
                problems.append(f"part {pid}: notes not sorted by (onset, midi)")
            want = norm(notes)
            if len(got) != len(want):
                problems.append(f"part {pid}: {len(got)} notes, expected {len(want)}")
            for g, w in zip(sorted(got, key=lambda n: (n["onset"], n["midi"], n["duration"])),
                            want):
                if (g["midi"], g["bar"]) != (w[0], w[3]) \
                        or abs(g["onset"] - float(w[1])) > 1e-9 \
                        or abs(g["duration"] - float(w[2])) > 1e-9:
                    problems.append(f"part {pid}: got {g}, expected midi {w[0]} onset "
                                    f"{float(w[1])} dur {float(w[2])} bar {w[3]}")
        print(f"{'ok  ' if not problems else 'FAIL'} {name}")
        for p in problems:
            print(f"       {p}")
        failures += bool(problems)
    print(f"{len(EXPECTED) - failures} passed, {failures} failed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())

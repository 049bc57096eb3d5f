"""The melody-extraction convention shared by the scripts that turn music21 scores into the
project's melody records (scripts/make_calibration_melodies.py, scripts/make_relatedness_sets.py).

A melody is one melodic line: the first part of the score, ties stripped, grace notes skipped,
the top note of a chord. Events are [MIDI pitch, or None for a rest, length in twelfths of a
quarter note]; a gap between notes becomes a rest; a pickup (a first bar shorter than a full
bar) gets a leading rest so that it ends where a full bar would. The score must have one meter
(one time signature, or several that are all the same); "meter" is [numerator, denominator]
(4/4 when the score has none). A score is rejected (None) when its voices overlap (not one
line), when a length or gap is not a whole number of twelfths of a quarter, or when it has
fewer than `min_notes` pitched events.
"""

import pathlib
from fractions import Fraction

from music21 import chord, corpus, meter, note

UNIT = 12  # divisions per quarter note


def melody_of(score, min_notes=24):
    """{"meter": [num, den], "events": [[pitch|None, twelfths], ...]} or None (see above).

    `score` is a music21 Score (its first part is taken) or a single Part."""
    parts = getattr(score, "parts", None)
    part = parts[0] if parts else score
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
    if len(pitched) < min_notes:
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


def corpus_root():
    """music21's core corpus folder: "source" fields are paths relative to it."""
    return pathlib.Path(corpus.getComposer("bach")[0]).parents[1]


def first_score(parsed):
    """The first score of what converter.parse returned (an Opus for a multi-tune ABC file)."""
    scores = list(parsed.scores) if hasattr(parsed, "scores") else [parsed]
    return scores[0] if scores else parsed

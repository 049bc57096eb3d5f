#!/usr/bin/env python3
"""Generate the collatio demo: three invented songs, MIDI versions of two, and a small corpus.

Everything here is invented for the demo: titles, composers, lyrics and melodies.

    .venv/bin/python demo/make_demo.py      # writes the files next to this script
    .venv/bin/python demo/check_demo.py     # reads them back with music21 and mido

The note data below is the single source for the MusicXML and the MIDI files, so both always
agree. Melodies are written one bar per line as `LABEL: token token ...` where a token is

    B4:q      pitch and duration (w h q e s = whole half quarter eighth sixteenth, "." dots it)
    Bb4:q.    flats are "b", sharps "#"
    D5:e~     "~" ties the note to the next one (which must have the same pitch)
    ^A4       a grace note (acciaccatura, no duration)
    r:q       a rest;  R = a whole-bar rest

Lyrics are a stream of words; "|" inside a word divides its syllables ("fer|ries").
They go, in order, to every note that is not a rest, a grace note or the second half of a tie.
Chord symbols are given per bar as `Symbol` or `Symbol@offset` (offset in quarter notes).
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, replace
from fractions import Fraction as Fr
from xml.sax.saxutils import escape

import mido

HERE = os.path.dirname(os.path.abspath(__file__))
DIVISIONS = 4  # per quarter note: enough for sixteenths
TICKS = 480  # MIDI ticks per quarter note
ENCODING_DATE = "2025-06-01"  # fixed, so that regenerating gives identical files
RIGHTS = "Invented for the collatio demo"

STEPS = "CDEFGAB"
STEP_SEMITONE = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
DURATION = {"w": Fr(4), "h": Fr(2), "q": Fr(1), "e": Fr(1, 2), "s": Fr(1, 4)}
NOTE_TYPE = {
    Fr(4): ("whole", 0),
    Fr(3): ("half", 1),
    Fr(2): ("half", 0),
    Fr(3, 2): ("quarter", 1),
    Fr(1): ("quarter", 0),
    Fr(3, 4): ("eighth", 1),
    Fr(1, 2): ("eighth", 0),
    Fr(1, 4): ("16th", 0),
}
# Sharp-order and flat-order of steps in key signatures.
SHARP_ORDER = "FCGDAEB"
FLAT_ORDER = "BEADGCF"


# --------------------------------------------------------------------------------------------
# Note data model and the small text notation
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Pitch:
    step: str
    alter: int
    octave: int

    @property
    def midi(self) -> int:
        return 12 * (self.octave + 1) + STEP_SEMITONE[self.step] + self.alter

    @property
    def diatonic(self) -> int:
        return 7 * self.octave + STEPS.index(self.step)

    def name(self) -> str:
        return self.step + {-1: "b", 0: "", 1: "#"}[self.alter] + str(self.octave)

    def transposed(self, diatonic: int, chromatic: int) -> "Pitch":
        d = self.diatonic + diatonic
        step, octave = STEPS[d % 7], d // 7
        natural = 12 * (octave + 1) + STEP_SEMITONE[step]
        return Pitch(step, self.midi + chromatic - natural, octave)


def parse_pitch(text: str) -> Pitch:
    m = re.fullmatch(r"([A-G])([#b]?)(-?\d)", text)
    if not m:
        raise ValueError(f"bad pitch {text!r}")
    return Pitch(m.group(1), {"": 0, "#": 1, "b": -1}[m.group(2)], int(m.group(3)))


@dataclass
class Note:
    pitch: Pitch | None  # None = rest
    dur: Fr  # in quarter notes; 0 for grace notes
    tie_start: bool = False
    tie_stop: bool = False
    grace: bool = False
    measure_rest: bool = False
    lyric: tuple[str, str] | None = None  # (syllabic, text)


def parse_melody(text: str, first_label: int) -> list[list[Note]]:
    """One bar per line, `LABEL: tokens`; labels must count up from `first_label`."""
    bars: list[list[Note]] = []
    pending_tie = False
    for line in text.strip().splitlines():
        label, _, body = line.partition(":")
        if int(label) != first_label + len(bars):
            raise ValueError(f"bar label {label} out of order")
        notes = []
        for tok in body.split():
            if tok == "R":
                notes.append(Note(None, Fr(0), measure_rest=True))
                continue
            if tok.startswith("^"):
                notes.append(Note(parse_pitch(tok[1:]), Fr(0), grace=True))
                continue
            tie = tok.endswith("~")
            tok = tok.rstrip("~")
            p, _, d = tok.partition(":")
            dur = DURATION[d.rstrip(".")] * (Fr(3, 2) if d.endswith(".") else 1)
            pitch = None if p == "r" else parse_pitch(p)
            n = Note(pitch, dur, tie_start=tie, tie_stop=pending_tie)
            if pending_tie and (pitch is None or pitch != last.pitch):
                raise ValueError(f"tie to a different pitch in bar {label}")
            pending_tie, last = tie, n
            notes.append(n)
        bars.append(notes)
    return bars


def parse_lyrics(text: str) -> list[tuple[str, str]]:
    """Syllables with their MusicXML <syllabic> kind; "|" divides a word into syllables."""
    out = []
    for word in text.split():
        parts = word.split("|")
        for i, syl in enumerate(parts):
            if len(parts) == 1:
                kind = "single"
            elif i == 0:
                kind = "begin"
            elif i == len(parts) - 1:
                kind = "end"
            else:
                kind = "middle"
            out.append((kind, syl))
    return out


def sung_notes(bars: list[list[Note]]) -> list[Note]:
    return [n for bar in bars for n in bar
            if n.pitch is not None and not n.grace and not n.tie_stop]


def attach_lyrics(bars: list[list[Note]], text: str) -> None:
    syllables = parse_lyrics(text)
    notes = sung_notes(bars)
    if len(syllables) != len(notes):
        raise ValueError(f"{len(syllables)} syllables for {len(notes)} notes")
    for n, s in zip(notes, syllables):
        n.lyric = s


# --------------------------------------------------------------------------------------------
# Chord symbols
# --------------------------------------------------------------------------------------------

# kind: (MusicXML kind value, text shown, [(letters above root, semitones above root)])
CHORD_KINDS = {
    "": ("major", "", [(0, 0), (2, 4), (4, 7)]),
    "m": ("minor", "m", [(0, 0), (2, 3), (4, 7)]),
    "7": ("dominant", "7", [(0, 0), (2, 4), (4, 7), (6, 10)]),
    "m7": ("minor-seventh", "m7", [(0, 0), (2, 3), (4, 7), (6, 10)]),
    "maj7": ("major-seventh", "maj7", [(0, 0), (2, 4), (4, 7), (6, 11)]),
}


@dataclass(frozen=True)
class Chord:
    offset: Fr  # quarter notes from the start of the bar
    root: tuple[str, int]
    kind: str
    bass: tuple[str, int] | None

    def tones(self) -> list[tuple[str, int]]:
        step, alter = self.root
        out = []
        for letters, semis in CHORD_KINDS[self.kind][2]:
            s = STEPS[(STEPS.index(step) + letters) % 7]
            natural = (STEP_SEMITONE[s] - STEP_SEMITONE[step]) % 12
            out.append((s, alter + semis - natural))
        return out


def parse_chords(text: str) -> list[Chord]:
    out = []
    for tok in text.split():
        sym, _, off = tok.partition("@")
        m = re.fullmatch(r"([A-G])([#b]?)(maj7|m7|m|7|)(?:/([A-G])([#b]?))?", sym)
        if not m:
            raise ValueError(f"bad chord {sym!r}")
        acc = {"": 0, "#": 1, "b": -1}
        bass = (m.group(4), acc[m.group(5)]) if m.group(4) else None
        out.append(Chord(Fr(off) if off else Fr(0), (m.group(1), acc[m.group(2)]),
                         m.group(3), bass))
    return out


def pitch_in_range(step: str, alter: int, low: int) -> Pitch:
    """The pitch of this spelling whose MIDI number is in [low, low + 11]."""
    base = STEP_SEMITONE[step] + alter
    octave = (low - base) // 12 - 1
    p = Pitch(step, alter, octave)
    while p.midi < low:
        p = Pitch(step, alter, p.octave + 1)
    return p


def piano_bars(chords: list[list[Chord]], bar_lengths: list[Fr]):
    """A plain accompaniment: right-hand block chords, left-hand roots (root and fifth when a
    chord fills a whole 4/4 bar). Returns per bar (right-hand groups, left-hand groups); a group
    is a list of simultaneous Notes (an empty pitch list is a rest)."""
    out = []
    current: Chord | None = None
    for bar_chords, length in zip(chords, bar_lengths):
        segs = []
        if bar_chords and bar_chords[0].offset > 0 and current is not None:
            segs.append((Fr(0), current))
        segs += [(c.offset, c) for c in bar_chords]
        if not segs:
            rest = [Note(None, length)]
            out.append(([rest], [rest]))
            continue
        rh, lh = [], []
        for i, (off, chord) in enumerate(segs):
            end = segs[i + 1][0] if i + 1 < len(segs) else length
            dur = end - off
            tones = sorted((pitch_in_range(s, a, 55) for s, a in chord.tones()),
                           key=lambda p: p.midi)
            rh.append([Note(p, dur) for p in tones])
            root = pitch_in_range(*chord.root, 36)
            if chord.bass:
                lh.append([Note(pitch_in_range(*chord.bass, 36), dur)])
            elif dur == 4:
                fifth = root.transposed(4, 7)
                lh.append([Note(root, Fr(2))])
                lh.append([Note(fifth, Fr(2))])
            else:
                lh.append([Note(root, dur)])
            current = chord
        out.append((rh, lh))
    return out


# --------------------------------------------------------------------------------------------
# Pieces
# --------------------------------------------------------------------------------------------


@dataclass
class Part:
    id: str
    name: str
    abbreviation: str
    instrument: str
    program: int  # General MIDI, 1-based as in MusicXML
    clef: str = "treble"  # treble, treble8vb, bass, piano
    transpose: tuple[int, int] | None = None  # (diatonic, chromatic), written -> sounding
    fifths: int | None = None  # written key, if different from the piece's
    bars: list[list[Note]] | None = None  # melodic parts
    chords: list[list[Chord]] | None = None  # chord symbols shown above this part
    piano: list | None = None  # from piano_bars()
    velocity: int = 80


@dataclass
class Piece:
    slug: str
    title: str
    composer: str
    year: int
    fifths: int
    mode: str
    beats: int
    beat_type: int
    tempo_qpm: Fr  # quarter notes per minute
    metronome: tuple[str, bool, int]  # beat unit, dotted, per minute
    pickup: Fr  # length of an implicit first bar numbered 0, or 0 for none
    n_bars: int  # counting the pickup bar
    parts: list[Part]
    lyricist: str | None = None
    midi_key: str | None = None

    @property
    def bar_length(self) -> Fr:
        return Fr(self.beats * 4, self.beat_type)

    def labels(self) -> list[str]:
        first = 0 if self.pickup else 1
        return [str(first + i) for i in range(self.n_bars)]

    def lengths(self) -> list[Fr]:
        return [self.pickup if (self.pickup and i == 0) else self.bar_length
                for i in range(self.n_bars)]


# ---------------------------------------------------------------- Work A -------------------
# "Pierside Lamps at Evening", Maren Holloway, 2024. G major, 4/4, quarter = 96.
# Pickup bar 0, verse 1-8, the hook (chorus) 9-16, coda 17-24.
#
# Verse and coda are a ballad in plain major harmony (I, IV, V and one passing Am7): the
# words are told on repeated notes in a long-short dotted rhythm, and the tune moves by leaps
# through the chord (G-B-D, C-E-G, D-A), with notes of the chord on the strong beats.

A_MELODY = """
0: D4:q
1: G4:q B4:e. B4:s D5:q D5:e. D5:s
2: G5:h D5:q. D5:e
3: C5:q C5:e. C5:s E5:q C5:e. C5:s
4: D5:h A4:q. A4:e
5: B4:q. B4:e D5:q B4:e. G4:s
6: E5:q E5:e. E5:s G5:h
7: r:q G5:q F#5:h
8: D5:h. r:q
9: B4:q G5:q. F#5:e E5:q
10: D5:e E5:e D5:e C5:e B4:h
11: A4:e C5:q A4:e E5:q. D5:e~
12: D5:h r:q B4:e C5:e
13: D5:q G5:q. E5:e C5:q
14: A4:e B4:q G4:e E4:q F#4:q
15: G4:q. A4:e B4:q D5:q
16: G4:w
17: r:h G4:e. G4:s C5:q
18: G5:q. D5:e B4:q B4:e. B4:s
19: C5:q. C5:e E5:h
20: r:h. A4:e A4:e
21: D5:q. B4:e G5:q. D5:e
22: E5:h C5:q. C5:e
23: A4:h. F#4:q
24: G4:w
"""

A_LYRICS = """
The fer|ries are moored now, the wind drops, I wait by the wall where the nets hang,
and ev|ery win|dow is burn|ing a|long the old shore.
Burn on, pier|side lamps, the ev|'ning's come, and call the boats home
through the grey sil|ver wa|ter we'll fol|low you all the long way home.
When I am far a|way on the in|land roads,
I will keep them burn|ing down at the wa|ter's edge.
"""

A_CHORDS = [
    "", "G", "G", "C", "D", "G", "C", "Am7 D@2", "D",
    "G Em@3", "D7 G/B@2", "Am C@2", "D", "G C@3", "Am Em@2 D/F#@3", "C D@2", "G",
    "C", "G", "C", "D", "G", "C", "D", "G",
]

# ---------------------------------------------------------------- Work B -------------------
# "Millstream Boats", Tobias Wren, 2025. B-flat major, 4/4, quarter = 120. Tenor voice, written in
# the treble clef with an 8 below (pitches in the file are the sounding pitches, as MusicXML
# does for that clef). Verse 1-16, the borrowed hook 17-24, coda 25-32.
#
# Verse and coda lean on the minor: the verse starts in G minor (vi, with its leading note
# F-sharp) and passes through C minor (ii) before F7 brings the chorus; the coda goes back to
# G minor and C minor. The tune turns around a few notes by step, with semitone neighbour notes
# (G F# G, C B C, D Eb D), in even eighths that are syncopated across the beat.

B_MELODY = """
1: G3:e F#3:q G3:e Bb3:q A3:q
2: G3:e C4:q Bb3:e C4:e Eb4:q.
3: D4:e Eb4:e D4:q C#4:e D4:q A3:e
4: G3:h r:h
5: D4:e Bb3:q A3:e Bb3:e G3:q.
6: Bb3:e C4:e Eb4:q D4:e Eb4:q.
7: D4:e A3:e Bb3:q A3:e F#3:e A3:q
8: G3:h r:h
9: D4:e C4:q B3:e C4:q Eb4:q
10: D4:q Bb3:q r:e Eb4:q D4:e
11: F4:q E4:e F4:e C4:h~
12: C4:h r:h
13: Bb3:e C4:e Eb4:q D4:e Eb4:q.
14: G4:e F4:q G4:e Eb4:q D4:e Eb4:e
15: F4:q C4:h.
16: R
17: D4:q Bb4:q A4:q G4:q
18: F4:e G4:e F4:e Eb4:e D4:q D4:q
19: C4:e Eb4:q C4:e G4:q. r:e
20: F4:h r:q D4:e Eb4:e
21: F4:q ^A4 Bb4:q. G4:e Eb4:q
22: C4:e D4:q Bb3:e D4:q A3:q
23: Bb3:q Bb3:e C4:e D4:q F4:q
24: Bb3:w
25: G3:e F#3:q G3:e Bb3:q A3:e G3:e~
26: G3:q C4:e Eb4:q D4:e Bb3:e D4:e
27: Eb4:e C4:e~ C4:q r:h
28: R
29: G3:e Bb3:q A3:e Bb3:q r:e D4:e
30: Eb4:q C4:e B3:e C4:q r:e D4:e
31: Eb4:q C4:e Bb3:e~ Bb3:h~
32: Bb3:h r:h
"""

B_LYRICS = """
I tore a page from my fa|ther's old book and I fold|ed it in two,
then tucked in the cor|ners just like you said, and I set it on the stream.
It went a|round the mill|pond, past the wil|low and gone,
and I ran a|long be|side as far as my legs go.
Sail on, mill|stream boats, the ri|ver's run|ning to car|ry us home,
down the slow brown wa|ter, fol|low it round the bend and on to the sea.
I hope it finds the shore, and some|bo|dy un|folds it,
and reads the lines I nev|er could say a|loud to you.
"""

B_CHORDS = [
    "Gm", "Cm", "D", "Gm", "Gm", "Cm", "D7", "Gm",
    "Cm", "Gm", "F", "F", "Eb", "Cm", "F7", "F7",
    "Bb Gm@3", "F7 Bb/D@2", "Cm Eb@2", "F", "Bb Eb@3", "Cm Gm@2 F/A@3", "Eb F@2", "Bb",
    "Gm", "Cm", "F7", "Eb", "Gm", "Cm", "F7", "Bb",
]

B_HOOK_BARS = range(17, 25)  # doubled by the alto saxophone

# ---------------------------------------------------------------- Work C -------------------
# "Wool and Weather", Ines Calder, 2023. D minor, 6/8, dotted quarter = 72. A fiddle tune.

C_MELODY = """
1: D5:q A4:e F4:q A4:e
2: D5:e E5:e F5:e E5:q D5:e
3: C5:q A4:e G4:q E4:e
4: F4:q. A4:q.
5: Bb4:q A4:e G4:q Bb4:e
6: A4:e F4:e D4:e A4:q.
7: G4:e A4:e Bb4:e C5:q E4:e
8: D4:q. r:q.
9: F5:q E5:e D5:q C5:e
10: A4:q. D5:q.
11: Bb4:q D5:e F5:q D5:e
12: C5:q E5:e G5:q E5:e
13: A4:q. C5:e D5:e E5:e
14: F5:q. E5:e D5:e C#5:e
15: D5:e A4:e F4:e E4:q C#4:e
16: D4:q. r:q.
"""

C_CHORDS = ["Dm", "Dm", "C", "F", "Gm", "Dm", "C", "Dm",
            "F", "Dm", "Bb", "C", "F", "Dm A7@3/2", "Dm A7@3/2", "Dm"]

# ---------------------------------------------------------------- Corpus -------------------
# Eight short invented melodies. Two of them (01 and 02) use the four-note turn "up a tone,
# down a tone, down a tone" that also occurs in bar 10 of Pierside Lamps (D5 E5 D5 C5);
# none of them contains the hook itself.

CORPUS = [
    dict(slug="01-tinkers-lullaby", title="Tinker's Lullaby", composer="Agnes Pell",
         year=2019, fifths=-1, mode="major", time=(3, 4), tempo=84, melody="""
1: C5:h A4:q
2: F4:h G4:q
3: A4:q. Bb4:e A4:q
4: C5:h.
5: G4:e A4:e G4:e F4:e D4:q
6: C4:h.
7: F4:q A4:q C5:q
8: D5:h C5:q
9: A4:q G4:q C5:q
10: F4:q. G4:e A4:q
11: G4:q C4:q E4:q
12: F4:h.
"""),
    dict(slug="02-crossing-at-dunmere", title="Crossing at Dunmere", composer="Callum Ashby",
         year=2021, fifths=2, mode="major", time=(4, 4), tempo=100, melody="""
1: D4:q F#4:q A4:q. B4:e
2: A4:h D4:h
3: G4:q B4:q E5:q C#5:q
4: B4:h A4:h
5: E4:q F#4:e E4:e D4:h
6: F#4:q A4:q D5:q. C#5:e
7: B4:q G4:q E4:q C#4:q
8: D4:w
"""),
    dict(slug="03-the-orchard-gate", title="The Orchard Gate", composer="Ilse Marwick",
         year=2018, fifths=0, mode="minor", time=(6, 8), tempo=66, melody="""
1: A4:q E4:e A4:q B4:e
2: C5:q. B4:q.
3: A4:q G4:e E4:q G4:e
4: A4:q. r:q.
5: C5:q D5:e E5:q C5:e
6: D5:q B4:e G4:q.
7: A4:e B4:e C5:e B4:q G#4:e
8: A4:q. r:q.
"""),
    dict(slug="04-night-shift-at-the-mill", title="Night Shift at the Mill",
         composer="Desmond Achterberg", year=2020, fifths=1, mode="minor", time=(4, 4),
         tempo=88, melody="""
1: E4:e G4:e A4:q B4:q. G4:e
2: A4:q G4:q E4:h
3: D4:e E4:e G4:q A4:q B4:q
4: E5:h. r:q
5: D5:q B4:e A4:e G4:q E4:q
6: G4:q. A4:e B4:h
7: C5:q A4:q F#4:q D#4:q
8: E4:w
"""),
    dict(slug="05-postcard-from-kestrel-point", title="Postcard from Kestrel Point",
         composer="Hanne Sorvik", year=2022, fifths=-2, mode="major", time=(4, 4), tempo=112,
         melody="""
1: F4:q Bb4:q D5:q F5:q
2: Eb5:q. D5:e C5:h
3: A4:q Bb4:q D5:q Bb4:q
4: C5:w
5: F4:q C5:q Eb5:q D5:e C5:e
6: D5:h Bb4:h
7: A4:q G4:q A4:q Bb4:q
8: F4:w
9: Bb4:e Bb4:e D5:q C5:e C5:e Eb5:q
10: D5:q. Bb4:e C5:q A4:q
11: G4:q Eb5:q C5:q A4:q
12: Bb4:w
"""),
    dict(slug="06-slate-roof-rain", title="Slate Roof Rain", composer="Tamsin Vey",
         year=2017, fifths=0, mode="major", time=(2, 4), tempo=132, melody="""
1: G4:e C5:e E5:e G5:e
2: F5:q D5:q
3: E5:e C5:e D5:e B4:e
4: C5:q G4:q
5: A4:e C5:e F5:e A5:e
6: G5:q E5:q
7: F5:e D5:e B4:e G4:e
8: C5:q r:q
9: E5:q. D5:e
10: C5:q A4:q
11: D5:q. C5:e
12: B4:q G4:q
13: C5:e E5:e G5:e E5:e
14: F5:q D5:q
15: B4:e D5:e G4:e B4:e
16: C5:q r:q
"""),
    dict(slug="07-under-the-viaduct", title="Under the Viaduct", composer="Marisol Quint",
         year=2016, fifths=1, mode="major", time=(4, 4), tempo=92, melody="""
1: B4:q. A4:e G4:q D4:q
2: E4:q G4:q A4:h
3: B4:q D5:q E5:q. D5:e
4: B4:w
5: C5:q. B4:e A4:q E4:q
6: F#4:q A4:q D5:h
7: C5:q B4:q A4:q F#4:q
8: G4:w
"""),
    dict(slug="08-kettle-hill-hymn", title="Kettle Hill Hymn", composer="Josiah Trembath",
         year=2015, fifths=-3, mode="major", time=(3, 4), tempo=76, melody="""
1: Eb4:q G4:q Bb4:q
2: Ab4:h G4:q
3: F4:q G4:q Ab4:q
4: G4:h.
5: Bb4:q Eb5:q D5:q
6: C5:h Bb4:q
7: Ab4:q F4:q D4:q
8: Eb4:h.
9: G4:q G4:q Ab4:q
10: Bb4:h Eb5:q
11: D5:q F5:q D5:q
12: C5:h.
13: Eb5:q D5:q C5:q
14: Bb4:q G4:q Eb4:q
15: F4:h D4:q
16: Eb4:h.
"""),
]


def build_pieces() -> tuple[list[Piece], list[Piece]]:
    # Work A
    a_bars = parse_melody(A_MELODY, 0)
    attach_lyrics(a_bars, A_LYRICS)
    a = Piece(slug="pierside-lamps", title="Pierside Lamps at Evening",
              composer="Maren Holloway", lyricist="Maren Holloway", year=2024,
              fifths=1, mode="major", beats=4, beat_type=4, tempo_qpm=Fr(96),
              metronome=("quarter", False, 96), pickup=Fr(1), n_bars=25, parts=[],
              midi_key="G")
    a_chords = [parse_chords(c) for c in A_CHORDS]
    a.parts = [
        Part("P1", "Voice", "Vo.", "Voice", 54, bars=a_bars, chords=a_chords, velocity=90),
        Part("P2", "Piano", "Pno.", "Acoustic Grand Piano", 1, clef="piano",
             piano=piano_bars(a_chords, a.lengths()), velocity=58),
    ]

    # Work B
    b_bars = parse_melody(B_MELODY, 1)
    attach_lyrics(b_bars, B_LYRICS)
    b = Piece(slug="millstream-boats", title="Millstream Boats", composer="Tobias Wren",
              lyricist="Tobias Wren", year=2025, fifths=-2, mode="major", beats=4,
              beat_type=4, tempo_qpm=Fr(120), metronome=("quarter", False, 120),
              pickup=Fr(0), n_bars=32, parts=[], midi_key="Bb")
    b_chords = [parse_chords(c) for c in B_CHORDS]
    # Alto saxophone in E-flat: written a major sixth above the sound. It doubles the voice,
    # in unison at concert pitch, in the hook bars only.
    sax_bars = []
    for label, bar in zip(range(1, 33), b_bars):
        if label in B_HOOK_BARS:
            sax_bars.append([replace(n, lyric=None,
                                     pitch=n.pitch.transposed(5, 9) if n.pitch else None)
                             for n in bar])
        else:
            sax_bars.append([Note(None, Fr(0), measure_rest=True)])
    b.parts = [
        Part("P1", "Voice", "Vo.", "Voice", 54, clef="treble8vb", bars=b_bars,
             chords=b_chords, velocity=90),
        Part("P2", "Alto Sax", "A. Sax", "Alto Saxophone", 66, transpose=(-5, -9),
             fifths=b.fifths + 3, bars=sax_bars, velocity=76),
        Part("P3", "Piano", "Pno.", "Acoustic Grand Piano", 1, clef="piano",
             piano=piano_bars(b_chords, b.lengths()), velocity=58),
    ]

    # Work C
    c_bars = parse_melody(C_MELODY, 1)
    c = Piece(slug="unrelated-6-8", title="Wool and Weather", composer="Ines Calder",
              year=2023, fifths=-1, mode="minor", beats=6, beat_type=8, tempo_qpm=Fr(108),
              metronome=("quarter", True, 72), pickup=Fr(0), n_bars=16, parts=[],
              midi_key="Dm")
    c.parts = [Part("P1", "Violin (melody)", "Vln.", "Violin", 41, bars=c_bars,
                    chords=[parse_chords(x) for x in C_CHORDS])]

    corpus = []
    for spec in CORPUS:
        bars = parse_melody(spec["melody"], 1)
        beats, beat_type = spec["time"]
        compound = beat_type == 8
        p = Piece(slug=spec["slug"], title=spec["title"], composer=spec["composer"],
                  year=spec["year"], fifths=spec["fifths"], mode=spec["mode"], beats=beats,
                  beat_type=beat_type,
                  tempo_qpm=Fr(spec["tempo"]) * (Fr(3, 2) if compound else 1),
                  metronome=("quarter", compound, spec["tempo"]), pickup=Fr(0),
                  n_bars=len(bars), parts=[])
        p.parts = [Part("P1", "Melody", "Mel.", "Flute", 74, bars=bars)]
        corpus.append(p)
    return [a, b, c], corpus


# --------------------------------------------------------------------------------------------
# MusicXML writer
# --------------------------------------------------------------------------------------------


def key_alters(fifths: int) -> dict[str, int]:
    if fifths >= 0:
        return {s: 1 for s in SHARP_ORDER[:fifths]}
    return {s: -1 for s in FLAT_ORDER[:-fifths]}


class AccidentalState:
    """Which alteration is in force for each written step+octave within one bar and staff."""

    def __init__(self, fifths: int):
        self.key = key_alters(fifths)
        self.bar: dict[tuple[str, int], int] = {}

    def new_bar(self) -> None:
        self.bar = {}

    def needed(self, p: Pitch) -> str | None:
        current = self.bar.get((p.step, p.octave), self.key.get(p.step, 0))
        if current == p.alter:
            return None
        self.bar[(p.step, p.octave)] = p.alter
        return {-1: "flat", 0: "natural", 1: "sharp"}[p.alter]


MIDDLE_LINE = {"treble": Pitch("B", 0, 4).diatonic, "treble8vb": Pitch("B", 0, 3).diatonic,
               "bass": Pitch("D", 0, 3).diatonic}


def pitch_xml(p: Pitch) -> str:
    alter = f"<alter>{p.alter}</alter>" if p.alter else ""
    return f"<pitch><step>{p.step}</step>{alter}<octave>{p.octave}</octave></pitch>"


def note_xml(n: Note, acc: AccidentalState, clef: str, bar_len: Fr, voice: str = "1",
             staff: int | None = None, chord: bool = False, stem: str | None = None) -> str:
    x = ["<note>"]
    if n.grace:
        x.append('<grace slash="yes"/>')
    if chord:
        x.append("<chord/>")
    if n.pitch is not None:
        x.append(pitch_xml(n.pitch))
    elif n.measure_rest:
        x.append('<rest measure="yes"/>')
    else:
        x.append("<rest/>")
    if not n.grace:
        dur = bar_len if n.measure_rest else n.dur
        x.append(f"<duration>{int(dur * DIVISIONS)}</duration>")
    if n.tie_stop:
        x.append('<tie type="stop"/>')
    if n.tie_start:
        x.append('<tie type="start"/>')
    x.append(f"<voice>{voice}</voice>")
    if n.grace:
        x.append("<type>eighth</type>")
    elif not n.measure_rest:
        name, dots = NOTE_TYPE[n.dur]
        x.append(f"<type>{name}</type>" + "<dot/>" * dots)
    if n.pitch is not None:
        a = None if n.tie_stop else acc.needed(n.pitch)
        if a:
            x.append(f"<accidental>{a}</accidental>")
        if stem is None:
            stem = "down" if n.pitch.diatonic >= MIDDLE_LINE[clef] else "up"
        x.append(f"<stem>{stem}</stem>")
    if staff is not None:
        x.append(f"<staff>{staff}</staff>")
    tied = []
    if n.tie_stop:
        tied.append('<tied type="stop"/>')
    if n.tie_start:
        tied.append('<tied type="start"/>')
    if tied:
        x.append("<notations>" + "".join(tied) + "</notations>")
    if n.lyric:
        syllabic, text = n.lyric
        x.append(f'<lyric number="1"><syllabic>{syllabic}</syllabic>'
                 f"<text>{escape(text)}</text></lyric>")
    x.append("</note>")
    return "".join(x)


def harmony_xml(c: Chord, offset_divs: int) -> str:
    kind, text, _ = CHORD_KINDS[c.kind]
    step, alter = c.root
    x = ["<harmony>", f"<root><root-step>{step}</root-step>"]
    if alter:
        x.append(f"<root-alter>{alter}</root-alter>")
    x.append("</root>")
    x.append(f'<kind text="{text}">{kind}</kind>')
    if c.bass:
        x.append(f"<bass><bass-step>{c.bass[0]}</bass-step>")
        if c.bass[1]:
            x.append(f"<bass-alter>{c.bass[1]}</bass-alter>")
        x.append("</bass>")
    if offset_divs:
        x.append(f"<offset>{offset_divs}</offset>")
    x.append("</harmony>")
    return "".join(x)


def clef_xml(clef: str, number: int | None = None) -> str:
    num = f' number="{number}"' if number else ""
    sign, line, change = {"treble": ("G", 2, 0), "treble8vb": ("G", 2, -1),
                          "bass": ("F", 4, 0)}[clef]
    oc = f"<clef-octave-change>{change}</clef-octave-change>" if change else ""
    return f"<clef{num}><sign>{sign}</sign><line>{line}</line>{oc}</clef>"


def attributes_xml(piece: Piece, part: Part) -> str:
    fifths = piece.fifths if part.fifths is None else part.fifths
    x = ["<attributes>", f"<divisions>{DIVISIONS}</divisions>",
         f"<key><fifths>{fifths}</fifths><mode>{piece.mode}</mode></key>",
         f"<time><beats>{piece.beats}</beats><beat-type>{piece.beat_type}</beat-type></time>"]
    if part.clef == "piano":
        x.append("<staves>2</staves>")
        x.append(clef_xml("treble", 1) + clef_xml("bass", 2))
    else:
        x.append(clef_xml(part.clef))
    if part.transpose:
        d, c = part.transpose
        x.append(f"<transpose><diatonic>{d}</diatonic><chromatic>{c}</chromatic></transpose>")
    x.append("</attributes>")
    return "".join(x)


def tempo_xml(piece: Piece) -> str:
    unit, dotted, per_minute = piece.metronome
    dot = "<beat-unit-dot/>" if dotted else ""
    tempo = piece.tempo_qpm
    tempo_text = str(tempo.numerator) if tempo.denominator == 1 else f"{float(tempo):g}"
    return ('<direction placement="above"><direction-type><metronome parentheses="no">'
            f"<beat-unit>{unit}</beat-unit>{dot}<per-minute>{per_minute}</per-minute>"
            f'</metronome></direction-type><sound tempo="{tempo_text}"/></direction>')


def melodic_measure(part: Part, bar: list[Note], chords: list[Chord], acc: AccidentalState,
                    bar_len: Fr) -> list[str]:
    out = []
    pending = sorted(chords, key=lambda c: c.offset)
    t = Fr(0)
    for n in bar:
        if not n.grace:
            span = bar_len if n.measure_rest else n.dur
            while pending and pending[0].offset < t + span:
                c = pending.pop(0)
                out.append(harmony_xml(c, int((c.offset - t) * DIVISIONS)))
        out.append(note_xml(n, acc, part.clef, bar_len))
        if not n.grace:
            t += bar_len if n.measure_rest else n.dur
    if t != bar_len:
        raise ValueError(f"{part.name}: bar of {t} quarters, expected {bar_len}")
    return out


def piano_measure(part: Part, rh, lh, accs, bar_len: Fr) -> list[str]:
    out = []
    for staff, groups, clef, voice in ((1, rh, "treble", "1"), (2, lh, "bass", "5")):
        if staff == 2:
            out.append(f"<backup><duration>{int(bar_len * DIVISIONS)}</duration></backup>")
        total = Fr(0)
        for group in groups:
            pitched = [n for n in group if n.pitch is not None]
            stem = None
            if pitched:
                mean = sum(n.pitch.diatonic for n in pitched) / len(pitched)
                stem = "down" if mean >= MIDDLE_LINE[clef] else "up"
            for i, n in enumerate(group):
                out.append(note_xml(n, accs[staff - 1], clef, bar_len, voice=voice,
                                    staff=staff, chord=i > 0, stem=stem))
            total += group[0].dur
        if total != bar_len:
            raise ValueError(f"piano staff {staff}: bar of {total}, expected {bar_len}")
    return out


def musicxml(piece: Piece) -> str:
    x = ['<?xml version="1.0" encoding="UTF-8" standalone="no"?>',
         '<!DOCTYPE score-partwise PUBLIC "-//Recordare//DTD MusicXML 4.0 Partwise//EN" '
         '"http://www.musicxml.org/dtds/partwise.dtd">',
         "<!-- Invented for the collatio demo: title, composer, words and music are fictional."
         " Generated by demo/make_demo.py. -->",
         '<score-partwise version="4.0">',
         f"  <work><work-title>{escape(piece.title)}</work-title></work>",
         "  <identification>",
         f'    <creator type="composer">{escape(piece.composer)}</creator>']
    if piece.lyricist:
        x.append(f'    <creator type="lyricist">{escape(piece.lyricist)}</creator>')
    x += [f"    <rights>{escape(RIGHTS)}: fictional song and composer, {piece.year}.</rights>",
          "    <encoding>",
          "      <software>collatio demo/make_demo.py</software>",
          f"      <encoding-date>{ENCODING_DATE}</encoding-date>",
          "    </encoding>",
          "    <miscellaneous>",
          f'      <miscellaneous-field name="year">{piece.year}</miscellaneous-field>',
          "    </miscellaneous>",
          "  </identification>",
          "  <part-list>"]
    for i, part in enumerate(piece.parts):
        x += [f'    <score-part id="{part.id}">',
              f"      <part-name>{escape(part.name)}</part-name>",
              f"      <part-abbreviation>{escape(part.abbreviation)}</part-abbreviation>",
              f'      <score-instrument id="{part.id}-I1">'
              f"<instrument-name>{escape(part.instrument)}</instrument-name>"
              "</score-instrument>",
              f'      <midi-instrument id="{part.id}-I1"><midi-channel>{i + 1}</midi-channel>'
              f"<midi-program>{part.program}</midi-program></midi-instrument>",
              "    </score-part>"]
    x.append("  </part-list>")

    labels, lengths = piece.labels(), piece.lengths()
    for pi, part in enumerate(piece.parts):
        x.append(f'  <part id="{part.id}">')
        fifths = piece.fifths if part.fifths is None else part.fifths
        accs = [AccidentalState(fifths), AccidentalState(fifths)]
        for bi, (label, bar_len) in enumerate(zip(labels, lengths)):
            implicit = ' implicit="yes"' if (piece.pickup and bi == 0) else ""
            x.append(f'    <measure number="{label}"{implicit}>')
            for a in accs:
                a.new_bar()
            body = []
            if bi == 0:
                body.append(attributes_xml(piece, part))
                if pi == 0:
                    body.append(tempo_xml(piece))
            if part.piano is not None:
                rh, lh = part.piano[bi]
                body += piano_measure(part, rh, lh, accs, bar_len)
            else:
                chords = part.chords[bi] if part.chords else []
                body += melodic_measure(part, part.bars[bi], chords, accs[0], bar_len)
            if bi == len(labels) - 1:
                body.append('<barline location="right"><bar-style>light-heavy</bar-style>'
                            "</barline>")
            x += ["      " + b for b in body]
            x.append("    </measure>")
        x.append("  </part>")
    x.append("</score-partwise>")
    return "\n".join(x) + "\n"


# --------------------------------------------------------------------------------------------
# MIDI writer (format 1: a conductor track, then one track per part)
# --------------------------------------------------------------------------------------------

GRACE = Fr(1, 8)  # a grace note sounds for a 32nd, taken from the end of the note before it


def sounding_notes(piece: Piece, part: Part):
    """(onset, duration, midi pitch, lyric text) in quarter notes, ties merged, at concert
    pitch."""
    shift = part.transpose[1] if part.transpose else 0
    events = []
    t = Fr(0)
    if part.piano is not None:
        for (rh, lh), bar_len in zip(part.piano, piece.lengths()):
            for groups in (rh, lh):
                u = t
                for group in groups:
                    for n in group:
                        if n.pitch is not None:
                            events.append([u, n.dur, n.pitch.midi, None])
                    u += group[0].dur
            t += bar_len
        return events
    last = None
    for bar, bar_len in zip(part.bars, piece.lengths()):
        for n in bar:
            if n.measure_rest:
                t += bar_len
                continue
            if n.pitch is None:
                t += n.dur
                continue
            if n.grace:
                if last is not None and last[0] + last[1] > t - GRACE:
                    last[1] = t - GRACE - last[0]
                events.append([t - GRACE, GRACE, n.pitch.midi + shift, None])
                continue
            if n.tie_stop:
                last[1] += n.dur
            else:
                text = None
                if n.lyric:
                    syllabic, word = n.lyric
                    text = word + ("-" if syllabic in ("begin", "middle") else "")
                last = [t, n.dur, n.pitch.midi + shift, text]
                events.append(last)
            t += n.dur
    return events


def write_midi(piece: Piece, path: str) -> None:
    mid = mido.MidiFile(type=1, ticks_per_beat=TICKS)

    def ticks(q: Fr) -> int:
        v = q * TICKS
        assert v.denominator == 1
        return int(v)

    def track_from(events, end_tick):
        track = mido.MidiTrack()
        events.sort(key=lambda e: (e[0], e[1]))
        last = 0
        for tick, _, msg in events:
            track.append(msg.copy(time=tick - last))
            last = tick
        track.append(mido.MetaMessage("end_of_track", time=max(0, end_tick - last)))
        return track

    total = ticks(sum(piece.lengths()))
    conductor = [(0, 0, mido.MetaMessage("track_name", name=piece.title)),
                 (0, 0, mido.MetaMessage("copyright",
                                         text=f"{RIGHTS}: {piece.composer}, {piece.year} (fictional)")),
                 (0, 0, mido.MetaMessage("text", text=f"Composer: {piece.composer}")),
                 (0, 1, mido.MetaMessage("key_signature", key=piece.midi_key)),
                 (0, 1, mido.MetaMessage("set_tempo", tempo=mido.bpm2tempo(
                     float(piece.tempo_qpm))))]
    if piece.pickup:
        # The pickup is a bar of its own, as notation programs export it.
        conductor.append((0, 1, mido.MetaMessage(
            "time_signature", numerator=int(piece.pickup), denominator=4)))
        conductor.append((ticks(piece.pickup), 1, mido.MetaMessage(
            "time_signature", numerator=piece.beats, denominator=piece.beat_type)))
    else:
        conductor.append((0, 1, mido.MetaMessage(
            "time_signature", numerator=piece.beats, denominator=piece.beat_type)))
    mid.tracks.append(track_from(conductor, total))

    for channel, part in enumerate(piece.parts):
        ev = [(0, 0, mido.MetaMessage("track_name", name=part.name)),
              (0, 0, mido.MetaMessage("instrument_name", name=part.instrument)),
              (0, 1, mido.Message("program_change", channel=channel,
                                  program=part.program - 1))]
        for onset, dur, pitch, text in sounding_notes(piece, part):
            on, off = ticks(onset), ticks(onset + dur)
            # At one tick: note-offs first, then the lyric, then the note-on it belongs to.
            ev.append((off, 2, mido.Message("note_off", channel=channel, note=pitch,
                                             velocity=0)))
            if text:
                ev.append((on, 3, mido.MetaMessage("lyrics", text=text)))
            ev.append((on, 4, mido.Message("note_on", channel=channel, note=pitch,
                                           velocity=part.velocity)))
        mid.tracks.append(track_from(ev, total))
    mid.save(path)


# --------------------------------------------------------------------------------------------


def main() -> None:
    works, corpus = build_pieces()
    os.makedirs(os.path.join(HERE, "corpus"), exist_ok=True)
    for piece in works:
        path = os.path.join(HERE, f"{piece.slug}.musicxml")
        with open(path, "w", encoding="utf-8") as f:
            f.write(musicxml(piece))
        print("wrote", os.path.relpath(path))
    for piece in works[:2]:
        path = os.path.join(HERE, f"{piece.slug}.mid")
        write_midi(piece, path)
        print("wrote", os.path.relpath(path))
    for piece in corpus:
        path = os.path.join(HERE, "corpus", f"{piece.slug}.musicxml")
        with open(path, "w", encoding="utf-8") as f:
            f.write(musicxml(piece))
        print("wrote", os.path.relpath(path))


if __name__ == "__main__":
    main()

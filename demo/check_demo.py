#!/usr/bin/env python3
"""Read the demo files back with music21 and mido and check them against demo/README.md.

    .venv/bin/python demo/check_demo.py

Prints the borrowed passage of both songs as music21 reads it, checks that Millstream Boats bars
17-24 are Pierside Lamps bars 9-16 moved down 9 semitones with exactly the changes listed in
the README, that the alto saxophone sounds in unison with the voice there, that the MIDI files
hold the same notes as the MusicXML, and where the common four-note turn occurs. Exits non-zero
on the first failed check.
"""

from __future__ import annotations

import glob
import os
import sys
import xml.etree.ElementTree as ET
from fractions import Fraction as Fr

import mido
from music21 import converter, harmony, key as m21key, note as m21note, stream

HERE = os.path.dirname(os.path.abspath(__file__))
FAILURES = []


def check(ok: bool, what: str) -> None:
    print(("  ok    " if ok else "  FAIL  ") + what)
    if not ok:
        FAILURES.append(what)


def path(name: str) -> str:
    return os.path.join(HERE, name)


# ---------------------------------------------------------------- element order -----------

NOTE_ORDER = ["grace", "chord", "pitch|rest|unpitched", "duration", "tie", "instrument",
              "voice", "type", "dot", "accidental", "time-modification", "stem", "notehead",
              "staff", "beam", "notations", "lyric"]
RANK = {name: i for i, names in enumerate(NOTE_ORDER) for name in names.split("|")}


def note_order_ok(file: str) -> bool:
    root = ET.parse(file).getroot()
    for n in root.iter("note"):
        ranks = [RANK[c.tag] for c in n]
        if ranks != sorted(ranks):
            print("    bad order:", [c.tag for c in n])
            return False
    return True


# ---------------------------------------------------------------- reading ------------------


def notes_of(part, first: int, last: int, sounding: bool = False):
    """(bar, offset in bar, quarter length, midi, name, lyric, grace) for bars first..last."""
    if sounding:
        part = part.toSoundingPitch()
    part = part.stripTies()
    out = []
    for m in part.getElementsByClass("Measure"):
        if not first <= m.number <= last:
            continue
        for n in m.recurse().notes:
            if not isinstance(n, m21note.Note):
                continue
            out.append((m.number, Fr(n.offset).limit_denominator(64),
                        Fr(n.quarterLength).limit_denominator(64), n.pitch.midi,
                        n.pitch.nameWithOctave.replace("-", "b"), n.lyric or "",
                        n.duration.isGrace))
    return out


def show(title: str, rows) -> None:
    print(f"\n{title}")
    print("    bar  beat   len   pitch  midi  lyric")
    for bar, off, ql, midi, name, lyric, grace in rows:
        length = "grace" if grace else str(ql)
        print(f"    {bar:>3}  {str(1 + off):<5}  {length:<5} {name:<6} {midi:>4}  {lyric}")


# ---------------------------------------------------------------- expectations -------------
# The README's list of differences, as data: Pierside Lamps bars 9-16 (bar 9 -> 0 here),
# moved by TRANSPOSITION semitones, then edited.
TRANSPOSITION = -9
A_HOOK, B_HOOK = (9, 16), (17, 24)


def expected_b(a_rows):
    rows = {(bar - A_HOOK[0], off): [ql, midi + TRANSPOSITION] for bar, off, ql, midi, *_ in a_rows}

    def move(old, new, ql):
        del rows[old]
        rows[new] = [ql, None]
        return new

    # 1. rhythm: bar 17, the dotted rhythm evened out (B-flat4 1.5 -> 1 beat; A4 enters on
    #    beat 3 instead of beat 3.5 and lasts 1 beat instead of 0.5).
    rows[(0, Fr(1))][0] = Fr(1)
    a4 = rows.pop((0, Fr(5, 2)))
    rows[(0, Fr(2))] = [Fr(1), a4[1]]
    # 2. split: bar 18, the half note D4 sung as two quarters.
    d4 = rows.pop((1, Fr(2)))
    rows[(1, Fr(2))] = [Fr(1), d4[1]]
    rows[(1, Fr(3))] = [Fr(1), d4[1]]
    # 3. rhythm: the syncopated F4 tied across bars 19-20 now enters on the downbeat of bar 20
    #    (2 beats instead of 2.5; an eighth rest takes its place in bar 19).
    f4 = rows.pop((2, Fr(7, 2)))
    rows[(3, Fr(0))] = [Fr(2), f4[1]]
    # 4. pitch: bar 22 beat 3, D4 where a strict transposition gives G3 (a fifth higher).
    assert rows[(5, Fr(2))][1] == 55
    rows[(5, Fr(2))][1] = 62
    # 5. split: bar 23, the dotted-quarter B-flat3 sung as a quarter and an eighth.
    bb3 = rows.pop((6, Fr(0)))
    rows[(6, Fr(0))] = [Fr(1), bb3[1]]
    rows[(6, Fr(1))] = [Fr(1, 2), bb3[1]]
    out = [(bar + B_HOOK[0], off, ql, midi, False) for (bar, off), (ql, midi) in rows.items()]
    # 6. ornament: bar 21, a grace note A4 before the B-flat4 on beat 2.
    out.append((21, Fr(1), Fr(0), 69, True))
    return sorted(out, key=lambda r: (r[0], r[1], not r[4]))


# ---------------------------------------------------------------- figure search -----------


def intervals(rows):
    tones = [r for r in rows if not r[6]]
    return tones, [b[3] - a[3] for a, b in zip(tones, tones[1:])]


def find(pattern, ivs):
    return [i for i in range(len(ivs) - len(pattern) + 1) if ivs[i:i + len(pattern)] == pattern]


def longest_common_run(a, b):
    best = 0
    for i in range(len(a)):
        for j in range(len(b)):
            k = 0
            while i + k < len(a) and j + k < len(b) and a[i + k] == b[j + k]:
                k += 1
            best = max(best, k)
    return best


# ---------------------------------------------------------------- MIDI --------------------


def midi_summary(file: str):
    mid = mido.MidiFile(file)
    print(f"\n{os.path.relpath(file)}: format {mid.type}, {len(mid.tracks)} tracks, "
          f"{mid.ticks_per_beat} ticks per quarter")
    tracks = []
    for i, tr in enumerate(mid.tracks):
        t, name, notes, lyrics, meta = 0, "", [], [], []
        pending_lyric, on = None, {}
        for msg in tr:
            t += msg.time
            if msg.type == "track_name":
                name = msg.name
            elif msg.type == "lyrics":
                pending_lyric = (t, msg.text)
                lyrics.append(msg.text)
            elif msg.type in ("set_tempo", "time_signature", "key_signature"):
                meta.append((t, msg))
            elif msg.type == "note_on" and msg.velocity > 0:
                if msg.note in on:
                    print(f"    overlapping notes on pitch {msg.note} at tick {t}")
                    return None
                lyr = pending_lyric[1] if pending_lyric and pending_lyric[0] == t else None
                on[msg.note] = (t, lyr)
            elif msg.type == "note_off" or (msg.type == "note_on" and msg.velocity == 0):
                start, lyr = on.pop(msg.note)
                notes.append((Fr(start, mid.ticks_per_beat), Fr(t - start, mid.ticks_per_beat),
                              msg.note, lyr))
        notes.sort()
        desc = ", ".join(f"{m.type}@{tt}" for tt, m in meta)
        print(f"  track {i + 1}: {name!r}: {len(notes)} notes, {len(lyrics)} lyrics"
              + (f"; {desc}" if desc else ""))
        tracks.append((name, notes, lyrics, meta))
    return mid, tracks


def xml_timeline(part, bar_starts, sounding=False):
    """(absolute onset, quarter length, midi, lyric) of a music21 part, grace notes left out."""
    if isinstance(part, JoinedStaves):
        return part.timeline(bar_starts)
    if sounding:
        part = part.toSoundingPitch()
    out = []
    for m in part.stripTies().getElementsByClass("Measure"):
        for n in m.recurse().notes:
            if n.duration.isGrace or isinstance(n, harmony.ChordSymbol):
                continue
            for p in n.pitches:  # a Note has one, a Chord several
                out.append((bar_starts[m.number] + Fr(n.offset).limit_denominator(64),
                            Fr(n.quarterLength).limit_denominator(64), p.midi))
    return sorted(out)


def whole_parts(score):
    """music21 splits a two-staff part into one PartStaff per staff; join them again."""
    out = []
    for p in score.parts:
        if isinstance(p, stream.PartStaff) and out and out[-1].partName == p.partName:
            joined = out[-1]
            if not isinstance(joined, list):
                joined = out[-1] = [joined]
            joined.append(p)
        else:
            out.append(p)
    return [JoinedStaves(x) if isinstance(x, list) else x for x in out]


class JoinedStaves:
    def __init__(self, staves):
        self.staves = staves
        self.partName = staves[0].partName

    def getElementsByClass(self, cls):
        return self.staves[0].getElementsByClass(cls)

    def toSoundingPitch(self):
        return self

    def stripTies(self):
        return self

    def timeline(self, bar_starts):
        return sorted(x for s in self.staves for x in xml_timeline(s, bar_starts))


def bar_starts_of(part):
    starts, t = {}, Fr(0)
    for m in part.getElementsByClass("Measure"):
        starts[m.number] = t
        t += Fr(m.duration.quarterLength).limit_denominator(64)
    return starts


# ---------------------------------------------------------------- main --------------------


def main() -> int:
    xml_files = sorted(glob.glob(path("*.musicxml")) + glob.glob(path("corpus/*.musicxml")))
    scores = {}
    print("MusicXML files, parsed with music21:")
    for f in xml_files:
        s = converter.parse(f)
        scores[os.path.relpath(f, HERE)] = s
        md = s.metadata
        parts = ", ".join(f"{p.partName} ({len(p.getElementsByClass('Measure'))} bars)"
                          for p in whole_parts(s))
        ts = s.parts[0].recurse().getElementsByClass("TimeSignature")[0].ratioString
        ks = s.parts[0].recurse().getElementsByClass("KeySignature")[0]
        k = ks if isinstance(ks, m21key.Key) else ks.asKey()
        print(f"  {os.path.relpath(f, HERE)}: '{md.title}' by {md.composer}; {ts}, "
              f"{k.tonic.name.replace('-', 'b')} {k.mode}; {parts}")
    print("\nElement order inside <note>:")
    for f in xml_files:
        check(note_order_ok(f), f"{os.path.relpath(f, HERE)}")

    a = scores["pierside-lamps.musicxml"]
    b = scores["millstream-boats.musicxml"]
    a_voice, b_voice, b_sax = a.parts[0], b.parts[0], b.parts[1]

    print("\nStructure:")
    a_nums = [m.number for m in a_voice.getElementsByClass("Measure")]
    check(a_nums[0] == 0 and a_voice.getElementsByClass("Measure")[0].duration.quarterLength
          == 1, "Pierside Lamps starts with a one-beat pickup numbered 0")
    check(a_nums[-1] == 24, "Pierside Lamps has bars 1-24 after the pickup")
    check([m.number for m in b_voice.getElementsByClass("Measure")] == list(range(1, 33)),
          "Millstream Boats has bars 1-32")
    check([p.partName for p in whole_parts(b)] == ["Voice", "Alto Sax", "Piano"],
          "Millstream Boats has the parts Voice, Alto Sax, Piano (two staves)")
    tr = b_sax.recurse().getElementsByClass("Instrument")[0].transposition
    check(tr is not None and tr.semitones == -9, f"Alto Sax sounds {tr.semitones if tr else '?'}"
          " semitones from the written notes (a major sixth down)")

    a_rows = notes_of(a_voice, *A_HOOK)
    b_rows = notes_of(b_voice, *B_HOOK)
    sax_written = notes_of(b_sax, *B_HOOK)
    sax_sounding = notes_of(b_sax, *B_HOOK, sounding=True)
    show("Pierside Lamps, voice, bars 9-16 (as music21 reads it; ties merged):", a_rows)
    show("Millstream Boats, voice, bars 17-24:", b_rows)
    show("Millstream Boats, alto sax, bars 17-24, written pitch:", sax_written)

    print("\nThe borrowing:")
    exp = expected_b(a_rows)
    got = [(bar, off, ql, midi, grace) for bar, off, ql, midi, _, _, grace in b_rows]
    check(got == exp, "Millstream Boats 17-24 = Pierside Lamps 9-16 down 9 semitones, with exactly "
          "the README's changes")
    if got != exp:
        for g, e in zip(got, exp):
            print("     got", g, "expected", e, "" if g == e else "<--")
    unchanged = sum(1 for r in exp if r in set(
        (bar + 8, off, ql, midi - 9, False) for bar, off, ql, midi, *_ in a_rows))
    print(f"    {unchanged} of {len(a_rows)} hook notes are kept exactly (pitch, onset, length)")
    check([(r[0], r[1], r[2], r[3], r[6]) for r in sax_sounding]
          == [(r[0], r[1], r[2], r[3], r[6]) for r in b_rows],
          "Alto Sax at concert pitch doubles the voice in unison in bars 17-24")
    same_written = [(r[1], r[3]) for r in sax_written if not r[6]]
    a_written = [(off, midi) for _, off, _, midi, *_ in a_rows]
    shared = len(set((x[1]) for x in same_written) & set(x[1] for x in a_written))
    print(f"    (the sax's written notes use the very pitches of Pierside Lamps' hook; "
          f"{shared} distinct pitches in common)")
    sax_other = [n for m in b_sax.getElementsByClass("Measure") if not 17 <= m.number <= 24
                 for n in m.recurse().notes]
    check(not sax_other, "Alto Sax plays nothing outside bars 17-24")

    print("\nThe four-note turn (up a tone, down a tone, down a tone):")
    turn = [2, -2, -2]
    found_in = []
    for name, s in sorted(scores.items()):
        tones, ivs = intervals(notes_of(s.parts[0], -1, 10_000))
        hits = find(turn, ivs)
        where = [f"bar {tones[i][0]} ({'-'.join(t[4] for t in tones[i:i + 4])})" for i in hits]
        print(f"    {name}: {', '.join(where) if where else '-'}")
        if hits:
            found_in.append(name)
    check(sorted(found_in) == ["corpus/01-tinkers-lullaby.musicxml",
                               "corpus/02-crossing-at-dunmere.musicxml",
                               "millstream-boats.musicxml", "pierside-lamps.musicxml"],
          "the turn occurs in the two songs and in corpus pieces 01 and 02 only")

    print("\nLongest run of hook intervals shared with each other piece:")
    _, hook_ivs = intervals(a_rows)
    for name, s in sorted(scores.items()):
        if name == "pierside-lamps.musicxml":
            continue
        _, ivs = intervals(notes_of(s.parts[0], -1, 10_000))
        run = longest_common_run(hook_ivs, ivs)
        print(f"    {name}: {run} intervals ({run + 1} notes)")
        if name.startswith("corpus/") or name.startswith("unrelated"):
            check(run <= 3, f"{name} shares at most four consecutive notes with the hook")
    for name in ("corpus/01-tinkers-lullaby.musicxml", "corpus/02-crossing-at-dunmere.musicxml"):
        _, ivs = intervals(notes_of(scores[name].parts[0], -1, 10_000))
        shared = {tuple(ivs[j:j + 3]) for j in range(len(ivs) - 2)} & {
            tuple(hook_ivs[i:i + 3]) for i in range(len(hook_ivs) - 2)}
        check(shared == {tuple(turn)}, f"{name}: the four notes it shares with the hook are "
              "the turn, and nothing else")

    print("\nOutside the hook (Pierside Lamps bars 0-8 and 17-24, Millstream Boats 1-16 and 25-32):")
    a_free = [notes_of(a_voice, 0, 8), notes_of(a_voice, 17, 24)]
    b_free = [notes_of(b_voice, 1, 16), notes_of(b_voice, 25, 32)]
    b_hook_ivs = intervals(b_rows)[1]

    def longest(segments, other):
        return max(longest_common_run(intervals(seg)[1], other) for seg in segments)

    check(longest(a_free, hook_ivs) <= 2 and longest(a_free, b_hook_ivs) <= 2,
          "Pierside Lamps outside bars 9-16 shares no four consecutive notes with either hook")
    check(longest(b_free, hook_ivs) <= 2 and longest(b_free, b_hook_ivs) <= 2,
          "Millstream Boats outside bars 17-24 shares no four consecutive notes with either hook")
    run = max(longest(b_free, intervals(seg)[1]) for seg in a_free)
    check(run <= 2, f"outside the hook the two songs share no four consecutive notes, at any "
          f"transposition (longest shared run: {run} intervals)")

    def profile(segments, tonic_scale):
        ivs = [abs(x) for seg in segments for x in intervals(seg)[1]]
        tones = [r for seg in segments for r in seg if not r[6]]
        return dict(
            intervals=len(ivs),
            repeated=sum(1 for x in ivs if x == 0),
            steps=sum(1 for x in ivs if 1 <= x <= 2),
            leaps=sum(1 for x in ivs if x >= 3),
            dotted_on_beat=sum(1 for r in tones if r[1].denominator == 1
                               and r[2] in (Fr(3, 2), Fr(3, 4))),
            syncopated=sum(1 for r in tones if r[1].denominator != 1
                           and r[1] + r[2] > int(r[1]) + 1),
            chromatic=sorted({r[4] for r in tones if r[3] % 12 not in tonic_scale}),
        )

    major = [0, 2, 4, 5, 7, 9, 11]
    pa = profile(a_free, {(7 + x) % 12 for x in major})
    pb = profile(b_free, {(10 + x) % 12 for x in major})
    print(f"    Pierside Lamps: {pa}")
    print(f"    Millstream Boats:    {pb}")
    check((pa["intervals"], pa["repeated"], pa["leaps"], pa["steps"]) == (52, 18, 27, 7),
          "Pierside Lamps: of 52 intervals, 18 repeated notes, 27 leaps, 7 steps")
    check((pb["intervals"], pb["repeated"], pb["steps"]) == (84, 0, 51),
          "Millstream Boats: of 84 intervals, 51 steps, no repeated note")
    check(pa["syncopated"] == 0 and pa["dotted_on_beat"] == 16,
          "Pierside Lamps: 16 dotted notes on the beat, no note held across a beat")
    check(pb["dotted_on_beat"] == 0 and pb["syncopated"] == 17,
          "Millstream Boats: no dotted note on the beat, 17 notes held across a beat")
    check(pa["chromatic"] == [] and pb["chromatic"] == ["B3", "C#4", "E4", "F#3"],
          "only Millstream Boats has notes outside the key: F#3, C#4, B3, E4")
    b_all = [r[3] for r in notes_of(b_voice, 1, 32) if not r[6]]
    check((min(b_all), max(b_all)) == (54, 70), "Millstream Boats' voice runs F#3-Bb4")

    print("\nMIDI files, read with mido (and parsed by music21):")
    for slug, score in (("pierside-lamps", a), ("millstream-boats", b)):
        f = path(f"{slug}.mid")
        result = midi_summary(f)
        check(result is not None, f"{slug}.mid: no overlapping notes of one pitch")
        if result is None:
            continue
        mid, tracks = result
        converter.parse(f)
        check(mid.type == 1, f"{slug}.mid is format 1")
        names = [t[0] for t in tracks]
        check(names[1:] == [p.partName for p in whole_parts(score)],
              f"{slug}.mid has a conductor track and one named track per part")
        metas = {m.type for t in tracks for _, m in t[3]}
        check({"set_tempo", "time_signature", "key_signature"} <= metas,
              f"{slug}.mid has tempo, time signature and key signature")
        starts = bar_starts_of(score.parts[0])
        for (name, notes, lyrics, _), part in zip(tracks[1:], whole_parts(score)):
            from_xml = xml_timeline(part, starts, sounding=True)
            # Grace notes are in the MIDI (a 32nd before the beat) but not in from_xml; the
            # note before a grace note is a 32nd shorter in the MIDI.
            midi_main = [(o, q, p) for o, q, p, _ in notes if q != Fr(1, 8)]
            close = len(midi_main) == len(from_xml) and all(
                x[0] == y[0] and x[2] == y[2] and abs(x[1] - y[1]) <= Fr(1, 8)
                for x, y in zip(midi_main, from_xml))
            check(close, f"{slug}.mid track '{name}' has the MusicXML's notes at concert pitch")
            if name == "Voice":
                sung = [n for n in part.stripTies().recurse().notes
                        if isinstance(n, m21note.Note) and n.lyric]
                check(len(lyrics) == len(sung) and all(n[3] for n in notes if q_ok(n)),
                      f"{slug}.mid: a lyric event on each of the {len(sung)} sung notes")
    return 1 if FAILURES else 0


def q_ok(n):
    return n[1] != Fr(1, 8)


if __name__ == "__main__":
    code = main()
    print("\n" + ("all checks passed" if code == 0 else f"{len(FAILURES)} checks FAILED"))
    sys.exit(code)

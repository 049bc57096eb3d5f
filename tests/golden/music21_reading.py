#!/usr/bin/env python3
"""Write music21's reading of every fixture in tests/fixtures as tests/golden/<file>.json.

music21 is the external reference that collatio's own MusicXML/MIDI readers are tested
against. Regenerate (from the repository root):

    python3 -m venv .venv && .venv/bin/pip install music21==10.5.1 mido==1.3.3
    .venv/bin/python tests/golden/music21_reading.py

Output format (one file per fixture):

    {
      "generator": "tests/golden/music21_reading.py",
      "music21_version": "10.5.1",
      "file": "ties_chords.musicxml",
      "kind": "musicxml" | "midi",
      "parts": [
        {"index": 0, "id": "P1", "name": "Flute",
         "voices": ["1", "2"],                      # only when music21 shows >1 voice
         "notes": [{"midi": 72, "onset": 0.0, "duration": 1.5, "bar": "1"}, ...]}
      ],
      "notes_on_reading": "..."                       # only when there is something to say
    }

Rules:
  * one entry per sounding pitch: chord members are expanded;
  * tied notes are merged (see TIES below); grace notes, rests, chord symbols
    (<harmony>) and unpitched/percussion notes are left out;
  * MusicXML pitches are concert (sounding) pitch: Score.toSoundingPitch();
  * onset = offset in quarter notes from the very start of the score
    (getOffsetInHierarchy(score)); a pickup's first note is at 0.0;
    duration in quarter notes; both as floats;
  * bar = measureNumberWithSuffix() of the containing Measure, as a string ("0", "2a");
  * notes are sorted by (onset, midi, duration);
  * repeats are NOT unfolded (written order, music21's default);
  * MIDI is parsed with converter.parse(path, quantizePost=False) so onsets stay
    exact; music21 makes one Part per track that has notes, in track order, so the
    parts map one-to-one onto those tracks; part "id" is "track<N>" with N the 0-based
    index of the MTrk chunk in the file (music21's own Part ids are Python object ids);
  * PartStaff objects (music21 splits a multi-staff <part> into one PartStaff per staff)
    are merged back into one part per <score-part>, keyed by the MusicXML part id;
  * score-timewise files: music21 10.5.1 refuses them, so the script converts the
    document to score-partwise (the standard timewise->partwise reshuffle, nothing
    else) and lets music21 read that. This is recorded in "notes_on_reading".

TIES: music21's Stream.stripTies() mis-merges a tie that starts on ONE member of a
chord (it glued a later single note onto the whole chord, see ties_chords.musicxml), so
the script merges ties itself, per pitch, from the tie types music21 read on every note
and chord member: a note whose tie is "stop"/"continue" extends the still-open note of
the same MIDI pitch in the same music21 part if that note ends exactly where this one
starts. The result is then compared with stripTies(); any difference is written into
"notes_on_reading" so nothing is hidden.
"""

from __future__ import annotations

import copy
import json
import pathlib
import re
import sys
import tempfile
import xml.etree.ElementTree as ET
from fractions import Fraction

import music21
from music21 import chord, converter, harmony, note, stream
from music21.midi import MidiFile as M21MidiFile

ROOT = pathlib.Path(__file__).resolve().parents[2]
FIXTURES = ROOT / "tests" / "fixtures"
GOLDEN = ROOT / "tests" / "golden"
GENERATOR = "tests/golden/music21_reading.py"

MUSICXML_SUFFIXES = {".musicxml", ".xml", ".mxl"}
MIDI_SUFFIXES = {".mid", ".midi"}
EPS = 1e-9


# --------------------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------------------
def timewise_to_partwise(root: ET.Element) -> ET.Element:
    """Standard timewise -> partwise reshuffle: every <measure> with its attributes is
    repeated inside each <part>, holding that part's music for the measure."""
    pw = ET.Element("score-partwise", root.attrib)
    measures = [c for c in root if c.tag == "measure"]
    part_ids: list[str] = []
    for child in root:
        if child.tag == "measure":
            continue
        pw.append(copy.deepcopy(child))  # work, identification, defaults, part-list, ...
    pl = root.find("part-list")
    if pl is not None:
        part_ids = [sp.get("id") for sp in pl.iter("score-part")]
    for pid in part_ids:
        part_el = ET.SubElement(pw, "part", {"id": pid})
        for m in measures:
            m_el = ET.SubElement(part_el, "measure", m.attrib)
            for p in m.findall("part"):
                if p.get("id") == pid:
                    for music_data in p:
                        m_el.append(copy.deepcopy(music_data))
    return pw


def xml_root_tag(path: pathlib.Path) -> str | None:
    if path.suffix == ".mxl":
        return None
    return ET.parse(path).getroot().tag


def music21_part_key(p: stream.Part, index: int) -> str:
    """MusicXML part id of a music21 Part/PartStaff."""
    inst = p.getInstrument(returnDefault=False)
    if inst is not None and inst.partId:
        return str(inst.partId)
    pid = str(p.id)
    m = re.match(r"^(.*)-Staff\d+$", pid)
    if m:
        return m.group(1)
    return f"P{index + 1}"


def pitched_members(el):
    """Yield (pitch, tie-type-or-None) for each sounding pitched member of a
    Note/Chord, skipping unpitched members."""
    if isinstance(el, chord.Chord):
        for member in el.notes:
            if isinstance(member, note.Unpitched) or not hasattr(member, "pitch"):
                continue
            yield member.pitch, (member.tie.type if member.tie is not None else None)
    elif isinstance(el, note.Note):
        yield el.pitch, (el.tie.type if el.tie is not None else None)


def collect_events(score: stream.Score, part: stream.Stream, counters: dict):
    """Raw per-pitch events of one music21 part (no tie merging)."""
    events = []
    voices = set()
    for el in part.recurse().notes:
        if isinstance(el, harmony.Harmony):  # <harmony> chord symbols are not notes
            counters["chord_symbols"] += 1
            continue
        if el.duration.isGrace:
            counters["grace"] += 1
            continue
        if isinstance(el, note.Unpitched):
            counters["unpitched"] += 1
            continue
        if isinstance(el, chord.Chord) and not any(True for _ in pitched_members(el)):
            counters["unpitched"] += 1
            continue
        site = el.activeSite
        if isinstance(site, stream.Voice):
            if isinstance(site.id, str):  # MusicXML: the <voice> value
                voices.add(site.id)
            else:  # music21-made voices (MIDI): id is a Python object id; use position
                container = site.activeSite
                pos = list(container.voices).index(site) + 1 if container is not None else 1
                voices.add(str(pos))
        measure = el.getContextByClass(stream.Measure)
        bar = measure.measureNumberWithSuffix() if measure is not None else ""
        onset = Fraction(el.getOffsetInHierarchy(score))
        dur = Fraction(el.quarterLength)
        for p, tie_type in pitched_members(el):
            if p.microtone is not None and p.microtone.cents != 0:
                raise SystemExit(f"microtonal pitch {p} not supported by this golden format")
            events.append({"midi": int(p.midi), "onset": onset, "duration": dur,
                           "bar": str(bar), "tie": tie_type})
    return events, voices


def merge_ties(events):
    """Per-pitch tie merge over music21's tie types (see module docstring)."""
    events = sorted(events, key=lambda e: (e["onset"], e["midi"], e["duration"]))
    out, open_by_pitch = [], {}
    for e in events:
        t = e["tie"]
        prev = open_by_pitch.get(e["midi"])
        if t in ("stop", "continue") and prev is not None \
                and prev["onset"] + prev["duration"] == e["onset"]:
            prev["duration"] += e["duration"]
            if t == "stop":
                del open_by_pitch[e["midi"]]
            continue
        new = dict(e)
        out.append(new)
        if t in ("start", "continue"):
            open_by_pitch[e["midi"]] = new
        else:
            open_by_pitch.pop(e["midi"], None)
    return out


def finish(events):
    rows = [{"midi": e["midi"], "onset": float(e["onset"]), "duration": float(e["duration"]),
             "bar": e["bar"]} for e in events]
    rows.sort(key=lambda r: (r["onset"], r["midi"], r["duration"]))
    return rows


def same_rows(a, b) -> bool:
    if len(a) != len(b):
        return False
    for x, y in zip(a, b):
        if x["midi"] != y["midi"] or x["bar"] != y["bar"] \
                or abs(x["onset"] - y["onset"]) > EPS or abs(x["duration"] - y["duration"]) > EPS:
            return False
    return True


def fmt(r) -> str:
    return f"midi {r['midi']} at {r['onset']:g} for {r['duration']:g} (bar {r['bar']})"


def describe_difference(ours, theirs) -> str:
    key = lambda r: (r["midi"], round(r["onset"], 9), round(r["duration"], 9), r["bar"])  # noqa: E731
    a, b = {key(r): r for r in ours}, {key(r): r for r in theirs}
    only_ours = [fmt(a[k]) for k in sorted(set(a) - set(b))]
    only_theirs = [fmt(b[k]) for k in sorted(set(b) - set(a))]
    return ("music21's Stream.stripTies() disagrees with the per-pitch merge of the ties "
            "music21 itself read on each note and chord member (stripTies follows ties "
            "between whole chords or single notes, not ties on single chord members). "
            f"Golden has [{'; '.join(only_ours)}]; stripTies() gave "
            f"[{'; '.join(only_theirs)}] instead.")


# --------------------------------------------------------------------------------------
# MusicXML
# --------------------------------------------------------------------------------------
def read_musicxml(path: pathlib.Path):
    notes_on_reading = []
    tag = xml_root_tag(path)
    if tag == "score-timewise":
        pw = timewise_to_partwise(ET.parse(path).getroot())
        with tempfile.TemporaryDirectory() as td:
            tmp = pathlib.Path(td) / (path.stem + ".partwise.musicxml")
            ET.ElementTree(pw).write(tmp, encoding="UTF-8", xml_declaration=True)
            score = converter.parse(tmp, forceSource=True)
        notes_on_reading.append(
            "music21 10.5.1 cannot read <score-timewise> (MusicXMLImportException: 'Cannot "
            "parse MusicXML files not in score-partwise'); the generator converted the "
            "document to <score-partwise> (each <measure> repeated inside each <part>, "
            "nothing else changed) and this is music21's reading of that conversion.")
    else:
        score = converter.parse(path, forceSource=True)

    sounding = score.toSoundingPitch(inPlace=False)
    stripped = sounding.stripTies(inPlace=False)

    counters = {"chord_symbols": 0, "grace": 0, "unpitched": 0}
    groups: dict[str, dict] = {}
    order: list[str] = []
    m21_parts = list(sounding.parts)
    strip_parts = list(stripped.parts)
    assert len(m21_parts) == len(strip_parts)
    for i, (p, sp) in enumerate(zip(m21_parts, strip_parts)):
        key = music21_part_key(p, i)
        ev, voices = collect_events(sounding, p, counters)
        merged = merge_ties(ev)
        sev, _ = collect_events(stripped, sp, {"chord_symbols": 0, "grace": 0, "unpitched": 0})
        if key not in groups:
            groups[key] = {"name": p.partName, "events": [], "strip_events": [],
                           "voices": set(), "m21_ids": []}
            order.append(key)
        g = groups[key]
        g["events"] += merged
        g["strip_events"] += sev
        g["voices"] |= voices
        g["m21_ids"].append(str(p.id))

    parts = []
    for idx, key in enumerate(order):
        g = groups[key]
        rows = finish(g["events"])
        strip_rows = finish(g["strip_events"])
        if not same_rows(rows, strip_rows):
            notes_on_reading.append(f"Part {key}: " + describe_difference(rows, strip_rows))
        if len(g["m21_ids"]) > 1:
            notes_on_reading.append(
                f"music21 splits part {key} into {len(g['m21_ids'])} PartStaff objects "
                f"({', '.join(g['m21_ids'])}), one per staff; they are merged back into "
                f"one part here.")
        part = {"index": idx, "id": key, "name": g["name"]}
        if len(g["voices"]) > 1:
            part["voices"] = sorted(g["voices"], key=lambda v: (len(v), v))
        part["notes"] = rows
        parts.append(part)
    return parts, notes_on_reading, counters


# --------------------------------------------------------------------------------------
# MIDI
# --------------------------------------------------------------------------------------
def midi_track_facts(path: pathlib.Path):
    """Read the file with music21's own low-level MIDI reader: file format, indices of
    the tracks that have notes, and re-strikes (note-on while the same pitch/channel is
    still sounding)."""
    mf = M21MidiFile()
    mf.open(str(path))
    mf.read()
    mf.close()
    with_notes, restrikes, channels, track_channels = [], [], set(), {}
    for ti, tr in enumerate(mf.tracks):
        if tr.hasNotes():
            with_notes.append(ti)
        tick, sounding = 0, {}
        for ev in tr.events:
            if ev.isDeltaTime():
                tick += ev.time
                continue
            if ev.isNoteOn():
                channels.add(ev.channel)
                track_channels.setdefault(ti, set()).add(ev.channel)
                k = (ev.channel, ev.pitch)
                if sounding.get(k):
                    restrikes.append((ti, ev.channel, ev.pitch, tick))
                sounding[k] = sounding.get(k, 0) + 1
            elif ev.isNoteOff():
                k = (ev.channel, ev.pitch)
                if sounding.get(k):
                    sounding[k] -= 1
    return mf, with_notes, restrikes, channels, track_channels


def read_midi(path: pathlib.Path):
    notes_on_reading = []
    mf, with_notes, restrikes, channels, track_channels = midi_track_facts(path)
    score = converter.parse(path, quantizePost=False, forceSource=True)
    stripped = score.stripTies(inPlace=False)
    m21_parts = list(score.parts)
    if len(m21_parts) != len(with_notes):
        raise SystemExit(f"{path.name}: music21 made {len(m21_parts)} parts but "
                         f"{len(with_notes)} tracks have notes")
    counters = {"chord_symbols": 0, "grace": 0, "unpitched": 0}
    parts = []
    for idx, (p, sp, ti) in enumerate(zip(m21_parts, stripped.parts, with_notes)):
        before = counters["unpitched"]
        ev, voices = collect_events(score, p, counters)
        rows = finish(merge_ties(ev))
        strip_rows = finish(collect_events(stripped, sp, {"chord_symbols": 0, "grace": 0,
                                                          "unpitched": 0})[0])
        if not same_rows(rows, strip_rows):
            notes_on_reading.append(f"Track {ti}: " + describe_difference(rows, strip_rows))
        dropped = counters["unpitched"] - before
        if dropped:
            chans = ", ".join(str(c) for c in sorted(track_channels[ti]))
            notes_on_reading.append(
                f"Track {ti} ('{p.partName}', MIDI channel {chans}, 1-based) is read by "
                f"music21 as unpitched percussion: {dropped} note(s) excluded; the part is "
                f"kept, with fewer or no notes, so parts still line up with tracks.")
        part = {"index": idx, "id": f"track{ti}", "name": p.partName}
        if len(voices) > 1:
            part["voices"] = sorted(voices, key=lambda v: (len(v), v))
        part["notes"] = rows
        parts.append(part)
    if mf.format == 0 and len(channels) > 1:
        notes_on_reading.append(
            f"Format 0 file with {len(channels)} channels ({', '.join(str(c) for c in sorted(channels))}, "
            "1-based): music21 keeps the single track as ONE part; it does not split "
            "channels into parts (notes of different channels that start and end together "
            "even become one music21 Chord, expanded per pitch here).")
    if restrikes:
        where = "; ".join(f"track {t} channel {c} pitch {n} at tick {k}"
                          for t, c, n, k in restrikes)
        notes_on_reading.append(
            "Re-struck notes (note-on while the same pitch and channel is already sounding; "
            "channels 1-based: "
            f"{where}). music21 pairs every note-on with the nearest following note-off of "
            "the same pitch and channel, so all sounding instances end together at the "
            "first such note-off and the later note-off is ignored (first-in-first-out "
            "pairing would end the second strike at the second note-off; last-in-first-out "
            "would end the first strike there). The golden records music21's pairing; the "
            "MIDI standard does not define one.")
    return parts, notes_on_reading, counters


# --------------------------------------------------------------------------------------
def dump_json(doc) -> str:
    """Indented JSON with each note object kept on one line."""
    text = json.dumps(doc, indent=2, ensure_ascii=False)
    text = re.sub(r'\{\s*("midi": [^{}]*?)\s*\}',
                  lambda m: "{" + re.sub(r"\s*\n\s*", " ", m.group(1)) + "}", text)
    return text + "\n"


def main(argv: list[str]) -> int:
    if music21.__version__ != "10.5.1":
        print(f"warning: music21 {music21.__version__} (goldens were made with 10.5.1)",
              file=sys.stderr)
    fixtures = sorted(p for p in FIXTURES.iterdir()
                      if p.is_file() and p.suffix.lower() in MUSICXML_SUFFIXES | MIDI_SUFFIXES)
    if argv:
        fixtures = [p for p in fixtures if p.name in argv]
    for path in fixtures:
        if path.suffix.lower() in MIDI_SUFFIXES:
            kind = "midi"
            parts, nor, counters = read_midi(path)
        else:
            kind = "musicxml"
            parts, nor, counters = read_musicxml(path)
        doc = {
            "generator": GENERATOR,
            "music21_version": music21.__version__,
            "file": path.name,
            "kind": kind,
            "parts": parts,
        }
        if nor:
            doc["notes_on_reading"] = " ".join(nor)
        out = GOLDEN / f"{path.name}.json"
        out.write_text(dump_json(doc), encoding="utf-8")
        total = sum(len(p["notes"]) for p in parts)
        skipped = ", ".join(f"{v} {k}" for k, v in counters.items() if v)
        print(f"{out.relative_to(ROOT)}: {len(parts)} part(s), {total} notes"
              + (f" (left out: {skipped})" if skipped else "")
              + (" [notes_on_reading]" if nor else ""))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

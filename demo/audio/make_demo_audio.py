#!/usr/bin/env python3
"""Renders the demo songs' sung melody to audio: the Voice track of each demo MIDI file, played
by a General MIDI instrument through FluidSynth with the FluidR3_GM soundfont (Debian packages
fluidsynth and fluid-soundfont-gm), mixed to mono at 22,050 Hz and written as FLAC with SoX.

Run from the repository root: .venv/bin/python demo/audio/make_demo_audio.py
Needs: fluidsynth, fluid-soundfont-gm, sox (apt-get install fluidsynth fluid-soundfont-gm sox).
"""

import pathlib
import subprocess
import tempfile

import mido

ROOT = pathlib.Path(__file__).resolve().parents[2]
SOUNDFONT = "/usr/share/sounds/sf2/FluidR3_GM.sf2"
# (source MIDI, output, General MIDI program for the melody: 65 alto sax, 73 flute, 0-based)
RENDERS = [
    ("demo/pierside-lamps.mid", "demo/audio/pierside-lamps-melody.flac", 73),
    ("demo/millstream-boats.mid", "demo/audio/millstream-boats-melody.flac", 65),
]


def melody_only(src: pathlib.Path, program: int) -> mido.MidiFile:
    """The conductor track and the Voice track, with a program change for the voice."""
    midi = mido.MidiFile(src)
    out = mido.MidiFile(type=1, ticks_per_beat=midi.ticks_per_beat)
    out.tracks.append(midi.tracks[0])
    voice = next(t for t in midi.tracks if t.name == "Voice")
    channel = next(m.channel for m in voice if m.type == "note_on")
    track = mido.MidiTrack()
    track.append(mido.Message("program_change", program=program, channel=channel, time=0))
    track.extend(m for m in voice if m.type != "program_change")
    out.tracks.append(track)
    return out


def main():
    for src, dst, program in RENDERS:
        with tempfile.TemporaryDirectory() as tmp:
            mid = pathlib.Path(tmp) / "melody.mid"
            wav = pathlib.Path(tmp) / "melody.wav"
            melody_only(ROOT / src, program).save(mid)
            subprocess.run(["fluidsynth", "-ni", "-g", "0.8", "-r", "44100", "-F", str(wav),
                            SOUNDFONT, str(mid)], check=True, capture_output=True)
            subprocess.run(["sox", str(wav), "-c", "1", "-r", "22050", str(ROOT / dst)],
                           check=True)
        print("wrote", dst)


if __name__ == "__main__":
    main()

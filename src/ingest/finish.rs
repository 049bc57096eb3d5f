//! The step shared by all readers: turn ticks into beats and seconds, place notes in bars.

use super::{Problem, RawPiece};
use crate::timeline::{
    bar_index_at, Bar, ChordSymbol, Ornament, Piece, Provenance, Selection, TempoMap,
};
use crate::units::{Beats, MidiPitch, Seconds};

/// Completes a reader's output into a [`Piece`] (with an empty melody; selection follows).
pub(crate) fn finish(
    raw: RawPiece,
    provenance: Provenance,
    repeats_unfolded: bool,
) -> Result<Piece, Problem> {
    let resolution = raw.resolution.max(1);
    let tempo = TempoMap::new(resolution, raw.tempo);
    let per_quarter = f64::from(resolution);
    let bars: Vec<Bar> = raw
        .bars
        .into_iter()
        .enumerate()
        .map(|(index, b)| Bar {
            index,
            label: b.label,
            start_ticks: b.start_ticks,
            length_ticks: b.length_ticks,
            start: Beats(b.start_ticks as f64 / per_quarter),
            start_seconds: tempo.seconds_at(b.start_ticks),
            time_signature: b.time_signature,
            pickup: b.pickup,
            implicit: b.implicit,
            estimated: false,
        })
        .collect();

    let mut parts = raw.parts;
    for part in &mut parts {
        part.notes.sort_by(|a, b| {
            (a.onset_ticks, a.pitch.0)
                .partial_cmp(&(b.onset_ticks, b.pitch.0))
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        for note in &mut part.notes {
            let start = tempo.seconds_at(note.onset_ticks);
            let end = tempo.seconds_at(note.end_ticks());
            note.onset = Beats(note.onset_ticks as f64 / per_quarter);
            note.duration = Beats(note.duration_ticks as f64 / per_quarter);
            note.onset_seconds = start;
            note.duration_seconds = Seconds(end.0 - start.0);
            note.bar = bar_index_at(&bars, note.onset_ticks);
            let bar_start = bars.get(note.bar).map_or(0, |b| b.start_ticks);
            note.offset_in_bar = Beats((note.onset_ticks - bar_start) as f64 / per_quarter);
        }
    }

    let chord_symbols = raw
        .chord_symbols
        .into_iter()
        .map(|(ticks, part, text)| ChordSymbol {
            ticks,
            onset: Beats(ticks as f64 / per_quarter),
            bar: bar_index_at(&bars, ticks),
            part,
            text,
        })
        .collect();
    let ornaments = raw
        .ornaments
        .into_iter()
        .map(|(ticks, part, pitch, kind)| Ornament {
            kind,
            part,
            bar: bar_index_at(&bars, ticks),
            onset: Beats(ticks as f64 / per_quarter),
            pitch: MidiPitch(pitch),
        })
        .collect();

    let mut time_signatures = raw.time_signatures;
    time_signatures.sort_by_key(|t| t.ticks);
    time_signatures.dedup_by(|later, earlier| {
        later.ticks == earlier.ticks && {
            *earlier = *later;
            true
        }
    });
    let mut key_signatures = raw.key_signatures;
    key_signatures.sort_by_key(|k| k.ticks);

    Ok(Piece {
        provenance,
        title: raw.title,
        composer: raw.composer,
        resolution,
        parts,
        bars,
        tempo,
        time_signatures,
        key_signatures,
        chord_symbols,
        ornaments,
        repeats_unfolded,
        melody: Vec::new(),
        selection: Selection::whole_part(0, String::new()),
        candidates: Vec::new(),
        warnings: raw.warnings,
        chroma: raw.chroma,
        transcription: raw.transcription,
        unsure_spans: raw.unsure_spans,
    })
}

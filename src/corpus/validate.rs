//! Every field of an index checked on load, so that a file whose checksum was recomputed after
//! editing is refused as corrupt rather than trusted: figure length, postings (sorted, within
//! range, never empty) and each melody's notes, bars and key.

use super::melody::{MelodyEntry, StoredBar, StoredNote};

/// Highest pitch a stored note may have (MIDI note numbers run 0–127; recordings may be read a
/// little beyond).
const MAX_PITCH: f32 = 140.0;

/// Checks every field of an index: its figure length `ngram` against the one this build uses
/// (`expected`), its `melodies` and its `postings`; the first problem found is named.
pub fn validate(
    ngram: usize,
    expected: usize,
    melodies: &[MelodyEntry],
    postings: &[(u64, Vec<u32>)],
) -> Result<(), String> {
    let corrupt = |what: String| Err(what);
    if ngram != expected {
        return corrupt(format!("figure length {ngram}, expected {expected}"));
    }
    let entries = melodies;
    let melodies = entries.len();
    if u32::try_from(melodies).is_err() {
        return corrupt(format!(
            "{melodies} melodies, more than an index can number"
        ));
    }
    let mut previous: Option<u64> = None;
    for (figure, ids) in postings {
        if previous.is_some_and(|p| p >= *figure) {
            return corrupt(format!("figure {figure:#x} is out of order"));
        }
        previous = Some(*figure);
        if ids.is_empty() {
            return corrupt(format!("figure {figure:#x} lists no melodies"));
        }
        if ids.windows(2).any(|w| w[0] >= w[1]) {
            return corrupt(format!(
                "the melodies of figure {figure:#x} are out of order"
            ));
        }
        if let Some(&id) = ids.iter().find(|&&id| id as usize >= melodies) {
            return corrupt(format!(
                "figure {figure:#x} lists melody {id}, but the index holds {melodies}"
            ));
        }
    }
    for (k, melody) in entries.iter().enumerate() {
        melody_ok(melody).map_err(|e| format!("melody {k}: {e}"))?;
    }
    Ok(())
}

/// Checks one melody's path, key, bars and notes.
pub(crate) fn melody_ok(m: &MelodyEntry) -> Result<(), String> {
    if m.path.is_empty() {
        return Err("no path".into());
    }
    if let Some((fifths, _)) = m.key {
        if !(-7..=7).contains(&fifths) {
            return Err(format!("key signature of {fifths} fifths"));
        }
    }
    for (i, bar) in m.bars.iter().enumerate() {
        bar_ok(bar).map_err(|e| format!("bar {i}: {e}"))?;
    }
    for (i, note) in m.notes.iter().enumerate() {
        note_ok(note, m.bars.len()).map_err(|e| format!("note {i}: {e}"))?;
    }
    Ok(())
}

fn bar_ok(bar: &StoredBar) -> Result<(), String> {
    let (beats, beat_type) = bar.time_signature;
    if beats == 0 || beat_type == 0 {
        return Err(format!("time signature {beats}/{beat_type}"));
    }
    if !(bar.start.is_finite() && bar.start_seconds.is_finite()) {
        return Err("a start that is not a finite number".into());
    }
    if !(bar.length.is_finite() && bar.length >= 0.0) {
        return Err(format!("length {}", bar.length));
    }
    Ok(())
}

fn note_ok(note: &StoredNote, bars: usize) -> Result<(), String> {
    if !(note.pitch.is_finite() && (0.0..=MAX_PITCH).contains(&note.pitch)) {
        return Err(format!("pitch {}", note.pitch));
    }
    if ![note.onset, note.onset_seconds, note.offset_in_bar]
        .iter()
        .all(|v| v.is_finite())
    {
        return Err("an onset that is not a finite number".into());
    }
    if ![note.duration, note.duration_seconds]
        .iter()
        .all(|v| v.is_finite() && *v >= 0.0)
    {
        return Err("a duration that is not a finite, non-negative number".into());
    }
    if bars > 0 && note.bar as usize >= bars {
        return Err(format!("bar {}, but the melody has {bars}", note.bar));
    }
    Ok(())
}

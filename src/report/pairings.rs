//! Which lines were compared, in words: the pairing reported, the other pairings checked with
//! their figures, the candidate lines left unchecked, and a note when a work's most
//! melody-like lines are close (see [`crate::compare::pairing`]).

use crate::compare::pairing::{PairedLine, PairingCheck};
use crate::findings::Findings;
use crate::ingest::likeness::CLOSE;
use crate::timeline::Piece;

fn line(l: &PairedLine) -> String {
    match l.likeness {
        Some(x) => format!("{} (melody-likeness {x:.2})", l.label),
        None => l.label.clone(),
    }
}

fn figures(p: &PairingCheck) -> String {
    format!(
        "relatedness {:.2}, best score {}{}",
        p.relatedness.value,
        p.relatedness.best_score,
        if p.shares_passage {
            ", shares a passage"
        } else {
            ", no passage above the threshold"
        }
    )
}

/// One line per pairing: `A <line> × B <line>: figures`.
fn listing(pairings: &[PairingCheck], skip_chosen: bool) -> String {
    pairings
        .iter()
        .filter(|p| !(skip_chosen && p.chosen))
        .map(|p| {
            format!(
                "   A {} × B {}: {}{}\n",
                line(&p.a),
                line(&p.b),
                figures(p),
                if p.chosen { " (reported)" } else { "" }
            )
        })
        .collect()
}

/// Each pairing checked as one sentence, the one reported marked, for the exhibit.
pub fn sentences(pairings: &[PairingCheck]) -> Vec<String> {
    pairings
        .iter()
        .map(|p| {
            format!(
                "A {} with B {}: {}{}",
                line(&p.a),
                line(&p.b),
                figures(p),
                if p.chosen {
                    " (the pairing reported)"
                } else {
                    ""
                }
            )
        })
        .collect()
}

/// The pairings other than the one reported that also share a passage, each as
/// `A <line> × B <line>`: a tune that moves between parts (a verse in the voice, a hook in a
/// saxophone) shows here. Their passages are not reported: only the chosen pairing is compared
/// in full, and passages across parts are not joined.
pub fn also_sharing(pairings: &[PairingCheck]) -> Vec<String> {
    pairings
        .iter()
        .filter(|p| p.shares_passage && !p.chosen)
        .map(|p| format!("A {} × B {}", p.a.label, p.b.label))
        .collect()
}

/// A sentence saying which other pairings share a passage and that their passages are not in
/// the report, when any do.
pub fn elsewhere_note(pairings: &[PairingCheck]) -> Option<String> {
    let others = also_sharing(pairings);
    (!others.is_empty() && pairings.iter().any(|p| p.chosen)).then(|| {
        format!(
            "Other lines share a passage too, so the tune may move between parts: {}. Only the \
             pairing reported was compared in full; the passages in those lines are not in this \
             report and are not joined with it (compare a line alone with --select-a/--select-b).",
            others.join("; ")
        )
    })
}

/// The candidate lines of a work that no pairing checked (less melody-like than those paired),
/// each with its melody-likeness: `"A"` or `"B"` names the work's side in `pairings`.
pub fn lines_not_checked(piece: &Piece, pairings: &[PairingCheck], side: &str) -> Vec<String> {
    let checked = pairings
        .iter()
        .map(|p| if side == "A" { p.a.rank } else { p.b.rank })
        .max()
        .unwrap_or(1);
    unchecked(piece, checked)
}

/// Candidate lines of a work beyond those paired, named.
fn unchecked(piece: &Piece, checked: usize) -> Vec<String> {
    piece
        .candidates
        .iter()
        .skip(checked)
        .map(|c| format!("{} ({:.2})", c.label, c.likeness))
        .collect()
}

/// The lines compared and the other pairings checked, for the text report (empty when one
/// pairing of two single lines was all there was to check).
pub fn render(findings: &Findings) -> String {
    let pairings = &findings.pairings;
    let mut out = String::new();
    let checked_a = pairings.iter().map(|p| p.a.rank).max().unwrap_or(1);
    let checked_b = pairings.iter().map(|p| p.b.rank).max().unwrap_or(1);
    let rest_a = unchecked(&findings.a, checked_a);
    let rest_b = unchecked(&findings.b, checked_b);
    if pairings.len() > 1 && findings.passages.is_empty() {
        out.push_str(&format!(
            "\nLines compared: {} pairings of candidate melody lines (--melody-candidates); \
             none shares a passage, so the most melody-like line of each work is reported.\n",
            pairings.len()
        ));
    } else if pairings.len() > 1 {
        out.push_str(&format!(
            "\nLines compared: the strongest of {} pairings of candidate melody lines \
             (--melody-candidates); its E-values are multiplied by {} for the choice.\n",
            pairings.len(),
            pairings.len()
        ));
        out.push_str(" also checked:\n");
        out.push_str(&listing(pairings, true));
        if let Some(note) = elsewhere_note(pairings) {
            out.push_str(&format!(" {note}\n"));
        }
    }
    if !rest_a.is_empty() || !rest_b.is_empty() {
        out.push_str(&format!(
            " not checked (less melody-like; raise --melody-candidates or use --select-a/--select-b): {}\n",
            [("A", rest_a), ("B", rest_b)]
                .iter()
                .filter(|(_, r)| !r.is_empty())
                .map(|(tag, r)| format!("{tag}: {}", r.join(", ")))
                .collect::<Vec<_>>()
                .join("; ")
        ));
    }
    out.push_str(&close_notes(findings));
    out
}

/// Every pairing compared, for the "nothing shared" message.
pub fn render_nothing_shared(findings: &Findings) -> String {
    if findings.pairings.is_empty() {
        return String::new();
    }
    format!(
        "Compared (every pairing of candidate melody lines checked):\n{}",
        listing(&findings.pairings, false)
    )
}

/// A note for each work whose two most melody-like lines differ by less than [`CLOSE`].
pub fn close_notes(findings: &Findings) -> String {
    let mut out = String::new();
    for (tag, piece) in [("A", &findings.a), ("B", &findings.b)] {
        if let Some(note) = close_note(tag, piece) {
            out.push_str(&format!(" {note}\n"));
        }
    }
    out
}

/// "A: the most melody-like lines are close …", when they are.
pub fn close_note(tag: &str, piece: &Piece) -> Option<String> {
    let (first, second) = (piece.candidates.first()?, piece.candidates.get(1)?);
    if first.likeness - second.likeness >= CLOSE {
        return None;
    }
    Some(format!(
        "{tag}: the most melody-like lines are close ({} {:.2}, {} {:.2}); if the melody is \
         another line, name it with --select-{} (e.g. part=ID, staff=N, voice=V).",
        first.label,
        first.likeness,
        second.label,
        second.likeness,
        tag.to_lowercase()
    ))
}

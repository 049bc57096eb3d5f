//! Full-matrix alignment with traceback, run only on the rectangle of a reported alignment
//! (found by the linear-memory scan), so that memory stays proportional to the passage, not to
//! the pieces.

use super::scan::{Blocked, Hit};
use super::score::Scorer;
use super::{AlignParams, Step};

const NEG: i32 = i32::MIN / 4;

#[derive(Clone, Copy, PartialEq, Eq)]
enum State {
    H,
    E,
    F,
}

/// Recomputes the alignment of `hit` under transposition `t` and returns its steps from first
/// to last, with the score the traceback reproduces.
pub(crate) fn trace(
    scorer: &Scorer,
    params: &AlignParams,
    t: u8,
    blocked: &Blocked,
    hit: &Hit,
) -> (Vec<Step>, i32) {
    let (i0, j0) = hit.start;
    let (i1, j1) = hit.end;
    let rows = i1 - i0 + 1;
    let cols = j1 - j0 + 1;
    let width = cols + 1;
    let at = |r: usize, c: usize| r * width + c;
    let mut h = vec![0i32; (rows + 1) * width];
    let mut e = vec![NEG; (rows + 1) * width];
    let mut f = vec![NEG; (rows + 1) * width];
    let open = params.gap_open;
    let extend = params.gap_extend;
    let max_k = scorer.max_fragments;
    let mut best = (0i32, 0usize, 0usize);
    for r in 1..=rows {
        for c in 1..=cols {
            let (ai, bj) = (i0 + r - 1, j0 + c - 1);
            if blocked.contains(ai, bj) {
                continue;
            }
            e[at(r, c)] = (h[at(r, c - 1)] - open).max(e[at(r, c - 1)] - extend);
            f[at(r, c)] = (h[at(r - 1, c)] - open).max(f[at(r - 1, c)] - extend);
            let mut value = h[at(r - 1, c - 1)] + scorer.pair(ai, bj, t);
            value = value.max(e[at(r, c)]).max(f[at(r, c)]);
            for k in 2..=max_k.min(c) {
                if let Some(s) = scorer.fragment(ai, bj, k, t) {
                    value = value.max(h[at(r - 1, c - k)] + s);
                }
            }
            for k in 2..=max_k.min(r) {
                if let Some(s) = scorer.consolidate(ai, bj, k, t) {
                    value = value.max(h[at(r - k, c - 1)] + s);
                }
            }
            let value = value.max(0);
            h[at(r, c)] = value;
            if value > best.0 {
                best = (value, r, c);
            }
        }
    }
    // Trace from the scan's end cell when it reproduces the score, else from the best cell.
    let (mut r, mut c) = if h[at(rows, cols)] == hit.score {
        (rows, cols)
    } else {
        (best.1, best.2)
    };
    let score = h[at(r, c)];
    let mut steps = Vec::new();
    let mut state = State::H;
    while r > 0 && c > 0 {
        let (ai, bj) = (i0 + r - 1, j0 + c - 1);
        match state {
            State::H => {
                let value = h[at(r, c)];
                if value <= 0 {
                    break;
                }
                if value == h[at(r - 1, c - 1)] + scorer.pair(ai, bj, t) {
                    steps.push(Step::Pair { a: ai, b: bj });
                    r -= 1;
                    c -= 1;
                    if h[at(r, c)] == 0 {
                        break;
                    }
                    continue;
                }
                if value == e[at(r, c)] {
                    state = State::E;
                    continue;
                }
                if value == f[at(r, c)] {
                    state = State::F;
                    continue;
                }
                let fragment = (2..=max_k.min(c)).find(|&k| {
                    scorer
                        .fragment(ai, bj, k, t)
                        .is_some_and(|s| value == h[at(r - 1, c - k)] + s)
                });
                if let Some(k) = fragment {
                    steps.push(Step::Fragmentation {
                        a: ai,
                        b_first: bj + 1 - k,
                        b_last: bj,
                    });
                    r -= 1;
                    c -= k;
                    if h[at(r, c)] == 0 {
                        break;
                    }
                    continue;
                }
                let consolidation = (2..=max_k.min(r)).find(|&k| {
                    scorer
                        .consolidate(ai, bj, k, t)
                        .is_some_and(|s| value == h[at(r - k, c - 1)] + s)
                });
                if let Some(k) = consolidation {
                    steps.push(Step::Consolidation {
                        a_first: ai + 1 - k,
                        a_last: ai,
                        b: bj,
                    });
                    r -= k;
                    c -= 1;
                    if h[at(r, c)] == 0 {
                        break;
                    }
                    continue;
                }
                break;
            }
            State::E => {
                steps.push(Step::OnlyB { b: bj });
                let value = e[at(r, c)];
                state = if value == h[at(r, c - 1)] - open {
                    State::H
                } else {
                    State::E
                };
                c -= 1;
            }
            State::F => {
                steps.push(Step::OnlyA { a: ai });
                let value = f[at(r, c)];
                state = if value == h[at(r - 1, c)] - open {
                    State::H
                } else {
                    State::F
                };
                r -= 1;
            }
        }
    }
    steps.reverse();
    (steps, score)
}

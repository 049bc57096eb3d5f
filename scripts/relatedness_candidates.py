#!/usr/bin/env python3
"""Candidates for unlabelled relatives of the curated tune families (docs/relatedness-data.md,
"Second pass"): background tunes that may be the same tune as a family, and background tunes
that may be variants of one another. It only PROPOSES: every candidate is judged by hand and
the decision recorded in scripts/relatedness_families.json ("additions", "new_families",
"rejected_additions"); scripts/make_relatedness_sets.py reads only that file.

Two independent ways of proposing, so that the labels do not lean on one similarity method:
  title     fuzzy title matching between any T: line of a family member and any T: line of a
            background tune: equal after spelling normalisation (doubled letters, possessive
            s, Saint/St, Mac/Mc), a difflib ratio >= 0.8, or every content word of one title
            (at least two) inside the other ("St. Patrick's Day" / "... in the Morning").
  baseline  the textbook Smith-Waterman of scripts/relatedness_baseline.py (same code, same
            parameters): for every family member, its top 5 background tunes, plus every
            background tune scoring >= 40% of the member's self-score (chorales: 60%, as
            their members are short and 40% lets in thousands of long tunes by chance).
Background pairs (new families; dance books, miscFolk and Bach chorales only: the Essen songs
are another idiom and pairs among background tunes never enter the measures): pairs with
similar titles scoring >= 25% of the shorter tune's self-score, and any pair scoring >= 50%
of it.

Output: target/relatedness/candidates/{families,pairs}.txt (incipits as pitch names and as
scale degrees relative to the final note, as in make_relatedness_sets.py --candidates) and
candidates.json.

Run: .venv/bin/python scripts/relatedness_candidates.py [--jobs 2] [--bars 4]
"""

import argparse
import difflib
import json
import multiprocessing as mp
import re
import sys
import time
from collections import defaultdict

sys.path.insert(0, str(__import__("pathlib").Path(__file__).resolve().parent))

import make_relatedness_sets as mrs  # noqa: E402
import relatedness_baseline as rb  # noqa: E402

OUT = mrs.OUT / "candidates"
TOP = 5
# dance: 40% of the member's self-score. Chorale members are short (median 48 notes) and a
# local score grows with the target's length, so 40% lets in some 12,500 long dance tunes and
# Essen songs by chance; 60% keeps above that noise.
SELF_SHARE = {"dance": 0.40, "chorales": 0.60}
PAIR_TITLE_SHARE = 0.25
PAIR_SHARE = 0.50
PAIR_COLLECTIONS = set(mrs.DANCE) | {"miscFolk", mrs.CHORALES}
STOP = {"the", "a", "an", "of", "and", "in", "to", "my", "o", "on", "for", "with", "at", "is",
        "mr", "mrs", "miss", "lady", "lord", "sir", "new", "old", "his", "her", "der", "die",
        "das", "und", "ein", "eine", "ich", "du", "wir", "es", "mein", "dich", "mich", "den"}


def spell(title):
    """norm_title plus spelling normalisation: possessive s, doubled letters, St, Mac."""
    words = []
    for w in mrs.norm_title(title).split():
        if w in ("saint", "sainte"):
            w = "st"
        w = re.sub(r"^mc(?=[a-z])", "mac", w)
        if len(w) > 3 and w.endswith("s") and not w.endswith("ss"):
            w = w[:-1]
        w = re.sub(r"(.)\1+", r"\1", w)
        words.append(w)
    return " ".join(words)


def titles_of(rec):
    out = set()
    for t in mrs.record_titles(rec):
        n = mrs.norm_title(t)
        if n and n not in mrs.GENERIC_TITLES:
            out.add(spell(t))
    return out - {""}


def title_match(a, b):
    """Why two spelled titles match, or None."""
    if a == b:
        return "same title after spelling normalisation"
    if min(len(a), len(b)) >= 6 and 2 * min(len(a), len(b)) / (len(a) + len(b)) >= 0.8:
        sm = difflib.SequenceMatcher(None, a, b)
        if sm.real_quick_ratio() >= 0.8 and sm.quick_ratio() >= 0.8 and sm.ratio() >= 0.8:
            return "similar spelling"
    wa = {w for w in a.split() if w not in STOP}
    wb = {w for w in b.split() if w not in STOP}
    small, big = (wa, wb) if len(wa) <= len(wb) else (wb, wa)
    if len(small) >= 2 and small <= big:
        return "one title inside the other"
    return None


_W = {}


def _init(values, seqs):
    _W["engine"] = rb.ParasailEngine(values)
    _W["seqs"] = seqs


def _row(task):
    key, targets = task
    seqs = _W["seqs"]
    return key, _W["engine"].scores(seqs[key], [seqs[t] for t in targets])


def show(rec, bars, extra=""):
    return (f"    {rec['source']}  [{rec['title']}]  {rec['meter'][0]}/{rec['meter'][1]}  "
            f"{len([1 for p, _ in rec['events'] if p is not None])} notes{extra}\n"
            f"        {mrs.incipit(rec, bars)}\n        {mrs.degree_incipit(rec, bars)}\n")


def main(argv):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--bars", type=int, default=4)
    args = ap.parse_args(argv)
    t0 = time.time()
    records, _ = mrs.dedupe(mrs.load_corpus(args.jobs, False))
    curated = json.loads(mrs.CURATED.read_text(encoding="utf-8"))
    sets, _ = mrs.build(records, curated)
    by_source = {r["source"]: r for r in records}
    background = [by_source[m["source"]] for m in sets["background"]]
    seqs = {r["source"]: rb.intervals(r) for r in records}
    values = sorted({v for s in seqs.values() for v in s} | rb.HAND_VALUES)
    bg_src = [r["source"] for r in background]
    bg_titles = {r["source"]: titles_of(r) for r in background}

    # Family members against the whole background.
    families = []
    for set_name in ("dance", "chorales"):
        fams = defaultdict(list)
        for m in sets[set_name]:
            fams[m["family"]].append(by_source[m["source"]])
        families.extend((set_name, name, recs) for name, recs in fams.items())
    members = [r["source"] for _, _, recs in families for r in recs]
    pair_pool = [s for s in bg_src if by_source[s]["collection"] in PAIR_COLLECTIONS]
    tasks = [(s, bg_src) for s in members]
    # Background pairs: each tune of the pair pool against the later ones.
    tasks += [(s, pair_pool[k + 1:]) for k, s in enumerate(pair_pool[:-1])]
    print(f"{sum(len(t[1]) for t in tasks):,} alignments...", file=sys.stderr, flush=True)
    rows = {}
    ctx = mp.get_context("fork")
    with ctx.Pool(args.jobs, initializer=_init, initargs=(values, seqs)) as pool:
        for done, (key, scores) in enumerate(pool.imap_unordered(_row, tasks, chunksize=4), 1):
            rows[key] = scores
            if done % 500 == 0:
                print(f"  {done}/{len(tasks)} rows, {time.time() - t0:.0f} s", file=sys.stderr,
                      flush=True)
    member_rows = {s: rows[s] for s in members}

    out_fams = []
    text = []
    n_cand = 0
    for set_name, name, recs in families:
        cands = defaultdict(lambda: {"why": set(), "scores": {}})
        ftitles = {t: r["source"] for r in recs for t in titles_of(r)}
        for src in bg_src:
            for bt in bg_titles[src]:
                for ft in ftitles:
                    why = title_match(ft, bt)
                    if why:
                        cands[src]["why"].add(f"title: {why} ({ft!r} / {bt!r})")
        for r in recs:
            scores = member_rows[r["source"]]
            selfs = 2 * len(seqs[r["source"]])
            order = sorted(range(len(bg_src)), key=lambda k: (-scores[k], bg_src[k]))
            for rank, k in enumerate(order):
                if rank < TOP:
                    cands[bg_src[k]]["why"].add(f"baseline: top {TOP} of {r['source']}")
                elif scores[k] >= SELF_SHARE[set_name] * selfs:
                    cands[bg_src[k]]["why"].add(
                        f"baseline: >= {SELF_SHARE[set_name]:.0%} of self-score of "
                        f"{r['source']}")
                else:
                    break
        for src in cands:
            k = bg_src.index(src)
            for r in recs:
                s = member_rows[r["source"]][k]
                cands[src]["scores"][r["source"]] = [s, round(s / (2 * len(seqs[r["source"]])),
                                                              2)]
        best = {s: max(v[1] for v in c["scores"].values()) for s, c in cands.items()}
        ordered = sorted(cands, key=lambda s: (-best[s], s))
        n_cand += len(ordered)
        text.append(f"== [{set_name}] {name} ({len(recs)} members, {len(ordered)} candidates)\n")
        for r in recs:
            text.append(show(r, args.bars, f"  self {2 * len(seqs[r['source']])}"))
        text.append("  candidates:\n")
        entries = []
        for src in ordered:
            c = cands[src]
            kinds = sorted({w.split(":")[0] for w in c["why"]})
            sc = ", ".join(f"{v[0]} ({v[1]:.0%})" for v in c["scores"].values())
            text.append(show(by_source[src], args.bars,
                             f"  [{'+'.join(kinds)}] scores {sc}"))
            titlewhy = sorted(w for w in c["why"] if w.startswith("title"))
            if titlewhy:
                text.append(f"        {titlewhy[0]}\n")
            entries.append({"source": src, "title": by_source[src]["title"],
                            "found_by": kinds, "why": sorted(c["why"]),
                            "scores": c["scores"], "best_share": best[src]})
        out_fams.append({"set": set_name, "family": name, "members": [r["source"] for r in recs],
                         "candidates": entries})

    # Background pairs.
    pairs = []
    for k, a in enumerate(pair_pool[:-1]):
        scores = rows[a]
        for j, s in enumerate(scores):
            b = pair_pool[k + 1 + j]
            ra, rb_ = by_source[a], by_source[b]
            if (ra["collection"] == mrs.CHORALES) != (rb_["collection"] == mrs.CHORALES):
                continue
            share = s / (2 * min(len(seqs[a]), len(seqs[b])) or 1)
            if share < PAIR_TITLE_SHARE:
                continue
            why = None
            for ta in bg_titles[a]:
                for tb in bg_titles[b]:
                    why = why or title_match(ta, tb)
            if share >= PAIR_SHARE or (why and share >= PAIR_TITLE_SHARE):
                pairs.append({"sources": [a, b], "titles": [ra["title"], rb_["title"]],
                              "score": s, "share": round(share, 2),
                              "found_by": (["title"] if why else []) +
                                          (["baseline"] if share >= PAIR_SHARE else []),
                              "title_match": why})
    pairs.sort(key=lambda p: (-p["share"], p["sources"]))
    ptext = []
    for p in pairs:
        ptext.append(f"== {p['share']:.0%} score {p['score']} [{'+'.join(p['found_by'])}] "
                     f"{p['title_match'] or ''}\n")
        for s in p["sources"]:
            ptext.append(show(by_source[s], args.bars))

    OUT.mkdir(parents=True, exist_ok=True)
    (OUT / "families.txt").write_text("".join(text), encoding="utf-8")
    (OUT / "pairs.txt").write_text("".join(ptext), encoding="utf-8")
    (OUT / "candidates.json").write_text(json.dumps(
        {"families": out_fams, "pairs": pairs}, indent=1) + "\n", encoding="utf-8")
    n_title = sum("title" in c["found_by"] for f in out_fams for c in f["candidates"])
    n_base = sum("baseline" in c["found_by"] for f in out_fams for c in f["candidates"])
    print(f"{n_cand} (family, background tune) candidates ({n_title} by title, {n_base} by "
          f"baseline); {len(pairs)} background pairs; {time.time() - t0:.0f} s; "
          f"written to {OUT}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

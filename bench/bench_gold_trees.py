"""Benchmark: extraction from spaCy's parse against keys read off gold dependency trees.

    python bench/bench_gold_trees.py                    # held-out EWT + GUM documents (bundled class)
    python bench/bench_gold_trees.py --all-classes      # ... including GUM's noncommercial genres
    python bench/bench_gold_trees.py --conllu tests/data/ewt_sample.conllu
    python bench/bench_gold_trees.py --top 25 --examples

For every gold sentence: the gold keys come from the tree through
:func:`hingeword.conllu.sentence_attachments` (the same mapping a reference built
from CoNLL-U uses); the predicted keys from parsing the sentence's ``# text`` with
hingeword's pipeline (:func:`hingeword.parse.load_model`, ``nlp.pipe``) and
:func:`hingeword.extract.extract_doc`. Per sentence both are multisets of
(governor lemma, preposition) — and, separately, of (governor lemma, POS,
preposition); precision, recall and F1 are summed over sentences, overall and per
kind (preposition, particle, direct object, multiword; a matched pair counts for
the gold kind, an unmatched key for its own side's kind).

Errors are sorted by type by looking at where the preposition (or the object) is:
a gold key and a predicted key on the same preposition word with different
governors are "attached to X instead of Y"; on the same governor word with
different lemmas, a lemma difference; the rest are keys the other side does not
have at all.

Held-out documents only (``scripts/native_sources.py``): none of them is counted
in the bundled reference. Skips cleanly (exit 0) when ``shared/data`` is absent.
Not a test: nothing is asserted (``tests/test_conllu_gold_trees.py`` holds the floor).
"""

from __future__ import annotations

import argparse
import sys
import time
from collections import Counter, defaultdict
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "scripts"))

from hingeword.conllu import FORM, KIND_OF_RELATION, KINDS, read_blocks, sentence_attachments  # noqa: E402


@dataclass(frozen=True)
class Item:
    """One key on one side, located in the sentence text (``None``: not located)."""

    governor: str
    pos: str
    prep: str
    kind: str
    gov_at: int | None  # start of the governor word
    prep_end: int | None  # end of the (last) preposition word, or of the object's head

    def key(self, with_pos: bool) -> tuple:
        return (self.governor, self.pos, self.prep) if with_pos else (self.governor, self.prep)


def token_offsets(text: str, rows) -> dict[str, tuple[int, int]]:
    """Character span of each word of ``rows`` in ``text`` (words found in order)."""
    out: dict[str, tuple[int, int]] = {}
    cursor = 0
    for r in rows:
        form = r[FORM]
        at = text.find(form, cursor)
        if at < 0 or at - cursor > 20:
            continue
        out[r[0]] = (at, at + len(form))
        cursor = at + len(form)
    return out


def gold_items(text: str, rows) -> list[Item]:
    spans = token_offsets(text, rows)
    items = []
    for a in sentence_attachments([list(r) for r in rows]):
        gov = spans.get(a.gov_id)
        prep = spans.get(a.prep_ids[-1])
        items.append(Item(a.governor, a.governor_pos, a.preposition, a.kind,
                          gov[0] if gov else None, prep[1] if prep else None))
    return items


def predicted_items(doc) -> list[Item]:
    from hingeword.extract import extract_doc

    return [Item(a.governor, a.governor_pos, a.preposition, KIND_OF_RELATION.get(a.relation, a.relation),
                 a.gov_start, a.prep_end) for a in extract_doc(doc)]


def match(gold: list[Item], pred: list[Item], with_pos: bool) -> tuple[list[tuple[Item, Item]], list[Item], list[Item]]:
    """Pair equal keys (closest position first); return (pairs, unmatched gold, unmatched predicted)."""
    by_key: dict[tuple, list[Item]] = defaultdict(list)
    for p in pred:
        by_key[p.key(with_pos)].append(p)
    pairs, missed = [], []
    for g in gold:
        cands = by_key.get(g.key(with_pos))
        if not cands:
            missed.append(g)
            continue
        best = min(cands, key=lambda p: (p.prep_end != g.prep_end, p.gov_at != g.gov_at))
        cands.remove(best)
        pairs.append((g, best))
    extra = [p for ps in by_key.values() for p in ps]
    return pairs, missed, extra


class Tally:
    """Counts for one comparison (with or without POS)."""

    def __init__(self) -> None:
        self.tp: Counter = Counter()
        self.gold: Counter = Counter()
        self.pred: Counter = Counter()
        self.errors: Counter = Counter()
        self.missed_keys: Counter = Counter()
        self.false_keys: Counter = Counter()
        self.lemma_pairs: Counter = Counter()
        self.attach_pairs: Counter = Counter()
        self.examples: dict[str, list[str]] = defaultdict(list)

    def add(self, text: str, gold: list[Item], pred: list[Item], with_pos: bool) -> None:
        pairs, missed, extra = match(gold, pred, with_pos)
        for g, _ in pairs:
            self.tp[g.kind] += 1
            self.gold[g.kind] += 1
            self.pred[g.kind] += 1
        for g in missed:
            self.gold[g.kind] += 1
            self.missed_keys[_show(g, with_pos)] += 1
        for p in extra:
            self.pred[p.kind] += 1
            self.false_keys[_show(p, with_pos)] += 1
        left = list(extra)
        for g in missed:
            same_prep = [p for p in left if g.prep_end is not None and p.prep_end == g.prep_end]
            same_gov = [p for p in left if g.gov_at is not None and p.gov_at == g.gov_at and p.prep == g.prep]
            if same_gov:
                p = same_gov[0]
                if p.governor != g.governor:
                    kind = "governor lemma differs"
                    self.lemma_pairs[f"{g.governor} -> {p.governor} ({g.pos})"] += 1
                else:
                    kind = f"governor POS differs ({g.pos} -> {p.pos})"
            elif same_prep:
                p = same_prep[0]
                if p.gov_at == g.gov_at:
                    kind = f"{g.kind} read as {p.kind} ('{g.prep}' -> '{p.prep}')" if p.prep != g.prep else "key differs"
                else:
                    what = "object" if g.prep == "-" else "preposition"
                    kind = f"{what} attached to {p.pos} instead of {g.pos}"
                    self.attach_pairs[f"{g.prep}: {g.governor}/{g.pos} -> {p.governor}/{p.pos}"] += 1
            else:
                kind = f"missed {g.kind} (no key there)"
                p = None
            if p is not None:
                left.remove(p)
                self.errors[kind] += 2  # one miss and one false hit
            else:
                self.errors[kind] += 1
            if len(self.examples[kind]) < 3:
                self.examples[kind].append(f"{_show(g, with_pos)} | {p and _show(p, with_pos)} | {text}")
        for p in left:
            kind = f"false {p.kind} (no gold key there)"
            self.errors[kind] += 1
            if len(self.examples[kind]) < 3:
                self.examples[kind].append(f"- | {_show(p, with_pos)} | {text}")


def _show(i: Item, with_pos: bool) -> str:
    return f"{i.governor}/{i.pos} + {i.prep}" if with_pos else f"{i.governor} + {i.prep}"


def prf(tp: int, gold: int, pred: int) -> tuple[float, float, float]:
    p = tp / pred if pred else 0.0
    r = tp / gold if gold else 0.0
    f = 2 * p * r / (p + r) if p + r else 0.0
    return p, r, f


def print_tables(title: str, tallies: dict[str, Tally], top: int, examples: bool, sentences: int, words: int) -> None:
    print(f"\n== {title}: {sentences:,} sentences, {words:,} words")
    print(f"{'comparison':24} {'kind':12} {'gold':>6} {'parser':>6} {'both':>6} {'prec':>6} {'recall':>6} {'F1':>6}")
    for label, t in tallies.items():
        for kind in ("all", *KINDS):
            if kind == "all":
                tp, g, p = sum(t.tp.values()), sum(t.gold.values()), sum(t.pred.values())
            else:
                tp, g, p = t.tp[kind], t.gold[kind], t.pred[kind]
            if g == p == 0:
                continue
            pr, rc, f = prf(tp, g, p)
            print(f"{label if kind == 'all' else '':24} {kind:12} {g:>6} {p:>6} {tp:>6} {pr:>6.3f} {rc:>6.3f} {f:>6.3f}")
    t = tallies["governor + preposition"]
    print("\nError types (governor + preposition; a pairing counts a miss and a false hit):")
    for kind, n in t.errors.most_common(top):
        print(f"  {n:>5}  {kind}")
        if examples:
            for e in t.examples[kind]:
                print(f"           gold | parser | sentence: {e[:160]}")
    for head, c in (("Most frequent misses", t.missed_keys), ("Most frequent false hits", t.false_keys),
                    ("Attachment differences (prep: gold -> parser)", t.attach_pairs),
                    ("Lemma differences (gold -> parser)", t.lemma_pairs)):
        print(f"\n{head}:")
        print("  " + "; ".join(f"{k} ({n})" for k, n in c.most_common(top)) if c else "  none")
    tp = tallies["with POS"]
    pos_errors = [(k, n) for k, n in tp.errors.most_common() if k.startswith("governor POS")]
    if pos_errors:
        print("\nPOS differences (with POS): " + "; ".join(f"{k} ({n})" for k, n in pos_errors[:top]))


def held_out_sentences(all_classes: bool, sources: list[str]):
    """(label, sent text, rows) of every held-out gold sentence with text."""
    import native_sources as ns

    cls = None if all_classes else ns.BUNDLED
    for d in ns.held_out_documents(sources, licence_class=cls):
        for s in d.sentences:
            if s.text:
                yield f"{d.source}/{d.genre}", s.text, s.rows


def file_sentences(path: Path):
    with path.open(encoding="utf-8") as fh:
        for comments, rows in read_blocks(fh, str(path)):
            if comments.get("text"):
                yield path.name, comments["text"], tuple(tuple(r) for r in rows)


def run(sentences, top: int, examples: bool, processes: int, by_label: bool) -> None:
    from hingeword.parse import load_model

    nlp, info = load_model(None)
    sentences = list(sentences)
    t0 = time.perf_counter()
    docs = nlp.pipe((s[1] for s in sentences), batch_size=64, n_process=processes)
    groups: dict[str, dict[str, Tally]] = defaultdict(lambda: {"governor + preposition": Tally(), "with POS": Tally()})
    counts: Counter = Counter()
    words: Counter = Counter()
    for (label, text, rows), doc in zip(sentences, docs):
        gold = gold_items(text, rows)
        pred = predicted_items(doc)
        n_words = sum(1 for r in rows if any(ch.isalpha() for ch in r[FORM]))
        for name in ["all", label.split("/")[0]] + ([label] if by_label else []):
            groups[name]["governor + preposition"].add(text, gold, pred, with_pos=False)
            groups[name]["with POS"].add(text, gold, pred, with_pos=True)
            counts[name] += 1
            words[name] += n_words
    secs = time.perf_counter() - t0
    print(f"model {info}; {len(sentences):,} sentences parsed and compared in {secs:.1f} s")
    for name in ["all"] + sorted(k for k in groups if k != "all"):
        if name != "all" and counts[name] == counts["all"]:
            continue  # one source only: its table is the overall one
        print_tables("overall" if name == "all" else name, groups[name], top if name == "all" else min(top, 8),
                     examples and name == "all", counts[name], words[name])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Extraction against gold dependency trees (held-out EWT and GUM).")
    ap.add_argument("--conllu", type=Path, nargs="*", default=None, help="compare on these CoNLL-U files instead")
    ap.add_argument("--sources", nargs="*", default=["ewt", "gum"], help="treebanks (default ewt gum)")
    ap.add_argument("--all-classes", action="store_true", help="include held-out noncommercial documents (GUM)")
    ap.add_argument("--by-genre", action="store_true", help="a table per genre as well")
    ap.add_argument("--top", type=int, default=15, help="rows in the error lists")
    ap.add_argument("--examples", action="store_true", help="print example sentences per error type")
    ap.add_argument("--processes", type=int, default=1)
    args = ap.parse_args(argv)
    if args.conllu:
        def sents():
            for p in args.conllu:
                yield from file_sentences(p)
        run(sents(), args.top, args.examples, args.processes, False)
        return 0
    import native_sources as ns

    if not all(ns.archive_path(s).is_file() for s in args.sources):
        print(f"bench_gold_trees: skipped, no treebanks under {ns.DATA_DIR}/native", file=sys.stderr)
        return 0
    run(held_out_sentences(args.all_classes, args.sources), args.top, args.examples, args.processes, args.by_genre)
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Count pattern keys from CoNLL-U files (Universal Dependencies gold parses).

The UD relations are mapped to the same keys :mod:`hingeword.extract` produces
from spaCy's labels:

==========================================  =====================================
UD                                          hingeword key
==========================================  =====================================
``case`` child *c* of a nominal *n* whose   (lemma of *n*'s head, its UPOS, form of
relation is ``obl``/``obl:*``/``nmod``/       *c*, with *c*'s ``fixed`` children
``nmod:*`` (incl. ``obl:agent``)            appended: "because of", "in front of")
``compound:prt`` child *p* of *h*           (lemma of *h*, UPOS of *h*, form of *p*)
``obj`` child of a VERB *h*                 (lemma of *h*, VERB, ``-``)
==========================================  =====================================

Governors must have UPOS VERB, ADJ or NOUN, as in extraction. ``mark`` (e.g.
infinitival "to") is never a preposition. Multiword tokens (``1-2`` lines) and
empty nodes (``1.1``) are skipped; their syntactic words are counted.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterator
from pathlib import Path

from .errors import ReferenceDataError

_GOV = frozenset({"VERB", "ADJ", "NOUN"})
_NOMINAL_RELS = ("obl", "nmod")


def sentences(path: Path) -> Iterator[list[list[str]]]:
    """Yield sentences as lists of 10-column rows (word lines only)."""
    rows: list[list[str]] = []
    with path.open(encoding="utf-8") as fh:
        for lineno, line in enumerate(fh, 1):
            line = line.rstrip("\n")
            if not line:
                if rows:
                    yield rows
                rows = []
                continue
            if line.startswith("#"):
                continue
            cols = line.split("\t")
            if len(cols) != 10:
                raise ReferenceDataError(f"{path}:{lineno}: not a CoNLL-U line (expected 10 tab-separated columns)")
            if "-" in cols[0] or "." in cols[0]:
                continue
            rows.append(cols)
    if rows:
        yield rows


def _base(rel: str) -> str:
    return rel.split(":")[0]


def count_sentence(rows: list[list[str]], patterns: Counter, lemmas: Counter) -> int:
    """Add one sentence's keys; return its word count (tokens with a letter)."""
    by_id = {r[0]: r for r in rows}
    children: dict[str, list[list[str]]] = {}
    for r in rows:
        children.setdefault(r[6], []).append(r)
    words = 0
    for r in rows:
        form, lemma, upos, head, rel = r[1], r[2].lower(), r[3], r[6], r[7]
        if any(ch.isalpha() for ch in form):
            words += 1
        if upos in _GOV:
            lemmas[(lemma, upos)] += 1
        if rel == "case":
            nominal = by_id.get(head)
            if nominal is None or _base(nominal[7]) not in _NOMINAL_RELS:
                continue
            gov = by_id.get(nominal[6])
            if gov is None or gov[3] not in _GOV:
                continue
            fixed = [c[1].lower() for c in children.get(r[0], []) if c[7] == "fixed"]
            prep = " ".join([form.lower(), *fixed])
            patterns[(gov[2].lower(), gov[3], prep)] += 1
        elif rel == "compound:prt":
            gov = by_id.get(head)
            if gov is not None and gov[3] in _GOV:
                patterns[(gov[2].lower(), gov[3], form.lower())] += 1
        elif rel == "obj":
            gov = by_id.get(head)
            if gov is not None and gov[3] == "VERB":
                patterns[(gov[2].lower(), "VERB", "-")] += 1
    return words


def count_conllu(path: Path, patterns: Counter, lemmas: Counter) -> tuple[int, int]:
    """Add a whole CoNLL-U file; return (words, sentences)."""
    words = sents = 0
    for rows in sentences(path):
        words += count_sentence(rows, patterns, lemmas)
        sents += 1
    return words, sents

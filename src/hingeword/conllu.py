"""Pattern keys from CoNLL-U files (Universal Dependencies gold parses).

The UD relations are mapped to the same keys :mod:`hingeword.extract` produces
from spaCy's labels, with the same filters, so that a reference built from gold
trees and one built by the parser count the same things, and so that the
parser's extraction can be checked against gold trees
(``bench/bench_gold_trees.py``, ``tests/test_conllu_gold_trees.py``):

=============================================  ========================================
UD                                             hingeword key (kind)
=============================================  ========================================
``case`` child *c* of a nominal *n* whose      (lemma of *n*'s head, its UPOS, form of
relation is ``obl``/``obl:*``/``nmod``/        *c*) — *preposition*; a nominal that is
``nmod:*`` (incl. ``obl:agent``)               a ``conj`` counts for the first conjunct
                                               ("in music and in art": two keys)
a word sequence of :data:`extract.MULTIWORD`   (governor of the phrase, the whole
whose last word is ``case``/``fixed``          sequence) — *multiword*; "because of"
                                               (``case`` + ``fixed``) and "in front of"
                                               (``case`` + ``fixed`` or a noun with its
                                               own ``nmod``) alike
``mark`` preposition of a gerund clause        (lemma of the clause's head, its UPOS,
("interested *in* learning", "thank you        form of the mark) — *preposition*:
*for* coming")                                 spaCy reads these as ``prep`` + ``pcomp``
an ADP that is itself ``obl``/``nmod``         (lemma of its head, UPOS, its form) —
(a stranded preposition UD promotes: "the      *preposition*
topic we talked *about*")
``compound:prt`` child *p* of *h*              (lemma of *h*, UPOS of *h*, form of *p*)
                                               — *particle*
``obj`` child of a VERB *h* (or ``iobj``       (lemma of *h*, VERB, ``-``) — *object*
without an ``obj``; see below)
=============================================  ========================================

Filters shared with extraction:

* governors have UPOS VERB, ADJ or NOUN, and "be" is never one (spaCy tags it AUX
  even as a main verb; UD attaches "good *at*" to the adjective already);
* temporal adjuncts are left out: a preposition of :data:`extract.TIME_PREPS`
  whose nominal is a time word (:data:`extract.TIME_WORDS`), a year such as 2019
  or a clock time ("at 5 pm", "at 10:30");
* "than", prepositions that are not alphabetic ("'s", "b/c") and the possessive
  ``case`` (a PART, or the case of an ``nmod:poss``) are left out;
* the direct object follows the parser's scheme where UD's differs: an ``iobj``
  without an ``obj`` ("tell *me* that ...") is the object; UD's object that is a
  wh-word heading a free relative ("know *what* you mean") or the subject of a
  bare-infinitive or participle complement ("let *him* go", "got *it* fixed") is
  none (the parser reads a ``ccomp`` with its own subject);
* ``mark`` is otherwise never a preposition (infinitival "to", "that", "if",
  "because" + a finite clause);
* a ``case`` word with ``fixed`` children outside :data:`extract.MULTIWORD` is a
  connective ("such as", "as of", "as to"), not a governor's choice, and gives no
  key — except a verb form ("depending on"), which counts for that verb, as the
  parser reads it.

Multiword tokens (``1-2`` lines) and empty nodes (``1.1``) are skipped; their
syntactic words are counted.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

from .errors import ReferenceDataError
from .extract import _EXCLUDED_PREPS, MULTIWORD, TIME_PREPS, TIME_WORDS

_GOV = frozenset({"VERB", "ADJ", "NOUN"})
_NOT_GOVERNORS = frozenset({"be"})
_NOMINAL_RELS = ("obl", "nmod")
_MAX_MULTIWORD = max(len(s) for s in MULTIWORD)
#: Prepositions that introduce a gerund clause as ``mark`` in UD ("by doing").
_GERUND_PREPS = frozenset(
    """about after against at before besides between beyond by despite during for from in
    into of on onto over through throughout to toward towards under upon via with within
    without""".split()
)
_CLOCK = re.compile(r"^\d{1,2}[:.]\d\d$|^\d{1,2}(am|pm|a\.m\.|p\.m\.)$", re.IGNORECASE)
_YEAR = re.compile(r"^(19|20)\d\d$")
_NUMBER = re.compile(r"^\d[\d,.:]*$")
_CLOCK_WORDS = frozenset({"pm", "am", "a.m.", "p.m.", "o'clock"})

#: The kind of each relation :func:`hingeword.extract.extract_doc` records.
KIND_OF_RELATION = {
    "prep": "preposition", "agent": "preposition", "dative": "preposition",
    "prt": "particle", "dobj": "object", "multiword": "multiword",
}
KINDS = ("preposition", "particle", "object", "multiword")

# columns of a word line
ID, FORM, LEMMA, UPOS, XPOS, FEATS, HEAD, DEPREL, DEPS, MISC = range(10)


@dataclass(frozen=True)
class GoldAttachment:
    """One key read off a gold tree, with the word ids it comes from.

    ``prep_ids`` are the preposition's words (several for a multiword), or the
    direct object's head for ``-``.
    """

    governor: str
    governor_pos: str
    preposition: str
    kind: str  # preposition / particle / object / multiword
    gov_id: str
    prep_ids: tuple[str, ...]

    @property
    def key(self) -> tuple[str, str, str]:
        return (self.governor, self.governor_pos, self.preposition)


def read_blocks(lines: Iterable[str], name: str = "") -> Iterator[tuple[dict[str, str], list[list[str]]]]:
    """Yield ``(comments, rows)`` per sentence.

    ``comments`` maps each ``# key = value`` line before the sentence to its value
    (a bare ``# key`` line, such as GUM's ``# newpar``, maps to ``""``); ``rows`` are
    the 10-column word lines (multiword tokens and empty nodes left out).
    :raises ReferenceDataError: on a line that is not CoNLL-U, naming ``name:line``.
    """
    rows: list[list[str]] = []
    comments: dict[str, str] = {}
    for lineno, line in enumerate(lines, 1):
        line = line.rstrip("\n").rstrip("\r")
        if not line:
            if rows:
                yield comments, rows
                comments = {}
            rows = []
            continue
        if line.startswith("#"):
            body = line[1:].strip()
            key, sep, value = body.partition(" = ")
            if not sep and body.endswith(" ="):
                key, value = body[:-2], ""
            comments[key.strip()] = value.strip() if sep else value
            continue
        cols = line.split("\t")
        if len(cols) != 10:
            raise ReferenceDataError(f"{name}:{lineno}: not a CoNLL-U line (expected 10 tab-separated columns)")
        if "-" in cols[0] or "." in cols[0]:
            continue
        rows.append(cols)
    if rows:
        yield comments, rows


def sentences(path: Path) -> Iterator[list[list[str]]]:
    """Yield sentences as lists of 10-column rows (word lines only)."""
    with Path(path).open(encoding="utf-8") as fh:
        for _, rows in read_blocks(fh, str(path)):
            yield rows


def _base(rel: str) -> str:
    return rel.split(":")[0]


def _is_alpha(word: str) -> bool:
    return word.isalpha()


class _Tree:
    def __init__(self, rows: list[list[str]]):
        self.rows = rows
        self.by_id = {r[ID]: r for r in rows}
        self.children: dict[str, list[list[str]]] = {}
        for r in rows:
            self.children.setdefault(r[HEAD], []).append(r)

    def head(self, r: list[str]) -> list[str] | None:
        return self.by_id.get(r[HEAD])

    def governor(self, r: list[str] | None) -> list[str] | None:
        """``r`` when it can govern a pattern (VERB/ADJ/NOUN, not "be")."""
        if r is None or r[UPOS] not in _GOV or r[LEMMA].lower() in _NOT_GOVERNORS:
            return None
        return r

    def nominal_governor(self, nominal: list[str] | None) -> list[str] | None:
        """The word an ``obl``/``nmod`` nominal (or a later conjunct of one) depends on."""
        n = nominal
        for _ in range(len(self.rows)):
            if n is None or _base(n[DEPREL]) != "conj":
                break
            n = self.head(n)
        if n is None or _base(n[DEPREL]) not in _NOMINAL_RELS:
            return None
        return self.governor(self.head(n))

    def is_temporal(self, prep: str, nominal: list[str]) -> bool:
        """A time preposition whose nominal is a time word, a year or a clock time."""
        if prep not in TIME_PREPS:
            return False
        form, lemma = nominal[FORM].lower(), nominal[LEMMA].lower()
        if form in TIME_WORDS or lemma in TIME_WORDS:
            return True
        if _YEAR.match(form) or _CLOCK.match(form):
            return True
        if _NUMBER.match(form):
            return any(c[FORM].lower() in _CLOCK_WORDS for c in self.children.get(nominal[ID], []))
        return False


def _multiword_at(forms: list[str], i: int) -> tuple[str, ...] | None:
    low = forms[i : i + _MAX_MULTIWORD]
    for seq in MULTIWORD:
        if tuple(low[: len(seq)]) == seq:
            return seq
    return None


def _free_relative(tree: _Tree, obj: list[str]) -> bool:
    """"know *what* you mean", "know *how* it works": UD makes the wh-word the object
    and hangs the clause on it (``acl:relcl``); the parser reads a ``ccomp``, no object."""
    wh = "PronType=Rel" in obj[FEATS] or "PronType=Int" in obj[FEATS]
    return wh and any(c[DEPREL].endswith(":relcl") for c in tree.children.get(obj[ID], []))


def _small_clause_subject(tree: _Tree, siblings: list[list[str]]) -> bool:
    """"let *him* go", "made *me* realize", "got *it* fixed": UD's object of the verb with
    a bare-infinitive or participle ``xcomp`` is the subject of a ``ccomp`` for the parser."""
    for c in siblings:
        if c[DEPREL] == "xcomp" and c[XPOS] in ("VB", "VBN"):
            if not any(m[DEPREL] == "mark" and m[FORM].lower() == "to" for m in tree.children.get(c[ID], [])):
                return True
    return False


def sentence_attachments(rows: list[list[str]]) -> list[GoldAttachment]:
    """Every key of one gold sentence, in word order (see the module docstring)."""
    tree = _Tree(rows)
    forms = [r[FORM].lower() for r in rows]
    out: list[GoldAttachment] = []
    consumed: set[str] = set()

    def add(gov, prep: str, kind: str, prep_ids: tuple[str, ...]) -> None:
        out.append(GoldAttachment(gov[LEMMA].lower(), gov[UPOS], prep, kind, gov[ID], prep_ids))

    # Multiword prepositions first: their inner words must not count on their own.
    for i, r in enumerate(rows):
        if r[ID] in consumed:
            continue
        seq = _multiword_at(forms, i)
        if seq is None:
            continue
        span = rows[i : i + len(seq)]
        ids = tuple(w[ID] for w in span)
        first, last = span[0], span[-1]
        if not (last[DEPREL] in ("case", "fixed") or first[DEPREL] == "case"):
            continue  # "up to you", "out of" as a particle + preposition: not one preposition here
        consumed.update(ids)
        if first[DEPREL] == "case":
            gov = tree.nominal_governor(tree.head(first))
        else:
            head = tree.head(first)
            gov = tree.governor(head) if head is not None and head[ID] not in ids else None
        if gov is not None:
            add(gov, " ".join(seq), "multiword", ids)

    for r in rows:
        if r[ID] in consumed:
            continue
        form, rel, upos = r[FORM].lower(), r[DEPREL], r[UPOS]
        if rel == "case":
            fixed = [c for c in tree.children.get(r[ID], []) if c[DEPREL] == "fixed"]
            if fixed:
                if upos == "VERB" and all(_is_alpha(c[FORM]) for c in fixed):
                    # "depending on": the parser reads the verb as the governor
                    gov = tree.governor(r)
                    if gov is not None:
                        add(gov, " ".join(c[FORM].lower() for c in fixed), "preposition",
                            tuple(c[ID] for c in fixed))
                continue
            if not _is_alpha(form) or form in _EXCLUDED_PREPS or upos == "PART":
                continue  # PART: the possessive "s" of "Applebee s"
            nominal = tree.head(r)
            if nominal is None or nominal[DEPREL] == "nmod:poss" or tree.is_temporal(form, nominal):
                continue  # a possessive ("Applebee s") is no preposition
            gov = tree.nominal_governor(nominal)
            if gov is not None:
                add(gov, form, "preposition", (r[ID],))
        elif rel == "mark":
            if form not in _GERUND_PREPS or upos not in ("ADP", "SCONJ") or r[XPOS] != "IN":
                continue
            clause = tree.head(r)
            if clause is None or clause[XPOS] != "VBG":
                continue
            gov = tree.governor(tree.head(clause))
            if gov is not None:
                add(gov, form, "preposition", (r[ID],))
        elif upos == "ADP" and _base(rel) in _NOMINAL_RELS:
            # a stranded preposition promoted to the nominal's place
            if not _is_alpha(form) or form in _EXCLUDED_PREPS:
                continue
            gov = tree.governor(tree.head(r))
            if gov is not None:
                add(gov, form, "preposition", (r[ID],))
        elif rel == "compound:prt":
            gov = tree.governor(tree.head(r))
            if gov is not None and _is_alpha(form):
                add(gov, form, "particle", (r[ID],))
        elif rel == "obj" or rel == "iobj":
            gov = tree.governor(tree.head(r))
            if gov is None or gov[UPOS] != "VERB":
                continue
            siblings = tree.children.get(gov[ID], [])
            if rel == "iobj" and any(c[DEPREL] == "obj" for c in siblings):
                continue  # "give her a book": the parser's dative, no key
            if _free_relative(tree, r) or _small_clause_subject(tree, siblings):
                continue
            add(gov, "-", "object", (r[ID],))
    order = {r[ID]: i for i, r in enumerate(rows)}
    out.sort(key=lambda a: (order[a.gov_id], order[a.prep_ids[0]], a.preposition))
    return out


def sentence_keys(rows: list[list[str]]) -> list[tuple[str, str, str]]:
    """One sentence's keys ``(governor lemma, governor UPOS, preposition or "-")``."""
    return [a.key for a in sentence_attachments(rows)]


def count_sentence(rows: list[list[str]], patterns: Counter, lemmas: Counter) -> int:
    """Add one sentence's keys and lemma tokens; return its word count (tokens with a letter)."""
    words = 0
    for r in rows:
        if any(ch.isalpha() for ch in r[FORM]):
            words += 1
        if r[UPOS] in _GOV:
            lemmas[(r[LEMMA].lower(), r[UPOS])] += 1
    patterns.update(sentence_keys(rows))
    return words


def count_lines(lines: Iterable[str], name: str, patterns: Counter, lemmas: Counter) -> tuple[int, int]:
    """Add the sentences of one CoNLL-U document (its lines; ``name`` is named in errors);
    return (words, sentences)."""
    words = sents = 0
    for _, rows in read_blocks(lines, name):
        words += count_sentence(rows, patterns, lemmas)
        sents += 1
    return words, sents


def count_conllu(path: Path, patterns: Counter, lemmas: Counter) -> tuple[int, int]:
    """Add a whole CoNLL-U file; return (words, sentences)."""
    with Path(path).open(encoding="utf-8") as fh:
        return count_lines(fh, str(path), patterns, lemmas)

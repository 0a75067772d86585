"""The extractor as it was written before it was made fast (issue 14): token by token,
through spaCy's ``Token`` objects (with the object classes and glued-title cuts added since).
Kept as the oracle that the fast :func:`hingeword.extract.extract_doc` must agree with,
attachment for attachment (``tests/test_extract_fast.py``); not used by the program.
"""

from __future__ import annotations

from hingeword.extract import (
    _EXCLUDED_PREPS,
    MULTIWORD,
    PREP_DEPS,
    Attachment,
    _adverbial_object,
    _object_of,
    governor_of,
    is_temporal,
    object_class,
    repaired_pos,
    sentence_span,
)
from hingeword.record import NO_PREP


def _multiword_at(doc, i: int) -> tuple[str, ...] | None:
    low = [t.lower_ for t in doc[i : i + 4]]
    for seq in MULTIWORD:
        if tuple(low[: len(seq)]) == seq:
            return seq
    return None


def _make(gov, first, last, prep: str, relation: str, essay_id: str, writer: str, obj=None) -> Attachment:
    sent = gov.sent
    lo, hi = min(gov.idx, first.idx), max(gov.idx + len(gov.text), last.idx + len(last.text))
    sentence, sentence_start = sentence_span(sent.text, sent.start_char, lo, hi)
    return Attachment(
        essay_id=essay_id,
        writer=writer,
        governor=gov.lemma_.lower(),
        governor_pos=repaired_pos(gov),
        governor_text=gov.text,
        preposition=prep,
        relation=relation,
        sentence=sentence,
        sentence_start=sentence_start,
        gov_start=gov.idx,
        gov_end=gov.idx + len(gov.text),
        prep_start=first.idx,
        prep_end=last.idx + len(last.text),
        object_class=object_class(obj),
    )


def extract_doc(doc, essay_id: str = "", writer: str = "") -> list[Attachment]:
    """All attachments of one parsed text, in text order (see module docstring)."""
    out: list[Attachment] = []
    consumed: set[int] = set()
    # Multiword prepositions first: the inner words must not count on their own.
    for i in range(len(doc)):
        if i in consumed:
            continue
        seq = _multiword_at(doc, i)
        if seq is None:
            continue
        span = doc[i : i + len(seq)]
        inside = {t.i for t in span}
        heads = [t.head for t in span if t.head.i not in inside and t.dep_ != "ROOT"]
        if not heads:
            continue
        first_dep = span[0].dep_
        # "out of" and "up to" are ordinary words too ("up to you"): only when the
        # first word is itself a preposition, particle or modifier of the head.
        if first_dep not in ("prep", "prt", "advmod", "amod", "acomp", "pcomp", "agent", "npadvmod", "dative"):
            if not (span[-1].dep_ in PREP_DEPS and span[-1].head.i not in inside):
                continue
        consumed |= inside
        gov = governor_of(heads[0], span[0])
        if gov is not None:
            out.append(_make(gov, span[0], span[-1], " ".join(seq), "multiword", essay_id, writer,
                             _object_of(span[-1])))
    for tok in doc:
        if tok.i in consumed:
            continue
        head = tok.head
        if head.i == tok.i:
            continue
        dep = tok.dep_
        relation = dep
        if dep == "conj" and tok.pos_ == "ADP" and head.dep_ in PREP_DEPS:
            # Rule 3: "in music and in art" — a coordinated preposition counts for
            # the governor of the first one.
            relation, head = head.dep_, head.head
        elif dep == "advmod" and tok.pos_ == "ADP" and tok.tag_ == "RP" or (
            dep == "advmod" and tok.pos_ == "ADP" and not any(c.dep_ == "pobj" for c in tok.children)
            and head.pos_ == "VERB" and tok.i == head.i + 1
        ):
            # Rule 4: "go out" with the particle labelled advmod: a preposition
            # right after its verb with no object of its own is a particle.
            relation = "prt"
        if relation in PREP_DEPS or (dep == "dative" and tok.tag_ == "IN"):
            if tok.tag_ == "TO" and relation not in ("prep", "dative", "prt"):
                continue
            word = tok.lower_
            if not word.isalpha() or word in _EXCLUDED_PREPS or is_temporal(tok):
                continue
            gov = governor_of(head, tok)
            if gov is not None:
                out.append(_make(gov, tok, tok, word, relation, essay_id, writer, _object_of(tok)))
        elif dep == "dobj" and repaired_pos(head) == "VERB" and not _adverbial_object(tok):
            # the slot spans the object phrase up to its head ("the radio"), so a
            # suggested preposition can be inserted at its start
            first = tok.left_edge if tok.left_edge.i > head.i else tok
            out.append(_make(head, first, tok, NO_PREP, "dobj", essay_id, writer, tok))
    out.sort(key=lambda a: (a.gov_start, a.prep_start, a.preposition))
    return out

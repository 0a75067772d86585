"""Extract stage: governor–preposition attachments from a parsed ``Doc``.

One :class:`Attachment` per instance. The rules (ClearNLP labels, as spaCy's
English pipelines use them):

* a governor is a token whose (repaired) POS is VERB, ADJ or NOUN; auxiliaries
  (copular "be", modals), proper nouns, pronouns and adverbs are not governors;
* its preposition is a dependent labelled ``prep``, ``agent`` (passive "by"),
  ``dative`` when the word is a preposition ("give it *to* her", not the bare
  "give *her* it") or ``prt`` (phrasal particle: "give *up*"); stranded
  prepositions ("the topic we talked *about*") are ordinary ``prep`` dependents
  without an object and are included; "than" is left out (a comparison, not a
  collocation);
* multiword prepositions (:data:`MULTIWORD`) are kept whole and attach to the
  governor of the phrase ("stood *in front of* the house" → stand + "in front of");
* a direct object (``dobj``) of a verb gives the zero-preposition slot ``-``,
  so that "listen music" and "discuss about" compare against the same governor —
  except an "object" that is an adverb ("went *home*" mis-labelled) or a time
  expression ("waited *a long time*", "stayed *a week*"): those measure, they are not
  what the verb takes, and counting them makes intransitive verbs look transitive;
* infinitival "to" (tag ``TO``, label ``aux``) is never a preposition;
* no propagation over coordination: a shared dependent counts for the conjunct
  the parser attaches it to;
* temporal adjuncts are left out: a preposition whose object is a time expression
  (:data:`TIME_WORDS`, a year such as "2019", a clock time) is chosen by the time
  noun, not by the governor ("came *on* Thursday", "built *in* 2010"). Essays about
  "a difficult week" would otherwise make "come on" look like a class pattern.

Repairs for learner errors that mislead the small pipeline (each documented in
:func:`repaired_pos`).

Each attachment also carries the coarse class of its object (:func:`object_class`:
"arrived in *Rome*" → ``place``, "at the *station*" → ``building``), so that a
suggestion can follow what native writers do with that kind of object.
"""

from __future__ import annotations

import functools
import re
from bisect import bisect_right
from dataclasses import dataclass


from .record import NO_PREP

GOVERNOR_POS = frozenset({"VERB", "ADJ", "NOUN"})
#: Heads of time expressions (lemmas, lower case): weekdays, months, seasons, parts of
#: the day and units of time (common practice in ESL grammars: "on Monday", "in May").
TIME_WORDS = frozenset(
    """monday tuesday wednesday thursday friday saturday sunday weekend weekday
    january february march april may june july august september october november december
    spring summer autumn fall winter morning afternoon evening night midnight noon midday
    dawn dusk daytime nighttime time moment second minute hour day week fortnight month
    year decade century term semester holiday holidays vacation o'clock pm am a.m. p.m.""".split()
)
PREP_DEPS = frozenset({"prep", "agent", "prt"})
_EXCLUDED_PREPS = frozenset({"than"})

#: Multiword prepositions kept whole (common practice in ESL grammars), longest first.
MULTIWORD: tuple[tuple[str, ...], ...] = tuple(
    sorted(
        (
            tuple(s.split())
            for s in (
                "in front of", "in spite of", "in addition to", "on top of", "in terms of",
                "by means of", "on behalf of", "in case of", "as a result of", "with regard to",
                "in charge of", "because of", "instead of", "according to", "due to", "out of",
                "apart from", "next to", "thanks to", "prior to", "regardless of", "ahead of",
                "away from", "up to",
            )
        ),
        key=lambda s: (-len(s), s),
    )
)


@dataclass(frozen=True, slots=True)
class Attachment:
    """One governor–preposition instance in one essay (slots: a class holds tens of
    thousands of them).

    Character offsets index the essay text (``Doc.text``). For the ``-`` slot the
    preposition offsets span the direct object from its first word to its head
    ("listen *the radio*").
    """

    essay_id: str
    writer: str
    governor: str  # lemma, lower case (after typo grouping)
    governor_pos: str  # VERB / ADJ / NOUN
    governor_text: str  # surface form as written
    preposition: str  # lower case, multiword kept whole, or "-"
    relation: str  # prep / agent / dative / prt / multiword / dobj
    sentence: str
    sentence_start: int
    gov_start: int
    gov_end: int
    prep_start: int
    prep_end: int
    original_governor: str = ""  # lemma before typo grouping, "" if unchanged
    object_class: str = ""  # coarse class of the object (OBJECT_CLASSES), "" when not recorded

    @property
    def key(self) -> tuple[str, str, str]:
        return (self.governor, self.governor_pos, self.preposition)


def repaired_pos(token) -> str:
    """The token's POS after rules that undo known mis-tags on learner text.

    Rule 1 (verb read as a plural noun): "Our school lacks of money" — with the
    wrong preposition the small pipeline reads "school lacks" as one noun phrase
    and "lacks" as the sentence's root noun. A NOUN that is the root of a
    sentence containing no verb, has a ``compound`` dependent on its left (the
    real subject, whose determiner the parser hangs on the root) and a ``prep``
    dependent on its right is re-read as a VERB. Verbless sentences are rare in
    essays, so the rule seldom fires on a true noun phrase.
    """
    pos = token.pos_
    if pos == "NOUN" and token.dep_ == "ROOT" and token.tag_ in ("NNS", "NN", "VBZ"):
        sent = token.sent
        if not any(t.pos_ in ("VERB", "AUX") for t in sent):
            lefts = list(token.lefts)
            if any(c.dep_ == "compound" for c in lefts) and any(c.dep_ == "prep" for c in token.rights):
                return "VERB"
    return pos


def governor_of(head, prep=None):
    """The governor a preposition belongs to, after two structural repairs.

    Rule 2 (copula): a preposition the parser hangs on copular "be" (AUX) while
    an adjective complement sits between them belongs to the adjective: "She is
    very good *at* maths", "I was afraid *about* it" → good/afraid. A preposition
    before the adjective ("*In* my opinion, it is free") modifies the clause, not the
    adjective: no governor.
    Returns ``None`` when there is no governor of a countable POS.
    """
    if head.pos_ == "AUX":
        comps = [c for c in head.children if c.dep_ == "acomp" and c.pos_ == "ADJ"]
        if comps and (prep is None or prep.i > comps[0].i):
            return comps[0]
        return None
    return head if repaired_pos(head) in GOVERNOR_POS else None


#: Prepositions that can head a time adjunct; others ("about the weekend", "the
#: end of the year") keep their object whatever it means.
TIME_PREPS = frozenset("on in at during for since until till by before after through throughout from over within".split())


_CLOCK = re.compile(r"\d{1,2}[:.]\d{2}")


def is_temporal(prep) -> bool:
    """True when a time preposition's object is a time expression (see :data:`TIME_WORDS`)."""
    if prep.lower_ not in TIME_PREPS:
        return False
    for obj in prep.children:
        if obj.dep_ != "pobj":
            continue
        low = obj.lemma_.lower()
        if low in TIME_WORDS or obj.lower_ in TIME_WORDS:
            return True
        if obj.like_num and len(obj.text) == 4 and obj.text[:2] in ("19", "20"):
            return True
        if _CLOCK.fullmatch(obj.text):  # "at 10:30" (like_num is false for a clock time)
            return True
        if obj.like_num and any(c.lower_ in ("pm", "am", "a.m.", "p.m.", "o'clock") for c in obj.rights):
            return True
    return False


def _adverbial_object(obj) -> bool:
    """A ``dobj`` that is an adverb or a time expression (see the module docstring)."""
    return obj.pos_ == "ADV" or obj.lemma_.lower() in TIME_WORDS or obj.lower_ in TIME_WORDS


#: Multiword prepositions by their first word, each list in :data:`MULTIWORD` order
#: (longest first), so a lookup tries only the phrases that can start at a token.
_MULTIWORD_BY_FIRST: dict[str, tuple[tuple[str, ...], ...]] = {}
for _seq in MULTIWORD:
    _MULTIWORD_BY_FIRST[_seq[0]] = _MULTIWORD_BY_FIRST.get(_seq[0], ()) + (_seq,)
del _seq

#: Labels of the tokens that can give an attachment (see :func:`extract_doc`); ``conj`` and
#: ``advmod`` only on a preposition (ADP).
_CANDIDATE_DEPS = ("prep", "agent", "prt", "dative", "dobj")
_ADP_DEPS = ("conj", "advmod")


class _Ids:
    """spaCy's integer ids of the strings the extractor compares, computed once (they are
    hashes of the strings, the same in every pipeline)."""

    def __init__(self) -> None:
        import numpy as np
        from spacy.attrs import DEP, LOWER, POS, SENT_START
        from spacy.strings import get_string_id
        from spacy.symbols import ADP

        self.np = np
        self.attrs = [LOWER, DEP, POS]
        self.sent_start = SENT_START
        self.first_words = np.array(sorted(get_string_id(w) for w in _MULTIWORD_BY_FIRST), dtype=np.uint64)
        self.deps = np.array([get_string_id(d) for d in _CANDIDATE_DEPS], dtype=np.uint64)
        self.adp_deps = np.array([get_string_id(d) for d in _ADP_DEPS], dtype=np.uint64)
        self.adp = ADP


_IDS: _Ids | None = None


class _Sentences:
    """Sentence start and text of a token, from the sentence starts the parser set (the
    boundaries ``Token.sent`` uses), found once per document and only when needed."""

    def __init__(self, doc, text: str | None):
        self.doc, self.text = doc, text
        self.starts = None

    def of(self, token) -> tuple[str, int]:
        ids = _IDS
        if self.starts is None:
            starts = ids.np.flatnonzero(self.doc.to_array(ids.sent_start).astype("int64") == 1)
            self.starts = ids.np.union1d(starts, [0]).tolist()
            self.ends = self.starts[1:] + [len(self.doc)]
            self.cache: dict[int, tuple[str, int]] = {}
            if self.text is None:
                self.text = self.doc.text
        k = bisect_right(self.starts, token.i) - 1
        found = self.cache.get(k)
        if found is None:
            first, last = self.doc[self.starts[k]], self.doc[self.ends[k] - 1]
            found = self.cache[k] = (self.text[first.idx:last.idx + len(last.text)], first.idx)
        return found


#: Coarse classes of a preposition's object (or of a direct object), with how a learner
#: reads them: "arrive *in* a place (a city, a country)", "arrive *at* a building". Buildings stand for
#: every man-made thing (WordNet's artifacts), events for acts, events and processes, institutions for groups.
OBJECT_CLASSES = {
    "place": "a place (a city, a country)",
    "building": "a building",
    "event": "an event",
    "time": "a time",
    "person": "a person",
    "group": "an institution",
    "idea": "an idea or subject",
    "nature": "a living thing or substance",
    "name": "a name (a town, a person)",
    "other": "something",
}
#: WordNet lexicographer file of a noun's first sense (``rules/wordnet/noun_classes.tsv``)
#: -> coarse class. Natural objects (sea, beach, mountain) read as places.
_LEXFILE_CLASS = {
    "location": "place", "object": "place", "artifact": "building",
    "event": "event", "act": "event", "process": "event", "phenomenon": "event",
    "time": "time", "person": "person", "group": "group",
    "cognition": "idea", "communication": "idea", "attribute": "idea", "feeling": "idea", "state": "idea",
    "motive": "idea", "relation": "idea", "quantity": "idea", "shape": "idea", "possession": "idea",
    "tops": "idea", "animal": "nature", "plant": "nature", "body": "nature", "food": "nature",
    "substance": "nature",
}
_PERSON_PRONOUNS = frozenset(
    """me you him her us them myself yourself himself herself ourselves yourselves themselves everyone
    everybody someone somebody anyone anybody nobody whom who""".split()
)


@functools.lru_cache(maxsize=1)
def noun_classes() -> dict[str, str]:
    """The bundled noun -> lexicographer-class table (``rules/wordnet/noun_classes.tsv``), read once."""
    from .rules import bundled_rules_dir

    path = bundled_rules_dir() / "wordnet" / "noun_classes.tsv"
    out: dict[str, str] = {}
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except OSError:
        return out
    for line in lines[2:]:  # a comment line, then the header
        noun, _, lexfile = line.partition("\t")
        out[noun] = lexfile
    return out


def object_class(obj) -> str:
    """The coarse class (:data:`OBJECT_CLASSES`) of an object token, ``None`` giving ``other``.

    A proper noun is a ``place`` when WordNet's first sense of it is a location
    ("Rome", "New York" with its compound), else a ``name`` (a person or an unknown
    town alike: no entity recogniser runs); a common noun takes the class of its
    first WordNet sense; a personal pronoun is a ``person``; a verb (a gerund: "good
    at *swimming*") an ``event``.
    """
    if obj is None:
        return "other"
    table = noun_classes()
    if obj.pos_ == "PROPN":
        words = [c.lower_ for c in obj.lefts if c.dep_ == "compound" and c.pos_ == "PROPN"] + [obj.lower_]
        for cand in (" ".join(words), obj.lower_):
            if table.get(cand) in ("location", "object"):
                return "place"
        return "name"
    if obj.pos_ == "NOUN":
        lexfile = table.get(obj.lemma_.lower()) or table.get(obj.lower_)
        return _LEXFILE_CLASS.get(lexfile, "other")
    if obj.pos_ == "PRON":
        return "person" if obj.lower_ in _PERSON_PRONOUNS else "other"
    if obj.pos_ == "VERB" or obj.tag_ == "VBG":
        return "event"
    return "other"


def _object_of(prep):
    """The object of a preposition token: its ``pobj`` (or a gerund ``pcomp``), else ``None``."""
    for c in prep.children:
        if c.dep_ == "pobj":
            return c
    for c in prep.children:
        if c.dep_ == "pcomp":
            return c
    return None


#: A line this short, without closing punctuation, followed by a line break and a capital is a
#: title or heading the parser glued to the next sentence ("My first job\nWhen I arrived …").
_TITLE_CHARS = 60
_BLANK_LINE = re.compile(r"\n[ \t\r\f\v]*\n")


def _line_breaks(text: str) -> list[tuple[int, int]]:
    """(start, end) of each line break in a sentence's text that ends a piece of its own: a blank
    line, or the break after a short unpunctuated line (not ending in a function word) when the
    next line starts with a capital or a digit."""
    # a line ending in a function word ("I went there in\nAugust") is a wrapped sentence, not a title;
    # imported here, not at the top: a cached re-scan imports no spaCy
    from spacy.lang.en.stop_words import STOP_WORDS

    out = [(m.start(), m.end()) for m in _BLANK_LINE.finditer(text)]
    line_start = 0
    for i, ch in enumerate(text):
        if ch != "\n":
            continue
        line = text[line_start:i].strip()
        nxt = text[i + 1:].lstrip()
        last = line.rsplit(None, 1)[-1].lower() if line else ""
        if (line and len(line) <= _TITLE_CHARS and line[-1] not in ".,;:-–(" and last not in STOP_WORDS
                and (nxt[:1].isupper() or nxt[:1].isdigit())):
            out.append((i, i + 1))
        line_start = i + 1
    return sorted(out)


def sentence_span(text: str, start: int, lo: int, hi: int) -> tuple[str, int]:
    """The part of a parser's sentence (``text``, starting at ``start`` in the doc) that holds the
    doc's characters ``lo``..``hi``, and its start offset: the sentence less a title or paragraph
    the parser glued on (:func:`_line_breaks`)."""
    if "\n" not in text:
        return text, start
    a, b = lo - start, hi - start
    cut_lo, cut_hi = 0, len(text)
    for s_, e_ in _line_breaks(text):
        if e_ <= a:
            cut_lo = e_
        elif s_ >= b and cut_hi == len(text):
            cut_hi = s_
    return text[cut_lo:cut_hi], start + cut_lo


def _make(gov, first, last, prep: str, relation: str, essay_id: str, writer: str, sents: _Sentences,
          obj=None) -> Attachment:
    text, start = sents.of(gov)
    lo, hi = min(gov.idx, first.idx), max(gov.idx + len(gov.text), last.idx + len(last.text))
    sentence, sentence_start = sentence_span(text, start, lo, hi)
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


def extract_doc(doc, essay_id: str = "", writer: str = "", *, text: str | None = None) -> list[Attachment]:
    """All attachments of one parsed text, in text order (see module docstring).

    :param text: the text ``doc`` was made from (``doc.text``), when the caller has it:
        spaCy builds ``doc.text`` anew from the tokens at each use.

    Only tokens that can give an attachment are looked at: the candidates are found in
    whole-document arrays of spaCy's integer ids (the first words of :data:`MULTIWORD`;
    the labels ``prep``, ``agent``, ``prt``, ``dative``, ``dobj``, and ``conj``/``advmod`` on
    a preposition), and each sentence's text is cut from the document once.
    """
    global _IDS
    out: list[Attachment] = []
    if len(doc) == 0:
        return out
    if _IDS is None:
        _IDS = _Ids()
    np = _IDS.np
    arr = doc.to_array(_IDS.attrs)
    lower, deps, pos = arr[:, 0], arr[:, 1], arr[:, 2]
    sents = _Sentences(doc, text)
    consumed: set[int] = set()
    n = len(doc)
    # Multiword prepositions first: the inner words must not count on their own.
    for i in np.flatnonzero(np.isin(lower, _IDS.first_words)).tolist():
        if i in consumed:
            continue
        seq = None
        for cand in _MULTIWORD_BY_FIRST[doc[i].lower_]:
            if i + len(cand) <= n and all(doc[i + k].lower_ == w for k, w in enumerate(cand[1:], 1)):
                seq = cand
                break
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
            out.append(_make(gov, span[0], span[-1], " ".join(seq), "multiword", essay_id, writer, sents,
                             _object_of(span[-1])))
    candidates = np.isin(deps, _IDS.deps) | (np.isin(deps, _IDS.adp_deps) & (pos == _IDS.adp))
    for i in np.flatnonzero(candidates).tolist():
        if i in consumed:
            continue
        tok = doc[i]
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
                out.append(_make(gov, tok, tok, word, relation, essay_id, writer, sents, _object_of(tok)))
        elif dep == "dobj" and repaired_pos(head) == "VERB" and not _adverbial_object(tok):
            # the slot spans the object phrase up to its head ("the radio"), so a
            # suggested preposition can be inserted at its start
            first = tok.left_edge if tok.left_edge.i > head.i else tok
            out.append(_make(head, first, tok, NO_PREP, "dobj", essay_id, writer, sents, tok))
    out.sort(key=lambda a: (a.gov_start, a.prep_start, a.preposition))
    return out

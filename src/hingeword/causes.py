"""Categorise stage: likely causes of an over-used pattern, and the native suggestion.

For a flagged pattern (governor *g*, POS, preposition *p*) each candidate cause
is looked up in the reference (never invented) and scored with a confidence in
[0, 1]:

``noun-pattern``
    a noun derived from *g* (WordNet, ``rules/wordnet/derived_nouns.tsv``; also
    the same-form noun) takes *p*: "discuss about" ← "a discussion about".
``related-word``
    a synonym, similar adjective, antonym or "also see" neighbour of *g*
    (``related_words.tsv``) takes *p*: "afraid about" ← "concerned about".
``directional``
    *p* is directional (``rules/directional.tsv``: into, onto, to, towards …) and
    native writers use the static partner or no preposition with *g*:
    "involved into" ← "involved in", "enter into the room" ← "enter the room".
``l1-transfer``
    a teacher-written note for the writers' first language (``rules/l1/``)
    describes this very pattern.
``unclear``
    none of the above has evidence.

Confidence of a lexical cause = share × c/(c+3), where share = c/n is how often
the related word takes *p* in the reference (c of its n attachments): high shares
backed by few examples are damped. Directional confidence = native share of the
static alternative × the same damping. L1 confidence = 0.9 × the fraction of the
pattern's instances written by writers with that first language.

A lexical candidate needs c ≥ 2 and an association O/E ≥ 2 in the reference (the
related word takes *p* at least twice as often as words in general do), not a large
share: "a discussion about" is only 2 of 67 uses of "discussion" in the Brown
reference (which prefers "of"), yet 3.5 times the rate of "about" overall.
Directional needs the static alternative in ≥ 20 % of the governor's uses.

The suggestion fits the learners' own sentences: each attachment carries the class of
its object (:func:`hingeword.extract.object_class`: a place, a building, an event …),
and the reference counts the governor's slots per object class. For each class the
class used, the slot native writers use most with that governor *and that kind of
object* is suggested when the reference has at least :data:`MIN_CLASS_COUNT` such
uses, one preposition takes at least :data:`MIN_CLASS_SHARE` of them, and the governor's
usual slot is a preposition too ("arrive" + a place → *in*; + a building → *at*);
otherwise the governor's most frequent slot overall. Names and unclassified objects
(:data:`UNSPECIFIC_CLASSES`) always take the usual slot. When the classes the class wrote
call for different slots, the advice names both ("arrive in a place (a city, a
country), at a building").
"""

from __future__ import annotations

from collections import Counter, defaultdict
from collections.abc import Iterable, Mapping, Sequence

from .extract import OBJECT_CLASSES
from .record import NO_PREP, Advice, Cause, PatternRecord, Status
from .rules import Rules

LABELS = {
    "noun-pattern": "carried over from a related noun",
    "related-word": "by analogy with a related word",
    "directional": "a word for movement ('to', 'into') where English does not use one",
    "l1-transfer": "carried over from the first language",
    "unclear": "no clear reason in the reference or the rules",
}
MIN_LEXICAL_COUNT = 2
MIN_LEXICAL_OE = 2.0
MIN_DIRECTIONAL_SHARE = 0.20
#: Native uses of a governor with one class of object before that class gets its own suggestion.
MIN_CLASS_COUNT = 5
#: Classes too mixed to advise on their own: names (persons, towns, languages, firms alike without an
#: entity recogniser) and unclassified objects take the governor's usual slot.
UNSPECIFIC_CLASSES = frozenset({"name", "other"})
#: Share of those uses the class's slot needs: a clear preference, not a near tie.
MIN_CLASS_SHARE = 0.4
L1_WEIGHT = 0.9
#: related-word relations, in the order they are tried
_RELATIONS = ("synonym", "similar", "antonym", "also_see")


def _damp(c: float) -> float:
    return c / (c + 3.0)


def _slot(prep: str) -> str:
    return "a direct object" if prep == NO_PREP else f"'{prep}'"


class Categoriser:
    """Holds the reference tables and rules; :meth:`categorise` one pattern at a time."""

    def __init__(self, reference, rules: Rules):
        self.ref = reference
        self.rules = rules
        self.gov_totals = reference.governor_totals()
        self.slots: dict[tuple[str, str], Counter] = defaultdict(Counter)
        for (g, pos, prep), n in reference.patterns.items():
            self.slots[(g, pos)][prep] += n
        self.prep_totals = reference.preposition_totals()
        self.total = max(reference.total, 1)
        self.by_class: dict[tuple[str, str, str], Counter] = defaultdict(Counter)
        for (g, pos, prep, cls), n in getattr(reference, "objects", {}).items():
            self.by_class[(g, pos, cls)][prep] += n

    # --------------------------------------------------------------- native use
    def share(self, g: str, pos: str, prep: str) -> tuple[int, int]:
        """(count, governor total) of a pattern in the reference."""
        return self.ref.patterns.get((g, pos, prep), 0), self.gov_totals.get((g, pos), 0)

    def suggestion(self, g: str, pos: str, avoid: str) -> tuple[str, float, int] | None:
        """The slot native writers use most with ``g`` (other than ``avoid``): (slot, share, count).

        "Highest association" is read as the highest conditional share P(slot | g):
        MI and logDice penalise the very frequent direct-object slot, whose column
        total is large, and would suggest rare prepositions instead.
        """
        slots = self.slots.get((g, pos))
        total = self.gov_totals.get((g, pos), 0)
        if not slots or total == 0:
            return None
        best = sorted(((n, s) for s, n in slots.items() if s != avoid), key=lambda t: (-t[0], t[1]))
        if not best:
            return None
        n, slot = best[0]
        return slot, n / total, n

    def class_suggestion(self, g: str, pos: str, avoid: str, cls: str) -> tuple[str, float, int] | None:
        """The slot native writers use most with ``g`` and an object of class ``cls`` (other than
        ``avoid``): (slot, share, count), or ``None`` when the reference has fewer than
        :data:`MIN_CLASS_COUNT` such uses (or none of another slot than ``avoid``)."""
        slots = self.by_class.get((g, pos, cls))
        total = sum(slots.values()) if slots else 0
        if not cls or cls in UNSPECIFIC_CLASSES or total < MIN_CLASS_COUNT:
            return None
        best = sorted(((n, s) for s, n in slots.items() if s != avoid), key=lambda t: (-t[0], t[1]))
        if not best or best[0][0] < 2 or best[0][1] == NO_PREP or best[0][0] / total < MIN_CLASS_SHARE:
            return None
        n, slot = best[0]
        return slot, n / total, n

    def slots_by_object(self, g: str, pos: str, avoid: str, classes: Mapping[str, int]) -> list[tuple[str, str]]:
        """(object class, native slot) for each class the learners used with this pattern whose slot the
        reference knows, most used class first; none when the governor's usual slot is a direct object."""
        out = []
        general = self.suggestion(g, pos, avoid)
        if general is None or general[0] == NO_PREP:  # a verb that takes a direct object: one plain piece of advice
            return []
        for cls, _k in sorted(classes.items(), key=lambda t: (-t[1], t[0])):
            sug = self.class_suggestion(g, pos, avoid, cls)
            if sug is not None:
                out.append((cls, sug[0]))
        return out

    # ------------------------------------------------------------------ causes
    def _lexical(self, words: Sequence[tuple[str, str, str]], prep: str, code: str) -> list[Cause]:
        out = []
        for word, wpos, how in words:
            c, n = self.share(word, wpos, prep)
            base = self.prep_totals.get(prep, 0) / self.total  # P(prep) over all attachments
            if c < MIN_LEXICAL_COUNT or n == 0 or base == 0 or (c / n) / base < MIN_LEXICAL_OE:
                continue
            phrase = f"{word} {prep}" if prep != NO_PREP else f"{word} + object"
            out.append(Cause(code, round((c / n) * _damp(c), 4),
                             f"'{phrase}' ({how}): {c} of {n} uses of '{word}' in the reference ({100 * c / n:.0f}%)",
                             LABELS[code]))
        return out

    def categorise(self, g: str, pos: str, prep: str, l1_counts: Mapping[str, int] | None = None) -> list[Cause]:
        """Ranked candidate causes (best first); ``[unclear]`` when nothing has evidence."""
        causes: list[Cause] = []
        nouns = list(self.rules.derived_nouns.get((g, pos), ()))
        if pos != "NOUN" and (g, "NOUN") in self.gov_totals and g not in nouns:
            nouns.append(g)
        causes += self._lexical([(n, "NOUN", "related noun") for n in nouns], prep, "noun-pattern")
        related = [(w, pos, rel.replace("_", " ")) for w, rel in self.rules.related.get((g, pos), ())
                   if rel in _RELATIONS and w != g]
        causes += self._lexical(related, prep, "related-word")
        for static in self.rules.directional.get(prep, ()):
            c, n = self.share(g, pos, static)
            if n and c / n >= MIN_DIRECTIONAL_SHARE:
                causes.append(Cause("directional", round((c / n) * _damp(c), 4),
                                    f"'{prep}' marks movement; native writers use {_slot(static)} with '{g}': "
                                    f"{c} of {n} uses in the reference ({100 * c / n:.0f}%)", LABELS["directional"]))
        total = sum((l1_counts or {}).values())
        for code, k in sorted((l1_counts or {}).items()):
            for note in self.rules.l1_notes_for(code, g, prep, pos):
                causes.append(Cause("l1-transfer", round(L1_WEIGHT * k / total, 4),
                                    f"{k} of {total} uses by writers whose first language is {note.language} ({code}): "
                                    f"{note.note}", LABELS["l1-transfer"]))
                break
        best: dict[str, Cause] = {}
        for c in causes:  # keep the strongest evidence per cause code
            if c.code not in best or c.confidence > best[c.code].confidence:
                best[c.code] = c
        ranked = sorted(best.values(), key=lambda c: (-c.confidence, c.code))
        return ranked or [Cause("unclear", 0.0, "no related noun, related word, directional pair or L1 note "
                                "with evidence in the reference", LABELS["unclear"])]

    # -------------------------------------------------------------- plain words
    def advise(self, g: str, pos: str, prep: str, causes: Sequence[Cause],
               classes: Mapping[str, int] | None = None) -> Advice:
        """The suggestion and a short explanation a learner understands, with the ranked causes.

        :param classes: how often the class wrote the pattern with each class of object; the
            suggestion then follows the natives' use with those objects (module docstring).
        """
        causes = tuple(causes)
        classes = dict(classes or {})
        general = self.suggestion(g, pos, prep)
        by_object = self.slots_by_object(g, pos, prep, classes)
        if general is None and not by_object:
            return Advice(causes=causes, explanation="The reference has too few examples of this word to say more.")
        if by_object:  # the slot of the kind of object the class used most
            slot = by_object[0][1]
            c, n = self.share(g, pos, slot)
            share = c / n if n else 0.0
        else:
            slot, share, _ = general
        covered = {cls for cls, _ in by_object}
        if general is not None and by_object and any(cls not in covered for cls in classes):
            by_object.append((OTHER_OBJECTS, general[0]))  # the rest take the governor's usual slot
        if by_object and all(s == (general[0] if general else None) for _, s in by_object):
            by_object = []  # the kind of object changes nothing: plain advice
            slot = general[0]
            share = general[1]
        native = native_words(g, pos, slot, by_object)
        written = f"{g} something" if prep == NO_PREP else f"{g} {prep} something"
        if pos == "ADJ":
            written = f"be {written}"
        suggestion = f"{g} + direct object" if slot == NO_PREP else f"{g} {slot}"
        slots = {s for _, s in by_object} | {slot}
        if slots == {NO_PREP} and prep != NO_PREP:
            text = f"We {native}: no '{prep}'."
        elif prep == NO_PREP and len(slots) == 1:
            text = f"We say '{native}': the '{slot}' is needed."
        else:
            text = f"We say '{native}', not '{written}'."
        return Advice(causes=causes, suggestion=suggestion, suggested_preposition=slot,
                      suggestion_share=round(share, 4), native_pattern=native, explanation=text,
                      by_object=tuple(by_object))


def reason_for_learners(g: str, prep: str, cause: Cause | None) -> str | None:
    """The likely cause as a sentence a learner understands, naming the word it comes from:
    "By analogy with 'hear': we say 'hear something', but 'listen' is different." ``None`` when unclear."""
    if cause is None or cause.code == "unclear":
        return None
    quoted = cause.evidence.split("'")[1] if cause.evidence.count("'") >= 2 else ""
    if cause.code == "noun-pattern" and quoted and prep != NO_PREP:
        noun = quoted.rsplit(" ", 1)[0]
        article = "an" if noun[:1] in "aeiou" else "a"
        return f"Carried over from the noun '{noun}': we say '{article} {noun} {prep} something'."
    if cause.code == "related-word" and quoted:
        other = quoted.split(" ")[0]
        return f"By analogy with '{other}': we say '{_plain_use(quoted)}', but '{g}' is different."
    if cause.code == "directional" and prep != NO_PREP:
        return f"The word '{prep}' shows movement towards something; after '{g}' English does not use it."
    if cause.code == "l1-transfer":
        lang = cause.evidence.split("first language is ", 1)[-1].split(" (", 1)[0] if "first language is " in \
            cause.evidence else ""
        return f"Carried over from the first language{f' ({lang})' if lang else ''}."
    label = (cause.label or "").strip()
    return (label[0].upper() + label[1:] + ("" if label[-1:] in ".!?" else ".")) if label else None


#: The ``by_object`` entry for objects of classes without their own evidence.
OTHER_OBJECTS = "any other"


def _plain_use(phrase: str) -> str:
    """A related word's use as learners read it: "mind + object" -> "mind something"."""
    if phrase.endswith(" + object"):
        return phrase[: -len(" + object")] + " something"
    return phrase + " something"


def object_words(classes: Sequence[str]) -> str:
    """Object classes in words: "a place (a city, a country) or a building"; "something"
    when a class has no useful name (other objects, or more than two kinds). Names beside places
    are not named again (an unknown proper noun after a place preposition is mostly a town)."""
    kinds = list(dict.fromkeys(classes))
    if "place" in kinds and "name" in kinds:  # a name beside places reads as a place name
        kinds.remove("name")
    labels = [OBJECT_CLASSES[c] for c in kinds if c in OBJECT_CLASSES and c != "other"]
    if not labels or len(labels) > 2 or len(labels) < len(kinds):
        return "something"
    return " or ".join(labels)


def native_words(g: str, pos: str, slot: str, by_object: Sequence[tuple[str, str]] = ()) -> str:
    """The native pattern in words: "depend on something", "be good at something", or, when the
    kind of object decides, each slot with its objects: "arrive in a place (a city, a country),
    at a building"."""
    be = "be " if pos == "ADJ" else ""
    if not by_object:
        return f"{be}{g} something" if slot == NO_PREP else f"{be}{g} {slot} something"
    groups: dict[str, list[str]] = {}
    for cls, s in by_object:
        groups.setdefault(s, []).append(cls)
    parts = []
    for s, cls in groups.items():
        named = [c for c in cls if c != OTHER_OBJECTS]
        words = object_words(named) if named else "something else"
        if named and OTHER_OBJECTS in cls and words != "something":
            words += " or something else"
        parts.append(words if s == NO_PREP else f"{s} {words}")
    return f"{be}{g} " + ", ".join(parts)


def object_tallies(attachments: Iterable) -> dict[tuple, Counter]:
    """Per pattern key: how many of its instances have an object of each class."""
    out: dict[tuple, Counter] = defaultdict(Counter)
    for a in attachments:
        out[a.key][getattr(a, "object_class", "") or "other"] += 1
    return out


def l1_tallies(attachments: Iterable, l1_of: Mapping[str, str]) -> dict[tuple, Counter]:
    """Per pattern key: how many of its instances writers of each first language wrote."""
    out: dict[tuple, Counter] = defaultdict(Counter)
    for a in attachments:
        code = l1_of.get(a.writer)
        if code:
            out[a.key][code] += 1
    return out


def categorise(records: Sequence[PatternRecord], reference, rules: Rules,
               l1_by_pattern: Mapping[tuple, Counter],
               objects_by_pattern: Mapping[tuple, Counter] | None = None) -> list[PatternRecord]:
    """The records with :class:`~hingeword.record.Advice` for flagged and under-used patterns.

    :param objects_by_pattern: object classes per pattern (:func:`object_tallies`), so that
        each suggestion fits the kind of object the class wrote.
    """
    cat = Categoriser(reference, rules)
    out = []
    for r in records:
        if r.flagged:
            causes = cat.categorise(*r.key, l1_counts=l1_by_pattern.get(r.key))
            out.append(r.with_(advice=cat.advise(*r.key, causes, (objects_by_pattern or {}).get(r.key))))
        elif r.status is Status.UNDER_USED:  # the native pattern the class avoids
            g, _, prep = r.key
            native = f"{g} something" if prep == NO_PREP else f"{g} {prep} something"
            out.append(r.with_(advice=Advice(
                suggested_preposition=prep, suggestion=f"{g} + direct object" if prep == NO_PREP else f"{g} {prep}",
                suggestion_share=r.reference_share, native_pattern=native,
                explanation=f"Native writers use '{native}' much more often than this class does.")))
        else:
            out.append(r)
    return out

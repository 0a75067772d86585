"""Pattern counts of a class (or of a pool of classes), and typo-tolerant grouping of governors.

A pattern is (governor lemma, governor POS, preposition). ``learner_governor_count``
is the number of attachments of that governor to any slot (all prepositions, the
``-`` direct-object slot and particles): the row total R1 of docs/methods.md §1 and the
base of the learner-vs-reference comparison.
"""

from __future__ import annotations

import re
from collections import Counter, defaultdict
from collections.abc import Collection, Iterable, Mapping
from dataclasses import dataclass, field, replace

import pandas as pd
from rapidfuzz import fuzz, process

from .extract import Attachment

#: ``(lemma, POS) -> (known lemma, POS)``: how misspelt governors were grouped.
GovernorMap = dict[tuple[str, str], tuple[str, str]]

COLUMNS = ["governor", "governor_pos", "preposition", "learner_count", "learner_writers", "learner_governor_count"]

#: A governor lemma counts as a known word when the reference has it, when it is at
#: least this common in general English (wordfreq's Zipf scale: 3.0 = once per
#: million words), or when it is in the word list (``rules/wordnet/words.tsv``,
#: WordNet's lemmas, plus a teacher's own ``words.tsv``). Misspellings learners make
#: ("intrested", "recieve") sit below 3 on the web-based lists; so do rare real words
#: ("abase" 1.6, "aliment" and "alimentation" 1.7), which the word list keeps as written.
KNOWN_ZIPF = 3.0
#: rapidfuzz ``fuzz.ratio`` (0–100) a misspelt lemma needs to a known lemma of the
#: same POS to be grouped under it: 85 joins one slip in a 6–7 letter word
#: ("dicuss"→"discuss" 92, "intrested"→"interested" 95) but not distinct words
#: ("depend"/"defend" 83, "adapt"/"adopt" 80).
TYPO_RATIO = 85.0
#: Known lemmas need this many tokens in the reference to be a grouping target.
MIN_TARGET_TOKENS = 5


#: British and American spellings of one word ("summarise"/"summarize", "colour"/"color",
#: "centre"/"center", "travelled"/"traveled", "defence"/"defense"): these are rewritten
#: to one form before two lemmas are compared as spelling variants (common spelling
#: correspondences, from memory).
_VARIANTS = ((r"is(e|ed|es|ing|ation|ations)$", r"iz\1"), (r"ys(e|ed|es|ing)$", r"yz\1"), (r"our", "or"),
             (r"tre$", "ter"), (r"ll", "l"), (r"ae", "e"), (r"oe", "e"), (r"ence$", "ense"), (r"ogue$", "og"))


_VARIANT_RES = tuple((re.compile(pattern), repl) for pattern, repl in _VARIANTS)


def spelling_key(word: str) -> str:
    """``word`` with British spellings rewritten to American ones (see ``_VARIANTS``)."""
    out = word.lower()
    for pattern, repl in _VARIANT_RES:
        out = pattern.sub(repl, out)
    return out
Key = tuple[str, str, str]


@dataclass
class Tally:
    """The counts the flag decision needs from a body of learner writing.

    ``writer_uses[key][writer]``: a pattern's uses per writer (writers of a pool are
    "class\x1fwriter", so two classes' "S01" stay two people); ``governors``: each
    governor's uses with any slot (R1); ``slots``: uses of each (POS, preposition) with any
    governor of that POS; ``pos_totals``: all attachments of governors of each POS;
    ``sources[key]``: the class-terms (runs) of a pool in which the pattern occurs.
    """

    writer_uses: dict[Key, Counter] = field(default_factory=lambda: defaultdict(Counter))
    governors: Counter = field(default_factory=Counter)
    governor_writers: dict[tuple[str, str], set] = field(default_factory=lambda: defaultdict(set))
    slots: Counter = field(default_factory=Counter)
    pos_totals: Counter = field(default_factory=Counter)
    words: int = 0
    classes: int = 1
    sources: dict[Key, set] = field(default_factory=lambda: defaultdict(set))

    def add(self, writer: str, key: Key, n: int = 1, source: object = "") -> None:
        g, pos, prep = key
        self.sources[key].add(source)
        self.writer_uses[key][writer] += n
        self.governors[(g, pos)] += n
        self.governor_writers[(g, pos)].add(writer)
        self.slots[(pos, prep)] += n
        self.pos_totals[pos] += n

    @classmethod
    def from_attachments(cls, attachments: Iterable[Attachment], *, words: int = 0) -> Tally:
        t = cls(words=words)
        for a in attachments:
            t.add(a.writer, a.key)
        return t

    @classmethod
    def from_rows(cls, rows: Iterable[tuple], *, words: int = 0, classes: int = 0) -> Tally:
        """From stored counts: (run id, class, writer, governor, POS, preposition, uses); the
        run id names the class-term (a row without it counts its class as the class-term)."""
        t = cls(words=words, classes=classes)
        for row in rows:
            run, class_name, writer, g, pos, prep, n = row if len(row) == 7 else (row[0], *row)
            t.add(f"{class_name}\x1f{writer}", (g, pos, prep), int(n), source=run)
        return t

    def merged(self, other: Tally, *, as_class: str = "") -> Tally:
        """This tally plus ``other`` (whose writers are prefixed with ``as_class``; ``other``
        is one more class-term)."""
        t = Tally(words=self.words + other.words, classes=self.classes + other.classes)
        for tally, prefix in ((self, ""), (other, f"{as_class}\x1f" if as_class else "")):
            for key, per in tally.writer_uses.items():
                for w, n in per.items():
                    t.add(prefix + w, key, n)
        t.sources = defaultdict(set)
        for key in self.writer_uses:
            t.sources[key] |= self.sources.get(key) or {""}
        for key in other.writer_uses:
            t.sources[key].add(("this class-term", as_class))
        return t

    def occurs_in(self, key: Key) -> int:
        """In how many class-terms the pattern occurs (1 outside a pool)."""
        return max(1, len(self.sources.get(key, ())))

    def count(self, key: Key) -> int:
        return sum(self.writer_uses.get(key, {}).values())

    def writers(self, key: Key) -> int:
        return len(self.writer_uses.get(key, {}))

    def top_writer_uses(self, key: Key) -> int:
        per = self.writer_uses.get(key)
        return max(per.values()) if per else 0


def count_patterns(attachments: Iterable[Attachment]) -> pd.DataFrame:
    """One row per pattern, sorted by governor, POS, preposition."""
    counts: Counter = Counter()
    writers: dict[tuple, set] = defaultdict(set)
    gov_counts: Counter = Counter()
    for a in attachments:
        counts[a.key] += 1
        writers[a.key].add(a.writer)
        gov_counts[(a.governor, a.governor_pos)] += 1
    rows = [
        (g, p, prep, n, len(writers[(g, p, prep)]), gov_counts[(g, p)])
        for (g, p, prep), n in sorted(counts.items())
    ]
    return pd.DataFrame(rows, columns=COLUMNS)


def typo_map(
    lemmas: Iterable[tuple[str, str]],
    lexicon: Mapping[tuple[str, str], int],
    *,
    ratio: float = TYPO_RATIO,
    known_zipf: float = KNOWN_ZIPF,
    words: Collection[str] = frozenset(),
    keep: Collection[str] = frozenset(),
) -> GovernorMap:
    """Map misspelt governor lemmas to a frequent known lemma of the same POS.

    Only a form that is not a word itself is grouped: a lemma in the reference, in
    ``words`` or common in wordfreq stays as written, and so does one the teacher
    keeps (``keep``, from ``scan --keep-spelling``). The one exception is a spelling
    variant of a known lemma (:func:`spelling_key`: "summarise" is counted as
    "summarize" of an American reference): the same word, spelt another way.

    :param lemmas: the class's (lemma, POS) governors.
    :param lexicon: (lemma, POS) -> tokens in the reference.
    :param words: known words (lower case), e.g. :attr:`hingeword.rules.Rules.words`.
    :param keep: lemmas never to group (lower case).
    :returns: ``{(misspelt, pos): (known, pos)}`` for the lemmas that were grouped.
    """
    from wordfreq import zipf_frequency

    targets: dict[str, list[str]] = defaultdict(list)
    for (lemma, pos), n in lexicon.items():
        if n >= MIN_TARGET_TOKENS and lemma.isalpha():
            targets[pos].append(lemma)
    for pos in targets:
        targets[pos].sort()
    variants = {(spelling_key(lem), pos): lem for pos, lems in targets.items() for lem in lems}
    out: GovernorMap = {}
    for lemma, pos in sorted(set(lemmas)):
        if not lemma.isalpha() or len(lemma) < 4 or lexicon.get((lemma, pos), 0) > 0:
            continue
        if lemma.lower() in keep or zipf_frequency(lemma, "en") >= known_zipf:
            continue
        if lemma.lower() in words:  # a word: grouped only under another spelling of itself
            other = variants.get((spelling_key(lemma), pos))
            if other is not None and other != lemma:
                out[(lemma, pos)] = (other, pos)
            continue
        best = process.extractOne(lemma, targets.get(pos, []), scorer=fuzz.ratio, score_cutoff=ratio)
        if best is not None:
            out[(lemma, pos)] = (best[0], pos)
    return out


def participle_map(
    items: Iterable[tuple[str, str, str]],
    lexicon: Mapping[tuple[str, str], int],
    *,
    ratio: float = TYPO_RATIO,
    known_zipf: float = KNOWN_ZIPF,
    words: Collection[str] = frozenset(),
    keep: Collection[str] = frozenset(),
) -> GovernorMap:
    """Misspelt participial adjectives the tagger reads as verbs.

    "I am intrested in art": the small pipeline tags "intrested" as a VERB with the
    lemma "intreste", so no verb is near it. When a VERB governor is unknown, its
    surface form ends in "-ed" and that form is within ``ratio`` of a known ADJ of
    the reference ("interested", "worried", "married"), it is grouped under that
    adjective.

    A lemma or form that is a word (``words``, wordfreq) or that the teacher keeps
    (``keep``, lemma or form) is left as written.

    :param items: (lemma, POS, surface form) of the class's governors.
    :returns: ``{(lemma, "VERB"): (adjective, "ADJ")}``
    """
    from wordfreq import zipf_frequency

    adjectives = sorted(lem for (lem, pos), n in lexicon.items() if pos == "ADJ" and n >= MIN_TARGET_TOKENS and lem.isalpha())
    variant_adjectives = {spelling_key(a): a for a in adjectives}
    out: GovernorMap = {}
    for lemma, pos, surface in sorted(set(items)):
        form = surface.lower()
        if pos != "VERB" or not form.endswith("ed") or not form.isalpha() or lexicon.get((lemma, pos), 0) > 0:
            continue
        if zipf_frequency(form, "en") >= known_zipf or (lemma, pos) in out:
            continue
        if any(w in keep for w in (lemma.lower(), form)):
            continue
        if any(w in words for w in (lemma.lower(), form)):  # a word: only another spelling of itself
            other = variant_adjectives.get(spelling_key(form))
            if other is not None and other != form:
                out[(lemma, pos)] = (other, "ADJ")
            continue
        best = process.extractOne(form, adjectives, scorer=fuzz.ratio, score_cutoff=ratio)
        if best is not None:
            out[(lemma, pos)] = (best[0], "ADJ")
    return out


def regroup(attachments: Iterable[Attachment], mapping: Mapping[tuple[str, str], tuple[str, str]]) -> list[Attachment]:
    """Replace misspelt governors by the known (lemma, POS) ``mapping`` gives.

    The surface form stays as written; ``original_governor`` keeps the old lemma.
    """
    out = []
    for a in attachments:
        new = mapping.get((a.governor, a.governor_pos))
        out.append(replace(a, governor=new[0], governor_pos=new[1], original_governor=a.governor) if new else a)
    return out


def group_governors(attachments: list[Attachment], lexicon: Mapping[tuple[str, str], int], *,
                    words: Collection[str] = frozenset(),
                    keep: Collection[str] = frozenset()) -> tuple[list[Attachment], GovernorMap]:
    """Group misspelt governors (:func:`typo_map`, then :func:`participle_map`) under known lemmas.

    :param words: known words, never grouped (:attr:`hingeword.rules.Rules.words`).
    :param keep: forms the teacher keeps as written (``scan --keep-spelling``).
    :returns: the regrouped attachments and the grouping applied (for the run's notes).
    """
    keep = frozenset(k.strip().lower() for k in keep)
    # a kept form may be given as written ("intrested") or as its lemma ("intreste")
    keep |= {a.governor.lower() for a in attachments if a.governor_text.lower() in keep}
    groups = typo_map({(a.governor, a.governor_pos) for a in attachments}, lexicon, words=words, keep=keep)
    unmatched = {(a.governor, a.governor_pos, a.governor_text) for a in attachments
                 if (a.governor, a.governor_pos) not in groups}
    groups.update(participle_map(unmatched, lexicon, words=words, keep=keep))
    return regroup(attachments, groups), groups

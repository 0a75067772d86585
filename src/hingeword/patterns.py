"""Pattern counts of a class, and typo-tolerant grouping of governors.

A pattern is (governor lemma, governor POS, preposition). ``learner_governor_count``
is the number of attachments of that governor to any slot (all prepositions, the
``-`` direct-object slot and particles): the row total R1 of docs/methods.md §1 and the
base of the learner-vs-reference comparison.
"""

from __future__ import annotations

from collections import Counter, defaultdict
from collections.abc import Iterable, Mapping
from dataclasses import replace

import pandas as pd
from rapidfuzz import fuzz, process

from .extract import Attachment

#: ``(lemma, POS) -> (known lemma, POS)``: how misspelt governors were grouped.
GovernorMap = dict[tuple[str, str], tuple[str, str]]

COLUMNS = ["governor", "governor_pos", "preposition", "learner_count", "learner_writers", "learner_governor_count"]

#: A governor lemma counts as a known word when the reference has it, or when it
#: is at least this common in general English (wordfreq's Zipf scale: 3.0 = once
#: per million words). Misspellings learners make ("intrested", "recieve") sit
#: below 3 on the web-based lists; real words rarer than that are kept as written.
KNOWN_ZIPF = 3.0
#: rapidfuzz ``fuzz.ratio`` (0–100) a misspelt lemma needs to a known lemma of the
#: same POS to be grouped under it: 85 joins one slip in a 6–7 letter word
#: ("dicuss"→"discuss" 92, "intrested"→"interested" 95) but not distinct words
#: ("depend"/"defend" 83, "adapt"/"adopt" 80).
TYPO_RATIO = 85.0
#: Known lemmas need this many tokens in the reference to be a grouping target.
MIN_TARGET_TOKENS = 5


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
) -> GovernorMap:
    """Map misspelt governor lemmas to a frequent known lemma of the same POS.

    :param lemmas: the class's (lemma, POS) governors.
    :param lexicon: (lemma, POS) -> tokens in the reference.
    :returns: ``{(misspelt, pos): (known, pos)}`` for the lemmas that were grouped.
    """
    from wordfreq import zipf_frequency

    targets: dict[str, list[str]] = defaultdict(list)
    for (lemma, pos), n in lexicon.items():
        if n >= MIN_TARGET_TOKENS and lemma.isalpha():
            targets[pos].append(lemma)
    for pos in targets:
        targets[pos].sort()
    out: GovernorMap = {}
    for lemma, pos in sorted(set(lemmas)):
        if not lemma.isalpha() or len(lemma) < 4 or lexicon.get((lemma, pos), 0) > 0:
            continue
        if zipf_frequency(lemma, "en") >= known_zipf:
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
) -> GovernorMap:
    """Misspelt participial adjectives the tagger reads as verbs.

    "I am intrested in art": the small pipeline tags "intrested" as a VERB with the
    lemma "intreste", so no verb is near it. When a VERB governor is unknown, its
    surface form ends in "-ed" and that form is within ``ratio`` of a known ADJ of
    the reference ("interested", "worried", "married"), it is grouped under that
    adjective.

    :param items: (lemma, POS, surface form) of the class's governors.
    :returns: ``{(lemma, "VERB"): (adjective, "ADJ")}``
    """
    from wordfreq import zipf_frequency

    adjectives = sorted(lem for (lem, pos), n in lexicon.items() if pos == "ADJ" and n >= MIN_TARGET_TOKENS and lem.isalpha())
    out: GovernorMap = {}
    for lemma, pos, surface in sorted(set(items)):
        form = surface.lower()
        if pos != "VERB" or not form.endswith("ed") or not form.isalpha() or lexicon.get((lemma, pos), 0) > 0:
            continue
        if zipf_frequency(form, "en") >= known_zipf or (lemma, pos) in out:
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


def group_governors(attachments: list[Attachment], lexicon: Mapping[tuple[str, str], int]) -> tuple[list[Attachment], GovernorMap]:
    """Group misspelt governors (:func:`typo_map`, then :func:`participle_map`) under known lemmas.

    :returns: the regrouped attachments and the grouping applied (for the run's notes).
    """
    groups = typo_map({(a.governor, a.governor_pos) for a in attachments}, lexicon)
    unmatched = {(a.governor, a.governor_pos, a.governor_text) for a in attachments
                 if (a.governor, a.governor_pos) not in groups}
    groups.update(participle_map(unmatched, lexicon))
    return regroup(attachments, groups), groups

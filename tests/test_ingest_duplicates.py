"""Near-duplicate detection among many essays: shingle hashing finds edited copies and
checks only a few pairs (the count of checked pairs, never a time, is asserted).

The texts are random sequences of invented words, made for these tests.
"""

from __future__ import annotations

import random

from rapidfuzz import fuzz

from hingeword.ingest import Essay
from hingeword.ingest.duplicates import _fuzzy_form, _near_duplicates, candidate_pairs, signatures
from hingeword.ingest.records import _essay, _Info

_SYLLABLES = ["ka", "lo", "mi", "ne", "ru", "sa", "ti", "vo", "ze", "bu", "da", "fe", "go", "hi"]


def _words(rnd: random.Random, n: int) -> list[str]:
    return ["".join(rnd.choice(_SYLLABLES) for _ in range(rnd.randint(1, 3))) for _ in range(n)]


def _essays(texts: list[str]) -> list[Essay]:
    return [_essay(f"e{i:04d}.txt", t, f"e{i:04d}.txt", "utf-8", _Info(f"w{i}", None, None, None, {}))
            for i, t in enumerate(texts)]


def _edited_copy(rnd: random.Random, words: list[str], vocab: list[str], threshold: float) -> list[str]:
    """Random word substitutions, insertions and deletions, stopped just before the ratio falls under ``threshold``."""
    copy, last = list(words), None
    while True:
        i = rnd.randrange(len(copy))
        op = rnd.random()
        if op < 0.6:
            copy[i] = rnd.choice(vocab)
        elif op < 0.8:
            copy.insert(i, rnd.choice(vocab))
        else:
            del copy[i]
        if fuzz.ratio(" ".join(words), " ".join(copy)) < threshold:
            return last
        last = list(copy)


def test_ingest_near_duplicates_edited_copies_found_among_many():
    rnd = random.Random(7)
    vocab = sorted(set(_words(rnd, 3000)))
    originals = [_words(rnd, rnd.randint(150, 250)) for _ in range(300)]
    copies = {}
    for k in range(0, 300, 10):  # 30 copies edited right down to the threshold
        copies[k] = _edited_copy(rnd, originals[k], vocab, 95.0)
    texts = [" ".join(w) for w in originals] + [" ".join(c) for c in copies.values()]
    essays = _essays(texts)

    found = {(p.first, p.second) for p in _near_duplicates(essays, 95.0)}

    expected = {(essays[k].essay_id, essays[300 + n].essay_id) for n, k in enumerate(copies)}
    assert expected <= found
    # and nothing else: every reported pair really is that similar
    for first, second in found - expected:
        a, b = (next(e.text for e in essays if e.essay_id == x) for x in (first, second))
        assert fuzz.ratio(_fuzzy_form(a), _fuzzy_form(b)) >= 95


def test_ingest_near_duplicates_compare_few_pairs_of_unrelated_essays():
    rnd = random.Random(8)
    forms = [" ".join(_words(rnd, 200)) for _ in range(2000)]
    pairs = candidate_pairs(signatures(forms))
    assert len(pairs) < 200  # of 1,999,000 possible pairs: the work grows with the essays, not their square


def test_ingest_near_duplicates_signature_ignores_case_and_punctuation():
    a = "We discussed about the plan, and then we went home."
    b = "we DISCUSSED about the plan and then we went home"
    sig = signatures([_fuzzy_form(a), _fuzzy_form(b), _fuzzy_form("Completely other words are here today.")])
    assert (sig[0] == sig[1]).all()
    assert candidate_pairs(sig) == {(0, 1)}


def test_ingest_near_duplicates_short_and_empty_forms_are_compared():
    essays = _essays(["Yes!", "yes.", "No, thanks", "?!", "..."])
    found = {(p.first, p.second): p.similarity for p in _near_duplicates(essays, 95.0)}
    assert found == {("e0000.txt", "e0001.txt"): 100.0, ("e0003.txt", "e0004.txt"): 100.0}

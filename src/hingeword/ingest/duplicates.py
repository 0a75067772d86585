"""Exact copies (same SHA-256 of the normalised text) and near-duplicates
(rapidfuzz ratio at or above a threshold) among the essays read.

Comparing every essay with every other grows with the square of the class: 10,000
essays are 50 million comparisons. Near-duplicates are therefore found in two steps
that grow linearly with the number of essays:

1. **Candidates** by locality-sensitive hashing (MinHash with banding; Broder 1997,
   "On the resemblance and containment of documents"; Leskovec, Rajaraman & Ullman,
   *Mining of Massive Datasets*, ch. 3, from memory): each essay's comparison form is cut
   into word 3-grams (shingles); :data:`PERMUTATIONS` random hash functions each keep the
   smallest hash of the essay's shingles (the signature; two essays agree on one position
   with probability equal to the Jaccard similarity *J* of their shingle sets); the
   signature is cut into :data:`BANDS` bands of :data:`ROWS` values, and two essays that
   agree on a whole band become a candidate pair. A pair is a candidate with probability
   1 − (1 − J²)^64: 0.998 at J = 0.3, 1 − 10⁻⁵ at J = 0.4, 1 − 10⁻¹⁰ at J = 0.56.
2. **Check**: each candidate pair is compared exactly as before (``fuzz.ratio`` of the
   comparison forms, with the length pre-filter), so every pair reported is a true
   near-duplicate with its exact similarity.

Why the numbers: on native essays of about 210 words, copies edited by random word
substitutions, insertions and deletions until their ratio falls just under 95 still had
J ≥ 0.56 over word 3-grams, while unrelated essays had J ≤ 0.045 (median 0: the
probability that such a pair is even checked is about 10⁻⁴). The hashing is hand-written
in NumPy (about 40 lines) rather than taken from a library because it runs on every scan,
re-scans included, and must cost well under a millisecond an essay: hashing each shingle
through a Python call, as general MinHash libraries do, costs about one millisecond an
essay. The hash functions are fixed (CRC-32 of each word, a fixed seed), so a folder
always gives the same pairs.
"""

from __future__ import annotations

import re
import zlib

import numpy as np
from rapidfuzz import fuzz

from .records import Essay, NearDuplicate

#: Words per shingle.
SHINGLE_WORDS = 3
#: Hash functions (signature length) = ``BANDS`` × ``ROWS``.
BANDS, ROWS = 64, 2
PERMUTATIONS = BANDS * ROWS
_rng = np.random.default_rng(20261214)
#: multiply-shift hash functions h(x) = ((a·x + b) mod 2^64) >> 32 with odd a (Dietzfelbinger et al. 1997)
_A = _rng.integers(0, 1 << 63, PERMUTATIONS, dtype=np.uint64) * np.uint64(2) + np.uint64(1)
_B = _rng.integers(0, 1 << 63, PERMUTATIONS, dtype=np.uint64)
_SHIFT = np.uint64(32)
_MIX = (np.uint64(0x9E3779B97F4A7C15), np.uint64(0xC2B2AE3D27D4EB4F), np.uint64(0x165667B19E3779F9))


def _exact_duplicates(essays: list[Essay]) -> list[tuple[str, ...]]:
    groups: dict[str, list[str]] = {}
    for e in essays:
        groups.setdefault(e.sha256, []).append(e.essay_id)
    return [tuple(ids) for ids in groups.values() if len(ids) > 1]


def _fuzzy_form(text: str) -> str:
    return " ".join(re.sub(r"[^\w\s]|_", "", text.lower()).split())


def signatures(forms: list[str]) -> np.ndarray:
    """MinHash signatures (one row of :data:`PERMUTATIONS` values per text) of the word
    3-gram sets of ``forms``; a text of fewer than three words is one shingle."""
    word_hash: dict[str, int] = {}
    out = np.empty((len(forms), PERMUTATIONS), dtype=np.uint64)
    for row, form in enumerate(forms):
        words = form.split()
        hashes = np.fromiter((word_hash.get(w) or word_hash.setdefault(w, zlib.crc32(w.encode()) + 1)
                              for w in words), dtype=np.uint64, count=len(words))
        if len(hashes) < SHINGLE_WORDS:  # short text: one shingle of all its words (none: one of nothing)
            hashes = np.concatenate([hashes, np.zeros(SHINGLE_WORDS - len(hashes), np.uint64)])
        width = len(hashes) - SHINGLE_WORDS + 1
        shingle = np.zeros(width, dtype=np.uint64)
        for k in range(SHINGLE_WORDS):  # position-dependent mix of the words (wraps modulo 2^64)
            shingle += hashes[k:k + width] * _MIX[k]
        shingle = np.unique(shingle)
        out[row] = ((np.multiply.outer(shingle, _A) + _B) >> _SHIFT).min(axis=0)  # NumPy wraps modulo 2^64
    return out


def candidate_pairs(sig: np.ndarray) -> set[tuple[int, int]]:
    """Pairs ``(i, j)``, ``i < j``, of rows that agree on all :data:`ROWS` values of at least one band."""
    pairs: set[tuple[int, int]] = set()
    if len(sig) < 2:
        return pairs
    for band in range(BANDS):
        key = sig[:, band * ROWS]
        for r in range(1, ROWS):  # one number per band (a rare false match only costs a check)
            key = key * _MIX[0] ^ sig[:, band * ROWS + r]
        order = np.argsort(key, kind="stable")
        ordered = key[order]
        same = np.flatnonzero(ordered[1:] == ordered[:-1])  # runs of equal keys: the buckets
        if not len(same):
            continue
        starts = same[np.concatenate(([True], same[1:] != same[:-1] + 1))]
        for start in starts.tolist():
            end = start + 1
            while end < len(ordered) and ordered[end] == ordered[start]:
                end += 1
            members = sorted(order[start:end].tolist())
            pairs.update((members[x], members[y]) for x in range(len(members)) for y in range(x + 1, len(members)))
    return pairs


def _near_duplicates(essays: list[Essay], threshold: float) -> list[NearDuplicate]:
    """Pairs of non-identical essays with ``fuzz.ratio`` ≥ ``threshold`` among the candidates
    of :func:`candidate_pairs` (see the module docstring).

    ratio = 100 · 2M / (len_a + len_b) cannot exceed 100 · 2·min / (len_a + len_b),
    so candidates whose lengths alone rule out the threshold are never compared
    (for 95 that is a length difference above about 10%).
    """
    forms = [_fuzzy_form(e.text) for e in essays]
    pairs = []
    for i, j in sorted(candidate_pairs(signatures(forms))):
        if essays[i].sha256 == essays[j].sha256:
            continue
        la, lb = sorted((len(forms[i]), len(forms[j])))
        if 200 * la < threshold * (la + lb):
            continue
        score = fuzz.ratio(forms[i], forms[j], score_cutoff=threshold)
        if score >= threshold:
            pairs.append(NearDuplicate(essays[i].essay_id, essays[j].essay_id, round(score, 2)))
    order = {e.essay_id: k for k, e in enumerate(essays)}
    return sorted(pairs, key=lambda p: (-p.similarity, order[p.first], order[p.second]))

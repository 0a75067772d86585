"""Exact copies (same SHA-256 of the normalised text) and near-duplicates
(rapidfuzz ratio at or above a threshold) among the essays read.
"""

from __future__ import annotations

import re

from rapidfuzz import fuzz

from .records import Essay, NearDuplicate


def _exact_duplicates(essays: list[Essay]) -> list[tuple[str, ...]]:
    groups: dict[str, list[str]] = {}
    for e in essays:
        groups.setdefault(e.sha256, []).append(e.essay_id)
    return [tuple(ids) for ids in groups.values() if len(ids) > 1]


def _fuzzy_form(text: str) -> str:
    return " ".join(re.sub(r"[^\w\s]|_", "", text.lower()).split())


def _near_duplicates(essays: list[Essay], threshold: float) -> list[NearDuplicate]:
    """Pairs of non-identical essays with ``fuzz.ratio`` ≥ ``threshold``.

    ratio = 100 · 2M / (len_a + len_b) cannot exceed 100 · 2·min / (len_a + len_b),
    so pairs whose lengths alone rule out the threshold are never compared
    (for 95 that is a length difference above about 10%).
    """
    forms = sorted(((len(t), i, t) for i, t in
                    enumerate(_fuzzy_form(e.text) for e in essays)))
    pairs = []
    for a in range(len(forms)):
        la, i, ta = forms[a]
        for b in range(a + 1, len(forms)):
            lb, j, tb = forms[b]
            if 200 * la < threshold * (la + lb):
                break  # longer texts only widen the gap
            if essays[i].sha256 == essays[j].sha256:
                continue
            score = fuzz.ratio(ta, tb, score_cutoff=threshold)
            if score >= threshold:
                first, second = sorted((i, j))
                pairs.append(NearDuplicate(essays[first].essay_id, essays[second].essay_id,
                                           round(score, 2)))
    order = {e.essay_id: k for k, e in enumerate(essays)}
    return sorted(pairs, key=lambda p: (-p.similarity, order[p.first], order[p.second]))

"""Causes and suggestions against the bundled Brown reference and the committed rules.

Expected causes and suggestions are common teaching knowledge (common practice, no
source): they are how ESL teachers usually explain these errors.
"""

from __future__ import annotations

from collections import Counter

import pytest

from hingeword import reference as ref_mod
from hingeword.causes import Categoriser, categorise
from hingeword.record import PatternRecord, Status
from hingeword.reference import Reference
from hingeword.rules import load_rules


@pytest.fixture(scope="module")
def cat():
    return Categoriser(ref_mod.load_many([]), load_rules())


@pytest.mark.parametrize(
    "gov,pos,prep,cause",
    [
        ("discuss", "VERB", "about", "noun-pattern"),  # a discussion about
        ("emphasize", "VERB", "on", "noun-pattern"),  # an emphasis on
        ("involve", "VERB", "into", "directional"),  # involved in
        ("afraid", "ADJ", "about", "related-word"),  # concerned/worried about
        ("independent", "ADJ", "on", "related-word"),  # dependent on
        ("arrive", "VERB", "to", "directional"),  # arrive at/in
    ],
)
def test_causes_teaching_knowledge(cat, gov, pos, prep, cause):
    ranked = cat.categorise(gov, pos, prep)
    assert ranked[0].code == cause, [(c.code, c.confidence, c.evidence) for c in ranked]
    # evidence quotes reference counts ("N of M uses")
    assert " of " in ranked[0].evidence and any(ch.isdigit() for ch in ranked[0].evidence)


def test_causes_suggestion_depend_of_is_on(cat):
    slot, share, count = cat.suggestion("depend", "VERB", "of")
    assert slot == "on" and share > 0.5 and count > 20


def test_causes_suggestion_discuss_is_direct_object(cat):
    advice = cat.advise("discuss", "VERB", "about", cat.categorise("discuss", "VERB", "about"))
    assert advice.suggestion == "discuss + direct object"
    assert "no 'about'" in advice.explanation and "discussion about" in advice.explanation


def test_causes_l1_transfer_when_first_language_known(cat):
    ranked = cat.categorise("depend", "VERB", "of", l1_counts=Counter({"es": 3, "pt": 1, "pl": 1}))
    assert ranked[0].code == "l1-transfer"
    assert "Spanish" in ranked[0].evidence


def test_causes_unclear_without_evidence():
    # invented reference: nothing related to "glorp" exists
    ref = Reference(manifest={"name": "tiny"}, patterns=Counter({("glorp", "VERB", "-"): 30}))
    cat = Categoriser(ref, load_rules())
    ranked = cat.categorise("glorp", "VERB", "about")
    assert [c.code for c in ranked] == ["unclear"]


def test_causes_records_gain_advice_and_export_fields(cat):
    recs = [PatternRecord("discuss", "VERB", "about", flagged=True, status=Status.OVER_USED),
            PatternRecord("talk", "VERB", "about", status=Status.AS_NATIVE)]
    out = categorise(recs, cat.ref, cat.rules, {})
    assert out[0].advice.cause.code == "noun-pattern" and out[0].advice.suggestion == "discuss + direct object"
    row = out[0].to_row()
    assert row["cause"] == "noun-pattern" and row["suggestion"] == "discuss + direct object"
    assert row["causes"] and all({"code", "confidence", "evidence", "label"} <= set(c) for c in row["causes"])
    assert out[1].advice is None and out[1].to_row()["cause"] == "" and out[1].to_row()["suggestion"] == ""

"""Causes and suggestions against the bundled Brown reference and the committed rules.

Expected causes and suggestions are common teaching knowledge (common practice, no
source): they are how ESL teachers usually explain these errors.
"""

from __future__ import annotations

from collections import Counter

import pytest

from hingeword import reference as ref_mod
from hingeword.causes import Categoriser, categorise_figures
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
    desc = cat.describe("discuss", "VERB", "about", cat.categorise("discuss", "VERB", "about"))
    assert desc["suggestion"] == "discuss + direct object"
    assert "no 'about'" in desc["explanation"] and "discussion about" in desc["explanation"]


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


def test_causes_figures_gain_export_fields(cat):
    figs = [{"governor": "discuss", "governor_pos": "VERB", "preposition": "about", "flagged": True, "status": "over-used"},
            {"governor": "talk", "governor_pos": "VERB", "preposition": "about", "flagged": False, "status": "as native"}]
    out = categorise_figures(figs, cat.ref, cat.rules, {})
    assert out[0]["cause"] == "noun-pattern" and out[0]["suggestion"] == "discuss + direct object"
    assert out[0]["causes"] and all({"code", "confidence", "evidence", "label"} <= set(c) for c in out[0]["causes"])
    assert out[1]["cause"] == "" and out[1]["suggestion"] == ""

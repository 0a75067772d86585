"""Causes and suggestions against the bundled Brown reference and the committed rules.

Expected causes and suggestions are common teaching knowledge (common practice, no
source): they are how ESL teachers usually explain these errors.
"""

from __future__ import annotations

from collections import Counter

import pytest

from hingeword import reference as ref_mod
from hingeword.causes import Categoriser, categorise, reason_for_learners
from hingeword.record import Cause, PatternRecord, Status
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
    assert advice.explanation == "We discuss something: no 'about'."
    assert reason_for_learners("discuss", "about", advice.cause) == (
        "Carried over from the noun 'discussion': we say 'a discussion about something'.")


def test_causes_reason_names_the_related_word():
    # a related word that takes a direct object: "by analogy with 'hear': we say 'hear something'"
    cause = Cause("related-word", 0.4, "'hear + object' (synonym): 30 of 40 uses of 'hear' in the reference (75%)",
                  "by analogy with a related word")
    assert reason_for_learners("listen", "-", cause) == (
        "By analogy with 'hear': we say 'hear something', but 'listen' is different.")
    cause = Cause("directional", 0.3, "'to' marks movement; …", "a word for movement")
    assert reason_for_learners("arrive", "to", cause) == (
        "The word 'to' shows movement towards something; after 'arrive' English does not use it.")
    assert reason_for_learners("x", "of", Cause("unclear", 0.0, "", "")) is None


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


# --- suggestions that fit the object (an invented reference with object classes) ---------------


def _object_reference() -> Reference:
    rows = {  # (governor, POS, slot, object class): count — invented, shaped like native use
        ("arrive", "VERB", "at", "building"): 30, ("arrive", "VERB", "at", "idea"): 25,
        ("arrive", "VERB", "at", "place"): 4, ("arrive", "VERB", "in", "place"): 35,
        ("arrive", "VERB", "in", "name"): 12, ("arrive", "VERB", "at", "name"): 1,
        ("arrive", "VERB", "in", "time"): 3, ("arrive", "VERB", "to", "place"): 1,
        ("good", "ADJ", "at", "event"): 20, ("good", "ADJ", "for", "nature"): 15, ("good", "ADJ", "for", "person"): 4,
        ("good", "ADJ", "with", "person"): 12, ("good", "ADJ", "at", "idea"): 6,
        ("depend", "VERB", "on", "person"): 20, ("depend", "VERB", "on", "idea"): 30,
    }
    patterns: Counter = Counter()
    for (g, pos, prep, _cls), n in rows.items():
        patterns[(g, pos, prep)] += n
    return Reference(manifest={"name": "objects"}, patterns=patterns, objects=Counter(rows))


@pytest.fixture
def ocat():
    return Categoriser(_object_reference(), load_rules())


def test_causes_suggestion_fits_a_city_object(ocat):
    # "arrive to Rome / Tokyo": natives arrive *in* a city, although "arrive at" is the verb's usual slot
    advice = ocat.advise("arrive", "VERB", "to", ocat.categorise("arrive", "VERB", "to"), {"place": 5})
    assert advice.suggested_preposition == "in" and advice.suggestion == "arrive in"
    assert advice.native_pattern == "arrive in a place (a city, a country)"
    assert advice.preposition_for("place") == "in"
    assert "arrive in a place" in advice.explanation and "not 'arrive to something'" in advice.explanation


def test_causes_suggestion_names_both_when_both_apply(ocat):
    advice = ocat.advise("arrive", "VERB", "to", (), {"place": 4, "building": 2, "name": 1})
    assert advice.by_object == (("place", "in"), ("building", "at"), ("any other", "at"))
    assert advice.native_pattern == "arrive in a place (a city, a country), at a building or something else"
    # a name (a person, a town, a language alike) is too mixed to advise on: the verb's usual slot
    assert [advice.preposition_for(c) for c in ("place", "building", "name")] == ["in", "at", "at"]


def test_causes_suggestion_without_enough_evidence_for_the_object_is_the_usual_slot(ocat):
    # "time" has 3 native uses (< MIN_CLASS_COUNT): the verb's usual slot; one class alone gives plain advice
    advice = ocat.advise("arrive", "VERB", "to", (), {"time": 2})
    assert advice.by_object == () and advice.native_pattern == "arrive at something"
    # a class with evidence and one without: the rest take the usual slot, said as "something else"
    advice = ocat.advise("arrive", "VERB", "to", (), {"place": 3, "time": 1})
    assert advice.by_object == (("place", "in"), ("any other", "at"))
    assert advice.preposition_for("time") == "at" and advice.preposition_for("place") == "in"
    assert advice.native_pattern == "arrive in a place (a city, a country), at something else"


@pytest.mark.parametrize("classes,slot,native", [
    ({"event": 3}, "at", "be good at something"),  # "good at swimming": the usual slot, plain words
    ({"person": 3}, "with", "be good with a person"),  # "good with children"
    ({"nature": 2}, "for", "be good for a living thing or substance"),  # "good for your health"
])
def test_causes_suggestion_good_at_for_with(ocat, classes, slot, native):
    advice = ocat.advise("good", "ADJ", "in", (), classes)
    assert advice.suggested_preposition == slot and advice.native_pattern == native


def test_causes_suggestion_depend_on_whatever_the_object(ocat):
    for classes in ({"person": 3}, {"idea": 2, "person": 1}, {"other": 4}):
        advice = ocat.advise("depend", "VERB", "of", (), classes)
        assert advice.suggested_preposition == "on" and advice.by_object == ()
        assert advice.native_pattern == "depend on something"


def test_causes_record_round_trips_the_slots_by_object(ocat):
    rec = PatternRecord("arrive", "VERB", "to", flagged=True, status=Status.OVER_USED)
    [out] = categorise([rec], ocat.ref, ocat.rules, {}, {rec.key: Counter({"place": 3, "building": 1})})
    row = out.to_row()
    assert row["suggestion_by_object"] == "place: in; building: at"
    assert PatternRecord.from_row(row).advice == out.advice


@pytest.mark.slow
def test_causes_suggestion_fits_real_parses_against_the_bundled_reference(cat):
    """Real parses and the bundled reference: "arrive to Rome" gets "in", "arrive to the station" "at"."""
    from hingeword.causes import object_tallies
    from hingeword.extract import extract_doc
    from hingeword.parse import load_model
    from hingeword.report.context import native_of
    from hingeword.report.text import answer_key, sentence_view

    nlp, _ = load_model(None)
    texts = ["When we arrived to Rome, it was raining.", "They arrived to Tokyo late at night.",
             "I arrived to Madrid on a cold morning.", "We arrived to the station too early.",
             "She arrived to the airport by taxi."]
    atts = [a for t in texts for a in extract_doc(nlp(t), essay_id=t[:8], writer=t[:8])
            if a.key == ("arrive", "VERB", "to")]
    assert [a.object_class for a in atts] == ["place", "place", "place", "building", "building"]
    rec = PatternRecord("arrive", "VERB", "to", flagged=True, status=Status.OVER_USED)
    [out] = categorise([rec], cat.ref, cat.rules, {}, object_tallies(atts))
    assert out.advice.suggested_preposition == "in"
    assert out.advice.native_pattern == "arrive in a place (a city, a country), at a building"
    answers = [answer_key(sentence_view(a), "to", out.advice.preposition_for(a.object_class))[0] for a in atts]
    assert answers[0] == "When we arrived in Rome, it was raining."
    assert answers[3] == "We arrived at the station too early."
    # a student who wrote only about cities is told only about cities
    assert native_of(out, ["place", "place"])[1] == "arrive in a place (a city, a country)"

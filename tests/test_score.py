"""Scoring: flags, statuses and their invariants.

The classes and reference counts below are invented for the tests.
"""

from __future__ import annotations

from collections import Counter

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from hingeword.extract import Attachment
from hingeword.patterns import count_patterns
from hingeword.reference import Reference
from hingeword.record import CONTRACT, Status
from hingeword.score import DEFAULTS, Thresholds, score_patterns


def att(writer: str, gov: str, prep: str, pos: str = "VERB") -> Attachment:
    return Attachment(essay_id=f"{writer}.txt", writer=writer, governor=gov, governor_pos=pos, governor_text=gov,
                      preposition=prep, relation="prep", sentence="x", sentence_start=0, gov_start=0, gov_end=1,
                      prep_start=2, prep_end=3)


def reference(extra: dict | None = None) -> Reference:
    counts = Counter({
        ("discuss", "VERB", "-"): 280, ("discuss", "VERB", "with"): 15, ("discuss", "VERB", "in"): 5,
        ("depend", "VERB", "on"): 180, ("depend", "VERB", "upon"): 20,
        ("talk", "VERB", "about"): 150, ("talk", "VERB", "to"): 100, ("talk", "VERB", "with"): 50,
        ("go", "VERB", "to"): 900, ("go", "VERB", "out"): 100,
        ("rare", "ADJ", "in"): 3,
    })
    counts.update(extra or {})
    return Reference(manifest={"name": "invented"}, patterns=counts)


def planted_class() -> list[Attachment]:
    """Five writers write "discuss about"; one writer repeats "depend of" six times."""
    out = []
    for i, w in enumerate(["ana", "ben", "chen", "dina", "emre"]):
        out += [att(w, "discuss", "about"), att(w, "discuss", "-"), att(w, "talk", "about"), att(w, "go", "to")]
        out += [att(w, "depend", "on")]
    out += [att("ana", "depend", "of") for _ in range(6)]
    return out


def scored(atts, ref=None, **settings):
    return score_patterns(count_patterns(atts), atts, ref or reference(), Thresholds(**settings))


def row(records, gov, prep):
    sub = [r for r in records if (r.governor, r.preposition) == (gov, prep)]
    assert len(sub) == 1, f"{gov} + {prep} not in result"
    return sub[0]


def test_score_planted_pattern_flagged_single_habit_not():
    df = scored(planted_class())
    discuss = row(df, "discuss", "about")
    assert discuss.flagged and discuss.status == "over-used"
    assert discuss.learner_writers == 5 and discuss.reference_count == 0
    habit = row(df, "depend", "of")
    assert habit.learner_count == 6 and habit.learner_writers == 1
    assert not habit.flagged and habit.status is Status.CONCENTRATED
    assert row(df, "talk", "about").status == "as native"


def test_score_rows_in_contract_order():
    records = scored(planted_class())
    assert tuple(records[0].to_row())[: len(CONTRACT)] == CONTRACT
    assert records[0].flagged  # flagged patterns come first


def test_score_rare_governor_is_not_enough_reference_evidence():
    atts = [att(w, "rare", "on", "ADJ") for w in ("a", "b", "c", "d")]
    df = scored(atts)
    assert row(df, "rare", "on").status == "not enough reference evidence"
    assert not row(df, "rare", "on").flagged


def test_score_under_use_reported_for_avoided_native_pattern():
    # "listen music": the class writes the object slot; natives write "listen to"
    ref = reference({("listen", "VERB", "to"): 200, ("listen", "VERB", "-"): 4})
    atts = [att(w, "listen", "-") for w in ("a", "b", "c", "d", "e") for _ in range(2)]
    df = scored(atts, ref)
    assert row(df, "listen", "-").status == "over-used"
    to = row(df, "listen", "to")
    assert to.status == "under-used" and to.learner_count == 0


def test_score_over_use_of_native_form_not_flagged():
    # "talk about" is a native form (150 of 300 in the invented reference); a class that
    # writes it for every use of "talk" over-uses it but is not flagged
    atts = [att(w, "talk", "about") for w in ("a", "b", "c", "d", "e", "f") for _ in range(5)]
    df = scored(atts)
    talk = row(df, "talk", "about")
    assert talk.log_likelihood > 10.83 and talk.log_ratio >= 1
    assert talk.status == "over-used (native form)" and not talk.flagged


def test_score_pattern_of_two_writers_in_a_large_class_not_flagged():
    # 14 writers of equal size; "discuss about" by 2 of them only: DP 0.86 > 0.8
    atts = []
    for i in range(14):
        w = f"w{i:02d}"
        atts += [att(w, "discuss", "-"), att(w, "talk", "about"), att(w, "go", "to")]
        # equal writer sizes: two "discuss about" for the first two, two objects for the rest
        atts += [att(w, "discuss", "about" if i < 2 else "-") for _ in range(2)]
    df = scored(atts)
    discuss = row(df, "discuss", "about")
    assert discuss.learner_writers == 2 and discuss.dispersion_dp > 0.8
    assert discuss.status is Status.CONCENTRATED
    assert row(scored(atts, max_dispersion=0.9), "discuss", "about").flagged


def test_score_thresholds_are_options():
    df = scored(planted_class(), min_writers=6)
    assert not row(df, "discuss", "about").flagged
    df = scored(planted_class(), min_writers=1)
    assert row(df, "depend", "of").flagged


def test_score_defaults_documented():
    assert DEFAULTS.as_dict() == {"min_count": 3, "min_writers": 2, "min_reference": 20, "min_g2": 10.83,
                                  "min_log_ratio": 1.0, "max_native_share": 0.05, "max_dispersion": 0.8,
                                  "measure": "oe"}


def test_score_unknown_threshold_is_an_error():
    from hingeword.errors import HingewordError

    with pytest.raises(HingewordError, match="unknown threshold 'min_cuont'"):
        Thresholds.from_mapping({"min_cuont": 2})
    assert Thresholds.from_mapping({"min_count": 2, "term_start": "x"}, ignore=("term_start",)).min_count == 2


@settings(max_examples=60, deadline=None)
@given(n=st.integers(0, 8), writers=st.integers(1, 6))
def test_score_flag_never_fires_below_minimum_counts(n, writers):
    names = [f"w{i}" for i in range(writers)]
    atts = [att(names[i % writers], "discuss", "about") for i in range(n)] + [att("x", "discuss", "-")]
    sub = [r for r in scored(atts) if (r.governor, r.preposition) == ("discuss", "about")]
    if n < DEFAULTS.min_count or min(n, writers) < DEFAULTS.min_writers:
        assert not any(r.flagged for r in sub)


@settings(max_examples=40, deadline=None)
@given(extra=st.integers(1, 5000))
def test_score_unrelated_counts_do_not_change_conditional_comparison(extra):
    base = scored(planted_class())
    ref = reference({("unrelated", "NOUN", "of"): extra})
    atts = planted_class() + [att("zed", "unrelated", "of") for _ in range(3)]
    more = scored(atts, ref)
    for col in ("log_likelihood", "log_ratio", "reference_count", "reference_governor_count", "status"):
        assert getattr(row(more, "discuss", "about"), col) == pytest.approx(getattr(row(base, "discuss", "about"), col))

"""Scoring: the flag decision, its statuses and their invariants.

The classes and reference counts below are invented for the tests.
"""

from __future__ import annotations

from collections import Counter

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from hingeword.errors import HingewordError
from hingeword.extract import Attachment
from hingeword.patterns import Tally
from hingeword.record import CONTRACT, Status
from hingeword.reference import Reference
from hingeword.score import DEFAULTS, Evidence, Thresholds, decide_all, score_patterns


def att(writer: str, gov: str, prep: str, pos: str = "VERB") -> Attachment:
    return Attachment(essay_id=f"{writer}.txt", writer=writer, governor=gov, governor_pos=pos, governor_text=gov,
                      preposition=prep, relation="prep", sentence="x", sentence_start=0, gov_start=0, gov_end=1,
                      prep_start=2, prep_end=3)


def reference(extra: dict | None = None) -> Reference:
    counts = Counter({
        ("discuss", "VERB", "-"): 280, ("discuss", "VERB", "with"): 15, ("discuss", "VERB", "in"): 5,
        ("depend", "VERB", "on"): 180, ("depend", "VERB", "upon"): 20,
        ("talk", "VERB", "about"): 150, ("talk", "VERB", "to"): 100, ("talk", "VERB", "with"): 50,
        ("go", "VERB", "to"): 900, ("go", "VERB", "out"): 100, ("go", "VERB", "because of"): 2,
        ("have", "VERB", "-"): 3000, ("have", "VERB", "because of"): 3, ("have", "VERB", "in"): 200,
        ("rare", "ADJ", "in"): 3,
    })
    counts.update(extra or {})
    return Reference(manifest={"name": "invented"}, patterns=counts)


def planted_class(writers: int = 5) -> list[Attachment]:
    """Five writers write "discuss about"; one writer repeats "depend of" six times; everyone
    also writes ordinary patterns."""
    out = []
    for i in range(writers):
        w = f"w{i:04d}"
        out += [att(w, "talk", "about"), att(w, "go", "to"), att(w, "depend", "on")]
        if i < 5:  # the same five writers, whatever the size of the class
            out += [att(w, "discuss", "-"), att(w, "discuss", "about")]
    out += [att("w0000", "depend", "of") for _ in range(6)]
    return out


def scored(atts, ref=None, pooled=None, **settings):
    return score_patterns(Tally.from_attachments(atts), ref or reference(), Thresholds(**settings), pool=pooled)


def row(records, gov, prep):
    sub = [r for r in records if (r.governor, r.preposition) == (gov, prep)]
    assert len(sub) == 1, f"{gov} + {prep} not in result"
    return sub[0]


def test_score_planted_pattern_flagged_single_habit_not():
    records = scored(planted_class())
    discuss = row(records, "discuss", "about")
    assert discuss.flagged and discuss.status is Status.OVER_USED
    assert discuss.learner_writers == 5 and discuss.reference_count == 0
    assert discuss.rate_ratio_low >= DEFAULTS.min_rate_ratio and discuss.evidence == "class"
    habit = row(records, "depend", "of")
    assert habit.learner_count == 6 and habit.learner_writers == 1
    assert not habit.flagged and habit.status is Status.CONCENTRATED
    assert row(records, "talk", "about").status is Status.AS_NATIVE


@pytest.mark.parametrize("writers", [12, 25, 120, 3000])
def test_score_same_evidence_same_decision_at_every_class_size(writers):
    """Five writers of 12 or of 3,000 wrote "discuss about": the class size does not change the flag
    (Gries's DP, which grows with the writers who do not use it, is only reported)."""
    discuss = row(scored(planted_class(writers)), "discuss", "about")
    assert discuss.flagged, (writers, discuss.rate_ratio_low)
    assert discuss.dispersion_dp > 0.3 if writers >= 120 else True


def test_score_rows_in_contract_order_flagged_first():
    records = scored(planted_class())
    assert tuple(records[0].to_row())[: len(CONTRACT)] == CONTRACT
    assert records[0].flagged and records[0].rank_score > 0


def test_score_rare_governor_is_not_enough_reference_evidence():
    atts = [att(w, "rare", "on", "ADJ") for w in ("a", "b", "c", "d")]
    r = row(scored(atts), "rare", "on")
    assert r.status is Status.NO_REFERENCE and not r.flagged


def test_score_a_form_natives_do_not_use_is_never_as_native():
    """3 of 60 uses of "discuss" with "about" against 0 of 30 native uses: the estimate is high,
    the evidence thin. The status says so; it does not call the form native."""
    small = reference()
    small.patterns[("discuss", "VERB", "-")] = 30
    small.patterns[("discuss", "VERB", "with")] = 0
    small.patterns[("discuss", "VERB", "in")] = 0
    atts = [att(f"w{i}", "discuss", "-") for i in range(57)] + [att(f"w{i}", "discuss", "about") for i in range(3)]
    r = row(scored(atts, small), "discuss", "about")
    assert r.status is Status.THIN and not r.flagged
    assert r.rate_ratio >= 2 > r.rate_ratio_low


def test_score_adjunct_the_class_uses_everywhere_is_not_a_pattern_of_one_verb():
    """The class writes "because of" with every verb, 20 times as often as natives do: neither
    "have because of" nor "go because of" is a pattern of that verb."""
    atts = []
    for i in range(30):
        w = f"w{i}"
        atts += [att(w, "have", "-") for _ in range(8)] + [att(w, "go", "to") for _ in range(8)]
        atts += [att(w, "have", "because of"), att(w, "go", "because of"), att(w, "talk", "about")]
    records = scored(atts)
    for gov in ("have", "go"):
        r = row(records, gov, "because of")
        assert not r.flagged, (gov, r.status, r.rate_ratio_low, r.general_rate_factor)
        assert r.general_rate_factor > 5
    assert row(records, "have", "because of").status is Status.ADJUNCT  # it would stand out without k


def test_score_over_use_of_native_form_not_flagged():
    # "talk about" is a native form (150 of 300 in the invented reference)
    atts = [att(w, "talk", "about") for w in ("a", "b", "c", "d", "e", "f") for _ in range(5)]
    talk = row(scored(atts), "talk", "about")
    assert talk.status is Status.NATIVE_FORM and not talk.flagged


def test_score_under_use_reported_for_avoided_native_pattern():
    # "listen music": the class writes the object slot; natives write "listen to"
    ref = reference({("listen", "VERB", "to"): 200, ("listen", "VERB", "-"): 4})
    atts = [att(w, "listen", "-") for w in ("a", "b", "c", "d", "e") for _ in range(2)]
    records = scored(atts, ref)
    assert row(records, "listen", "-").status is Status.OVER_USED
    to = row(records, "listen", "to")
    assert to.status is Status.UNDER_USED and to.learner_count == 0


def test_score_pooled_evidence_flags_a_pattern_too_rare_in_one_class():
    """The class wrote "discuss about" once; the workspace's other classes wrote it 8 times by 7 writers."""
    ref = reference()
    here = [att("ana", "discuss", "about"), att("ana", "discuss", "-"), att("ben", "discuss", "-"), att("ben", "go", "to")]
    others = Tally.from_rows([(f"class{i % 3}", f"s{i}", "discuss", "VERB", "about", 1 + (i == 0)) for i in range(7)]
                             + [(f"class{i % 3}", f"s{i}", "discuss", "VERB", "-", 2) for i in range(7)], classes=3)
    pool = others.merged(Tally.from_attachments(here), as_class="mine")
    alone = row(scored(here, ref), "discuss", "about")
    assert not alone.flagged and alone.status is Status.TOO_RARE
    pooled = row(scored(here, ref, pooled=pool), "discuss", "about")
    assert pooled.flagged and pooled.evidence == "workspace"
    assert (pooled.learner_count, pooled.learner_writers) == (1, 1)  # the class's own figures stay
    assert (pooled.pooled_count, pooled.pooled_writers, pooled.pooled_classes) == (9, 8, 4)
    none = row(scored(here, ref, pooled=pool, pool="none"), "discuss", "about")
    assert not none.flagged


def test_score_pool_never_flags_a_pattern_the_class_did_not_write():
    ref = reference()
    here = [att("ana", "discuss", "-"), att("ben", "discuss", "-")]
    pool = Tally.from_rows([(f"c{i}", f"s{i}", "discuss", "VERB", "about", 1) for i in range(9)], classes=9)
    assert all(not r.flagged for r in scored(here, ref, pooled=pool.merged(Tally.from_attachments(here))))


def test_score_thresholds_are_options():
    assert not row(scored(planted_class(), min_writers=6), "discuss", "about").flagged
    assert row(scored(planted_class(), min_writers=1, max_writer_share=1.0), "depend", "of").flagged
    assert not row(scored(planted_class(), min_rate_ratio=1000), "discuss", "about").flagged


def test_score_defaults_documented():
    assert DEFAULTS.as_dict() == {"min_count": 3, "min_writers": 2, "max_writer_share": 0.5, "min_reference": 20,
                                  "max_native_share": 0.2, "favoured_share": 0.02, "min_rate_ratio": 2.0,
                                  "tested_ratio": 1.5, "confidence": 0.95, "pool": "workspace", "measure": "oe"}


def test_score_unknown_threshold_is_an_error_unless_from_an_older_run():
    with pytest.raises(HingewordError, match="unknown threshold 'min_cuont'"):
        Thresholds.from_mapping({"min_cuont": 2})
    assert Thresholds.from_mapping({"min_count": 2, "term_start": "x"}, ignore=("term_start",)).min_count == 2
    assert Thresholds.from_mapping({"min_g2": 10.83}, strict=False) == DEFAULTS


@pytest.mark.parametrize("uses, spread_ok", [
    ((2, 1), True),  # two uses by one writer are always allowed
    ((3, 1), False),  # one writer holds 3 of 4
    ((3, 2), True),  # 3 of 5 = ceil(2.5)
    ((4, 1, 1), False),
    ((1, 1, 1), True),
])
def test_score_spread_rule_looks_only_at_the_patterns_own_uses(uses, spread_ok):
    e = Evidence(a=sum(uses), writers=len(uses), top=max(uses), n1=100, gov_writers=len(uses), k=1.0)
    (d,) = decide_all(DEFAULTS, [e], [0], [1000], [0.01])
    assert (d.status is not Status.CONCENTRATED) == spread_ok


@settings(max_examples=60, deadline=None)
@given(n=st.integers(0, 8), writers=st.integers(1, 6), extra=st.integers(0, 500))
def test_score_flag_never_fires_below_minimum_counts(n, writers, extra):
    names = [f"w{i}" for i in range(writers)]
    atts = [att(names[i % writers], "discuss", "about") for i in range(n)] + [att("x", "discuss", "-")]
    atts += [att(f"o{i}", "go", "to") for i in range(extra)]  # class size does not matter
    sub = [r for r in scored(atts) if (r.governor, r.preposition) == ("discuss", "about")]
    if n < DEFAULTS.min_count or min(n, writers) < DEFAULTS.min_writers:
        assert not any(r.flagged for r in sub)


@settings(max_examples=40, deadline=None)
@given(extra=st.integers(1, 5000))
def test_score_unrelated_counts_do_not_change_the_comparison(extra):
    base = scored(planted_class())
    ref = reference({("unrelated", "NOUN", "of"): extra})
    atts = planted_class() + [att("zed", "unrelated", "of", "NOUN") for _ in range(3)]
    more = scored(atts, ref)
    for col in ("log_likelihood", "log_ratio", "reference_count", "reference_governor_count", "status",
                "rate_ratio_low", "flagged"):
        assert getattr(row(more, "discuss", "about"), col) == pytest.approx(getattr(row(base, "discuss", "about"), col))


def test_score_native_form_is_a_share_natives_favour_not_a_share_alone():
    """"see as" (4 % of "see", natives favour "as" with it) is a native form; "take to" at a
    similar share, where natives use "to" with "take" less than with verbs in general, is not."""
    ref = reference({("see", "VERB", "-"): 900, ("see", "VERB", "as"): 40, ("take", "VERB", "-"): 900,
                     ("take", "VERB", "to"): 40, ("give", "VERB", "to"): 4000, ("give", "VERB", "-"): 2000})
    atts = []
    for i in range(8):
        w = f"w{i}"
        atts += [att(w, "see", "as"), att(w, "see", "-"), att(w, "take", "to"), att(w, "take", "-"), att(w, "give", "to")]
    records = scored(atts, ref)
    see, take = row(records, "see", "as"), row(records, "take", "to")
    assert see.native_oe >= 1 > take.native_oe
    assert see.status is Status.NATIVE_FORM and not see.flagged
    assert take.flagged


def test_score_many_candidates_need_stronger_evidence():
    """Borderline evidence is flagged when it is the only candidate, not when it is one of many
    that chance alone produces (Benjamini-Hochberg over the candidates)."""
    weak = Evidence(a=3, writers=3, top=1, n1=20, gov_writers=10, k=1.0)
    null = Evidence(a=3, writers=3, top=1, n1=100, gov_writers=30, k=1.0)
    (alone,) = decide_all(DEFAULTS, [weak], [1], [600], [0.05])
    assert alone.status is Status.OVER_USED and alone.q <= 0.05
    crowd = decide_all(DEFAULTS, [weak] + [null] * 200, [1] + [3] * 200, [600] * 201, [0.05] * 201)
    assert crowd[0].status is not Status.OVER_USED and crowd[0].q > 0.05
    assert crowd[0].p == alone.p  # its own evidence did not change


def test_score_one_error_does_not_excuse_another_of_the_same_preposition():
    """"aware about" and "afraid about" are both errors; the class's other adjectives take
    "about" as natives do. Once "aware about" is found, it no longer counts as a habit of the
    class that would explain "afraid about" away (one pass alone calls it the class's style)."""
    ref = reference({("aware", "ADJ", "of"): 300, ("afraid", "ADJ", "of"): 200, ("afraid", "ADJ", "to"): 100,
                     ("afraid", "ADJ", "about"): 6, ("happy", "ADJ", "about"): 30, ("happy", "ADJ", "with"): 60,
                     ("happy", "ADJ", "to"): 100, ("sure", "ADJ", "about"): 40, ("sure", "ADJ", "of"): 60,
                     ("good", "ADJ", "at"): 300})
    atts = []
    for i in range(40):
        w = f"w{i:02d}"
        atts += [att(w, "good", "at", "ADJ"), att(w, "happy", "to", "ADJ"), att(w, "aware", "about", "ADJ"),
                 att(w, "aware", "about", "ADJ"), att(w, "afraid", "of", "ADJ")]
        if i % 4 == 0:
            atts.append(att(w, "afraid", "about", "ADJ"))
    records = scored(atts, ref)
    assert row(records, "aware", "about").flagged
    afraid = row(records, "afraid", "about")
    assert afraid.flagged and afraid.general_rate_factor == 1.0, (afraid.status, afraid.general_rate_factor)


def test_score_pooled_flag_needs_the_pattern_to_recur_in_other_classes():
    """Two uses here and one elsewhere is this class's evidence counted with a stray use; the
    pooled flag needs the other class-terms to show the pattern on their own (3 uses by 2 writers)."""
    ref = reference()
    here = [att("ana", "discuss", "about"), att("ben", "discuss", "about"), att("ana", "discuss", "-"),
            att("cy", "discuss", "-")]
    once = Tally.from_rows([(7, "other", "s1", "discuss", "VERB", "about", 1), (7, "other", "s2", "discuss", "VERB", "-", 3)],
                           classes=1)
    alone = row(scored(here, ref, pooled=once.merged(Tally.from_attachments(here), as_class="mine")), "discuss", "about")
    assert not alone.flagged and alone.status is Status.TOO_RARE
    thrice = Tally.from_rows([(7, "other", f"s{i}", "discuss", "VERB", "about", 1) for i in range(3)]
                             + [(8, "third", "t1", "discuss", "VERB", "-", 3)], classes=2)
    pooled = row(scored(here, ref, pooled=thrice.merged(Tally.from_attachments(here), as_class="mine")), "discuss", "about")
    assert pooled.flagged and pooled.evidence == "workspace" and pooled.pooled_classes == 2


def _make_reference() -> Reference:
    """Natives write "make" + object 700 times and "make in" 20 times (2.8 %, less than their 3.8 % of "in"
    with verbs in general, so not a form they favour); "depend of" never (invented counts)."""
    return reference({("make", "VERB", "-"): 700, ("make", "VERB", "in"): 20})


def _others(classes: int, rows: list[tuple[str, str, int]]) -> Tally:
    """``classes`` other class-terms, each with four writers writing ``rows`` (governor, slot, uses) apiece."""
    return Tally.from_rows([(100 + c, f"other{c}", f"s{w}", g, "VERB", p, n)
                            for c in range(classes) for w in range(4) for g, p, n in rows], classes=classes)


def test_score_class_flag_not_confirmed_by_the_workspace_is_not_flagged():
    """Three uses of "make in" by two writers in a class that writes "make" eleven times pass the class's own
    test at 5 %, but not at 5 % / 8 class-terms, and the seven other classes write "make" 112 times without
    "in": a chance finding of one class among eight, not flagged."""
    ref = _make_reference()
    here = [att("ana", "make", "in"), att("ana", "make", "in"), att("ben", "make", "in")] + \
           [att(w, "make", "-") for w in ("ana", "ben", "cy", "dee", "eve", "fay", "gus", "hal")]
    alone = row(scored(here, ref), "make", "in")
    assert alone.flagged, (alone.status, alone.fdr_q)
    assert 0.05 / 8 < alone.fdr_q <= 0.05
    pool = _others(7, [("make", "-", 4)]).merged(Tally.from_attachments(here), as_class="mine")
    pooled = row(scored(here, ref, pooled=pool), "make", "in")
    assert not pooled.flagged and pooled.status is Status.THIN
    # the same class with no other classes in the workspace keeps its flag
    assert row(scored(here, ref, pooled=None), "make", "in").flagged


def test_score_error_of_one_class_only_stays_flagged_in_a_workspace_that_does_not_make_it():
    """"depend of" six times by four writers in one class (natives: never) is strong enough on its own
    (first-language transfer is often one class's error), though seven other classes write only "depend on"."""
    ref = _make_reference()
    here = [att(w, "depend", "of") for w in ("ana", "ben", "cy", "dee", "ana", "ben")] + \
           [att("eve", "depend", "on"), att("fay", "depend", "on")]
    pool = _others(7, [("depend", "on", 8)]).merged(Tally.from_attachments(here), as_class="mine")
    pooled = row(scored(here, ref, pooled=pool), "depend", "of")
    assert pooled.flagged and pooled.evidence == "class", (pooled.status, pooled.fdr_q)
    assert pooled.fdr_q <= 0.05 / 8

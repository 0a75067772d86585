"""Facts of the trade checked on the bundled contemporary reference and on the default
combination (Brown + contemporary). Common practice of English usage, no source: "I look
forward to hearing from you" in letters; a problem *with* something as well as a problem
*of* something; one discusses something (never "discusses about"); depend *on*, interested
*in*, arrive *at* a place or *in* a city.

Shares, not exact counts: the figures move a little whenever the parser or the extractor
changes. Each share is of the governor's uses with any slot (prepositions and the direct
object), the base the scorer uses.
"""

from __future__ import annotations

import pytest

from hingeword import reference as ref_mod


@pytest.fixture(scope="module")
def contemporary():
    return ref_mod.load(ref_mod.resolve("contemporary"))


@pytest.fixture(scope="module")
def combined():
    return ref_mod.load_many([])


def share(ref, gov, pos, slots) -> float:
    total = ref.governor_totals().get((gov, pos), 0)
    assert total >= 20, f"too few uses of {gov} in the reference ({total})"
    return sum(ref.patterns.get((gov, pos, s), 0) for s in slots) / total


def test_reference_contemporary_is_the_default_and_combined_with_brown(combined):
    names = [p["name"] for p in combined.manifest.get("combined_from", [])]
    assert names == ["brown", "contemporary"]
    assert combined.total > 500_000  # attachments; Brown alone has about 158,000


def test_reference_contemporary_manifest_lists_every_part(contemporary):
    m = contemporary.manifest
    parts = {p["source"]: p for p in m["parts"]}
    assert len(parts) == 6
    for p in parts.values():
        assert p["words"] > 0 and p["licence"] and p["citation"] and p["genres"]
    assert 2_000_000 <= m["words"] <= 3_500_000
    assert "held_out_rule" in m  # one document in ten kept out for benchmarks


@pytest.mark.parametrize("which", ["contemporary", "combined"])
@pytest.mark.parametrize(
    "gov,pos,slots,low,high",
    [
        ("hear", "VERB", ("from",), 0.05, 1.0),  # letters: "hearing from you"
        ("problem", "NOUN", ("with",), 0.25, 1.0),  # a problem with the car
        ("problem", "NOUN", ("of",), 0.10, 1.0),  # the problem of pollution
        ("discuss", "VERB", ("-",), 0.5, 1.0),  # discuss something
        ("discuss", "VERB", ("about",), 0.0, 0.01),  # almost never "discuss about"
        ("depend", "VERB", ("on", "upon"), 0.6, 1.0),
        ("interested", "ADJ", ("in",), 0.8, 1.0),
        ("arrive", "VERB", ("at", "in"), 0.5, 1.0),
        ("arrive", "VERB", ("to",), 0.0, 0.03),
    ],
)
def test_reference_contemporary_native_shares(request, which, gov, pos, slots, low, high):
    ref = request.getfixturevalue(which)
    assert low <= share(ref, gov, pos, slots) <= high


def test_reference_contemporary_knows_the_words_learners_use(contemporary, combined):
    """Governors that Brown alone knows too little about (under 20 uses) now have evidence."""
    brown = ref_mod.load(ref_mod.resolve("brown"))
    for gov, pos in [("contact", "VERB"), ("option", "NOUN"), ("passion", "NOUN")]:
        assert brown.governor_totals().get((gov, pos), 0) < 20 <= combined.governor_totals().get((gov, pos), 0), gov
    known = lambda r: sum(1 for n in r.governor_totals().values() if n >= 20)  # noqa: E731
    assert known(combined) > 2 * known(brown)

"""Facts of the trade checked on the bundled Brown reference (common practice, no source).

Shares, not exact counts: the figures move a little whenever the parser or the
extractor changes.
"""

from __future__ import annotations

import pytest

from hingeword import reference as ref_mod


@pytest.fixture(scope="module")
def brown():
    return ref_mod.load(ref_mod.resolve("brown"))


def prep_share(ref, gov, pos, preps):
    """Share of ``preps`` among the governor's prepositional uses (direct objects left out)."""
    slots = {p: n for (g, ps, p), n in ref.patterns.items() if g == gov and ps == pos and p != "-"}
    total = sum(slots.values())
    assert total >= 10, f"too few uses of {gov} in the reference: {slots}"
    return sum(slots.get(p, 0) for p in preps) / total


def test_reference_brown_manifest_states_limits(brown):
    m = brown.manifest
    assert m["name"] == "brown"
    assert 950_000 <= m["words"] <= 1_100_000  # about a million words
    assert "1961" in m["source"] and "American" in m["limits"]
    assert m["model"] and m["model_version"] and m["extractor_version"]


@pytest.mark.parametrize(
    "gov,pos,preps,minimum",
    [
        ("depend", "VERB", ("on", "upon"), 0.7),
        ("interested", "ADJ", ("in",), 0.6),
        ("consist", "VERB", ("of",), 0.6),
        ("cope", "VERB", ("with",), 0.6),
    ],
)
def test_reference_brown_native_prepositions(brown, gov, pos, preps, minimum):
    assert prep_share(brown, gov, pos, preps) >= minimum


def test_reference_brown_discuss_not_followed_by_about(brown):
    about = brown.patterns.get(("discuss", "VERB", "about"), 0)
    total = sum(n for (g, p, _), n in brown.patterns.items() if (g, p) == ("discuss", "VERB"))
    assert total >= 50 and about / total < 0.02

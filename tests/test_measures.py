"""Tests for hingeword.measures.

Where a value comes from:

* ``[lib]`` computed with nltk 3.10.4 / scipy 1.17.1 (``BigramAssocMeasures``,
  ``scipy.stats``); most are also recomputed live against those libraries here.
* ``[pub*]`` a published value as quoted, with its section, by secondary sources
  (NLTK's ``collocations.doctest``); the original was not read (docs/methods.md section 5).
* ``[mem]`` from memory, not verified.

The tables T1-T3 and the "discuss about" / "depend on" counts are invented
illustrative counts from the design notes' docs/methods.md, not taken from any corpus.
"""

from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from nltk.metrics import BigramAssocMeasures as nltk_m
from scipy import stats

from hingeword import measures as m

pytestmark = pytest.mark.filterwarnings("error")

# (O11, O12, O21, O22), docs/methods.md §5(c).
TABLES = {
    "T1": (45, 5, 1155, 28795),  # "depend on", learner
    "T2": (12, 8, 388, 29592),  # "discuss about", learner
    "T3": (12, 8, 0, 240),  # discuss: about/other x learner/reference, a zero cell
}
_rng = np.random.default_rng(20240917)
RANDOM = [tuple(int(x) for x in row) for row in _rng.integers(1, 2000, size=(12, 4))]
ALL = list(TABLES.values()) + RANDOM
IDS = list(TABLES) + [f"random{i}" for i in range(len(RANDOM))]


def _marg(o11, o12, o21, o22):
    """(n_ii, n_ix, n_xi, n_xx) of a table given by its cells."""
    return o11, o11 + o12, o11 + o21, o11 + o12 + o21 + o22


def _nltk(name, table):
    n_ii, n_ix, n_xi, n_xx = _marg(*table)
    return getattr(nltk_m, name)(n_ii, (n_ix, n_xi), n_xx)


def _ps_ln_from_nltk(table):
    """Evert's ln form recovered from nltk's log2 form O * (log2(O/E) - 1)."""
    o11 = table[0]
    return o11 * (np.log(2) * (_nltk("poisson_stirling", table) / o11 + 1) - 1)


NLTK_EQUIVALENTS = {
    "mutual_information": lambda t: _nltk("pmi", t),
    "t_score": lambda t: _nltk("student_t", t),
    "chi_squared": lambda t: _nltk("chi_sq", t),
    "log_likelihood": lambda t: _nltk("likelihood_ratio", t),
    "dice": lambda t: _nltk("dice", t),
    "observed_expected": lambda t: 2 ** _nltk("pmi", t),
    "log_dice": lambda t: 14 + np.log2(_nltk("dice", t)),
    "poisson_stirling": _ps_ln_from_nltk,
}


@pytest.mark.parametrize("table", ALL, ids=IDS)
@pytest.mark.parametrize("name", sorted(NLTK_EQUIVALENTS))
def test_measures_match_nltk(name, table):
    ours = getattr(m, name)(*_marg(*table))
    assert ours == pytest.approx(NLTK_EQUIVALENTS[name](table), rel=1e-9)


@pytest.mark.parametrize("table", ALL, ids=IDS)
def test_measures_cells_and_expected_match_nltk(table):
    marg = _marg(*table)
    # nltk orders the cells (n_ii, n_oi, n_io, n_oo) = (O11, O21, O12, O22).
    o11, o21, o12, o22 = nltk_m._contingency(marg[0], (marg[1], marg[2]), marg[3])
    assert m.cells(*marg) == (o11, o12, o21, o22)
    e11, e21, e12, e22 = nltk_m._expected_values((o11, o21, o12, o22))
    assert m.expected_cells(*marg) == pytest.approx((e11, e12, e21, e22), rel=1e-12)
    assert m.expected(*marg) == pytest.approx(e11, rel=1e-12)


# docs/methods.md §5(c) [lib] (O/E, z, logDice and ln Poisson-Stirling worked by hand there).
PINNED = {
    "expected": (2.0, 0.266667, 0.923077),
    "observed_expected": (22.5, 45, 13),
    "z_score": (30.405592, 22.721502, 11.529227),
    "log_dice": (10.204141, 9.870717, 13.584963),
    "mutual_information": (4.491853, 5.491853, 3.700440),
    "t_score": (6.410062, 3.387122, 3.197632),
    "log_likelihood": (259.225234, 77.266497, 70.335564),
    "chi_squared": (964.628548, 523.592305, 150.967742),
    "dice": (0.072, 0.0571429, 0.75),
    "poisson_stirling": (95.108189, 33.679950, 18.779392),
}


@pytest.mark.parametrize("name", sorted(PINNED))
def test_measures_pinned_methods_values(name):
    for table, want in zip(TABLES.values(), PINNED[name]):
        assert getattr(m, name)(*_marg(*table)) == pytest.approx(want, rel=1e-6, abs=1e-6)


def test_measures_arrays_broadcast_like_scalars():
    marg = np.array([_marg(*t) for t in ALL + [(0, 0, 0, 0), (0, 5, 0, 10), (3, 0, 0, 0)]])
    for name, f in m.MEASURES.items():
        got = f(*marg.T)
        assert isinstance(got, np.ndarray) and got.shape == (len(marg),)
        singles = [f(*row) for row in marg.tolist()]
        assert all(isinstance(x, float) for x in singles), name
        assert got == pytest.approx(singles, rel=1e-12), name
    # One governor against three prepositions: scalar margins broadcast.
    assert m.mutual_information(np.array([1, 2, 4]), 10, 5, 100).tolist() == pytest.approx([1, 2, 3])


# --- scipy cross-checks ------------------------------------------------------------


@pytest.mark.parametrize("table", ALL, ids=IDS)
def test_measures_g2_and_chi2_match_scipy(table):
    obs = np.array(table, dtype=float).reshape(2, 2)
    exp = stats.contingency.expected_freq(obs)
    g2 = m.log_likelihood(*_marg(*table))
    pd = stats.power_divergence(obs.ravel(), exp.ravel(), ddof=2, lambda_="log-likelihood")
    assert g2 == pytest.approx(pd.statistic, rel=1e-9)
    g = stats.chi2_contingency(obs, correction=False, lambda_="log-likelihood")
    assert g2 == pytest.approx(g.statistic, rel=1e-9)
    assert m.g2_p_value(g2) == pytest.approx(g.pvalue, rel=1e-6)
    x2 = stats.chi2_contingency(obs, correction=False)
    assert m.chi_squared(*_marg(*table)) == pytest.approx(x2.statistic, rel=1e-9)
    # The same table read as learner row vs reference row.
    a, b, c, d = table
    assert m.g2_two_corpus(a, a + b, c, c + d) == pytest.approx(g.statistic, rel=1e-9)


FISHER_TABLES = ALL + [(0, 5, 3, 9), (2, 0, 0, 2), (0, 0, 4, 4), (1, 1, 1, 1), (7, 3, 1, 0)]


@pytest.mark.parametrize("table", FISHER_TABLES)
def test_measures_fisher_greater_matches_scipy(table):
    a, b, c, d = table
    want = stats.fisher_exact([[a, b], [c, d]], alternative="greater").pvalue
    assert m.fisher_greater(a, a + b, c, c + d) == pytest.approx(want, rel=1e-9, abs=1e-300)


def test_measures_methods_test_values():
    # docs/methods.md §5(c) [lib]: scipy G p and Fisher p (two-sided = greater there).
    assert m.g2_p_value([259.225234, 77.266497, 70.335564]) == pytest.approx(
        [2.5316e-58, 1.4938e-18, 5.0028e-17], rel=1e-4
    )
    got = [m.fisher_greater(a, a + b, c, c + d) for a, b, c, d in TABLES.values()]
    assert got == pytest.approx([9.7011e-58, 3.0647e-18, 8.1814e-16], rel=1e-4)
    assert m.fisher_greater(np.array([45, 12]), [50, 20], [1155, 0], [29950, 240]) == pytest.approx(
        [9.7011e-58, 8.1814e-16], rel=1e-4
    )


def test_measures_g2_p_value_at_critical_values():
    # chi2 df 1 quantiles, scipy.stats.chi2.isf(p, 1) [lib]; the 3.84 / 6.63 / 10.83 cut-offs
    # of Rayson's log-likelihood calculator [pub*] are these, rounded.
    got = m.g2_p_value(np.array([3.8415, 6.6349, 10.8276, 15.1367]))
    assert got == pytest.approx([0.05, 0.01, 0.001, 0.0001], rel=1e-3)


# --- Published worked examples (docs/methods.md §5(a)/(b)) ------------------------------


def test_measures_t_score_new_companies():
    # Manning & Schuetze 1999 section 5.3.1, "new companies": t = 0.999932 [pub*];
    # below 2.576 (alpha = .005) [mem], so independence is not rejected.
    t = m.t_score(8, 15828, 4675, 14307668)
    assert t == pytest.approx(0.999932, abs=1e-6)
    assert t < 2.576
    assert m.expected(8, 15828, 4675, 14307668) / 14307668 == pytest.approx(3.615e-7, rel=1e-3)
    # Manning & Schuetze 1999 section 5.3.3: chi2 = 1.55 [pub*]; nltk 1.548869 [lib].
    assert m.chi_squared(8, 15828, 4675, 14307668) == pytest.approx(1.548869, rel=1e-6)


@pytest.mark.parametrize(
    "name, args, published, rel, nltk_name",
    [
        # Manning & Schuetze 1999 section 5.3.1 [pub*]
        ("t_score", (20, 42, 20, 14307668), 4.4721, 1e-4, "student_t"),
        # Manning & Schuetze 1999 section 5.4, pp. 178-183 [pub*]
        ("mutual_information", (20, 42, 20, 14307668), 18.38, 1e-3, "pmi"),
        ("mutual_information", (20, 15019, 15629, 14307668), 0.29, 2e-2, "pmi"),
        # Manning & Schuetze 1999 section 5.3.3 [pub*]
        ("chi_squared", (59, 67, 65, 571007), 456400, 1e-4, "chi_sq"),
        # Dunning 1993, p. 72 [pub*]
        ("log_likelihood", (110, 2552, 221, 31777), 270.72, 1e-4, "likelihood_ratio"),
        # Dunning 1993 [pub*]
        ("log_likelihood", (8, 13, 32, 31777), 95.29, 1e-4, "likelihood_ratio"),
        # Dunning 1993, p. 72 [pub*]
        ("log_likelihood", (10, 10, 13, 31777), 167.23, 1e-4, "likelihood_ratio"),
    ],
)
def test_measures_published_values(name, args, published, rel, nltk_name):
    # The nltk values METHODS lists beside each (4.472123, 18.377968, 0.285774,
    # 456399.76, 270.721877, 95.285759, 167.229804) are recomputed live.
    got = getattr(m, name)(*args)
    assert got == pytest.approx(published, rel=rel)
    n_ii, n_ix, n_xi, n_xx = args
    assert got == pytest.approx(getattr(nltk_m, nltk_name)(n_ii, (n_ix, n_xi), n_xx), rel=1e-9)


# --- Two corpora --------------------------------------------------------------------


def test_measures_log_ratio_replaces_zero_by_half():
    # T3: learner 12 of 20, reference 0 of 240 -> log2((12/20) / (0.5/240)) = 8.169925 [lib]
    assert m.log_ratio(12, 20, 0, 240) == pytest.approx(8.169925, abs=1e-6)
    assert m.log_ratio(0, 240, 12, 20) == pytest.approx(-8.169925, abs=1e-6)
    assert m.log_ratio(10, 100, 5, 100) == pytest.approx(1.0)
    assert m.log_ratio(12, 20, 0, 240, smoothing=0.1) == pytest.approx(np.log2(0.6 / (0.1 / 240)))
    # No evidence: both counts zero, or an empty base.
    assert m.log_ratio([0, 0, 3], [10, 0, 5], [0, 3, 0], [40, 5, 0]).tolist() == [0.0, 0.0, 0.0]


def test_measures_g2_two_corpus_is_four_cell():
    # docs/methods.md §3 [lib]: four-cell G2 70.3356; the two-term log-likelihood of
    # Rayson & Garside 2000 would give 61.5588 for the same table.
    assert m.g2_two_corpus(12, 20, 0, 240) == pytest.approx(70.335564, abs=1e-6)
    assert m.g2_two_corpus(5, 100, 50, 1000) == pytest.approx(0.0, abs=1e-12)


def test_measures_signed_follows_direction():
    assert m.signed(7.0, 10, 100, 2, 100) == 7.0
    assert m.signed(7.0, 2, 100, 10, 100) == -7.0
    assert m.signed([7.0, 7.0], [10, 2], 100, [2, 10], 100).tolist() == [7.0, -7.0]


def test_measures_two_corpus_rejects_count_above_base():
    with pytest.raises(ValueError, match="a <= n1"):
        m.log_ratio(21, 20, 0, 240)
    with pytest.raises(ValueError, match="c <= n2"):
        m.fisher_greater(1, 20, 300, 240)


# --- Collocation ratio (docs/methods.md §2) ------------------------------------------

DISCUSS_L = (12, 20, 400, 30000)  # E 0.2667, O/E 45
DISCUSS_R = (0, 240, 3000, 200000)  # unseen, E 3.6 as in METHODS (margins ours)
DEPEND_L = (45, 50, 1200, 30000)
DEPEND_R = (280, 300, 9000, 200000)


def test_measures_collocation_ratio_methods_examples():
    # docs/methods.md §2 [lib]: MI_R with O_R 0 -> 0.5, E_R 3.6 is -2.8480.
    assert m.mutual_information(*DISCUSS_R) == pytest.approx(-2.8480, abs=1e-4)
    assert m.log2_collocation_ratio(DISCUSS_L, DISCUSS_R) == pytest.approx(8.3399, abs=1e-4)
    assert m.collocation_ratio(DISCUSS_L, DISCUSS_R) == pytest.approx(324)
    low, high = m.collocation_ratio_ci(DISCUSS_L, DISCUSS_R)
    assert (low, high) == pytest.approx((4.26, 12.42), abs=5e-3)
    assert m.log2_collocation_ratio(DEPEND_L, DEPEND_R) == pytest.approx(0.1175, abs=1e-4)
    assert m.collocation_ratio(DEPEND_L, DEPEND_R) == pytest.approx(1.085, abs=1e-3)
    low, high = m.collocation_ratio_ci(DEPEND_L, DEPEND_R)
    assert (low, high) == pytest.approx((-0.34, 0.57), abs=5e-3)
    assert low < 0 < high  # not flagged


def test_measures_collocation_ratio_measures():
    oe = m.collocation_ratio(DEPEND_L, DEPEND_R, "oe")
    assert m.collocation_ratio(DEPEND_L, DEPEND_R, "mi") == pytest.approx(oe, rel=1e-12)
    assert oe == pytest.approx(m.observed_expected(*DEPEND_L) / m.observed_expected(*DEPEND_R))
    dice_ratio = m.dice(*DEPEND_L) / m.dice(*DEPEND_R)
    assert m.collocation_ratio(DEPEND_L, DEPEND_R, "logdice") == pytest.approx(dice_ratio)
    assert m.log2_collocation_ratio(DEPEND_L, DEPEND_R, "logdice") == pytest.approx(
        m.log_dice(*DEPEND_L) - m.log_dice(*DEPEND_R)
    )
    # 90% is narrower than 95%.
    lo90, hi90 = m.collocation_ratio_ci(DEPEND_L, DEPEND_R, level=0.90)
    lo95, hi95 = m.collocation_ratio_ci(DEPEND_L, DEPEND_R)
    assert lo95 < lo90 < hi90 < hi95


def test_measures_collocation_ratio_refuses_n_dependent_scores():
    for bad in ("t", "g2", "chi2", "z"):
        with pytest.raises(ValueError, match="effect-size"):
            m.collocation_ratio(DEPEND_L, DEPEND_R, bad)
    with pytest.raises(ValueError, match="level"):
        m.collocation_ratio_ci(DEPEND_L, DEPEND_R, level=95)


# --- Dispersion (docs/methods.md §4) --------------------------------------------------


@pytest.mark.parametrize(
    "v, s, dp, dp_norm",
    [
        # Gries's toy corpus (Gries 2008) as quoted in scattertext's source; 0.18 [lib]
        ([1, 2, 3, 4, 5], [9, 10, 10, 10, 11], 0.18, 0.2195),
        ([6, 0, 0, 0, 0, 0, 0, 0, 0, 0], [100] * 10, 0.90, 1.00),
        ([1, 1, 1, 1, 1, 1, 0, 0, 0, 0], [100] * 10, 0.40, 0.4444),
        ([3, 3, 3], [50, 50, 50], 0.0, 0.0),
    ],
)
def test_measures_gries_dp_methods_values(v, s, dp, dp_norm):
    assert m.gries_dp(v, s) == pytest.approx(dp, abs=1e-9)
    assert m.gries_dp_norm(v, s) == pytest.approx(dp_norm, abs=5e-5)


def test_measures_gries_dp_lyne_allemand():
    # Lyne 1985, ALLEMAND; equals the DP printed in the tlda R package README [lib].
    v = [2, 0, 1, 1, 3, 0, 3, 0, 0, 0]
    s = [8143, 8058, 8271, 8125, 7959, 7941, 8146, 8001, 8003, 7930]
    assert m.gries_dp(v, s) == pytest.approx(0.4990705, abs=1e-7)


def test_measures_gries_dp_edge_cases():
    assert m.gries_dp([0, 0, 0], [1, 2, 3]) is None
    assert m.gries_dp_norm([0, 0, 0], [1, 2, 3]) is None
    assert m.gries_dp([4], [10]) == 0.0
    assert m.gries_dp_norm([4], [10]) == 0.0
    assert isinstance(m.gries_dp([1, 0], [1, 1]), float)
    for v, s in (([1, 2], [1, 2, 3]), ([-1, 2], [1, 1]), ([1, 1], [0, 0]), ([1, 1], [0, 4])):
        with pytest.raises(ValueError):
            m.gries_dp(v, s)


# --- Edge cases: documented finite values, no warnings ----------------------------------

_SQRT_HALF = np.sqrt(0.5)
EDGE = {
    # empty table: no data
    "N=0": ((0, 0, 0, 0), dict(oe=1, mi=0, t=0, z=0, g2=0, chi2=0, dice=0, logdice=13, ps=0)),
    # the preposition never occurs (C1 = 0): E11 = 0
    "E=0": ((0, 5, 0, 10), dict(oe=1, mi=0, t=0, z=0, g2=0, chi2=0, dice=0, logdice=14 + np.log2(1 / 5), ps=0)),
    # unseen pair, E11 = 3.6: 0.5 replaces O11 in O/E, MI, t, logDice
    "O=0": (DISCUSS_R, dict(oe=0.5 / 3.6, mi=np.log2(0.5 / 3.6), t=-3.6 / _SQRT_HALF, z=-np.sqrt(3.6),
                            dice=0, logdice=14 + np.log2(1 / 3240), ps=0)),
    # unseen pair with E11 = 0.1 < 0.5: O/E capped at 1
    "O=0,E<0.5": ((0, 10, 10, 1000), dict(oe=1, mi=0, t=-0.1 / _SQRT_HALF, z=-np.sqrt(0.1), dice=0, ps=0)),
    # R2 = C2 = 0: every event is the pair itself
    "full": ((3, 3, 3, 3), dict(oe=1, mi=0, t=0, z=0, g2=0, chi2=0, dice=1, logdice=14, ps=-3)),
}


@pytest.mark.parametrize("table, want", EDGE.values(), ids=EDGE.keys())
def test_measures_edge_cases_documented_values(table, want):
    for name, value in want.items():
        got = m.MEASURES[name](*table)
        assert np.isfinite(got), name
        assert got == pytest.approx(value, abs=1e-12), name


def test_measures_edge_cases_mixed_in_arrays_emit_no_warnings():
    tables = np.array([t for t, _ in EDGE.values()] + [_marg(*TABLES["T3"])])
    with np.errstate(all="raise"):  # numpy would raise instead of warning
        for f in m.MEASURES.values():
            assert np.all(np.isfinite(f(*tables.T)))
        assert np.all(np.isfinite(m.log_ratio([0, 12, 0], [0, 20, 5], [0, 0, 0], [0, 240, 5])))
        assert m.fisher_greater([0, 12], [0, 20], [0, 0], [0, 240])[0] == 1.0


def test_measures_inconsistent_table_raises():
    with pytest.raises(ValueError, match="inconsistent"):
        m.cells(5, 3, 10, 100)  # n_ii > n_ix
    with pytest.raises(ValueError, match="inconsistent"):
        m.log_likelihood(0, 60, 60, 100)  # O22 = -20


# --- Properties (docs/methods.md §6) ---------------------------------------------------

small = st.integers(0, 1000)
tables = st.tuples(small, small, small, st.integers(0, 10**6))
seen_tables = st.tuples(st.integers(1, 1000), small, small, small)


@given(tables)
def test_measures_g2_chi2_nonnegative_and_logdice_at_most_14(table):
    marg = _marg(*table)
    assert m.log_likelihood(*marg) >= 0
    assert m.chi_squared(*marg) >= 0
    assert m.log_dice(*marg) <= 14


@given(tables)
def test_measures_invariant_under_transposition(table):
    n_ii, n_ix, n_xi, n_xx = _marg(*table)
    for name, f in m.MEASURES.items():
        assert f(n_ii, n_ix, n_xi, n_xx) == pytest.approx(f(n_ii, n_xi, n_ix, n_xx), rel=1e-9, abs=1e-9), name
    a, b, c, d = table  # learner row (a, b), reference row (c, d); transposed: (a, c), (b, d)
    p = m.fisher_greater(a, a + b, c, c + d)
    assert p == pytest.approx(m.fisher_greater(a, a + c, b, b + d), rel=1e-6, abs=1e-300)


@given(tables)
def test_measures_oe_above_one_iff_observed_above_expected(table):
    n_ii, n_ix, n_xi, n_xx = _marg(*table)
    assert (m.observed_expected(n_ii, n_ix, n_xi, n_xx) > 1) == (n_ii * n_xx > n_ix * n_xi)


@given(seen_tables)
def test_measures_mi_zero_iff_observed_equals_expected(table):
    # For O11 >= 1; an unseen pair with E11 <= 0.5 also scores 0 (the cap, see EDGE).
    n_ii, n_ix, n_xi, n_xx = _marg(*table)
    assert (m.mutual_information(n_ii, n_ix, n_xi, n_xx) == 0) == (n_ii * n_xx == n_ix * n_xi)


@given(st.integers(1, 300), st.integers(1, 300), st.integers(1, 300), st.integers(1, 300))
def test_measures_mi_zero_on_independent_tables(u, v, w, z):
    # Outer product [[u*w, u*z], [v*w, v*z]]: O11 = E11 exactly.
    table = (u * w, u * z, v * w, v * z)
    assert m.mutual_information(*_marg(*table)) == 0.0
    assert m.observed_expected(*_marg(*table)) == 1.0
    assert m.log_likelihood(*_marg(*table)) == pytest.approx(0.0, abs=1e-9)


def test_measures_g2_never_negative_from_rounding():
    # Independent tables of non-integer (e.g. weighted) counts: G2 is 0 in exact
    # arithmetic, and the four-cell sum often rounds to about -1e-10; it is clipped.
    u, v, w, z = np.random.default_rng(7).uniform(1, 1000, size=(4, 1000))
    marg = _marg(u * w, u * z, v * w, v * z)
    g2 = m.log_likelihood(*marg)
    assert np.all(g2 >= 0) and np.all(g2 < 1e-6)


@given(st.lists(seen_tables, min_size=2, max_size=12))
def test_measures_ranking_by_mi_equals_ranking_by_oe(group):
    marg = [_marg(*t) for t in group]
    exact_oe = [Fraction(n_ii * n_xx, n_ix * n_xi) for n_ii, n_ix, n_xi, n_xx in marg]
    exact_dice = [Fraction(2 * n_ii, n_ix + n_xi) for n_ii, n_ix, n_xi, _ in marg]
    mi = [m.mutual_information(*x) for x in marg]
    oe = [m.observed_expected(*x) for x in marg]
    logdice = [m.log_dice(*x) for x in marg]
    for i in range(len(marg)):
        for j in range(len(marg)):
            if exact_oe[i] < exact_oe[j]:
                assert mi[i] < mi[j] and oe[i] < oe[j]
            elif exact_oe[i] == exact_oe[j]:
                assert mi[i] == pytest.approx(mi[j], rel=1e-12, abs=1e-12)
            if exact_dice[i] < exact_dice[j]:
                assert logdice[i] < logdice[j]


# --- rate ratio: the flag decision's measure (docs/methods.md, "Rate ratio") ---------------

RATE_TABLES = [(5, 200, 0, 388), (3, 40, 2, 900), (12, 300, 30, 5000), (1, 10, 50, 100), (0, 50, 4, 80)]


@pytest.mark.parametrize("a, n1, c, n2", RATE_TABLES)
@pytest.mark.parametrize("k", [1.0, 1.7])
def test_measures_rate_ratio_test_equals_scipy_binomtest(a, n1, c, n2, k):
    """The conditional two-rate test is a binomial test of a out of a + c at π0 = k·n1 / (k·n1 + n2)
    (Przyborowski & Wilenski 1940 [from memory]); computed with scipy.stats.binomtest."""
    pi0 = k * n1 / (k * n1 + n2)
    for alt in ("greater", "less"):
        want = stats.binomtest(a, a + c, pi0, alternative=alt).pvalue if a + c else 1.0
        assert m.rate_ratio_test(a, n1, c, n2, k=k, alternative=alt) == pytest.approx(want, rel=1e-9)


def test_measures_rate_ratio_methods_check_values():
    """"discuss about": 5 of 200 uses of the governor in class, 0 of 388 in the reference (invented figures)."""
    assert m.rate_ratio(5, 200, 0, 388) == pytest.approx(19.4)            # 0 -> 0.5, as Log Ratio
    assert m.rate_ratio_test(5, 200, 0, 388) == pytest.approx(0.004553, abs=5e-7)
    low, high = m.rate_ratio_bounds(5, 200, 0, 388)
    assert low == pytest.approx(2.3642, abs=5e-5) and high == np.inf
    # a general-rate factor k divides the ratio and its bounds
    assert m.rate_ratio(6, 100, 3, 100, k=2.0) == pytest.approx(1.0)
    assert m.rate_ratio_bounds(6, 100, 3, 100, k=2.0)[0] == pytest.approx(m.rate_ratio_bounds(6, 100, 3, 100)[0] / 2)


@pytest.mark.parametrize("a, n1, c, n2", RATE_TABLES)
def test_measures_rate_ratio_bounds_are_clopper_pearson(a, n1, c, n2):
    """One-sided 95 % bounds = the two-sided 90 % exact interval of the share a / (a + c), mapped
    to the rate scale (Clopper & Pearson 1934); computed with scipy.stats.binomtest(...).proportion_ci."""
    if a + c == 0:
        pytest.skip("no uses")
    ci = stats.binomtest(a, a + c).proportion_ci(confidence_level=0.90, method="exact")
    scale = n2 / n1
    low, high = m.rate_ratio_bounds(a, n1, c, n2, level=0.95)
    want_low = ci.low / (1 - ci.low) * scale
    assert low == pytest.approx(want_low, rel=1e-6, abs=1e-12)
    if c == 0:
        assert high == np.inf
    else:
        assert high == pytest.approx(ci.high / (1 - ci.high) * scale, rel=1e-6)


@pytest.mark.parametrize("a, n1, c, n2", [t for t in RATE_TABLES if t[0] > 0])
def test_measures_rate_ratio_low_bound_agrees_with_the_test(a, n1, c, n2):
    """The lower bound is at least 1 exactly when the one-sided test rejects at 5 %."""
    low, _ = m.rate_ratio_bounds(a, n1, c, n2, level=0.95)
    assert (low >= 1) == (m.rate_ratio_test(a, n1, c, n2) <= 0.05)


def test_measures_share_upper_bound_rule_of_three():
    """No native use in n: the exact one-sided 95 % bound is 1 - 0.05 ** (1 / n), close to the
    "rule of three" 3 / n (Hanley & Lippman-Hand 1983 [from memory])."""
    assert m.share_upper_bound(0, 388) == pytest.approx(1 - 0.05 ** (1 / 388), rel=1e-9)
    assert m.share_upper_bound(0, 388) == pytest.approx(0.007691, abs=5e-7)
    assert m.share_upper_bound(0, 388) == pytest.approx(3 / 388, rel=0.01)
    ci = stats.binomtest(7, 120).proportion_ci(confidence_level=0.90, method="exact")
    assert m.share_upper_bound(7, 120) == pytest.approx(ci.high, rel=1e-6)
    assert m.share_upper_bound(0, 0) == 1.0 and m.share_upper_bound(5, 5) == 1.0


def test_measures_fisher_less_matches_scipy():
    """Under-use: P(X <= a) of Fisher's exact test; computed with scipy.stats.fisher_exact."""
    for a, n1, c, n2 in [(0, 40, 60, 100), (3, 50, 40, 120), (10, 20, 2, 30)]:
        want = stats.fisher_exact([[a, n1 - a], [c, n2 - c]], alternative="less").pvalue
        assert m.fisher_less(a, n1, c, n2) == pytest.approx(want, rel=1e-9)

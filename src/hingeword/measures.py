"""Association measures over 2x2 contingency tables, two-corpus tests, dispersion.

Pure functions of counts, like ``BigramAssocMeasures`` in ``nltk/metrics/association.py``,
with NLTK's cell names. For governor x and preposition y (counted in attachments)::

                    y            not y
              +------------+------------+
        x     | O11 = n_ii |    O12     |  R1 = n_ix   f(governor, any prep)
              +------------+------------+
        not x |    O21     |    O22     |  R2
              +------------+------------+
               C1 = n_xi        C2         N = n_xx     (C1 = f(any governor, prep))

    E11 = R1 * C1 / N          (generally Eij = Ri * Cj / N)

Arguments may be numbers or numpy arrays; they broadcast together. Results are
float64: a numpy float (a ``float`` subclass) for scalar input, an array otherwise.
No function emits a numpy warning. Shared conventions (this project's rules, not a
source's, unless a source is named):

* a negative cell (e.g. ``n_ii > n_ix``) raises ``ValueError``;
* **no data**, E11 = 0 (R1, C1 or N is 0, so O11 is 0 too): each measure returns
  its no-association value: O/E 1, MI 0, t 0, z 0, G2 0, chi2 0, Poisson-Stirling 0;
* **unseen pair**, O11 = 0 < E11: where O11 would be divided by or logged, 0.5
  replaces it (the zero rule Hardie 2014 gives for Log Ratio); each function says how.

Sources: Church & Hanks 1990 (MI); Church, Gale, Hanks & Hindle 1991 (t);
Dunning 1993 (G2); Manning & Schuetze 1999, ch. 5 (t, chi2, MI check values);
Evert 2008, "Corpora and collocations" (O/E, z, Poisson-Stirling, the set);
Rychly 2008, RASLAN pp. 6-9 (logDice); Hardie 2014, "Log Ratio - an informal
introduction" (Log Ratio); Gries 2008, IJCL 13(4) and Lijffijt & Gries 2012 (DP).
Check values (docs/methods.md §5) are pinned in ``tests/test_measures.py``.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import stats

__all__ = [
    "EFFECT_SIZES", "MEASURES", "cells", "chi_squared", "collocation_ratio", "rate_ratio", "rate_ratio_bounds",
    "rate_ratio_test", "share_upper_bound", "fisher_less",
    "collocation_ratio_ci", "dice", "expected", "expected_cells", "fisher_greater",
    "g2_p_value", "g2_two_corpus", "gries_dp", "gries_dp_norm", "log2_collocation_ratio",
    "log_dice", "log_likelihood", "log_ratio", "mutual_information", "observed_expected",
    "poisson_stirling", "signed", "t_score", "z_score",
]

ZERO_COUNT = 0.5
"""Stands in for a zero count where one would be divided by or logged (Hardie 2014)."""


def _out(x) -> np.ndarray | np.float64:
    return np.asarray(x, dtype=float)[()]


def cells(n_ii, n_ix, n_xi, n_xx) -> tuple:
    """Observed cells ``(O11, O12, O21, O22)`` from NLTK-style marginals.

    :raises ValueError: if any cell is negative (e.g. ``n_ii > n_ix``).
    """
    n_ii, n_ix, n_xi, n_xx = (np.asarray(a, dtype=float) for a in (n_ii, n_ix, n_xi, n_xx))
    o = np.broadcast_arrays(n_ii, n_ix - n_ii, n_xi - n_ii, n_xx - n_ix - n_xi + n_ii)
    if any(np.any(c < 0) for c in o):
        raise ValueError(
            "inconsistent contingency table: a cell is negative"
            " (need n_ii <= n_ix, n_ii <= n_xi and n_ix + n_xi - n_ii <= n_xx)"
        )
    return tuple(_out(np.array(c)) for c in o)


def expected_cells(n_ii, n_ix, n_xi, n_xx) -> tuple:
    """Expected cells ``(E11, E12, E21, E22)``, Eij = Ri * Cj / N; all 0 when N = 0."""
    o11, o12, o21, o22 = cells(n_ii, n_ix, n_xi, n_xx)
    r1, r2, c1, c2 = o11 + o12, o21 + o22, o11 + o21, o12 + o22
    n = r1 + r2
    safe = np.where(n > 0, n, 1.0)
    pairs = ((r1, c1), (r1, c2), (r2, c1), (r2, c2))
    return tuple(_out(np.where(n > 0, r * c / safe, 0.0)) for r, c in pairs)


def expected(n_ii, n_ix, n_xi, n_xx):
    """E11 = R1 * C1 / N (0 when N = 0). T1 ``(45, 50, 1200, 30000)`` -> 2.0."""
    return _out(expected_cells(n_ii, n_ix, n_xi, n_xx)[0])


def observed_expected(n_ii, n_ix, n_xi, n_xx):
    """O/E = O11 / E11 (Evert 2008). Greater than 1 exactly when O11 > E11.

    O11 = 0 < E11: min(0.5 / E11, 1) -- 0.5 replaces the zero count (Hardie 2014);
    the cap at 1 is ours, so an unseen pair never looks attracted (0.5 / E11 > 1 when
    E11 < 0.5). No data (E11 = 0): 1. Check: T2 ``(12, 20, 400, 30000)`` -> 45.
    """
    o11 = cells(n_ii, n_ix, n_xi, n_xx)[0]
    e11 = np.asarray(expected(n_ii, n_ix, n_xi, n_xx))
    safe = np.where(e11 > 0, e11, 1.0)
    unseen = np.minimum(ZERO_COUNT / safe, 1.0)
    return _out(np.where(e11 == 0, 1.0, np.where(o11 > 0, o11 / safe, unseen)))


def mutual_information(n_ii, n_ix, n_xi, n_xx):
    """Pointwise MI = log2(O11 / E11) (Church & Hanks 1990; M&S 1999 section 5.4).

    Exactly ``log2(observed_expected(...))``, so it shares its zero rules: O11 = 0
    gives log2(min(0.5 / E11, 1)) <= 0, never -inf; no data gives 0.
    Check: M&S 1999 section 5.4, ``(20, 42, 20, 14307668)`` -> 18.38.
    """
    return _out(np.log2(observed_expected(n_ii, n_ix, n_xi, n_xx)))


def t_score(n_ii, n_ix, n_xi, n_xx):
    """t = (O11 - E11) / sqrt(O11) (Church et al. 1991; M&S 1999 section 5.3.1).

    O11 = 0: the divisor uses 0.5, t = -E11 / sqrt(0.5) (negative, below the value at
    O11 = 1). No data: 0. Check: M&S "new companies" ``(8, 15828, 4675, 14307668)`` -> 0.999932.
    """
    o11 = cells(n_ii, n_ix, n_xi, n_xx)[0]
    e11 = np.asarray(expected(n_ii, n_ix, n_xi, n_xx))
    t = (o11 - e11) / np.sqrt(np.where(o11 > 0, o11, ZERO_COUNT))
    return _out(np.where(e11 == 0, 0.0, t))


def z_score(n_ii, n_ix, n_xi, n_xx):
    """z = (O11 - E11) / sqrt(E11) (Evert 2008). No data (E11 = 0): 0.

    Defined for O11 = 0. Check: T1 ``(45, 50, 1200, 30000)`` -> 30.405592.
    """
    o11 = cells(n_ii, n_ix, n_xi, n_xx)[0]
    e11 = np.asarray(expected(n_ii, n_ix, n_xi, n_xx))
    return _out(np.where(e11 > 0, (o11 - e11) / np.sqrt(np.where(e11 > 0, e11, 1.0)), 0.0))


def log_likelihood(n_ii, n_ix, n_xi, n_xx):
    """G2 = 2 * sum_ij Oij * ln(Oij / Eij) over all four cells (Dunning 1993).

    0 * ln 0 := 0, so zero cells are fine; a cell with Eij = 0 has Oij = 0 and adds 0.
    Rounding below 0 is clipped: G2 >= 0. Two-sided: use :func:`signed` for direction.
    Check: Dunning 1993 p. 72, ``(110, 2552, 221, 31777)`` -> 270.72; T3 -> 70.335564.
    """
    total = 0.0
    for o, e in zip(cells(n_ii, n_ix, n_xi, n_xx), expected_cells(n_ii, n_ix, n_xi, n_xx)):
        ok = (o > 0) & (e > 0)
        total = total + np.where(ok, o * np.log(np.where(ok, o, 1.0) / np.where(ok, e, 1.0)), 0.0)
    return _out(np.maximum(2.0 * total, 0.0))


def chi_squared(n_ii, n_ix, n_xi, n_xx):
    """Pearson chi2 = sum_ij (Oij - Eij)^2 / Eij, no Yates correction (M&S 1999 section 5.3.3).

    Equals N (O11 O22 - O12 O21)^2 / (R1 R2 C1 C2). A cell with Eij = 0 (a zero
    margin, so Oij = 0 too) adds 0; no data gives 0. Check: M&S 1999 section 5.3.3,
    ``(59, 67, 65, 571007)`` -> 456400; T1 -> 964.628548.
    """
    total = 0.0
    for o, e in zip(cells(n_ii, n_ix, n_xi, n_xx), expected_cells(n_ii, n_ix, n_xi, n_xx)):
        total = total + np.where(e > 0, (o - e) ** 2 / np.where(e > 0, e, 1.0), 0.0)
    return _out(total)


def dice(n_ii, n_ix, n_xi, n_xx):
    """Dice D = 2 * O11 / (R1 + C1), in [0, 1] (Rychly 2008). 0 when O11 = 0 or R1 + C1 = 0.

    Check: T1 ``(45, 50, 1200, 30000)`` -> 0.072.
    """
    o11, o12, o21, _ = cells(n_ii, n_ix, n_xi, n_xx)
    denom = 2 * o11 + o12 + o21
    return _out(np.where(denom > 0, 2 * o11 / np.where(denom > 0, denom, 1.0), 0.0))


def log_dice(n_ii, n_ix, n_xi, n_xx):
    """logDice = 14 + log2 D, D = 2 * O11 / (R1 + C1) (Rychly 2008); at most 14, N-free.

    O11 = 0: D = 2 * 0.5 / max(R1 + C1, 2) -- 0.5 replaces the zero count; the floor
    of 2 (the least R1 + C1 of a table holding one co-occurrence) is ours and keeps
    an unseen pair at or below 13, also for an empty table. Never -inf.
    Check: T3 ``(12, 20, 12, 260)`` -> 13.584963.
    """
    o11, o12, o21, _ = cells(n_ii, n_ix, n_xi, n_xx)
    margins = 2 * o11 + o12 + o21
    d = np.where(o11 > 0, 2 * o11, 2 * ZERO_COUNT) / np.maximum(margins, 2.0)
    return _out(14.0 + np.log2(d))


def poisson_stirling(n_ii, n_ix, n_xi, n_xx):
    """Poisson-Stirling = O11 * (ln O11 - ln E11 - 1), natural log (Evert 2008).

    (NLTK's ``poisson_stirling`` uses log2 instead.) O11 = 0: 0, the limit, as
    0 * ln 0 := 0 in G2; no data: 0. Check: T1 ``(45, 50, 1200, 30000)`` -> 95.108189.
    """
    o11 = cells(n_ii, n_ix, n_xi, n_xx)[0]
    e11 = np.asarray(expected(n_ii, n_ix, n_xi, n_xx))
    ok = (o11 > 0) & (e11 > 0)
    ps = o11 * (np.log(np.where(ok, o11, 1.0)) - np.log(np.where(ok, e11, 1.0)) - 1.0)
    return _out(np.where(ok, ps, 0.0))


MEASURES = {
    "oe": observed_expected, "mi": mutual_information, "t": t_score, "z": z_score,
    "g2": log_likelihood, "chi2": chi_squared, "dice": dice, "logdice": log_dice,
    "ps": poisson_stirling,
}
"""Association measures by short name, each ``f(n_ii, n_ix, n_xi, n_xx)``."""

EFFECT_SIZES = ("oe", "mi", "logdice")
"""Measures a collocation ratio may use: t, z, G2 and chi2 grow with N (docs/methods.md §2)."""

# --- One pair, learner vs reference (docs/methods.md §3) ---------------------------
#   learner:   a  of n1 (base = attachments or tokens of the governor)
#   reference: c  of n2


def _two(a, n1, c, n2):
    a, n1, c, n2 = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, n1, c, n2)))
    if np.any(a < 0) or np.any(c < 0) or np.any(a > n1) or np.any(c > n2):
        raise ValueError("need 0 <= a <= n1 and 0 <= c <= n2")
    return a, n1, c, n2


def log_ratio(a, n1, c, n2, smoothing=ZERO_COUNT):
    """Log Ratio = log2((a / n1) / (c / n2)) (Hardie 2014); +1 = twice as frequent.

    A zero count (a or c) is replaced by ``smoothing`` (Hardie: 0.5). Both counts 0,
    or an empty base (n1 or n2 = 0): 0, no evidence. Check: T3 ``(12, 20, 0, 240)`` -> 8.169925.
    """
    a, n1, c, n2 = _two(a, n1, c, n2)
    ok = (n1 > 0) & (n2 > 0) & ((a > 0) | (c > 0))
    a_s, c_s = np.where(a > 0, a, smoothing), np.where(c > 0, c, smoothing)
    lr = np.log2(a_s * np.where(ok, n2, 1.0)) - np.log2(c_s * np.where(ok, n1, 1.0))
    return _out(np.where(ok, lr, 0.0))


def g2_two_corpus(a, n1, c, n2):
    """Four-cell G2 (Dunning 1993) of the table [[a, n1 - a], [c, n2 - c]].

    Not the two-term log-likelihood of Rayson & Garside 2000. Zero rules as
    :func:`log_likelihood`. Check: T3 ``(12, 20, 0, 240)`` -> 70.335564.
    """
    a, n1, c, n2 = _two(a, n1, c, n2)
    return log_likelihood(a, n1, a + c, n1 + n2)


def fisher_greater(a, n1, c, n2):
    """One-sided (over-use) p of Fisher's exact test on [[a, n1 - a], [c, n2 - c]].

    P(X >= a), X hypergeometric with the margins fixed: the value of
    ``scipy.stats.fisher_exact(table, alternative="greater")``, computed for whole
    arrays with ``scipy.stats.hypergeom.sf``. Empty table: 1.
    Check: T3 ``(12, 20, 0, 240)`` -> 8.1814e-16.
    """
    a, n1, c, n2 = _two(a, n1, c, n2)
    ok = n1 + n2 > 0
    total, drawn = np.where(ok, n1 + n2, 1.0), np.where(ok, n1, 0.0)
    p = stats.hypergeom.sf(a - 1, total, np.where(ok, a + c, 0.0), drawn)
    return _out(np.where(ok, np.clip(p, 0.0, 1.0), 1.0))


def fisher_less(a, n1, c, n2):
    """One-sided (under-use) p of Fisher's exact test on [[a, n1 - a], [c, n2 - c]]: P(X <= a).

    The value of ``scipy.stats.fisher_exact(table, alternative="less")``, for whole arrays
    with ``scipy.stats.hypergeom.cdf``. Empty table: 1.
    """
    a, n1, c, n2 = _two(a, n1, c, n2)
    ok = n1 + n2 > 0
    total, drawn = np.where(ok, n1 + n2, 1.0), np.where(ok, n1, 0.0)
    p = stats.hypergeom.cdf(a, total, np.where(ok, a + c, 0.0), drawn)
    return _out(np.where(ok, np.clip(p, 0.0, 1.0), 1.0))


def g2_p_value(g2):
    """p of a G2 (or chi2) statistic with 1 degree of freedom: ``chi2.sf(g2, df=1)``.

    Check: G2 = 3.8415 -> 0.05 (common practice: the 5% critical value of chi2 with df 1).
    """
    return _out(stats.chi2.sf(np.asarray(g2, dtype=float), df=1))


def signed(stat, a, n1, c, n2):
    """``stat`` made negative where the learner rate a/n1 is below the reference rate c/n2.

    Common practice for keyword lists, which sign G2 by direction.
    """
    a, n1, c, n2 = _two(a, n1, c, n2)
    return _out(np.where(a * n2 < c * n1, -1.0, 1.0) * np.asarray(stat, dtype=float))


# --- Collocation ratio (docs/methods.md §2) -----------------------------------------
# learner/reference are tables (n_ii, n_ix, n_xi, n_xx) of numbers or arrays.


def log2_collocation_ratio(learner: Sequence, reference: Sequence, measure: str = "oe"):
    """log2 CR, CR = (learner score) / (reference score) for an effect-size score.

    ``"oe"`` and ``"mi"``: CR = (O/E)_L / (O/E)_R, so log2 CR = MI_L - MI_R (a ratio
    of two MI values breaks when MI_R <= 0). ``"logdice"``: CR = Dice_L / Dice_R,
    log2 CR = logDice_L - logDice_R. Zero counts follow :func:`observed_expected`
    and :func:`log_dice`. Check (docs/methods.md §2): "discuss about",
    L ``(12, 20, 400, 30000)``, R with O = 0, E = 3.6 -> 8.3399.

    :raises ValueError: for a measure not in :data:`EFFECT_SIZES`.
    """
    if measure not in EFFECT_SIZES:
        raise ValueError(
            f"collocation ratio needs an effect-size measure {EFFECT_SIZES}, not {measure!r}:"
            " t, z, G2 and chi2 grow with corpus size"
        )
    score = mutual_information if measure in ("oe", "mi") else log_dice
    return _out(np.asarray(score(*learner)) - np.asarray(score(*reference)))


def collocation_ratio(learner: Sequence, reference: Sequence, measure: str = "oe"):
    """CR = 2 ** :func:`log2_collocation_ratio` (same for "oe" and "mi"). "discuss about" -> 324."""
    return _out(np.exp2(log2_collocation_ratio(learner, reference, measure)))


def collocation_ratio_ci(
    learner: Sequence, reference: Sequence, level: float = 0.95, measure: str = "oe"
):
    """Confidence interval ``(low, high)`` for log2 CR.

    SE(log2 CR) ~ sqrt(1 / O_L + 1 / O_R) / ln 2: O11 Poisson with the margins fixed,
    and O/E and Dice are then O11 times a constant (derived in docs/methods.md §2,
    not from a source). A zero O counts as 0.5. Check: "discuss about" -> (4.26, 12.42);
    "depend on" -> (-0.34, 0.57).
    """
    if not 0 < level < 1:
        raise ValueError(f"level must be between 0 and 1, not {level}")
    centre = np.asarray(log2_collocation_ratio(learner, reference, measure))
    o_l, o_r = (np.maximum(cells(*t)[0], ZERO_COUNT) for t in (learner, reference))
    half = stats.norm.isf((1 - level) / 2) * np.sqrt(1 / o_l + 1 / o_r) / np.log(2)
    return _out(centre - half), _out(centre + half)


# --- Dispersion across writers (docs/methods.md §4) ----------------------------------


def _dp(v, s) -> tuple[float | None, float]:
    v, s = np.asarray(v, dtype=float), np.asarray(s, dtype=float)
    if v.ndim != 1 or v.shape != s.shape or v.size == 0:
        raise ValueError("v and s must be equally long, non-empty 1-D sequences")
    if np.any(v < 0) or np.any(s < 0) or s.sum() <= 0 or np.any((s == 0) & (v > 0)):
        raise ValueError(
            "need counts v >= 0, part sizes s >= 0 with a positive total,"
            " and no count in a part of size 0"
        )
    share = s / s.sum()
    f = v.sum()
    if f == 0:
        return None, float(share.min())
    return float(0.5 * np.abs(v / f - share).sum()), float(share.min())


def gries_dp(v: Sequence[float], s: Sequence[float]) -> float | None:
    """Gries's DP = 1/2 * sum_i |v_i / f - s_i| (Gries 2008): 0 = even, towards 1 = concentrated.

    :param v: the pair's count in each part (writer); f = sum(v).
    :param s: each part's size (attachments or tokens); turned into shares here.
    :returns: DP, or ``None`` when f = 0 (no occurrences: dispersion undefined).
    :raises ValueError: for unequal lengths, negatives, or a count in a part of size 0.

    Check: Gries's toy corpus, s 9, 10, 10, 10, 11 and v 1..5 -> 0.18.
    """
    return _dp(v, s)[0]


def gries_dp_norm(v: Sequence[float], s: Sequence[float]) -> float | None:
    """DPnorm = DP / (1 - min s_i) (Lijffijt & Gries 2012), in [0, 1].

    ``None`` when f = 0; 0 for a single part (1 - min s = 0: nothing to spread over).
    Check: toy corpus -> 0.2195; one of ten equal writers holding all uses -> 1.0.
    """
    dp, smin = _dp(v, s)
    if dp is None:
        return None
    return 0.0 if smin >= 1.0 else dp / (1.0 - smin)


# --- Rate ratio with a confidence bound (docs/methods.md §3) -------------------------
#   learner:   a of n1 uses of the governor, at k times the native general rate of the slot
#   reference: c of n2


def _rate_null(a, n1, c, n2, k):
    a, n1, c, n2 = _two(a, n1, c, n2)
    k = np.broadcast_to(np.asarray(k, dtype=float), a.shape)
    if np.any(k <= 0):
        raise ValueError("k must be positive")
    ok = (n1 > 0) & (n2 > 0)
    pi0 = np.where(ok, n1 * k / np.where(ok, n1 * k + n2, 1.0), 0.5)
    return a, n1, c, n2, k, ok, pi0


def rate_ratio(a, n1, c, n2, k=1.0, smoothing=ZERO_COUNT):
    """ρ = (a / (k·n1)) / (c / n2): how many times the native rate (scaled by ``k``) the learners use a slot.

    ``k`` allows for a general difference between the corpora (the learners' rate of the
    preposition with all governors of that kind over the natives'), so that a preposition the
    learners use more everywhere does not make every governor look over-used. A zero count
    is replaced by ``smoothing`` (0.5, as Log Ratio). Empty base: 1. Check: (5, 200, 0, 388, 1)
    -> 19.4.
    """
    a, n1, c, n2, k, ok, _ = _rate_null(a, n1, c, n2, k)
    a_s, c_s = np.where(a > 0, a, smoothing), np.where(c > 0, c, smoothing)
    return _out(np.where(ok, (a_s * n2) / np.where(ok, c_s * n1 * k, 1.0), 1.0))


def rate_ratio_test(a, n1, c, n2, k=1.0, alternative: str = "greater"):
    """One-sided p of H0 "the learners' rate is at most k times the natives' rate".

    The conditional test of two Poisson rates (Przyborowski & Wilenski 1940 [mem]): given
    a + c uses in all, the learners' share is Binomial(a + c, π0) with
    π0 = k·n1 / (k·n1 + n2) under H0, so p = P(X >= a) (``"greater"``) or P(X <= a)
    (``"less"``). It needs no normal approximation, so it holds for counts of 2 or 3 and for
    c = 0, where G² and the Poisson interval of the collocation ratio do not. The value equals
    ``scipy.stats.binomtest(a, a + c, π0, alternative).pvalue`` (checked in the tests).
    No uses at all (a + c = 0) or an empty base: 1. Check: (5, 200, 0, 388) -> 0.004553.
    """
    a, n1, c, n2, k, ok, pi0 = _rate_null(a, n1, c, n2, k)
    m = a + c
    if alternative == "greater":
        p = stats.binom.sf(a - 1, m, pi0)
    elif alternative == "less":
        p = stats.binom.cdf(a, m, pi0)
    else:
        raise ValueError(f"alternative must be 'greater' or 'less', not {alternative!r}")
    return _out(np.where(ok & (m > 0), np.clip(p, 0.0, 1.0), 1.0))


def rate_ratio_bounds(a, n1, c, n2, k=1.0, level: float = 0.95):
    """One-sided confidence bounds ``(low, high)`` for :func:`rate_ratio`.

    From the Clopper–Pearson bounds of the binomial share π = a / (a + c) (Clopper & Pearson
    1934), mapped through ρ = π / (1 − π) · n2 / (k·n1): ``low`` is the one-sided ``level``
    lower bound (0 when a = 0), ``high`` the upper bound (inf when c = 0). ``low >= 1``
    exactly when :func:`rate_ratio_test` gives p <= 1 − level. Check: (5, 200, 0, 388),
    level 0.95 -> low 2.3642.
    """
    if not 0 < level < 1:
        raise ValueError(f"level must be between 0 and 1, not {level}")
    a, n1, c, n2, k, ok, _ = _rate_null(a, n1, c, n2, k)
    alpha = 1.0 - level
    with np.errstate(divide="ignore", invalid="ignore"):
        pi_lo = np.where(a > 0, stats.beta.ppf(alpha, np.maximum(a, 1e-300), c + 1), 0.0)
        pi_hi = np.where(c > 0, stats.beta.ppf(1 - alpha, a + 1, np.maximum(c, 1e-300)), 1.0)
        scale = np.where(ok, n2 / np.where(ok, k * n1, 1.0), 1.0)
        low = np.where(pi_lo < 1, pi_lo / (1 - pi_lo), np.inf) * scale
        high = np.where(pi_hi < 1, pi_hi / (1 - pi_hi), np.inf) * scale
    return _out(np.where(ok, low, 0.0)), _out(np.where(ok, high, np.inf))


def share_upper_bound(c, n, level: float = 0.95):
    """One-sided Clopper–Pearson upper bound of a share c / n ("rule of three" for c = 0: ≈ 3 / n).

    Empty base: 1. Check: (0, 388) -> 0.007691.
    """
    c, n = np.broadcast_arrays(np.asarray(c, dtype=float), np.asarray(n, dtype=float))
    with np.errstate(invalid="ignore"):
        hi = stats.beta.ppf(level, c + 1, np.maximum(n - c, 1e-300))
    return _out(np.where(n > 0, np.where(c >= n, 1.0, hi), 1.0))

"""Score stage: learner vs reference figures and the over-use flag for every pattern.

Two questions, two tables (METHODS.md §1 and §3):

* **Association inside each corpus** — the 2x2 table of attachments: n_ii =
  f(governor, prep), n_ix = the governor's attachments to any slot, n_xi = the
  preposition's attachments to any governor, n_xx = all attachments. Each
  effect-size measure is computed in both corpora; the **collocation ratio** is
  learner score ÷ reference score for ``measure`` (default ``"oe"``:
  (O/E)_L ÷ (O/E)_R, i.e. 2^(MI_L − MI_R); METHODS §2).
* **Learner vs reference for one governor** — P(prep | governor) compared by
  four-cell G² on [[a, n1−a], [c, n2−c]] (a = learner_count, n1 =
  learner_governor_count, c = reference_count, n2 = reference_governor_count),
  Fisher's exact test (one-sided) for small counts, and Log Ratio as the effect
  size.

Status, in this order: ``not enough reference evidence`` (the governor has fewer
than ``min_reference`` attachments in the reference); ``over-used`` (G² ≥
``min_g2`` and Log Ratio ≥ ``min_log_ratio``, with at least ``min_count``
instances by ``min_writers`` writers spread over the class — Gries's DP over
writers at most ``max_dispersion``, default 0.8, a project default: in a class of
14 equal writers, three writers using a pattern evenly give DP 0.79, two give
0.86 — otherwise ``too rare in class``) when
native writers rarely use the form (reference share below ``max_native_share``,
default 5 %, one use in twenty: a project default, not from a source), else
``over-used (native form)``: a correct pattern the class simply uses more, often
because of the essay topic ("travel to" in essays about commuting), which is not
flagged;
``under-used`` (G² ≥ ``min_g2`` and Log Ratio ≤ −``min_log_ratio``, the
governor used ``min_count`` times by ``min_writers`` writers); ``as native``
(enough class evidence, no difference past the thresholds); ``too rare in
class``. Only ``over-used`` sets ``flagged``.

Under-use is reported on both sides: native patterns of the class's governors
that the class never wrote (learner_count 0) are added when they come out
``under-used`` ("listen to" missing where the class wrote "listen music").
"""

from __future__ import annotations

from collections import Counter, defaultdict
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd
from scipy.stats import false_discovery_control

from . import measures as m

#: Documented defaults; every one is a CLI option and is recorded in each run.
DEFAULTS: dict = {
    "min_count": 3,  # instances of the pattern in the class
    "min_writers": 2,  # distinct writers using it: one student's habit is not a class pattern
    "min_reference": 20,  # attachments of the governor in the reference
    "min_g2": 10.83,  # chi-squared(1) critical value for p < .001 (Rayson's table; METHODS §3)
    "min_log_ratio": 1.0,  # at least twice the native rate (Hardie 2014)
    "max_native_share": 0.05,  # above this share of the governor's native uses the form itself is native
    "max_dispersion": 0.8,  # Gries's DP over writers above this: concentrated in a few writers
    "measure": "oe",  # effect-size score of the collocation ratio: oe, mi or logdice
}

STATUSES = ("over-used", "under-used", "over-used (native form)", "as native", "not enough reference evidence",
            "too rare in class")

CONTRACT = [
    "governor", "governor_pos", "preposition", "learner_count", "learner_writers", "learner_governor_count",
    "reference_count", "reference_governor_count", "collocation_ratio", "log_likelihood", "log_ratio",
    "flagged", "status",
]
EXTRA = [
    "learner_share", "reference_share", "p_value", "fisher_p", "fdr_q", "dispersion_dp", "collocation_ratio_low",
    "collocation_ratio_high", "mi_learner", "mi_reference", "logdice_learner", "logdice_reference",
    "t_learner", "t_reference", "z_learner", "z_reference", "g2_learner", "g2_reference",
]


def settings_with_defaults(settings: Mapping | None) -> dict:
    out = dict(DEFAULTS)
    out.update({k: v for k, v in (settings or {}).items() if v is not None and k in DEFAULTS})
    if out["measure"] not in m.EFFECT_SIZES:
        from .errors import HingewordError

        raise HingewordError(f"--measure must be one of {', '.join(m.EFFECT_SIZES)}, not '{out['measure']}'")
    return out


def _with_zero_rows(counts: pd.DataFrame, reference, s: dict) -> pd.DataFrame:
    """Add learner_count 0 rows for reference patterns of the class's governors."""
    have = set(zip(counts.governor, counts.governor_pos, counts.preposition))
    gov_n = dict(zip(zip(counts.governor, counts.governor_pos), counts.learner_governor_count))
    extra = []
    for (g, p, prep), c in reference.patterns.items():
        if (g, p) in gov_n and (g, p, prep) not in have and c >= s["min_count"]:
            extra.append((g, p, prep, 0, 0, gov_n[(g, p)]))
    if not extra:
        return counts
    return pd.concat([counts, pd.DataFrame(extra, columns=counts.columns)], ignore_index=True)


def _dispersion(df: pd.DataFrame, attachments: Sequence) -> list[float | None]:
    """Gries's DP over writers; a writer's size = their attachments (all slots)."""
    size: Counter = Counter(a.writer for a in attachments)
    writers = sorted(size)
    per: dict[tuple, Counter] = defaultdict(Counter)
    for a in attachments:
        per[a.key][a.writer] += 1
    out = []
    for key in zip(df.governor, df.governor_pos, df.preposition):
        if not writers or not per.get(key):
            out.append(None)
            continue
        v = [per[key][w] for w in writers]
        out.append(m.gries_dp(v, [size[w] for w in writers]))
    return out


def score_patterns(counts: pd.DataFrame, attachments: Sequence, reference, settings: Mapping | None = None) -> pd.DataFrame:
    """Score every pattern of ``counts`` (from :func:`hingeword.patterns.count_patterns`).

    :returns: a DataFrame with :data:`CONTRACT` then :data:`EXTRA` columns, flagged
        patterns first (most writers, then G²), then the rest by status and count.
    """
    s = settings_with_defaults(settings)
    df = _with_zero_rows(counts, reference, s)
    gov_ref = reference.governor_totals()
    prep_ref = reference.preposition_totals()
    n_ref = max(reference.total, 0)
    prep_l = df.groupby("preposition").learner_count.transform("sum")
    n_l = int(counts.learner_count.sum())

    keys = list(zip(df.governor, df.governor_pos, df.preposition))
    a = df.learner_count.to_numpy(float)
    n1 = df.learner_governor_count.to_numpy(float)
    c = np.array([reference.patterns.get(k, 0) for k in keys], float)
    n2 = np.array([gov_ref.get(k[:2], 0) for k in keys], float)
    c1 = np.array([prep_ref.get(k[2], 0) for k in keys], float)
    lt = (a, n1, prep_l.to_numpy(float), float(n_l))
    rt = (c, n2, c1, float(n_ref))

    out = df.copy()
    out["reference_count"] = c.astype(int)
    out["reference_governor_count"] = n2.astype(int)
    out["collocation_ratio"] = m.collocation_ratio(lt, rt, s["measure"])
    lo, hi = m.collocation_ratio_ci(lt, rt, measure=s["measure"])
    g2 = m.g2_two_corpus(a, n1, c, n2)
    lr = m.log_ratio(a, n1, c, n2)
    out["log_likelihood"] = g2
    out["log_ratio"] = lr
    out["learner_share"] = np.where(n1 > 0, a / np.where(n1 > 0, n1, 1), 0.0)
    out["reference_share"] = np.where(n2 > 0, c / np.where(n2 > 0, n2, 1), 0.0)
    out["p_value"] = m.g2_p_value(g2)
    out["fisher_p"] = m.fisher_greater(a, n1, c, n2)
    out["fdr_q"] = false_discovery_control(np.clip(out.p_value.to_numpy(float), 0, 1), method="bh") if len(out) else []
    out["dispersion_dp"] = _dispersion(df, attachments)
    out["collocation_ratio_low"] = np.exp2(lo)
    out["collocation_ratio_high"] = np.exp2(hi)
    for name, fn in (("mi", m.mutual_information), ("logdice", m.log_dice), ("t", m.t_score), ("z", m.z_score),
                     ("g2", m.log_likelihood)):
        out[f"{name}_learner"] = fn(*lt)
        out[f"{name}_reference"] = fn(*rt)

    gov_writers = _governor_writers(attachments)
    dp = out.dispersion_dp.to_numpy(dtype=object)
    status = []
    for i, key in enumerate(keys):
        spread = dp[i] is None or dp[i] != dp[i] or dp[i] <= s["max_dispersion"]
        enough_pattern = a[i] >= s["min_count"] and out.learner_writers.iat[i] >= s["min_writers"] and spread
        enough_governor = n1[i] >= s["min_count"] and gov_writers.get(key[:2], 0) >= s["min_writers"]
        significant = g2[i] >= s["min_g2"]
        if n2[i] < s["min_reference"]:
            status.append("not enough reference evidence")
        elif significant and lr[i] >= s["min_log_ratio"]:
            if not enough_pattern:
                status.append("too rare in class")
            elif n2[i] and c[i] / n2[i] >= s["max_native_share"]:
                status.append("over-used (native form)")
            else:
                status.append("over-used")
        elif significant and lr[i] <= -s["min_log_ratio"]:
            status.append("under-used" if enough_governor else "too rare in class")
        elif enough_pattern:
            status.append("as native")
        else:
            status.append("too rare in class")
    out["status"] = status
    out["flagged"] = out.status == "over-used"
    # zero rows stay only where they say something: the class avoids a native pattern
    out = out[(out.learner_count > 0) | (out.status == "under-used")]
    order = {st: i for i, st in enumerate(STATUSES)}
    out = out.assign(_o=out.status.map(order), _w=-out.learner_writers, _g=-out.log_likelihood, _n=-out.learner_count)
    out = out.sort_values(["_o", "_w", "_g", "_n", "governor", "governor_pos", "preposition"]).drop(columns=["_o", "_w", "_g", "_n"])
    return out[CONTRACT + EXTRA].reset_index(drop=True)


def _governor_writers(attachments: Sequence) -> dict[tuple[str, str], int]:
    w: dict[tuple[str, str], set] = defaultdict(set)
    for a in attachments:
        w[(a.governor, a.governor_pos)].add(a.writer)
    return {k: len(v) for k, v in w.items()}


def score_run(counts: pd.DataFrame, attachments: Sequence, reference, settings: Mapping):
    """Score a scan; returns (DataFrame, settings actually used)."""
    s = settings_with_defaults(settings)
    return score_patterns(counts, attachments, reference, s), s

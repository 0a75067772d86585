"""Score stage: learner vs reference figures and the over-use flag for every pattern.

Two questions, two tables (``docs/methods.md`` §1 and §3):

* **Association inside each corpus** — the 2x2 table of attachments: n_ii =
  f(governor, prep), n_ix = the governor's attachments to any slot, n_xi = the
  preposition's attachments to any governor, n_xx = all attachments. Each
  effect-size measure is computed in both corpora; the **collocation ratio** is
  learner score ÷ reference score for ``measure`` (default ``"oe"``:
  (O/E)_L ÷ (O/E)_R, i.e. 2^(MI_L − MI_R); methods §2).
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
0.86 — otherwise ``concentrated in one or two writers`` when there are enough
uses, ``too rare in class`` when there are not) when
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
from dataclasses import asdict, dataclass, field, fields
from enum import Enum

import numpy as np
import pandas as pd
from scipy.stats import false_discovery_control

from . import measures as m
from .errors import HingewordError
from .record import PatternRecord, Status


class Measure(str, Enum):
    """Effect-size score behind the collocation ratio (methods §2)."""

    OE = "oe"
    MI = "mi"
    LOGDICE = "logdice"

    def __str__(self) -> str:
        return self.value


_MEASURE_WORDS = {Measure.OE: "observed / expected (oe)", Measure.MI: "mutual information (mi)",
                  Measure.LOGDICE: "logDice (logdice)"}


def _t(default, help: str, label: str, *, lo=None, hi=None, fmt: str = "{}"):
    return field(default=default, metadata={"help": help, "label": label, "min": lo, "max": hi, "fmt": fmt})


@dataclass(frozen=True)
class Thresholds:
    """Every threshold of the flag decision, with its default, its option and its words.

    The CLI makes one option per field (``--min-count`` for ``min_count``), the scorer
    reads them from here, and the overview's "How this was measured" lists them all.
    Defaults are project defaults unless a source is named.
    """

    min_count: int = _t(3, "Instances a pattern needs in the class.", "Instances a pattern needs in the class", lo=1)
    min_writers: int = _t(2, "Distinct writers a pattern needs (one student's habit is not a class pattern).",
                          "Different writers a pattern needs", lo=1)
    min_reference: int = _t(20, "Attachments the governor needs in the reference.",
                            "Uses of the governor needed in the reference", lo=0)
    min_g2: float = _t(10.83, "Log-likelihood G2 threshold (10.83: p < .001, Rayson's table; methods §3).",
                       "Log-likelihood G² at least", lo=0.0, fmt="{:.2f}")
    min_log_ratio: float = _t(1.0, "Log Ratio threshold (1 = twice the native rate; Hardie 2014).",
                              "Log Ratio at least (1 = twice the native rate)", fmt="{:.2f}")
    max_native_share: float = _t(0.05, "Not flagged when natives use the form this often (share of the governor's uses).",
                                 "Not flagged when native writers use the form in at least", lo=0.0, hi=1.0,
                                 fmt="{:.0%} of the word's uses")
    max_dispersion: float = _t(0.8, "Not flagged when Gries's DP over writers is higher (use concentrated in a few writers).",
                               "Gries's DP over writers at most", lo=0.0, hi=1.0, fmt="{:.2f}")
    measure: Measure = _t(Measure.OE, "Score of the collocation ratio.", "Score behind the collocation ratio")

    @classmethod
    def from_mapping(cls, values: Mapping | None, *, ignore: Sequence[str] = ()) -> Thresholds:
        """Thresholds from a mapping (None values keep the default); an unknown key is an error."""
        known = {f.name: f for f in fields(cls)}
        kw = {}
        for k, v in (values or {}).items():
            if k in ignore or v is None:
                continue
            if k not in known:
                raise HingewordError(f"unknown threshold '{k}' (known: {', '.join(known)})")
            if k == "measure":
                try:
                    v = Measure(str(v))
                except ValueError:
                    raise HingewordError(f"--measure must be one of {', '.join(x.value for x in Measure)}, not '{v}'") from None
            kw[k] = v
        return cls(**kw)

    def as_dict(self) -> dict:
        d = asdict(self)
        d["measure"] = self.measure.value
        return d

    def describe(self) -> list[tuple[str, str]]:
        """(label, value in words) for every threshold, in field order."""
        out = []
        for f in fields(self):
            v = getattr(self, f.name)
            text = _MEASURE_WORDS[v] if isinstance(v, Measure) else f.metadata["fmt"].format(v)
            out.append((f.metadata["label"], text))
        return out


#: The defaults, for callers that only read them.
DEFAULTS = Thresholds()

_ORDER = {s: i for i, s in enumerate(Status)}


def _with_zero_rows(counts: pd.DataFrame, reference, t: Thresholds) -> pd.DataFrame:
    """Add learner_count 0 rows for reference patterns of the class's governors."""
    have = set(zip(counts.governor, counts.governor_pos, counts.preposition))
    gov_n = dict(zip(zip(counts.governor, counts.governor_pos), counts.learner_governor_count))
    extra = []
    for (g, p, prep), c in reference.patterns.items():
        if (g, p) in gov_n and (g, p, prep) not in have and c >= t.min_count:
            extra.append((g, p, prep, 0, 0, gov_n[(g, p)]))
    if not extra:
        return counts
    return pd.concat([counts, pd.DataFrame(extra, columns=counts.columns)], ignore_index=True)


def _dispersion(df: pd.DataFrame, attachments: Sequence) -> list[float]:
    """Gries's DP over writers; a writer's size = their attachments (all slots). NaN when undefined.

    Computed from the (pattern, writer) pairs that occur, so the work grows with the attachments,
    not with patterns × writers: a writer without the pattern adds |0 − s_w| = s_w, and the shares
    s_w add up to 1, so DP = ½ (Σ_{v_w > 0} (|v_w / f − s_w| − s_w) + 1), the same value as
    :func:`measures.gries_dp` over all writers (up to rounding in the last digits).
    """
    size: Counter = Counter(a.writer for a in attachments)
    total = sum(size.values())
    per: dict[tuple, Counter] = defaultdict(Counter)
    for a in attachments:
        per[a.key][a.writer] += 1
    out = []
    for key in zip(df.governor, df.governor_pos, df.preposition):
        counts = per.get(key)
        if not counts:
            out.append(float("nan"))
            continue
        f = sum(counts.values())
        spread = 1.0
        for writer, v in counts.items():
            share = size[writer] / total
            spread += abs(v / f - share) - share
        out.append(float(0.5 * spread))
    return out


def _governor_writers(attachments: Sequence) -> dict[tuple[str, str], int]:
    w: dict[tuple[str, str], set] = defaultdict(set)
    for a in attachments:
        w[(a.governor, a.governor_pos)].add(a.writer)
    return {k: len(v) for k, v in w.items()}


def _status(t: Thresholds, *, a, writers, n1, gov_writers, c, n2, g2, lr, dp) -> Status:
    if n2 < t.min_reference:
        return Status.NO_REFERENCE
    enough_uses = a >= t.min_count
    spread = writers >= t.min_writers and (dp != dp or dp <= t.max_dispersion)
    significant = g2 >= t.min_g2
    if significant and lr >= t.min_log_ratio:
        if not enough_uses:
            return Status.TOO_RARE
        if not spread:
            return Status.CONCENTRATED
        if n2 and c / n2 >= t.max_native_share:
            return Status.NATIVE_FORM
        return Status.OVER_USED
    if significant and lr <= -t.min_log_ratio:
        return Status.UNDER_USED if n1 >= t.min_count and gov_writers >= t.min_writers else Status.TOO_RARE
    if enough_uses and spread:
        return Status.AS_NATIVE
    return Status.CONCENTRATED if enough_uses else Status.TOO_RARE


def score_patterns(counts: pd.DataFrame, attachments: Sequence, reference,
                   thresholds: Thresholds | None = None) -> list[PatternRecord]:
    """Score every pattern of ``counts`` (from :func:`hingeword.patterns.count_patterns`).

    :returns: one :class:`~hingeword.record.PatternRecord` per pattern the class used,
        plus the native patterns the class avoids (``under-used`` with no use), in
        :func:`ranked` order.
    """
    t = thresholds or Thresholds()
    df = _with_zero_rows(counts, reference, t)
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

    cols: dict[str, np.ndarray] = {}
    cols["collocation_ratio"] = m.collocation_ratio(lt, rt, t.measure.value)
    lo, hi = m.collocation_ratio_ci(lt, rt, measure=t.measure.value)
    g2 = m.g2_two_corpus(a, n1, c, n2)
    lr = m.log_ratio(a, n1, c, n2)
    cols["log_likelihood"] = g2
    cols["log_ratio"] = lr
    cols["learner_share"] = np.where(n1 > 0, a / np.where(n1 > 0, n1, 1), 0.0)
    cols["reference_share"] = np.where(n2 > 0, c / np.where(n2 > 0, n2, 1), 0.0)
    p = m.g2_p_value(g2)
    cols["p_value"] = p
    cols["fisher_p"] = m.fisher_greater(a, n1, c, n2)
    cols["fdr_q"] = false_discovery_control(np.clip(np.asarray(p, float), 0, 1), method="bh") if len(df) else np.array([])
    dp = np.array(_dispersion(df, attachments), float)
    cols["dispersion_dp"] = dp
    cols["collocation_ratio_low"] = np.exp2(lo)
    cols["collocation_ratio_high"] = np.exp2(hi)
    for name, fn in (("mi", m.mutual_information), ("logdice", m.log_dice), ("t", m.t_score), ("z", m.z_score),
                     ("g2", m.log_likelihood)):
        cols[f"{name}_learner"] = fn(*lt)
        cols[f"{name}_reference"] = fn(*rt)
    cols = {k: np.broadcast_to(np.asarray(v, float), (len(df),)) for k, v in cols.items()}

    gov_writers = _governor_writers(attachments)
    writers = df.learner_writers.to_numpy(int)
    records = []
    for i, key in enumerate(keys):
        status = _status(t, a=a[i], writers=writers[i], n1=n1[i], gov_writers=gov_writers.get(key[:2], 0), c=c[i],
                         n2=n2[i], g2=g2[i], lr=lr[i], dp=dp[i])
        if a[i] == 0 and status is not Status.UNDER_USED:
            continue  # zero rows stay only where they say something: the class avoids a native pattern
        records.append(PatternRecord(
            governor=key[0], governor_pos=key[1], preposition=key[2], learner_count=int(a[i]),
            learner_writers=int(writers[i]), learner_governor_count=int(n1[i]), reference_count=int(c[i]),
            reference_governor_count=int(n2[i]), flagged=status is Status.OVER_USED, status=status,
            **{k: float(v[i]) for k, v in cols.items()},
        ))
    return ranked(records)


def ranked(records: Sequence[PatternRecord]) -> list[PatternRecord]:
    """Flagged first (most writers, then G²), then by status, writers, G², count, then by name."""
    def g2(r: PatternRecord) -> float:
        return r.log_likelihood if r.log_likelihood == r.log_likelihood else 0.0

    return sorted(records, key=lambda r: (_ORDER[r.status], -r.learner_writers, -g2(r), -r.learner_count, *r.key))

"""Score stage: learner vs reference figures and the flag decision for every pattern.

The question the flag answers
-----------------------------
*Native writers avoid this preposition with this governor — compared with how often they
use that preposition with governors of the same kind — while these learners use it with it,
clearly more often than natives would, and not just one or two of them.*

For a pattern (governor *g* with POS *x*, slot *p*: a preposition or ``-`` for a direct
object) the learners wrote *a* uses of *g* + *p* out of *n1* uses of *g* with any slot; the
reference has *c* of *n2* (docs/methods.md §3 draws the table). Five conditions, each from
the counts, each with its own status when it fails:

1. **The reference knows the word**: n2 >= ``min_reference`` (else ``not enough reference
   evidence``: with 5 native uses nothing can be said).
2. **Natives avoid the form**: it is not a native form (:func:`is_native_form`): the native
   share c / n2 is below ``max_native_share`` (20 %), and below ``favoured_share`` (2 %) too
   when natives favour the preposition with this governor (native O/E >= 1). Else the
   learners merely use a correct form more: ``over-used (native form)``, "travel to" in
   essays about commuting.
3. **Learners use it more than natives would, beyond chance among all the patterns tested**:
   the rate ratio ρ = (a / (k·n1)) / (c / n2) — how many times the native rate the learners
   use the slot — is at least ``min_rate_ratio`` (2), and the exact test of H0 "ρ is at most
   ``tested_ratio`` (1.5)" rejects it under the Benjamini–Hochberg procedure (Benjamini &
   Hochberg 1995) at a false-discovery rate of 1 − ``confidence`` (5 %) over every candidate
   of the run (patterns passing conditions 1, 2, 4 and 5), so the expected share of chance
   flags stays at most 5 % however many patterns a corpus offers. *k* is the learners' general
   rate of *p* with governors of kind *x* over the natives' (never below 1; the class's uses
   enter by their lower 95 % Poisson bound, so a few uses excuse nothing): a class that writes
   "because of" more everywhere must not turn every verb into a "because of" pattern; this is
   the job the collocation ratio (learner association ÷ native association) does, made
   testable, and *k* comes from the reference's own counts of *p* with every governor of kind
   *x*, not from a hand list of adjuncts. Patterns already found over-used are left out of *k*
   (:func:`decide_tally`). When the pattern would stand out without *k* but not with it, the
   status says so: ``the class uses this preposition with every word``. The test is the
   conditional binomial test of two Poisson rates (Przyborowski & Wilenski 1940 [mem]), with
   Clopper–Pearson limits for the reported bounds (:func:`hingeword.measures.rate_ratio_bounds`,
   false-coverage adjusted, Benjamini & Yekutieli 2005): exact for counts of 2 or 3 and for
   c = 0, where G² needs more evidence than a class has. When the estimate is high but the test
   does not reject, the status is ``natives rarely use it; too little evidence`` — never
   ``as native``.
4. **Enough uses**: a >= ``min_count`` by at least ``min_writers`` writers (else ``too rare
   in class``).
5. **Spread, whatever the class size**: no writer holds more than ``max_writer_share`` of
   the uses (two uses by one writer are always allowed; else ``concentrated in one or two
   writers``). The rule looks only at the pattern's own uses, so the same evidence gives the
   same decision in a class of 12 or of 3,000 writers. Gries's DP over writers, which grows
   with the number of writers who do not use a pattern, is reported, not used.

**Pooled evidence.** Inside one class real errors rarely recur. When the workspace's other
runs are pooled (``pool``, default: every class and term in the workspace), a pattern that
fails conditions 3–5 in the class alone is decided again on the pooled counts (the pool is
decided as one body of writing); when the pool flags it, the other class-terms alone show it
at least ``min_count`` times by ``min_writers`` writers (the pattern recurs elsewhere, it is
not this class's few uses counted twice) and the class used it at least once, it is flagged
with ``evidence = "workspace"``
and the pooled figures are kept beside the class's own ("in this class 2 uses by 2 writers;
across your 4 classes 9 uses by 7 writers"). Nothing outside the workspace is mixed in.

**Confirmed by the pool.** Each class's test keeps its own false-discovery rate, so a teacher
with eight classes has eight chances of a chance finding. A flag of the class alone is kept when
the pooled counts flag the pattern too, or when the workspace's other class-terms never used the
governor, or when the class's own evidence passes at the false-discovery rate divided by the
number of class-terms pooled (a Bonferroni step over the class-terms: an error of one class only,
"depend of" six times where the other classes write "depend on", stays flagged). Otherwise it is
``natives rarely use it; too little evidence``. On the development data this took the false flags
of unplanted classes of 25 writers from 4 to 1 in 8 classes and of 12 writers from 1 to 0, with
the same planted errors found (``docs/detection.md``).

**Under-use** is the mirror of 3 for a native form (share >= ``max_native_share``): the
learners' share is at most the native share / ``min_rate_ratio`` and Fisher's exact test
(one-sided, level ``confidence``) says it is lower ("listen to" missing where the class
writes "listen music"; shares of native forms are large, where the Poisson test above would
be too cautious), with the governor used ``min_count`` times by ``min_writers`` writers. Native patterns of the class's governors that the class never wrote are added when
they come out ``under-used``.

**Rank.** Flagged patterns are ordered by ``rank_score`` = log2 of the lower bound of ρ (the
over-use the evidence guarantees), then by writers; the class handout takes the first few.

Reported, not used in the decision: G² and Log Ratio of the same table (Dunning 1993; Hardie
2014), Fisher's exact p, the collocation ratio
with ``measure`` and its interval, MI, t, z, logDice in both corpora and Gries's DP.

Thresholds were chosen on development data we did not write (``bench/bench_detection.py``:
held-out native text with planted errors at 12, 25, 120 and 1,000 writers, native controls,
JFLEG); the settings tried and the figures are in ``docs/detection.md``.
"""

from __future__ import annotations

import functools
import math
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, field, fields, replace
from enum import Enum

import numpy as np
from scipy.stats import chi2, false_discovery_control

from . import measures as m
from .errors import HingewordError
from .patterns import Tally
from .record import NO_PREP, PatternRecord, Status


class Measure(str, Enum):
    """Effect-size score behind the reported collocation ratio (methods §2)."""

    OE = "oe"
    MI = "mi"
    LOGDICE = "logdice"

    def __str__(self) -> str:
        return self.value


class Pool(str, Enum):
    """Which other runs of the workspace lend their evidence."""

    WORKSPACE = "workspace"  # every class and term in the workspace
    LINKED = "linked"  # this class, its other terms and the classes linked to it
    NONE = "none"  # this class and term alone

    def __str__(self) -> str:
        return self.value


_WORDS = {Measure.OE: "observed / expected (oe)", Measure.MI: "mutual information (mi)",
          Measure.LOGDICE: "logDice (logdice)", Pool.WORKSPACE: "every class and term in the workspace",
          Pool.LINKED: "this class's terms and linked classes", Pool.NONE: "this class and term only"}


def _t(default, help: str, label: str, *, lo=None, hi=None, fmt: str = "{}"):
    return field(default=default, metadata={"help": help, "label": label, "min": lo, "max": hi, "fmt": fmt})


@dataclass(frozen=True)
class Thresholds:
    """Every setting of the flag decision, with its default, its option and its words.

    The CLI makes one option per field (``--min-count`` for ``min_count``), the scorer
    reads them from here, and the overview's "How this was measured" lists them all.
    Defaults are project defaults chosen on the development data named in the module
    docstring unless a source is named.
    """

    min_count: int = _t(3, "Uses a pattern needs (in the class, or in the pool for pooled evidence).",
                        "Uses a pattern needs", lo=1)
    min_writers: int = _t(2, "Distinct writers a pattern needs (one student's habit is not a class pattern).",
                          "Different writers a pattern needs", lo=1)
    max_writer_share: float = _t(0.5, "Most of a pattern's uses one writer may hold (two uses are always allowed).",
                                 "Largest share of the uses one writer may hold", lo=0.0, hi=1.0, fmt="{:.0%}")
    min_reference: int = _t(20, "Uses of the governor the reference needs to say anything.",
                            "Uses of the governor needed in the reference", lo=0)
    max_native_share: float = _t(0.2, "Not flagged when natives use the form this often (share of the governor's uses).",
                                 "Not flagged when native writers use the form in at least", lo=0.0, hi=1.0,
                                 fmt="{:.0%} of the word's uses")
    favoured_share: float = _t(0.02, "Not flagged either when natives use the form this often and favour the "
                                     "preposition with this word (native O/E >= 1).",
                               "Nor when they use it in at least this share and favour it with this word", lo=0.0,
                               hi=1.0, fmt="{:.0%} of the word's uses")
    min_rate_ratio: float = _t(2.0, "Flag only when the learners use the form at least this many times the "
                                    "native rate (estimate).",
                               "Learners' rate at least this many times the natives'", lo=1.0, fmt="{:.1f}")
    tested_ratio: float = _t(1.5, "The flag's test: the learners' rate is more than this many times the natives' "
                                  "(exact test, Benjamini-Hochberg over the patterns tested).",
                             "Tested: learners' rate more than this many times the natives'", lo=1.0, fmt="{:.2f}")
    confidence: float = _t(0.95, "1 - the false-discovery rate of that test (at most 5 % of flags by chance); also "
                                 "the level of the reported bounds.",
                           "Confidence (1 - false-discovery rate)", lo=0.5, hi=0.9999, fmt="{:.0%}")
    pool: Pool = _t(Pool.WORKSPACE, "Other runs whose evidence is pooled for patterns too rare in one class.",
                    "Pooled evidence from")
    measure: Measure = _t(Measure.OE, "Score of the reported collocation ratio.", "Score behind the collocation ratio")

    def __post_init__(self):
        for name, enum in (("measure", Measure), ("pool", Pool)):
            value = getattr(self, name)
            if not isinstance(value, enum):
                try:
                    object.__setattr__(self, name, enum(str(value)))
                except ValueError:
                    raise HingewordError(f"--{name} must be one of {', '.join(x.value for x in enum)}, "
                                         f"not '{value}'") from None

    @classmethod
    def from_mapping(cls, values: Mapping | None, *, ignore: Sequence[str] = (), strict: bool = True) -> Thresholds:
        """Thresholds from a mapping (None values keep the default).

        :param strict: an unknown key is an error; ``False`` skips keys of older versions
            (runs stored before a threshold was retired).
        """
        known = {f.name: f for f in fields(cls)}
        kw = {}
        for k, v in (values or {}).items():
            if k in ignore or v is None:
                continue
            if k not in known:
                if strict:
                    raise HingewordError(f"unknown threshold '{k}' (known: {', '.join(known)})")
                continue
            kw[k] = v
        return cls(**kw)

    def as_dict(self) -> dict:
        d = asdict(self)
        d["measure"] = self.measure.value
        d["pool"] = self.pool.value
        return d

    def describe(self) -> list[tuple[str, str]]:
        """(label, value in words) for every setting, in field order."""
        return [(f.metadata["label"], _in_words(f, getattr(self, f.name))) for f in fields(self)]


def _in_words(f, v) -> str:
    return _WORDS[v] if isinstance(v, Enum) else f.metadata["fmt"].format(v)


def describe_settings(settings: Mapping) -> list[tuple[str, str]]:
    """(label, value) for the settings a run stored, as it stored them.

    Known settings read as :meth:`Thresholds.describe` does; a setting of an earlier version
    keeps its own name and value, so an old run is described as it was measured.
    """
    known = {f.name: f for f in fields(Thresholds)}
    out = []
    for name, f in known.items():
        if name in settings and settings[name] is not None:
            value = Thresholds.from_mapping({name: settings[name]})
            out.append((f.metadata["label"], _in_words(f, getattr(value, name))))
    for name in sorted(set(settings) - set(known) - {"term_start", "l1"}):
        out.append((f"{name} (a setting of an earlier version)", str(settings[name])))
    return out


#: The defaults, for callers that only read them.
DEFAULTS = Thresholds()

_ORDER = {s: i for i, s in enumerate(Status)}

#: Confidence of the lower bound that the general-rate factor k takes: k discounts only the part
#: of the class's general habit that its text shows beyond doubt (project default).
K_LEVEL = 0.95


@dataclass(frozen=True)
class Evidence:
    """One pattern's learner counts in one scope (the class, or the pool)."""

    a: int  # uses of the pattern
    writers: int
    top: int  # uses by the writer who uses it most
    n1: int  # uses of the governor with any slot
    gov_writers: int
    k: float  # learners' general rate of the slot for this POS over the natives'


@dataclass(frozen=True)
class Decision:
    """The outcome for one pattern: status, rate ratio with its bounds, the test's p and BH q."""

    status: Status
    ratio: float
    low: float
    high: float
    p: float
    q: float = float("nan")


@dataclass(frozen=True)
class _Excluded:
    """Uses of patterns already found over-used, left out of the general-rate factor k."""

    slot: Counter = field(default_factory=Counter)  # (POS, preposition) -> uses
    pos: Counter = field(default_factory=Counter)  # POS -> uses
    gov: Counter = field(default_factory=Counter)  # (governor, POS) -> uses
    keys: frozenset = frozenset()

    @classmethod
    def of(cls, tally: Tally, keys) -> _Excluded:
        ex = cls(keys=frozenset(keys))
        for g, pos, prep in ex.keys:
            n = tally.count((g, pos, prep))
            ex.slot[(pos, prep)] += n
            ex.pos[pos] += n
            ex.gov[(g, pos)] += n
        return ex


_NONE = _Excluded()


def _general_factor(tally: Tally, key, n1: int, a: int, native_rate: float, ex: _Excluded = _NONE) -> float:
    """k: the learners' rate of the slot with other governors of the POS over the natives' rate (>= 1).

    The learners' uses enter by their one-sided lower bound at :data:`K_LEVEL` (the exact
    Poisson bound, Garwood 1936), so that a handful of uses in a small class excuse nothing
    while thirty uses where natives would write one are a habit of the class.

    Uses of patterns already found over-used (``ex``) are left out on both sides: errors
    ("aware about") are not a style of the class that excuses another error ("afraid about").
    """
    g, pos, prep = key
    uses = tally.slots.get((pos, prep), 0) - a - (ex.slot[(pos, prep)] - (a if key in ex.keys else 0))
    base = tally.pos_totals.get(pos, 0) - n1 - (ex.pos[pos] - ex.gov[(g, pos)])
    if native_rate <= 0 or base <= 0:
        return 1.0
    uses = max(uses, 0)
    if uses == 0:
        return 1.0
    return max(1.0, _poisson_low(uses) / (base * native_rate))


@functools.lru_cache(maxsize=4096)
def _poisson_low(uses: int) -> float:
    """The exact one-sided lower Poisson bound of ``uses`` at :data:`K_LEVEL` (Garwood 1936 [mem]);
    remembered, as a run asks for the same few counts thousands of times."""
    return float(chi2.ppf(1.0 - K_LEVEL, 2 * uses)) / 2.0


def _evidence(tally: Tally, key, native_rate: float) -> Evidence:
    a = tally.count(key)
    n1 = tally.governors.get(key[:2], 0)
    return Evidence(a=a, writers=tally.writers(key), top=tally.top_writer_uses(key), n1=n1,
                    gov_writers=len(tally.governor_writers.get(key[:2], ())),
                    k=_general_factor(tally, key, n1, a, native_rate))


def decide_tally(t: Thresholds, tally: Tally, keys: Sequence, c: Sequence[int], n2: Sequence[int],
                 native_rates: Sequence[float], passes: int = 3) -> tuple[list[Evidence], list[Decision]]:
    """:func:`decide_all` for the patterns ``keys`` of ``tally``, with k re-estimated without the
    patterns found over-used, until the over-used set stops changing (at most ``passes`` rounds)."""
    found: set = set()
    evidence = [_evidence(tally, key, r) for key, r in zip(keys, native_rates)]
    for _ in range(max(1, passes)):
        if found:  # only k changes from one round to the next
            ex = _Excluded.of(tally, found)
            evidence = [replace(e, k=_general_factor(tally, key, e.n1, e.a, r, ex))
                        for e, key, r in zip(evidence, keys, native_rates)]
        decisions = decide_all(t, evidence, c, n2, native_rates)
        now = {key for key, d in zip(keys, decisions) if d.status is Status.OVER_USED}
        if now <= found:
            break
        found |= now
    return evidence, decisions


def _spread(t: Thresholds, e: Evidence) -> bool:
    return e.writers >= t.min_writers and e.top <= max(2, math.ceil(t.max_writer_share * e.a))


def is_native_form(t: Thresholds, c: int, n2: int, native_rate: float) -> bool:
    """Do native writers use this form themselves (condition 2 of the module docstring)?

    Yes when it takes at least ``max_native_share`` of the governor's uses, or at least
    ``favoured_share`` and natives favour the preposition with this governor (they use it
    with it at least as often as with governors of the same kind: native O/E >= 1).
    """
    if n2 <= 0:
        return False
    share = c / n2
    return share >= t.max_native_share or (share >= t.favoured_share and native_rate > 0 and share >= native_rate)


def _screen(t: Thresholds, e: Evidence, c: int, n2: int, native_rate: float, low: float) -> tuple[Status | None, float]:
    """Conditions 1, 2, 4 and 5: (status, p) or (``None``, nan) for a candidate that the
    significance step decides. ``low`` is the rate ratio's lower bound at ``confidence``."""
    nan = float("nan")
    if n2 < max(t.min_reference, 1):
        return Status.NO_REFERENCE, nan
    if is_native_form(t, c, n2, native_rate):  # over-use of a native form is not an error; under-use may be
        share = c / n2
        if e.n1 >= t.min_count and e.gov_writers >= t.min_writers and e.a / e.n1 <= share / t.min_rate_ratio:
            p_less = float(m.fisher_less(e.a, e.n1, c, n2))
            if p_less <= 1 - t.confidence:
                return Status.UNDER_USED, p_less
        if e.a >= t.min_count and low > 1:  # more than natives, significantly, but a correct form
            return Status.NATIVE_FORM, nan
        return (Status.AS_NATIVE if e.a >= t.min_count else Status.TOO_RARE), nan
    if e.a < t.min_count:
        return Status.TOO_RARE, nan
    if not _spread(t, e):
        return Status.CONCENTRATED, nan
    return None, nan


def decide_all(t: Thresholds, evidence: Sequence[Evidence], c: Sequence[int], n2: Sequence[int],
               native_rates: Sequence[float]) -> list[Decision]:
    """The status of every pattern of one body of learner writing (a class, or the pool).

    Patterns that pass conditions 1, 2, 4 and 5 are the *candidates*; each gets the exact
    p of H0 "the learners' rate is at most ``min_rate_ratio`` times the natives'"
    (:func:`hingeword.measures.rate_ratio_test`, with k). The Benjamini–Hochberg procedure
    (Benjamini & Hochberg 1995) over the candidates at level α = 1 − ``confidence``
    decides which are over-used, so the expected share of false flags among the flags stays
    at most α however many patterns a corpus offers. Their lower bound of the rate ratio is
    the false-coverage-adjusted one (Benjamini & Yekutieli 2005: level 1 − R·α/m for the R
    selected of m), which is at least ``min_rate_ratio`` exactly for the flagged ones.
    """
    if not evidence:
        return []
    a = np.array([e.a for e in evidence], float)
    n1 = np.maximum(np.array([e.n1 for e in evidence], float), a)
    k = np.array([e.k for e in evidence], float)
    cc = np.asarray(c, float)
    nn = np.asarray(n2, float)
    ratio = np.atleast_1d(m.rate_ratio(a, n1, cc, nn, k))
    low, high = (np.atleast_1d(x) for x in m.rate_ratio_bounds(a, n1, cc, nn, k, level=t.confidence))
    p = np.atleast_1d(m.rate_ratio_test(a, n1, cc, nn, k * t.tested_ratio))
    q = np.full(len(evidence), np.nan)
    screened = [_screen(t, e, int(ci), int(ni), float(r), float(lo))
                for e, ci, ni, r, lo in zip(evidence, cc, nn, native_rates, low)]
    statuses = [s for s, _ in screened]
    p = np.array([sp if s is Status.UNDER_USED else p[i] for i, (s, sp) in enumerate(screened)])
    idx = np.array([i for i, s in enumerate(statuses) if s is None], int)
    if len(idx):
        alpha = 1.0 - t.confidence
        q[idx] = np.atleast_1d(false_discovery_control(np.clip(p[idx], 0, 1), method="bh"))
        rejected = (q[idx] <= alpha) & (ratio[idx] >= t.min_rate_ratio)
        cut = alpha * max(int(rejected.sum()), 1) / len(idx)  # the BH threshold on p in force
        lo_adj, hi_adj = m.rate_ratio_bounds(a[idx], n1[idx], cc[idx], nn[idx], k[idx], level=1.0 - cut)
        low[idx], high[idx] = np.atleast_1d(lo_adj), np.atleast_1d(hi_adj)
        raw_p = np.atleast_1d(m.rate_ratio_test(a[idx], n1[idx], cc[idx], nn[idx], t.tested_ratio))
        for j, i in enumerate(idx):
            if rejected[j]:
                statuses[i] = Status.OVER_USED
            elif k[i] > 1 and raw_p[j] <= cut and ratio[i] * k[i] >= t.min_rate_ratio:
                # would stand out if the class did not use the preposition more everywhere
                statuses[i] = Status.ADJUNCT
            elif ratio[i] >= t.min_rate_ratio:
                statuses[i] = Status.THIN
            else:
                statuses[i] = Status.AS_NATIVE
    return [Decision(st, float(ratio[i]), float(low[i]), float(high[i]), float(p[i]), float(q[i]))
            for i, st in enumerate(statuses)]


_POOLABLE = (Status.TOO_RARE, Status.CONCENTRATED, Status.THIN, Status.AS_NATIVE)


def _dispersion(tally: Tally, keys: list) -> np.ndarray:
    """Gries's DP over writers per key; a writer's size = their attachments (all slots). NaN when undefined."""
    size: Counter = Counter()
    for per in tally.writer_uses.values():
        size.update(per)
    total = sum(size.values())
    out = np.full(len(keys), np.nan)
    if not total:
        return out
    for i, key in enumerate(keys):
        per = tally.writer_uses.get(key)
        if not per:
            continue
        f = sum(per.values())
        # 1/2 sum |v_i/f - s_i| over all writers = 1/2 (sum over users |v/f - s| + share of non-users)
        used = sum(abs(v / f - size[w] / total) for w, v in per.items())
        rest = 1.0 - sum(size[w] for w in per) / total
        out[i] = 0.5 * (used + rest)
    return out


def score_patterns(tally: Tally, reference, thresholds: Thresholds | None = None,
                   pool: Tally | None = None) -> list[PatternRecord]:
    """Score every pattern of a class (``tally``) against ``reference``; ``pool`` lends evidence.

    :param pool: the workspace's pooled counts *including this class* (or ``None``).
    :returns: one :class:`~hingeword.record.PatternRecord` per pattern the class used, plus
        the native patterns the class avoids (``under-used`` with no use), in :func:`ranked` order.
    """
    t = thresholds or Thresholds()
    gov_ref = reference.governor_totals()
    prep_ref = reference.preposition_totals()
    pos_ref: Counter = Counter()
    slot_ref: Counter = Counter()
    for (g, pos, prep), n in reference.patterns.items():
        pos_ref[pos] += n
        slot_ref[(pos, prep)] += n

    keys = list(tally.writer_uses)
    have = set(keys)
    for (g, pos, prep), c in reference.patterns.items():  # native patterns of the class's governors
        if (g, pos) in tally.governors and (g, pos, prep) not in have and c >= t.min_count:
            keys.append((g, pos, prep))
    keys.sort()

    def native_rate(key) -> float:
        _, pos, prep = key
        return slot_ref.get((pos, prep), 0) / pos_ref[pos] if pos_ref.get(pos) else 0.0

    n = len(keys)
    a = np.array([tally.count(k) for k in keys], float)
    n1 = np.array([tally.governors.get(k[:2], 0) for k in keys], float)
    c = np.array([reference.patterns.get(k, 0) for k in keys], float)
    n2 = np.array([gov_ref.get(k[:2], 0) for k in keys], float)
    c1 = np.array([prep_ref.get(k[2], 0) for k in keys], float)
    prep_l: Counter = Counter()
    for (pos, prep), v in tally.slots.items():
        prep_l[prep] += v
    lt = (a, n1, np.array([prep_l.get(k[2], 0) for k in keys], float), float(sum(tally.pos_totals.values())))
    rt = (c, n2, c1, float(max(reference.total, 0)))

    cols: dict[str, np.ndarray] = {}
    cols["collocation_ratio"] = m.collocation_ratio(lt, rt, t.measure.value)
    lo, hi = m.collocation_ratio_ci(lt, rt, measure=t.measure.value)
    g2 = m.g2_two_corpus(a, n1, c, n2)
    cols["log_likelihood"] = g2
    cols["log_ratio"] = m.log_ratio(a, n1, c, n2)
    cols["learner_share"] = np.where(n1 > 0, a / np.where(n1 > 0, n1, 1), 0.0)
    cols["reference_share"] = np.where(n2 > 0, c / np.where(n2 > 0, n2, 1), 0.0)
    cols["p_value"] = m.g2_p_value(g2)
    cols["fisher_p"] = m.fisher_greater(a, n1, c, n2)
    cols["dispersion_dp"] = _dispersion(tally, keys)
    cols["collocation_ratio_low"] = np.exp2(lo)
    cols["collocation_ratio_high"] = np.exp2(hi)
    for name, fn in (("mi", m.mutual_information), ("logdice", m.log_dice), ("t", m.t_score), ("z", m.z_score),
                     ("g2", m.log_likelihood)):
        cols[f"{name}_learner"] = fn(*lt)
        cols[f"{name}_reference"] = fn(*rt)
    cols = {k: np.broadcast_to(np.asarray(v, float), (n,)) for k, v in cols.items()}

    rates = [native_rate(key) for key in keys]
    evidence, decisions = decide_tally(t, tally, keys, c.astype(int), n2.astype(int), rates)
    pooled = _pool_decisions(t, pool, reference, gov_ref, native_rate) if pool is not None and t.pool is not Pool.NONE \
        else {}

    records = []
    for i, key in enumerate(keys):
        ev, d = evidence[i], decisions[i]
        scope, pe = "class", None
        if key in pooled and ev.a > 0:
            pe, pd_ = pooled[key]
            elsewhere = (pe.a - ev.a >= t.min_count and pe.writers - ev.writers >= t.min_writers)
            if d.status in _POOLABLE and pd_.status is Status.OVER_USED and elsewhere:
                scope, d = "workspace", pd_
            elif _unconfirmed(t, d, pd_, ev, pe, pool.classes):
                d = replace(d, status=Status.THIN)
        if ev.a == 0 and d.status is not Status.UNDER_USED:
            continue  # zero rows stay only where they say something: the class avoids a native pattern
        flagged = d.status is Status.OVER_USED
        shown = pe if pe is not None else ev
        records.append(PatternRecord(
            governor=key[0], governor_pos=key[1], preposition=key[2], learner_count=ev.a,
            learner_writers=ev.writers, learner_governor_count=ev.n1, reference_count=int(c[i]),
            reference_governor_count=int(n2[i]), flagged=flagged, status=d.status,
            rate_ratio=d.ratio, rate_ratio_low=d.low, rate_ratio_high=d.high, rate_p=d.p, fdr_q=d.q,
            native_oe=(c[i] / n2[i]) / rates[i] if rates[i] > 0 and n2[i] else float("nan"),
            general_rate_factor=(pe if scope == "workspace" else ev).k,
            top_writer_share=ev.top / ev.a if ev.a else float("nan"),
            evidence=scope if flagged else "",
            pooled_count=shown.a, pooled_writers=shown.writers,
            pooled_governor_count=shown.n1, pooled_classes=pool.occurs_in(key) if pe is not None else 1,
            rank_score=math.log2(d.low) if flagged and d.low > 0 else float("nan"),
            **{k: float(v[i]) for k, v in cols.items()},
        ))
    return ranked(records)


def _unconfirmed(t: Thresholds, d: Decision, pooled: Decision, ev: Evidence, pe: Evidence, classes: int) -> bool:
    """A flag of the class alone that the workspace does not confirm (see "Confirmed by the pool" in the
    module docstring): the pooled counts, which hold more uses of the governor, do not flag it, and
    the class's own test does not pass at the false-discovery rate divided by the class-terms pooled."""
    return (d.status is Status.OVER_USED and pooled.status is not Status.OVER_USED and pe.n1 > ev.n1
            and not d.q <= (1.0 - t.confidence) / max(classes, 1))


def _pool_decisions(t: Thresholds, pool: Tally, reference, gov_ref, native_rate) -> dict:
    """Every pattern of the pool decided as one body of writing: key -> (Evidence, Decision).

    The pool is decided as a whole (one Benjamini–Hochberg family), so a pattern gets the same
    pooled decision in every class of the workspace that uses it.
    """
    keys = sorted(k for k in pool.writer_uses if gov_ref.get(k[:2], 0) > 0)
    rates = [native_rate(k) for k in keys]
    c = [reference.patterns.get(k, 0) for k in keys]
    n2 = [gov_ref.get(k[:2], 0) for k in keys]
    ev, decisions = decide_tally(t, pool, keys, c, n2, rates)
    return {k: (e, d) for k, e, d in zip(keys, ev, decisions)}


def ranked(records: Sequence[PatternRecord]) -> list[PatternRecord]:
    """Flagged first by ``rank_score`` (then writers), then by status, writers, count, then by name."""
    def num(x: float) -> float:
        return x if x == x else 0.0

    return sorted(records, key=lambda r: (_ORDER[r.status], -num(r.rank_score), -r.pooled_writers, -r.learner_writers,
                                          -num(r.log_likelihood), -r.learner_count, *r.key))


def slot_words(prep: str) -> str:
    return "a direct object" if prep == NO_PREP else f"'{prep}'"

"""The pattern record: one scored governor–preposition pattern, as every stage after
scoring sees it.

:class:`PatternRecord` is frozen. The score stage makes it (counts, figures, status);
the categorise stage adds its :class:`Advice` (likely causes, native suggestion); the
run view adds the teacher's :class:`Decision` and the :class:`Comparison` with the
previous term, each with :func:`dataclasses.replace`. Storage and exports use the flat
form of :meth:`PatternRecord.to_row` / :meth:`PatternRecord.from_row`, whose column
order — the export column contract — is :data:`COLUMNS`, derived here and nowhere else.
Each column's one-line meaning (the data dictionary) is :data:`GLOSSES`.

A pattern is spelt one way on every screen and accepted in that spelling on every
command: :func:`key_label` ("discuss about", "listen + object") and
:func:`parse_slot` ("object", "+ object" and "-" all name the direct-object slot).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace
from enum import Enum

#: The direct-object slot: "listen music" and "discuss about" compare against the same governor.
NO_PREP = "-"


class Status(str, Enum):
    """Why a pattern is (or is not) flagged; one value for each real reason."""

    OVER_USED = "over-used"
    UNDER_USED = "under-used"
    NATIVE_FORM = "over-used (native form)"
    THIN = "natives rarely use it; too little evidence"
    ADJUNCT = "the class uses this preposition with every word"
    AS_NATIVE = "as native"
    NO_REFERENCE = "not enough reference evidence"
    CONCENTRATED = "concentrated in one or two writers"
    TOO_RARE = "too rare in class"

    def __str__(self) -> str:
        return self.value


#: Plain-words glosses of the statuses, for the teacher's pages.
STATUS_GLOSSES = {
    Status.OVER_USED: "the class uses this far more than native writers, who avoid it",
    Status.UNDER_USED: "native writers use this much more often than the class",
    Status.NATIVE_FORM: "the class uses it more than native writers, but natives use it too: not flagged",
    Status.THIN: "native writers rarely use it, but there are too few uses here to be sure the class differs (or, "
                 "with other classes in the workspace, too few to stand out among all of them)",
    Status.ADJUNCT: "the class uses this preposition more than native writers with all words alike: "
                    "a matter of style, not of this word",
    Status.AS_NATIVE: "no clear difference from native writers",
    Status.NO_REFERENCE: "the native reference has too few uses of this word to compare",
    Status.CONCENTRATED: "used enough, but almost all by one or two writers: a personal habit, not a class pattern",
    Status.TOO_RARE: "too few uses or writers in the class to say anything",
}


#: Short plain names of the statuses for the teacher's pages (the exports keep the status values above).
STATUS_PLAIN = {
    Status.OVER_USED: "over-used",
    Status.UNDER_USED: "natives use it more",
    Status.NATIVE_FORM: "used more than natives, but natural English",
    Status.THIN: "unusual, but too few uses to tell",
    Status.ADJUNCT: "a habit with this preposition in general",
    Status.AS_NATIVE: "like native writers",
    Status.NO_REFERENCE: "too rare in native writing to compare",
    Status.CONCENTRATED: "one or two writers' habit",
    Status.TOO_RARE: "too few uses to tell",
}


class Since(str, Enum):
    """How a pattern compares with the previous term of the class (a code; reports put it into words)."""

    FIRST_TERM = "first-term"
    NEW = "new"
    ALSO_FLAGGED = "also-flagged"
    SEEN_NOT_FLAGGED = "seen-not-flagged"
    NOT_SEEN = "not-seen"

    def __str__(self) -> str:
        return self.value


@dataclass(frozen=True)
class Cause:
    """One candidate reason for an over-used pattern, with its evidence from the reference."""

    code: str
    confidence: float
    evidence: str
    label: str


@dataclass(frozen=True)
class Advice:
    """What the categorise stage says about a flagged or under-used pattern."""

    causes: tuple[Cause, ...] = ()
    suggestion: str = ""
    suggested_preposition: str = ""
    suggestion_share: float | None = None
    native_pattern: str = ""
    explanation: str = ""
    #: (object class, slot) when the kind of object decides the native slot ("place" -> "in",
    #: "building" -> "at"; "any other" for the rest); empty when it changes nothing
    by_object: tuple[tuple[str, str], ...] = ()

    @property
    def cause(self) -> Cause | None:
        return self.causes[0] if self.causes else None

    def preposition_for(self, object_class: str) -> str:
        """The suggested slot for one sentence, by the class of its object."""
        slots = dict(self.by_object)
        return slots.get(object_class or "other") or slots.get("any other") or self.suggested_preposition


def object_slots_text(pairs) -> str:
    """``by_object`` as a readable cell: "place: in; building: at"."""
    return "; ".join(f"{cls}: {slot}" for cls, slot in pairs)


def parse_object_slots(text: str) -> tuple[tuple[str, str], ...]:
    """Inverse of :func:`object_slots_text`."""
    out = []
    for part in (text or "").split("; "):
        cls, sep, slot = part.partition(": ")
        if sep:
            out.append((cls, slot))
    return tuple(out)


@dataclass(frozen=True)
class Decision:
    """A teacher's dismissal of a pattern."""

    reason: str
    decided_on: str


@dataclass(frozen=True)
class Comparison:
    """The pattern against the previous term of the class: a code and two rates per 10,000 words."""

    since: Since
    rate: float
    previous_rate: float | None = None


_NAN = float("nan")


class Keyed:
    """A pattern's key and label, for any record with ``governor``, ``governor_pos`` and ``preposition``."""

    governor: str
    governor_pos: str
    preposition: str

    @property
    def key(self) -> tuple[str, str, str]:
        return (self.governor, self.governor_pos, self.preposition)

    @property
    def label(self) -> str:
        return key_label(self.governor, self.preposition)


def _f(gloss: str, *, default=_NAN, contract: bool = False):
    return field(default=default, metadata={"gloss": gloss, "contract": contract})


@dataclass(frozen=True)
class PatternRecord(Keyed):
    """One pattern of one run: counts, figures, status, and (later stages) advice, decision, comparison.

    Figures that could not be computed are NaN. The formulas and their sources are in
    ``docs/methods.md`` and :mod:`hingeword.measures`.
    """

    governor: str = field(metadata={"gloss": "governor lemma (lower case): the word the preposition depends on",
                                    "contract": True})
    governor_pos: str = field(metadata={"gloss": "governor's part of speech: VERB, ADJ or NOUN", "contract": True})
    preposition: str = field(metadata={"gloss": "preposition (multiword kept whole), a particle, or '-' for a direct object",
                                       "contract": True})
    learner_count: int = _f("uses of the pattern in the class", default=0, contract=True)
    learner_writers: int = _f("distinct writers in the class using the pattern", default=0, contract=True)
    learner_governor_count: int = _f("class's uses of the governor with any preposition or object", default=0,
                                     contract=True)
    reference_count: int = _f("uses of the pattern in the native reference", default=0, contract=True)
    reference_governor_count: int = _f("reference's uses of the governor with any preposition or object", default=0,
                                       contract=True)
    collocation_ratio: float = _f("learner association / native association (score chosen by --measure)",
                                  contract=True)
    log_likelihood: float = _f("G2 of the class's vs the reference's share of the governor's uses (df 1)",
                               contract=True)
    log_ratio: float = _f("Log Ratio: log2 of the class's share / the reference's share (zero count as 0.5)",
                          contract=True)
    flagged: bool = _f("true when the status is 'over-used'", default=False, contract=True)
    status: Status = _f("why the pattern is or is not flagged (see the statuses)", default=Status.TOO_RARE,
                        contract=True)
    learner_share: float = _f("learner_count / learner_governor_count")
    reference_share: float = _f("reference_count / reference_governor_count")
    p_value: float = _f("p of log_likelihood (chi-squared, df 1)")
    fisher_p: float = _f("Fisher's exact test, one-sided (over-use)")
    fdr_q: float = _f("Benjamini-Hochberg q of p_value over the run's patterns")
    dispersion_dp: float = _f("Gries's DP over writers (0 even, 1 concentrated)")
    collocation_ratio_low: float = _f("collocation ratio, 95% interval, lower end")
    collocation_ratio_high: float = _f("collocation ratio, 95% interval, upper end")
    mi_learner: float = _f("mutual information (log2 O/E) in the class")
    mi_reference: float = _f("mutual information (log2 O/E) in the reference")
    logdice_learner: float = _f("logDice in the class")
    logdice_reference: float = _f("logDice in the reference")
    t_learner: float = _f("t-score in the class")
    t_reference: float = _f("t-score in the reference")
    z_learner: float = _f("z-score in the class")
    z_reference: float = _f("z-score in the reference")
    g2_learner: float = _f("G2 association of governor and preposition in the class")
    g2_reference: float = _f("G2 association of governor and preposition in the reference")
    rate_ratio: float = _f("how many times the native rate the learners use the form, allowing for their general "
                           "rate of the preposition (general_rate_factor)")
    rate_ratio_low: float = _f("one-sided lower confidence bound of rate_ratio (the flag needs it >= min_rate_ratio)")
    rate_ratio_high: float = _f("one-sided upper confidence bound of rate_ratio")
    rate_p: float = _f("p of the exact test that the learners' rate exceeds the natives' (conditional binomial)")
    native_oe: float = _f("natives' use of the preposition with this governor over their use of it with all "
                          "governors of the same kind (below 1: natives avoid it here)")
    general_rate_factor: float = _f("learners' rate of the preposition with governors of this kind over the "
                                    "natives' (at least 1)")
    top_writer_share: float = _f("share of the pattern's uses by the writer who uses it most")
    evidence: str = _f("where the flag's evidence comes from: 'class', or 'workspace' (pooled)", default="")
    pooled_count: int = _f("uses in the pooled evidence (equal to learner_count without pooling)", default=0)
    pooled_writers: int = _f("writers in the pooled evidence", default=0)
    pooled_governor_count: int = _f("uses of the governor in the pooled evidence", default=0)
    pooled_classes: int = _f("class-terms of the workspace in which the pattern occurs (1 without pooling)", default=1)
    rank_score: float = _f("order of the flagged patterns: log2 of rate_ratio_low")
    advice: Advice | None = None
    decision: Decision | None = None
    comparison: Comparison | None = None

    @property
    def dismissed(self) -> bool:
        return self.decision is not None

    @property
    def teachable(self) -> bool:
        """Flagged and not dismissed: what the handouts show."""
        return self.flagged and not self.dismissed

    # ---------------------------------------------------------------- storage
    def to_row(self) -> dict:
        """The flat form, in :data:`COLUMNS` order (causes as a list of dicts)."""
        row = {f.name: _plain(getattr(self, f.name)) for f in _SCORE_FIELDS}
        a = self.advice or Advice()
        top = a.cause
        row.update({
            "cause": top.code if top else "", "suggestion": a.suggestion,
            "cause_label": top.label if top else "",
            "causes": [{"code": c.code, "confidence": c.confidence, "evidence": c.evidence, "label": c.label}
                       for c in a.causes],
            "suggested_preposition": a.suggested_preposition, "suggestion_share": a.suggestion_share,
            "suggestion_by_object": object_slots_text(a.by_object),
            "native_pattern": a.native_pattern, "explanation": a.explanation,
            "dismissed": self.decision is not None,
            "dismissed_reason": self.decision.reason if self.decision else "",
            "dismissed_on": self.decision.decided_on if self.decision else "",
            "since_last_term": str(self.comparison.since) if self.comparison else "",
            "rate": self.comparison.rate if self.comparison else None,
            "previous_rate": self.comparison.previous_rate if self.comparison else None,
        })
        return {c: row[c] for c in COLUMNS}

    @classmethod
    def from_row(cls, row: dict) -> PatternRecord:
        """Inverse of :meth:`to_row`; unknown keys are an error (a renamed column must fail loudly)."""
        unknown = set(row) - set(COLUMNS)
        if unknown:
            raise KeyError(f"unknown pattern columns: {', '.join(sorted(unknown))}")
        kw = {}
        for f in _SCORE_FIELDS:
            if f.name in row and row[f.name] is not None:
                kw[f.name] = row[f.name]
        for name in _INT_FIELDS:
            if name in kw:
                kw[name] = int(kw[name])
        for name in _FLOAT_FIELDS:
            if name in kw:
                kw[name] = float(kw[name])
        if "flagged" in kw:
            kw["flagged"] = bool(kw["flagged"])
        if "status" in kw:
            kw["status"] = Status(kw["status"])
        causes = tuple(Cause(code=c["code"], confidence=float(c["confidence"]), evidence=c["evidence"],
                             label=c["label"]) for c in row.get("causes") or ())
        advice_keys = ("suggestion", "suggested_preposition", "native_pattern", "explanation", "suggestion_by_object")
        if causes or any(row.get(k) for k in advice_keys):
            share = row.get("suggestion_share")
            kw["advice"] = Advice(causes=causes, suggestion=row.get("suggestion") or "",
                                  suggested_preposition=row.get("suggested_preposition") or "",
                                  suggestion_share=None if share is None or _isnan(share) else float(share),
                                  native_pattern=row.get("native_pattern") or "",
                                  explanation=row.get("explanation") or "",
                                  by_object=parse_object_slots(row.get("suggestion_by_object") or ""))
        if row.get("dismissed"):
            kw["decision"] = Decision(reason=row.get("dismissed_reason") or "", decided_on=row.get("dismissed_on") or "")
        if row.get("since_last_term"):
            prev = row.get("previous_rate")
            kw["comparison"] = Comparison(since=Since(row["since_last_term"]), rate=float(row.get("rate") or 0.0),
                                          previous_rate=None if prev is None or _isnan(prev) else float(prev))
        return cls(**kw)

    def with_(self, **changes) -> PatternRecord:
        return replace(self, **changes)


_SCORE_FIELDS = tuple(f for f in fields(PatternRecord) if f.name not in ("advice", "decision", "comparison"))
_INT_FIELDS = ("learner_count", "learner_writers", "learner_governor_count", "reference_count",
               "reference_governor_count", "pooled_count", "pooled_writers", "pooled_governor_count", "pooled_classes")
_FLOAT_FIELDS = tuple(f.name for f in _SCORE_FIELDS if f.type in ("float", float))

#: Columns of the flat form and of every export, in order: the contract columns, the
#: top cause and suggestion, then the further figures, advice, decision and comparison.
_ADVICE_COLUMNS = ("cause_label", "causes", "suggested_preposition", "suggestion_share", "suggestion_by_object",
                   "native_pattern", "explanation")
_VIEW_COLUMNS = ("dismissed", "dismissed_reason", "dismissed_on", "since_last_term", "rate", "previous_rate")
CONTRACT = tuple(f.name for f in _SCORE_FIELDS if f.metadata.get("contract")) + ("cause", "suggestion")
COLUMNS = CONTRACT + tuple(f.name for f in _SCORE_FIELDS if not f.metadata.get("contract")) + _ADVICE_COLUMNS \
    + _VIEW_COLUMNS

#: One line per column: the data dictionary of the exports.
GLOSSES: dict[str, str] = {
    **{f.name: f.metadata["gloss"] for f in _SCORE_FIELDS},
    "cause": "code of the most likely cause (noun-pattern, related-word, directional, l1-transfer, unclear)",
    "suggestion": "what native writers write with this governor",
    "cause_label": "the most likely cause in words",
    "causes": "every candidate cause with its confidence (0-1) and evidence from the reference",
    "suggested_preposition": "the suggested preposition, or '-' for a direct object",
    "suggestion_share": "share of the governor's native uses that take the suggestion",
    "suggestion_by_object": "when the kind of object decides: the native slot per object class of the class's "
                            "sentences ('place: in; building: at'; classes in docs/columns.md)",
    "native_pattern": "the native pattern in words",
    "explanation": "a short explanation for learners",
    "dismissed": "true when the teacher dismissed the pattern",
    "dismissed_reason": "the teacher's reason for dismissing it",
    "dismissed_on": "date of the dismissal",
    "since_last_term": "against the previous term: first-term, new, also-flagged, seen-not-flagged, not-seen",
    "rate": "uses per 10,000 words this term",
    "previous_rate": "uses per 10,000 words in the previous term (empty in the first term)",
}


#: Candidate causes written out in exports, each as four readable columns (there are at most four codes
#: with evidence: noun-pattern, related-word, directional, l1-transfer).
EXPORT_CAUSES = 4
_CAUSE_COLUMNS = tuple(f"cause_{i}{part}" for i in range(1, EXPORT_CAUSES + 1)
                       for part in ("", "_code", "_confidence", "_evidence"))
#: Columns of the pattern exports (CSV, XLSX, JSON): :data:`COLUMNS` with the nested ``causes`` written out
#: as ``cause_1`` … ``cause_4`` (label, code, confidence, evidence), so no cell holds JSON.
EXPORT_COLUMNS = tuple(c for col in COLUMNS for c in (_CAUSE_COLUMNS if col == "causes" else (col,)))
GLOSSES.update({
    **{f"cause_{i}": f"candidate cause {i} in words (1 = most likely; empty when fewer were found)"
       for i in range(1, EXPORT_CAUSES + 1)},
    **{f"cause_{i}_code": f"candidate cause {i} as a code (see 'cause')" for i in range(1, EXPORT_CAUSES + 1)},
    **{f"cause_{i}_confidence": f"confidence of candidate cause {i}, 0-1: how strongly the reference supports it "
       "(docs/methods.md)" for i in range(1, EXPORT_CAUSES + 1)},
    **{f"cause_{i}_evidence": f"evidence for candidate cause {i}, with reference counts"
       for i in range(1, EXPORT_CAUSES + 1)},
})


def export_row(record: PatternRecord) -> dict:
    """The record as one export row, in :data:`EXPORT_COLUMNS` order (causes written out)."""
    row = record.to_row()
    causes = row.pop("causes") or []
    for i in range(1, EXPORT_CAUSES + 1):
        c = causes[i - 1] if i <= len(causes) else None
        row[f"cause_{i}"] = c["label"] if c else ""
        row[f"cause_{i}_code"] = c["code"] if c else ""
        row[f"cause_{i}_confidence"] = c["confidence"] if c else None
        row[f"cause_{i}_evidence"] = c["evidence"] if c else ""
    return {k: row[k] for k in EXPORT_COLUMNS}


def key_label(governor: str, preposition: str) -> str:
    """A pattern as people read it, the same on every screen: "discuss about", "listen + object"."""
    return f"{governor} + object" if preposition == NO_PREP else f"{governor} {preposition}"


def plain_label(governor: str, preposition: str) -> str:
    """The pattern in plain words for learners: "discuss about something", "listen something"."""
    return f"{governor} something" if preposition == NO_PREP else f"{governor} {preposition} something"


_OBJECT_WORDS = {"-", "object", "+ object", "+object", "obj", "dobj", "direct object", "+ direct object"}


def parse_slot(text: str) -> str:
    """A preposition as a user types it: "about", "in front of", or "object"/"+ object"/"-" for a direct object."""
    t = " ".join(str(text).lower().split())
    return NO_PREP if t in _OBJECT_WORDS else t.lstrip("+ ").strip()


def parse_pattern(words: list[str] | tuple[str, ...]) -> tuple[str, str]:
    """(governor, slot) from command words: ``discuss about``, ``listen object``, ``listen + object``,
    ``"in front of"`` parts, or one quoted ``"discuss about"``."""
    parts = " ".join(words).split()
    if len(parts) < 2:
        raise ValueError("give a governor and a preposition (or 'object'), e.g. 'discuss about' or 'listen object'")
    return parts[0].lower(), parse_slot(" ".join(parts[1:]))


def _plain(v):
    if isinstance(v, Enum):
        return v.value
    if hasattr(v, "item"):  # numpy scalar
        return v.item()
    return v


def _isnan(v) -> bool:
    try:
        return math.isnan(float(v))
    except (TypeError, ValueError):
        return False

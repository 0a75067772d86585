"""Trends across terms: what recurs, what is new, what has faded, what has gone.

For a class (and the classes linked to it) the runs are taken in term order
(``--term-start``). A pattern is tracked once it has been flagged in some term.
Its status in term *t*:

``new``        flagged in *t*, never flagged before;
``recurring``  flagged in *t* and in an earlier term;
``fading``     flagged before, not flagged in *t*, and its rate (instances per
               10,000 words) lower than in the last term it was flagged;
``gone``       flagged before, absent in *t* (no instance at all);
``steady``     flagged before, not flagged in *t*, rate not lower (too few
               writers or instances to flag, but no sign of improvement);
``-``          not flagged yet.

"Flagged" here means flagged on the class's own evidence: a flag that rests on the
workspace's other classes (pooled evidence, ``evidence = "workspace"``) says the pattern is
a workspace-wide problem, not that this class still writes it often, so a pattern a class
used once after six times is "fading" even when the pool keeps it on the handout.

Dismissed patterns keep their figures but are marked, and left out of charts.

This stage also compares one run with the previous term of its class
(:func:`compare_with_previous`: a :class:`~hingeword.record.Comparison` code and two
rates per pattern) and follows each writer's uses of the class's patterns from one
term to the next (:func:`writer_progress`). It returns codes and numbers; the report
stage puts them into words.
"""

from __future__ import annotations

import io
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

from .history import RunInfo, Workspace, per_10k
from .record import Comparison, Keyed, PatternRecord, Since

#: Statuses of a pattern across terms (not to be confused with a run's :class:`~hingeword.record.Status`).
TREND_STATUSES = ("new", "recurring", "fading", "gone", "steady", "-")


@dataclass
class TermCell:
    term: str
    count: int
    writers: int
    rate: float
    flagged: bool
    status: str


@dataclass
class PatternTrend(Keyed):
    governor: str
    governor_pos: str
    preposition: str
    cells: list[TermCell] = field(default_factory=list)
    dismissed: bool = False

    @property
    def status(self) -> str:
        return self.cells[-1].status if self.cells else "-"


@dataclass
class Trends:
    class_name: str
    classes: list[str]
    terms: list[dict]  # {"class", "term", "term_start", "words", "essays"}
    patterns: list[PatternTrend]


def _own_flag(record) -> bool:
    """Flagged on the class's own evidence (see the module docstring)."""
    return bool(record is not None and record.flagged and record.evidence != "workspace")


def compute_trends(ws: Workspace, class_name: str) -> Trends:
    """Per pattern and term: count, writers, rate per 10,000 words, flag and status."""
    class_name = ws.canonical_class(class_name)
    ws.require_class(class_name)
    runs = ws.runs_in_order(class_name)
    figs = [{r.key: r for r in ws.records(run.id)} for run in runs]
    tracked = sorted({k for fig in figs for k, f in fig.items() if _own_flag(f)})
    decisions = ws.decisions_for(class_name)
    patterns = []
    for key in tracked:
        pt = PatternTrend(*key, dismissed=(key[0], key[2]) in decisions)
        flagged_before = False
        last_flag_rate = None
        for run, fig in zip(runs, figs):
            f = fig.get(key)
            count = f.learner_count if f else 0
            writers = f.learner_writers if f else 0
            flagged = _own_flag(f)
            rate = per_10k(count, run.words)
            if flagged:
                status = "recurring" if flagged_before else "new"
            elif not flagged_before:
                status = "-"
            elif count == 0:
                status = "gone"
            elif last_flag_rate is not None and rate < last_flag_rate:
                status = "fading"
            else:
                status = "steady"
            pt.cells.append(TermCell(run.term, count, writers, rate, flagged, status))
            if flagged:
                flagged_before, last_flag_rate = True, rate
        patterns.append(pt)
    order = {s: i for i, s in enumerate(TREND_STATUSES)}
    patterns.sort(key=lambda p: (order[p.status], -(p.cells[-1].rate if p.cells else 0), p.key))
    terms = [{"class": r.class_name, "term": r.term, "term_start": r.term_start, "words": r.words,
              "essays": r.essays_read} for r in runs]
    return Trends(class_name, sorted(ws.class_group(class_name)), terms, patterns)


def text_table(tr: Trends) -> list[str]:
    """The trends as fixed-width lines for the terminal."""
    head = f"{'pattern':<26}" + "".join(f"{t['term'][:14]:>16}" for t in tr.terms) + "  status"
    lines = [head, "-" * len(head)]
    for p in tr.patterns:
        cells = "".join(f"{(f'{c.rate:.1f}' + ('*' if c.flagged else ' ') + f' ({c.writers}w)'):>16}" for c in p.cells)
        lines.append(f"{p.label + (' [dismissed]' if p.dismissed else ''):<26}{cells}  {p.status}")
    lines.append("rate = instances per 10,000 words; * = flagged that term; (Nw) = writers")
    return lines


# ------------------------------------------------------------------- charts


def plain_label(text: str) -> str:
    """A chart label drawn as written: ``$`` escaped so matplotlib never reads mathtext
    (a term named ``$\\badcmd{x}$`` would stop the chart with a parse error)."""
    return str(text).replace("$", r"\$")


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": None})
    text = buf.getvalue()
    return text[text.index("<svg"):]


def chart_overview(tr: Trends, top: int = 6) -> str:
    """Inline SVG: rate per term for the top patterns (one line each, markers differ)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams["svg.hashsalt"] = "hingeword"  # stable ids: reproducible files
    plt.rcParams["svg.fonttype"] = "none"  # text stays text: smaller, searchable, no font outlines
    fig, ax = plt.subplots(figsize=(7, 3.4))
    labels = [plain_label(t["term"]) for t in tr.terms]
    markers = "osD^vP*X"
    styles = ["-", "--", "-.", ":"]
    shown = [p for p in tr.patterns if not p.dismissed][:top]
    for i, p in enumerate(shown):
        ax.plot(labels, [c.rate for c in p.cells], marker=markers[i % len(markers)],
                linestyle=styles[i % len(styles)], color="black" if i % 2 == 0 else "#4a5a8a", label=plain_label(p.label))
    ax.set_ylabel("per 10,000 words")
    ax.set_ylim(bottom=0)
    ax.spines[["top", "right"]].set_visible(False)
    if shown:
        ax.legend(frameon=False, fontsize=8, loc="upper left", bbox_to_anchor=(1.0, 1.0))
    svg = _svg(fig)
    plt.close(fig)
    return svg


def chart_pattern(tr: Trends, p: PatternTrend) -> str:
    """Inline SVG: a small bar chart of one pattern's rate per term; flagged bars filled."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams["svg.hashsalt"] = "hingeword"
    plt.rcParams["svg.fonttype"] = "none"
    fig, ax = plt.subplots(figsize=(2.8, 1.6))
    labels = [plain_label(t["term"]) for t in tr.terms]
    rates = [c.rate for c in p.cells]
    colors = ["#2f3e6b" if c.flagged else "white" for c in p.cells]
    ax.bar(labels, rates, color=colors, edgecolor="#2f3e6b", hatch=None)
    ax.set_ylim(bottom=0)
    ax.tick_params(labelsize=7)
    ax.spines[["top", "right"]].set_visible(False)
    svg = _svg(fig)
    plt.close(fig)
    return svg


# ------------------------------------------------------------ writer matching

#: rapidfuzz ``fuzz.ratio`` on accent-folded, lower-cased names at or above which
#: two writer ids of consecutive terms are proposed as the same person
#: ("Lucía Romero" / "Lucia Romero" = 100, "Jon Smith" / "John Smith" = 95;
#: "Ana Lima" / "Ana Silva" = 71 is not proposed).
MATCH_THRESHOLD = 90.0


def _fold(name: str) -> str:
    import unicodedata

    decomposed = unicodedata.normalize("NFKD", name)
    plain = "".join(ch for ch in decomposed if not unicodedata.combining(ch))
    return " ".join(plain.replace("ı", "i").lower().split())


def match_writers(previous: list[str], current: list[str], threshold: float = MATCH_THRESHOLD) -> list[tuple[str, str, float]]:
    """Propose (current id, previous id, score) pairs for ids that do not match exactly.

    Each previous id is used at most once, best scores first; ties broken by name.
    """
    from rapidfuzz import fuzz

    prev_left = [p for p in previous if p not in set(current)]
    cur_left = [c for c in current if c not in set(previous)]
    scored = sorted(
        ((fuzz.ratio(_fold(c), _fold(p)), c, p) for c in cur_left for p in prev_left),
        key=lambda t: (-t[0], t[1], t[2]),
    )
    used_c, used_p, out = set(), set(), []
    for score, c, p in scored:
        if score < threshold or c in used_c or p in used_p:
            continue
        used_c.add(c)
        used_p.add(p)
        out.append((c, p, round(score, 1)))
    return sorted(out)


def writer_matches(ws: Workspace, class_name: str, term: str, threshold: float = MATCH_THRESHOLD) -> list[tuple[str, str, float]]:
    """Fuzzy matches between this term's writer ids and the previous term's."""
    previous = ws.previous_run(class_name, term)
    if previous is None:
        return []
    return match_writers(ws.writers(previous.id), ws.writers(ws.run(class_name, term).id), threshold)


# ------------------------------------------------------- one run against the last


def compare_with_previous(records: Sequence[PatternRecord], run: RunInfo, previous: RunInfo | None,
                          previous_records: Sequence[PatternRecord] = ()) -> dict[tuple, Comparison]:
    """Per pattern key: how it stands against the previous term (a code and two rates)."""
    prev = {r.key: r for r in previous_records}
    out = {}
    for r in records:
        rate = per_10k(r.learner_count, run.words)
        if previous is None:
            out[r.key] = Comparison(Since.FIRST_TERM, rate)
            continue
        p = prev.get(r.key)
        prev_rate = per_10k(p.learner_count, previous.words) if p else 0.0
        if p is None or not p.learner_count:
            since = Since.NEW if r.learner_count else Since.NOT_SEEN
        elif p.flagged:
            since = Since.ALSO_FLAGGED
        else:
            since = Since.SEEN_NOT_FLAGGED
        out[r.key] = Comparison(since, rate, prev_rate)
    return out


@dataclass(frozen=True)
class ProgressRow(Keyed):
    """One writer's uses of one pattern last term and this term."""

    governor: str
    governor_pos: str
    preposition: str
    last_term: int
    this_term: int


def writer_progress(ws: Workspace, class_name: str, term: str, keys: Iterable[tuple[str, str, str]],
                    same_writer: Mapping[str, str] | None = None) -> dict[str, tuple[ProgressRow, ...]]:
    """For each writer of this run who also wrote last term: their counts of ``keys`` then and now.

    :param same_writer: optional map writer id -> writer id of the same person last term
        (from :func:`writer_matches`); exact ids match without it.
    """
    previous = ws.previous_run(class_name, term)
    if previous is None:
        return {}
    run = ws.run(class_name, term)
    keys = list(dict.fromkeys(keys))  # rows follow the order of ``keys``
    wanted = set(keys)

    def counts(run_id: int) -> Counter:
        return Counter((a.writer, a.key) for a in ws.attachments(run_id) if a.key in wanted)

    now, before = counts(run.id), counts(previous.id)
    prev_writers = set(ws.writers(previous.id))
    result: dict[str, tuple[ProgressRow, ...]] = {}
    for writer in ws.writers(run.id):
        earlier = (same_writer or {}).get(writer, writer)
        if earlier not in prev_writers:
            continue
        result[writer] = tuple(ProgressRow(*k, before[(earlier, k)], now[(writer, k)]) for k in keys
                               if before[(earlier, k)] or now[(writer, k)])
    return result

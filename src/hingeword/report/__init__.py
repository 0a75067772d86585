"""Report stage: printable HTML handouts, the teacher overview and per-student sheets.

Only this package touches jinja2. The ``build_*_context`` functions are pure (a
:class:`~hingeword.view.RunView` in, a plain dict out) so that tests can check what each template
receives; :func:`render` turns one context into HTML; :func:`write_reports` does
both for one stored run (read once as a :class:`~hingeword.view.RunView`) and writes, into ``out_dir/<class>/<term>/``:

* ``handout.html`` — for students: the top over-used patterns, the native pattern,
  the likely reason, the class's own sentences and one practice item each;
* ``handout-teacher.html`` — the same with the answer key;
* ``overview.html`` — for the teacher: every pattern with its figures, causes and
  evidence, concordance lines, skipped essays, notes, thresholds, dismissed patterns;
* ``students.html`` — one printed page per writer with their own flagged sentences;
* ``patterns.csv`` — the figures in the export column contract, with ``patterns.run.json``
  (the run record and the column meanings) beside it;
* ``key.html`` — private, for the teacher only: which student each pseudonym stands for
  (linked from no page; the student sheets show names only with ``names_on_sheets``).

:func:`write_trends` writes ``out_dir/<class>/trends.html`` from
:func:`hingeword.trends.compute_trends`, with the charts as inline SVG.

Essay text is untrusted: it reaches templates only as plain strings or as lists
of ``(text, is_key)`` segments, and the environment autoescapes everything.

Modules: :mod:`~hingeword.report.text` (segments, sentence views, answer key,
number formatting), :mod:`~hingeword.report.context` (handout and student-sheet
contexts),
:mod:`~hingeword.report.overview` (overview and trends contexts) and
:mod:`~hingeword.report.rendering` (the jinja2 environment). Every public name is
importable from ``hingeword.report``; the templates stay in ``hingeword/templates``.
"""

from __future__ import annotations

import datetime as _dt
import logging
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ..errors import HingewordError
from ..export import records_frame, run_record, write_table
from ..files import write_text
from ..history import Workspace
from ..record import GLOSSES
from ..view import RunView, load_run_view
from .context import (
    SHEET_SENTENCES,
    build_handout_context,
    build_key_context,
    build_students_context,
    learner_reason,
    pick_examples,
)
from .overview import KWIC_LINES, TREND_CHART_PATTERNS, build_overview_context, build_trends_context
from .rendering import environment, render
from .text import (
    MAX_SENTENCE_CHARS,
    Segments,
    SentenceView,
    Span,
    answer_key,
    fmt_dec,
    fmt_int,
    fmt_ratio,
    fmt_share,
    segments,
    sentence_view,
    slugify,
)

__all__ = [
    "KWIC_LINES", "MAX_SENTENCE_CHARS", "NAMES", "SHEET_SENTENCES", "TREND_CHART_PATTERNS",
    "ReportPaths", "RunView", "Segments", "SentenceView", "Span",
    "answer_key", "build_handout_context", "build_key_context", "build_overview_context", "build_students_context",
    "build_trends_context", "environment", "fmt_dec", "fmt_int", "fmt_ratio", "fmt_share",
    "learner_reason", "load_run_view", "pick_examples", "render", "segments",
    "sentence_view", "slugify", "write_reports", "write_trends", "make_reports", "make_trends", "TrendsOutcome",
    "PAGES", "REPORT_STEPS", "report_pages", "trends_page_context",
]

log = logging.getLogger("hingeword")

NAMES = ("pseudonyms", "real")


@dataclass(frozen=True)
class ReportPaths:
    """Where :func:`write_reports` put each file."""

    folder: Path
    handout: Path
    handout_teacher: Path
    overview: Path
    students: Path
    patterns_csv: Path
    key: Path | None = None  # the private key from pseudonyms to students (key.html)


#: The report pages of one run: name (a :class:`ReportPaths` field) → template.
PAGES = {"handout": "handout.html", "handout_teacher": "handout.html", "overview": "overview.html",
         "students": "students.html"}


def report_pages(data: RunView, *, top: int = 5, names: str = "pseudonyms",
                 today: str | None = None, names_on_sheets: bool = False) -> dict[str, tuple[str, dict]]:
    """Each report page of one run as ``name → (template, context)`` (what :func:`write_reports`
    writes and the web page shows).

    :param names_on_sheets: print each student's name on their sheet's name line (the
        other pages keep ``names``).
    """
    today = today or _dt.date.today().isoformat()
    return {
        "handout": (PAGES["handout"], build_handout_context(data, top=top, today=today, teacher=False)),
        "handout_teacher": (PAGES["handout_teacher"], build_handout_context(data, top=top, today=today, teacher=True)),
        "overview": (PAGES["overview"], build_overview_context(data, names=names, today=today)),
        "students": (PAGES["students"], build_students_context(data, names=names, today=today,
                                                               names_on_sheets=names_on_sheets)),
    }


#: What a report's progress calls name, in order (see :func:`write_reports`).
REPORT_STEPS = ("reading the run", "handout", "teacher copy", "overview", "student sheets", "patterns.csv and key")


def write_reports(ws: Workspace, class_name: str, term: str, out_dir: Path, *, top: int = 5,
                  names: str = "pseudonyms", today: str | None = None,
                  template_dir: Path | None = None, match: bool = False,
                  names_on_sheets: bool = False,
                  progress: Callable[[str, int, int], None] | None = None) -> ReportPaths:
    """Write the handouts, overview, student sheets, ``patterns.csv`` (with ``patterns.run.json``)
    and the private ``key.html`` (pseudonym → student; for the teacher only, linked from no page) of one run.

    :param ws: the workspace holding the run.
    :param out_dir: reports go to ``out_dir/<class>/<term>/`` (names slugified).
    :param top: patterns on the class handout.
    :param names: ``"pseudonyms"`` (writer codes, the default) or ``"real"``.
    :param today: the date printed on the pages (default: today, ISO format).
    :param template_dir: a folder of templates that replace the bundled ones by name.
    :param match: link writers to last term's by name similarity for the progress lines.
    :param names_on_sheets: print each student's name on their sheet.
    :param progress: called as ``progress(step, done, total)`` before each of :data:`REPORT_STEPS`
        and once at the end.
    :raises HingewordError: unknown ``names``, no such run, or a broken template.
    """
    if names not in NAMES:
        raise HingewordError(f"names must be 'pseudonyms' or 'real', not '{names}'")
    step = progress or (lambda name, done, total: None)
    total = len(REPORT_STEPS)
    today = today or _dt.date.today().isoformat()
    step(REPORT_STEPS[0], 0, total)
    data = load_run_view(ws, class_name, term, match=match)
    env = environment(template_dir)
    folder = Path(out_dir) / slugify(class_name) / slugify(term)
    _make_folder(folder)
    paths = ReportPaths(folder=folder, handout=folder / "handout.html", handout_teacher=folder / "handout-teacher.html",
                        overview=folder / "overview.html", students=folder / "students.html",
                        patterns_csv=folder / "patterns.csv", key=folder / "key.html")
    pages = report_pages(data, top=top, names=names, today=today, names_on_sheets=names_on_sheets)
    for done, (page, (template, context)) in enumerate(pages.items(), start=1):
        step(REPORT_STEPS[done], done, total)
        write_text(getattr(paths, page), render(template, context, env=env))
    step(REPORT_STEPS[-1], total - 1, total)
    write_text(paths.key, render("key.html", build_key_context(data, today=today), env=env))
    write_table(records_frame(data.records), paths.patterns_csv, run_record(data, names=names, today=today), GLOSSES)
    step("written", total, total)
    log.info("reports for %s / %s written to %s", class_name, term, folder)
    return paths


def trends_page_context(ws: Workspace, class_name: str, *, today: str | None = None, match: bool = False) -> dict:
    """The context of ``trends.html`` for a class, charts included (what :func:`write_trends`
    writes and the web page shows)."""
    from ..trends import chart_overview, chart_pattern, compute_trends, writer_matches

    today = today or _dt.date.today().isoformat()
    tr = compute_trends(ws, class_name)
    matches = []
    if match:
        from ..writer_links import links_for

        for t in tr.terms:
            rejected = links_for(ws.root, t["class"], t["term"])[1]
            matches += [(t["term"], cur, prev, score) for cur, prev, score in writer_matches(ws, t["class"], t["term"])
                        if (cur, prev) not in rejected]
    return build_trends_context(
        tr, today=today, overview_chart=chart_overview(tr, top=TREND_CHART_PATTERNS) if tr.patterns else "",
        pattern_charts={p.key: chart_pattern(tr, p) for p in tr.patterns}, matches=matches)


def write_trends(ws: Workspace, class_name: str, out_dir: Path, *, today: str | None = None, match: bool = False,
                 template_dir: Path | None = None) -> Path:
    """Write ``out_dir/<class>/trends.html``: terms, charts and every pattern flagged in some term.

    :param match: also list fuzzy matches of writer names between consecutive terms.
    :returns: the path written.
    """
    context = trends_page_context(ws, class_name, today=today, match=match)
    path = Path(out_dir) / slugify(class_name) / "trends.html"
    _make_folder(path.parent)
    write_text(path, render("trends.html", context, template_dir=template_dir))
    log.info("trends for %s written to %s", class_name, path)
    return path


def _make_folder(folder: Path) -> None:
    """Create the report folder, or fail with one line (a file in the way, a read-only disk)."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise HingewordError(f"cannot create the report folder {folder}: {exc.strerror or exc}") from None


def make_reports(workspace: str | Path, class_name: str, term: str, out_dir: str | Path, *, top: int = 5,
                 names: str = "pseudonyms", match: bool = False, today: str | None = None,
                 names_on_sheets: bool = False,
                 progress: Callable[[str, int, int], None] | None = None) -> ReportPaths:
    """Open the workspace and :func:`write_reports` for one run (what ``hingeword report`` calls)."""
    with Workspace(workspace, read_only=True) as ws:
        return write_reports(ws, class_name, term, Path(out_dir), top=top, names=names, match=match, today=today,
                             names_on_sheets=names_on_sheets, progress=progress)


@dataclass(frozen=True)
class TrendsOutcome:
    lines: tuple[str, ...]
    path: Path | None


def make_trends(workspace: str | Path, class_name: str, *, out_dir: str | Path | None = None,
                match: bool = False, today: str | None = None) -> TrendsOutcome:
    """The trends table as text lines, proposed writer matches, and ``trends.html`` when ``out_dir`` is given."""
    from ..trends import MATCH_THRESHOLD, compute_trends, text_table, writer_matches

    with Workspace(workspace, read_only=True) as ws:
        tr = compute_trends(ws, class_name)
        lines = list(text_table(tr))
        if match:
            from ..writer_links import links_for, propose

            lines.append(f"Proposed writer matches (name similarity ≥ {MATCH_THRESHOLD:.0f}; please check):")
            proposals, found = [], []
            for t in tr.terms:
                confirmed, rejected = links_for(workspace, t["class"], t["term"])
                for cur, prev, score in writer_matches(ws, t["class"], t["term"]):
                    if (cur, prev) in rejected:
                        continue
                    proposals.append((t["class"], t["term"], cur, prev, score))
                    state = "confirmed" if confirmed.get(cur) == prev else "proposed"
                    found.append(f"  {t['term']}: '{cur}' = '{prev}' ({score:.0f}, {state})")
            lines += found or ["  none"]
            if proposals:
                try:
                    where = propose(workspace, proposals)
                    lines.append(f"To confirm or reject a match, write yes or no in the 'decision' column of {where}; "
                                 "a confirmed student keeps last term's code")
                except HingewordError as exc:  # a read-only workspace: the proposals are still printed
                    lines.append(f"(the proposals could not be saved for confirming: {exc})")
        path = write_trends(ws, class_name, Path(out_dir), match=match, today=today) if out_dir is not None else None
    return TrendsOutcome(tuple(lines), path)

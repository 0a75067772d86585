"""Report stage: printable HTML handouts, the teacher overview and per-student sheets.

Only this module touches jinja2. The ``build_*_context`` functions are pure (a
:class:`RunData` in, a plain dict out) so that tests can check what each template
receives; :func:`render` turns one context into HTML; :func:`write_reports` does
both for one stored run and writes, into ``out_dir/<class>/<term>/``:

* ``handout.html`` — for students: the top over-used patterns, the native pattern,
  the likely reason, the class's own sentences and one practice item each;
* ``handout-teacher.html`` — the same with the answer key;
* ``overview.html`` — for the teacher: every pattern with its figures, causes and
  evidence, concordance lines, skipped essays, notes, thresholds, dismissed patterns;
* ``students.html`` — one printed page per writer with their own flagged sentences;
* ``patterns.csv`` — the figures in the export column contract.

:func:`write_trends` writes ``out_dir/<class>/trends.html`` from
:func:`hingeword.trends.compute_trends`, with the charts as inline SVG.

Essay text is untrusted: it reaches templates only as plain strings or as lists
of ``(text, is_key)`` segments, and the environment autoescapes everything.
"""

from __future__ import annotations

import datetime as _dt
import json
import logging
import re
import unicodedata
from dataclasses import dataclass
from pathlib import Path

import jinja2
from markupsafe import Markup

from . import __version__
from .errors import HingewordError
from .export import kwic, patterns_frame, write_patterns
from .extract import NO_PREP, Attachment
from .history import Workspace
from .score import STATUSES

log = logging.getLogger("hingeword")

NAMES = ("pseudonyms", "real")
#: Longest sentence shown whole; longer ones are cut around the pattern with "…".
MAX_SENTENCE_CHARS = 160
#: Concordance lines per flagged pattern in the overview (all of them: ``hingeword concordance``).
KWIC_LINES = 12
#: A student's own sentences shown per pattern on their sheet.
SHEET_SENTENCES = 4
#: Patterns drawn in the trends overview chart (as :func:`hingeword.trends.chart_overview` draws them).
TREND_CHART_PATTERNS = 6

Segments = tuple[tuple[str, bool], ...]
Span = tuple[int, int]


@dataclass(frozen=True)
class ReportPaths:
    """Where :func:`write_reports` put each file."""

    folder: Path
    handout: Path
    handout_teacher: Path
    overview: Path
    students: Path
    patterns_csv: Path


@dataclass(frozen=True)
class RunData:
    """Everything the reports need from one stored run, as plain data."""

    class_name: str
    term: str
    run: dict
    figures: tuple[dict, ...]
    attachments: tuple[Attachment, ...]
    essays: tuple[dict, ...]
    skipped: tuple[dict, ...] = ()
    notes: tuple[dict, ...] = ()
    codes: tuple[tuple[str, str], ...] = ()  # (writer, pseudonym)


@dataclass(frozen=True)
class SentenceView:
    """A sentence ready to show: text (maybe cut) and the pattern's spans inside it."""

    writer: str
    essay_id: str
    text: str
    gov: Span | None
    prep: Span | None
    position: int  # essay offset of the sentence, for a stable order

    @property
    def segments(self) -> Segments:
        return segments(self.text, [s for s in (self.gov, self.prep) if s])


# ------------------------------------------------------------------ helpers


def slugify(name: str) -> str:
    """A safe folder name: ASCII letters, digits, ``-`` and ``_`` (``"Évening B2!"`` → ``evening-b2``)."""
    text = unicodedata.normalize("NFKD", str(name)).encode("ascii", "ignore").decode("ascii")
    text = re.sub(r"[^A-Za-z0-9_]+", "-", text.lower()).strip("-_")
    return text or "unnamed"


def segments(text: str, spans: list[Span]) -> Segments:
    """Split ``text`` into ``(piece, is_key)`` runs; overlapping or touching spans merge."""
    merged: list[list[int]] = []
    for s, e in sorted(sp for sp in spans if 0 <= sp[0] < sp[1] <= len(text)):
        if merged and s <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], e)
        else:
            merged.append([s, e])
    out: list[tuple[str, bool]] = []
    pos = 0
    for s, e in merged:
        if s > pos:
            out.append((text[pos:s], False))
        out.append((text[s:e], True))
        pos = e
    if pos < len(text):
        out.append((text[pos:], False))
    return tuple(out)


def sentence_view(a: Attachment, max_chars: int = MAX_SENTENCE_CHARS) -> SentenceView:
    """The attachment's sentence with its spans in sentence coordinates.

    Each whitespace character becomes a space (offsets stay valid), the ends are
    trimmed, and a sentence longer than ``max_chars`` is cut at word boundaries
    around the pattern and marked with ``…``. Offsets that do not fit the sentence
    (a damaged row) give a view without spans rather than a wrong highlight.
    """
    gov = (a.gov_start - a.sentence_start, a.gov_end - a.sentence_start)
    prep = (a.prep_start - a.sentence_start, a.prep_end - a.sentence_start)
    text = re.sub(r"\s", " ", a.sentence)  # one character for one: offsets stay valid
    lo, hi = len(text) - len(text.lstrip()), len(text.rstrip())
    if not all(lo <= s < e <= hi for s, e in (gov, prep)):
        return SentenceView(a.writer, a.essay_id, text[lo:hi], None, None, a.sentence_start)
    cut_lo, cut_hi = lo, hi
    if hi - lo > max_chars:
        k_lo, k_hi = min(gov[0], prep[0]), max(gov[1], prep[1])
        cut_lo = max(lo, k_lo - max(0, max_chars - (k_hi - k_lo)) // 2)
        cut_hi = min(hi, max(k_hi, cut_lo + max_chars))
        cut_lo = max(lo, min(cut_lo, k_lo, cut_hi - max_chars))
        if cut_lo > lo and text[cut_lo - 1] != " ":  # do not start inside a word
            space = text.find(" ", cut_lo, k_lo)
            cut_lo = space + 1 if space != -1 else k_lo
        if cut_hi < hi and text[cut_hi] != " ":  # nor end inside one
            space = text.rfind(" ", k_hi, cut_hi)
            cut_hi = space if space != -1 else k_hi
        while text[cut_lo] == " ":
            cut_lo += 1
        while text[cut_hi - 1] == " ":
            cut_hi -= 1
    prefix = "… " if cut_lo > lo else ""
    suffix = " …" if cut_hi < hi else ""
    shift = len(prefix) - cut_lo
    return SentenceView(a.writer, a.essay_id, prefix + text[cut_lo:cut_hi] + suffix,
                        (gov[0] + shift, gov[1] + shift), (prep[0] + shift, prep[1] + shift), a.sentence_start)


def answer_key(view: SentenceView, learner_prep: str, suggested: str | None) -> tuple[str, Segments] | None:
    """The sentence rewritten with the native pattern, and its highlight.

    Three slot cases: a preposition replaced by another ("depend of" → "depend on");
    a preposition removed with one space beside it ("discuss about the plan" →
    "discuss the plan"); a preposition ``P`` inserted before a direct object
    ("listen music" → "listen to music") — or after the governor when the object
    comes first ("the music that I listen" → "… listen to"). ``None`` when there is
    no suggestion, it equals what the class wrote, or the view has no spans.
    """
    if not suggested or suggested == learner_prep or view.gov is None or view.prep is None:
        return None
    text, (ps, pe) = view.text, view.prep
    key: Span | None
    if learner_prep != NO_PREP and suggested != NO_PREP:
        word = suggested[0].upper() + suggested[1:] if text[ps:pe][:1].isupper() else suggested
        start, end, repl, key = ps, pe, word, (ps, ps + len(word))
    elif learner_prep != NO_PREP:
        if pe < len(text) and text[pe] == " ":
            start, end = ps, pe + 1
        elif ps > 0 and text[ps - 1] == " ":
            start, end = ps - 1, pe
        else:
            start, end = ps, pe
        repl, key = "", None
    elif ps >= view.gov[1]:
        start = end = ps
        repl, key = suggested + " ", (ps, ps + len(suggested))
    else:  # object before its verb (relative clause, question): the preposition follows the verb
        start = end = view.gov[1]
        repl, key = " " + suggested, (start + 1, start + 1 + len(suggested))
    new = text[:start] + repl + text[end:]
    shift = len(repl) - (end - start)
    gs, ge = view.gov
    gov = (gs, ge) if ge <= start else (gs + shift, ge + shift)
    return new, segments(new, [gov] + ([key] if key else []))


def _num(x) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return None if v != v else v


def fmt_int(x) -> str:
    v = _num(x)
    return "–" if v is None else f"{int(round(v)):,}"


def fmt_dec(x, places: int = 1, sign: bool = False) -> str:
    v = _num(x)
    if v is None:
        return "–"
    if v in (float("inf"), float("-inf")):
        return "∞" if v > 0 else "−∞"
    s = f"{v:+,.{places}f}" if sign and round(v, places) != 0 else f"{v:,.{places}f}"
    return s.replace("-", "−")


def fmt_ratio(x) -> str:
    """A ratio with sensible precision: 324, 41.5, 2.35, 0.047."""
    v = _num(x)
    if v is None or v in (float("inf"), float("-inf")) or v == 0:
        return fmt_dec(v, 0) if v is not None else "–"
    a = abs(v)
    if a >= 100:
        return fmt_dec(v, 0)
    if a >= 10:
        return fmt_dec(v, 1)
    if a >= 1:
        return fmt_dec(v, 2)
    if a < 0.0001:
        return "< 0.0001"
    return fmt_dec(v, 1 - int(f"{a:e}".split("e")[1]))  # two significant digits


def fmt_share(x) -> str:
    """A share 0..1 as a percentage: whole numbers from 10 %, one decimal below."""
    v = _num(x)
    if v is None:
        return "–"
    p = 100 * v
    return f"{p:.0f}%" if p >= 9.95 or p == 0 else f"{p:.1f}%"


def pattern_label(governor: str, prep: str) -> str:
    """How a pattern reads in plain words: "discuss about something", "listen something"."""
    return f"{governor} something" if prep == NO_PREP else f"{governor} {prep} something"


def short_label(governor: str, prep: str) -> str:
    """The compact table form: "discuss about", "listen + object"."""
    return f"{governor} + object" if prep == NO_PREP else f"{governor} {prep}"


_MEASURES = {"oe": "observed / expected (oe)", "mi": "mutual information (mi)", "logdice": "logDice (logdice)"}
_POS = {"VERB": "verb", "ADJ": "adjective", "NOUN": "noun"}
_ORDER = {s: i for i, s in enumerate(STATUSES)}


def _key(f: dict) -> tuple[str, str, str]:
    return (f["governor"], f["governor_pos"], f["preposition"])


def _sorted_figures(figures) -> list[dict]:
    """Flagged first (most writers, then G²), then by status, writers and count, then by name."""
    return sorted(figures, key=lambda f: (
        0 if f.get("flagged") else 1, _ORDER.get(f.get("status"), len(_ORDER)),
        -(_num(f.get("learner_writers")) or 0), -(_num(f.get("log_likelihood")) or 0),
        -(_num(f.get("learner_count")) or 0), *_key(f)))


def _native(f: dict) -> tuple[str | None, str | None, str | None]:
    """(suggested preposition, native pattern, suggestion) with fallbacks between them."""
    sp = f.get("suggested_preposition") or None
    native = f.get("native_pattern") or (pattern_label(f["governor"], sp) if sp else None)
    suggestion = f.get("suggestion") or (short_label(f["governor"], sp) if sp else None)
    return sp, native, suggestion


def learner_reason(f: dict) -> str | None:
    """The likely cause as a sentence for learners ("Carried over from a noun."); none if unclear."""
    label = str(f.get("cause_label") or "").strip()
    if not label or f.get("cause") == "unclear":
        return None
    label = label[0].upper() + label[1:]
    return label if label[-1] in ".!?" else label + "."


def _label_of(writer: str, data: RunData, names: str) -> str:
    if names == "real":
        return writer
    return dict(data.codes).get(writer, "S??")


def _common(data: RunData, today: str, title: str) -> dict:
    return {"title": title, "class_name": data.class_name, "term": data.term, "today": today,
            "tool_version": __version__}


def _by_key(attachments) -> dict[tuple, list[Attachment]]:
    out: dict[tuple, list[Attachment]] = {}
    for a in attachments:
        out.setdefault(a.key, []).append(a)
    return out


def _ordered_views(atts: list[Attachment]) -> list[SentenceView]:
    views = [sentence_view(a) for a in atts]
    return sorted(views, key=lambda v: (len(v.text), v.essay_id, v.position, v.gov or (0, 0), v.text))


def pick_examples(atts: list[Attachment], k: int = 3) -> tuple[list[SentenceView], SentenceView | None]:
    """Example sentences from different writers, shortest first, and a further sentence
    (not one of the examples, preferably by yet another writer) for practice.

    ``k`` examples when enough different sentences remain for a practice item, else
    one fewer (at least two): "two examples and something to try" beats three examples.
    """
    ordered = _ordered_views(atts)
    distinct = len({v.text for v in ordered})
    k = max(2, min(k, distinct - 1))
    chosen: list[SentenceView] = []
    writers, texts = set(), set()
    for v in ordered:
        if len(chosen) < k and v.writer not in writers and v.text not in texts:
            chosen.append(v)
            writers.add(v.writer)
            texts.add(v.text)
    rest = [v for v in ordered if v.text not in texts and v.gov is not None]
    practice = next((v for v in rest if v.writer not in writers), rest[0] if rest else None)
    return chosen, practice


# ------------------------------------------------------------------ loading


def load_run(ws: Workspace, class_name: str, term: str) -> RunData:
    """Read one run from the workspace, figures with the teacher's decisions and the
    comparison with last term (raises :class:`~hingeword.errors.WorkspaceError` if absent)."""
    run = dict(ws.run(class_name, term))
    rid = run["id"]
    return RunData(
        class_name=class_name, term=term, run=run, figures=tuple(ws.figures_in_context(class_name, term)),
        attachments=tuple(ws.attachments(rid)), essays=tuple(dict(e) for e in ws.essays(rid)),
        skipped=tuple(dict(s) for s in ws.skipped(rid)), notes=tuple(dict(n) for n in ws.notes(rid)),
        codes=tuple(sorted(ws.writer_codes(class_name).items())),
    )


# ------------------------------------------------------------------ contexts


def _teachable(data: RunData) -> list[dict]:
    return [f for f in _sorted_figures(data.figures) if f.get("flagged") and not f.get("dismissed")]


def build_handout_context(data: RunData, *, top: int = 5, today: str, teacher: bool = False) -> dict:
    """Context of ``handout.html``: the top ``top`` over-used, non-dismissed patterns.

    Student copy (``teacher=False``): no writer names or codes anywhere and every
    ``practice["answer"]`` is ``None``; the teacher copy fills in the answers.
    """
    flagged = _teachable(data)
    by_key = _by_key(data.attachments)
    patterns = []
    for n, f in enumerate(flagged[:max(0, top)], start=1):
        sp, native, suggestion = _native(f)
        examples, practice = pick_examples(by_key.get(_key(f), []))
        item = None
        if practice is not None:
            ans = answer_key(practice, f["preposition"], sp) if teacher else None
            item = {"segments": practice.segments, "answer": ans[0] if ans else None,
                    "answer_segments": ans[1] if ans else ()}
        patterns.append({
            "number": n, "anchor": f"pattern-{n}",
            "class_pattern": pattern_label(f["governor"], f["preposition"]),
            "no_preposition": f["preposition"] == NO_PREP,
            "native_pattern": native, "suggestion": suggestion,
            "reason": learner_reason(f), "explanation": f.get("explanation") or None,
            "writers": int(_num(f.get("learner_writers")) or 0),
            "examples": [{"segments": v.segments} for v in examples],
            "practice": item,
        })
    title = f"Small words that matter: {data.class_name}, {data.term}"
    return {**_common(data, today, title), "teacher_copy": teacher, "patterns": patterns,
            "more_count": max(0, len(flagged) - len(patterns))}


def _reference(manifest: dict) -> dict:
    parts = manifest.get("combined_from") or [manifest]
    return {
        "name": str(manifest.get("name", "?")),
        "words": fmt_int(manifest.get("words")),
        "parts": [{"name": str(p.get("name", "?")), "source": str(p.get("source", "") or ""),
                   "licence": str(p.get("licence", "") or ""), "words": fmt_int(p.get("words")),
                   "limits": str(p.get("limits", "") or ""), "model": str(p.get("model", "") or "")}
                  for p in parts],
    }


_THRESHOLDS = (
    ("min_count", "Instances a pattern needs in the class", fmt_int),
    ("min_writers", "Different writers a pattern needs", fmt_int),
    ("min_reference", "Uses of the governor needed in the reference", fmt_int),
    ("min_g2", "Log-likelihood G² at least", lambda v: fmt_dec(v, 2)),
    ("min_log_ratio", "Log Ratio at least (1 = twice the native rate)", lambda v: fmt_dec(v, 2)),
    ("measure", "Score behind the collocation ratio", lambda v: _MEASURES.get(v, str(v))),
    ("term_start", "Term start", str),
)


def _row(f: dict) -> dict:
    dismissed = bool(f.get("dismissed"))
    status = str(f.get("status", ""))
    return {
        "pattern": short_label(f["governor"], f["preposition"]), "pos": _POS.get(f["governor_pos"], f["governor_pos"]),
        "flagged": bool(f.get("flagged")), "dismissed": dismissed,
        "status": f"{status} (dismissed)" if dismissed else status,
        "learner_count": fmt_int(f.get("learner_count")), "learner_writers": fmt_int(f.get("learner_writers")),
        "learner_governor_count": fmt_int(f.get("learner_governor_count")),
        "learner_share": fmt_share(f.get("learner_share")),
        "reference_count": fmt_int(f.get("reference_count")),
        "reference_governor_count": fmt_int(f.get("reference_governor_count")),
        "reference_share": fmt_share(f.get("reference_share")),
        "collocation_ratio": fmt_ratio(f.get("collocation_ratio")),
        "log_likelihood": fmt_dec(f.get("log_likelihood"), 1),
        "log_ratio": fmt_dec(f.get("log_ratio"), 2, sign=True),
    }


def build_overview_context(data: RunData, *, names: str = "pseudonyms", today: str) -> dict:
    """Context of ``overview.html``: every pattern, flagged details, run facts.

    Concordance lines carry writer codes (or names with ``names="real"``); essay ids,
    which are often file names with students' names, are shown only with real names.
    """
    figures = _sorted_figures(data.figures)
    by_key = _by_key(data.attachments)
    texts = {e["essay_id"]: e["text"] for e in data.essays}
    flagged = []
    for n, f in enumerate([f for f in figures if f.get("flagged") and not f.get("dismissed")], start=1):
        sp, native, suggestion = _native(f)
        atts = sorted(by_key.get(_key(f), []),
                      key=lambda a: (_label_of(a.writer, data, names), a.essay_id, a.gov_start))
        lines = [{"writer": _label_of(w, data, names), "left": left, "key": key, "right": right, "essay": eid}
                 for w, left, key, right, eid in kwic(atts[:KWIC_LINES], texts)]
        causes = [{"label": str(c.get("label") or c.get("code") or "?"), "code": str(c.get("code", "")),
                   "confidence": fmt_dec(c.get("confidence"), 2) if _num(c.get("confidence")) is not None else "",
                   "evidence": str(c.get("evidence") or "")} for c in (f.get("causes") or [])]
        flagged.append({
            "number": n, "anchor": f"flag-{n}", "pattern": short_label(f["governor"], f["preposition"]),
            "governor": f["governor"],
            "class_pattern": pattern_label(f["governor"], f["preposition"]),
            "native_pattern": native, "suggestion": suggestion,
            "suggestion_share": fmt_share(f.get("suggestion_share")) if f.get("suggestion_share") is not None else None,
            "cause_label": f.get("cause_label") or None, "causes": causes,
            "explanation": f.get("explanation") or None, "since_last_term": f.get("since_last_term") or None,
            "summary": (f"{fmt_int(f.get('learner_count'))} times by {fmt_int(f.get('learner_writers'))} writers; "
                        f"{fmt_share(f.get('learner_share'))} of the class's uses of '{f['governor']}' "
                        f"against {fmt_share(f.get('reference_share'))} in the reference"),
            "kwic": lines, "kwic_more": max(0, len(atts) - len(lines)),
        })
    dismissed = [{"pattern": short_label(f["governor"], f["preposition"]),
                  "reason": str(f.get("dismissed_reason") or "no reason given"),
                  "date": str(f.get("dismissed_on") or "")} for f in figures if f.get("dismissed")]
    settings = _json(data.run.get("settings"))
    statuses = [(s, sum(1 for f in figures if f.get("status") == s)) for s in STATUSES]
    run = data.run
    return {
        **_common(data, today, f"Teacher overview: {data.class_name}, {data.term}"),
        "show_essay_ids": names == "real",
        "run": {"created": _when(run.get("created")), "model": str(run.get("model", "")),
                "model_version": str(run.get("model_version", "")), "tool_version": str(run.get("tool_version", "")),
                "words": fmt_int(run.get("words")), "essays_read": fmt_int(run.get("essays_read")),
                "essays_skipped": fmt_int(run.get("essays_skipped")),
                "writers": fmt_int(len({e["writer"] for e in data.essays}))},
        "reference": _reference(_json(run.get("reference"))),
        "thresholds": [(label, fmt(settings[k])) for k, label, fmt in _THRESHOLDS if settings.get(k) not in (None, "")],
        "summary": {"patterns": len(figures), "flagged": len(flagged), "dismissed": len(dismissed),
                    "statuses": [(s, c) for s, c in statuses if c]},
        "rows": [_row(f) for f in figures],
        "flagged": flagged, "dismissed": dismissed,
        "skipped": [{"source": str(s["source"]), "reason": str(s["reason"])} for s in data.skipped],
        "notes": [{"kind": str(n["kind"]), "message": str(n["message"])} for n in data.notes],
    }


def build_students_context(data: RunData, *, names: str = "pseudonyms", today: str) -> dict:
    """Context of ``students.html``: one sheet per writer with their flagged sentences."""
    flagged = _teachable(data)
    rank = {_key(f): i for i, f in enumerate(flagged)}
    fig = {_key(f): f for f in flagged}
    mine: dict[str, dict[tuple, list[Attachment]]] = {}
    for a in data.attachments:
        if a.key in rank:
            mine.setdefault(a.writer, {}).setdefault(a.key, []).append(a)
    essays: dict[str, list[dict]] = {}
    for e in data.essays:
        essays.setdefault(e["writer"], []).append(e)
    students = []
    for writer in essays:
        groups = []
        for key in sorted(mine.get(writer, {}), key=rank.__getitem__):
            f = fig[key]
            _, native, suggestion = _native(f)
            views = sorted((sentence_view(a) for a in mine[writer][key]),
                           key=lambda v: (v.essay_id, v.position, v.gov or (0, 0)))
            groups.append({"class_pattern": pattern_label(*key[::2]), "no_preposition": key[2] == NO_PREP,
                           "native_pattern": native,
                           "suggestion": suggestion, "explanation": f.get("explanation") or None,
                           "sentences": [{"segments": v.segments} for v in views[:SHEET_SENTENCES]],
                           "more": max(0, len(views) - SHEET_SENTENCES)})
        label = _label_of(writer, data, names)
        students.append({"label": label, "anchor": "", "essays": len(essays[writer]),
                         "words": fmt_int(sum(int(e.get("words") or 0) for e in essays[writer])),
                         "patterns": groups, "nothing_flagged": not groups,
                         "sentence_count": sum(len(g["sentences"]) for g in groups)})
    students.sort(key=lambda s: (s["label"].casefold(), s["label"]))
    for i, s in enumerate(students, start=1):
        s["anchor"] = f"sheet-{i}"
    return {**_common(data, today, f"Feedback sheets: {data.class_name}, {data.term}"), "names": names,
            "students": students}


def _svg_markup(svg: str) -> Markup | str:
    """Inline SVG drawn by matplotlib from our own numbers (its backend escapes text)
    marked safe for the template; anything scriptable is refused rather than trusted."""
    svg = (svg or "").strip()
    if not svg:
        return ""
    if not svg.startswith("<svg") or re.search(r"<script|javascript:|\son\w+\s*=|<foreignObject", svg, re.I):
        log.warning("a chart was left out: its SVG is not plain drawing markup")
        return ""
    return Markup(svg)


def build_trends_context(tr, *, today: str, overview_chart: str = "", pattern_charts: dict | None = None,
                         matches: list[tuple[str, str, str, float]] = ()) -> dict:
    """Context of ``trends.html`` from a :class:`hingeword.trends.Trends`.

    :param overview_chart: inline SVG of the rates of the top patterns (not dismissed).
    :param pattern_charts: inline SVG per pattern key; dismissed patterns get none.
    :param matches: ``(term, current writer, previous writer, similarity)`` proposals.
    """
    charts = pattern_charts or {}
    shown = [p for p in tr.patterns if not p.dismissed][:TREND_CHART_PATTERNS]
    return {
        "title": f"Trends across terms: {tr.class_name}", "class_name": tr.class_name, "today": today,
        "tool_version": __version__, "classes": list(tr.classes),
        "terms": [{"term": str(t["term"]), "class": str(t["class"]), "term_start": str(t.get("term_start") or ""),
                   "essays": fmt_int(t.get("essays")), "words": fmt_int(t.get("words"))} for t in tr.terms],
        "chart_labels": [p.label for p in shown],
        "overview_chart": _svg_markup(overview_chart),
        "patterns": [{"label": p.label, "dismissed": p.dismissed, "status": p.status,
                      "chart": "" if p.dismissed else _svg_markup(charts.get(p.key, "")),
                      "cells": [{"term": c.term, "rate": fmt_dec(c.rate, 1), "writers": c.writers,
                                 "flagged": c.flagged, "status": c.status} for c in p.cells]}
                     for p in tr.patterns],
        "matches": [{"term": t, "current": cur, "previous": prev, "score": f"{score:.0f}"}
                    for t, cur, prev, score in matches],
    }


def _when(stamp) -> str:
    """An ISO timestamp as "2026-01-12 09:30 UTC" (unparseable text is shown as it is)."""
    try:
        t = _dt.datetime.fromisoformat(str(stamp))
    except ValueError:
        return str(stamp or "")
    if t.tzinfo is not None:
        return t.astimezone(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return t.strftime("%Y-%m-%d %H:%M")


def _json(value) -> dict:
    if isinstance(value, dict):
        return value
    try:
        out = json.loads(value or "{}")
    except (TypeError, ValueError):
        return {}
    return out if isinstance(out, dict) else {}


# ------------------------------------------------------------------ rendering


def environment(template_dir: str | Path | None = None) -> jinja2.Environment:
    """The jinja2 environment: teacher overrides in ``template_dir`` first, then the package's."""
    loaders: list[jinja2.BaseLoader] = []
    if template_dir is not None:
        if not Path(template_dir).is_dir():
            raise HingewordError(f"template folder not found: {template_dir}")
        loaders.append(jinja2.FileSystemLoader(str(template_dir)))
    loaders.append(jinja2.PackageLoader("hingeword", "templates"))
    return jinja2.Environment(loader=jinja2.ChoiceLoader(loaders), autoescape=True, undefined=jinja2.StrictUndefined,
                              trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)


def render(template: str, context: dict, *, template_dir: str | Path | None = None,
           env: jinja2.Environment | None = None) -> str:
    """Render one template with ``context``.

    :raises HingewordError: a teacher's template is broken or uses a name the context lacks.
    """
    env = env or environment(template_dir)
    try:
        return env.get_template(template).render(**context)
    except (jinja2.TemplateSyntaxError, jinja2.UndefinedError) as exc:
        where = f" ({exc.filename}, line {exc.lineno})" if isinstance(exc, jinja2.TemplateSyntaxError) else ""
        raise HingewordError(f"template '{template}' cannot be rendered{where}: {exc.message}") from None


def write_reports(ws: Workspace, class_name: str, term: str, out_dir: Path, *, top: int = 5,
                  names: str = "pseudonyms", today: str | None = None,
                  template_dir: Path | None = None) -> ReportPaths:
    """Write the handouts, overview, student sheets and ``patterns.csv`` of one run.

    :param ws: the workspace holding the run.
    :param out_dir: reports go to ``out_dir/<class>/<term>/`` (names slugified).
    :param top: patterns on the class handout.
    :param names: ``"pseudonyms"`` (writer codes, the default) or ``"real"``.
    :param today: the date printed on the pages (default: today, ISO format).
    :param template_dir: a folder of templates that replace the bundled ones by name.
    :raises HingewordError: unknown ``names``, no such run, or a broken template.
    """
    if names not in NAMES:
        raise HingewordError(f"names must be 'pseudonyms' or 'real', not '{names}'")
    today = today or _dt.date.today().isoformat()
    data = load_run(ws, class_name, term)
    env = environment(template_dir)
    folder = Path(out_dir) / slugify(class_name) / slugify(term)
    folder.mkdir(parents=True, exist_ok=True)
    paths = ReportPaths(folder=folder, handout=folder / "handout.html", handout_teacher=folder / "handout-teacher.html",
                        overview=folder / "overview.html", students=folder / "students.html",
                        patterns_csv=folder / "patterns.csv")
    pages = (
        (paths.handout, "handout.html", build_handout_context(data, top=top, today=today, teacher=False)),
        (paths.handout_teacher, "handout.html", build_handout_context(data, top=top, today=today, teacher=True)),
        (paths.overview, "overview.html", build_overview_context(data, names=names, today=today)),
        (paths.students, "students.html", build_students_context(data, names=names, today=today)),
    )
    for path, template, context in pages:
        path.write_text(render(template, context, env=env), encoding="utf-8")
    write_patterns(patterns_frame(list(data.figures)), paths.patterns_csv)
    log.info("reports for %s / %s written to %s", class_name, term, folder)
    return paths


def write_trends(ws: Workspace, class_name: str, out_dir: Path, *, today: str | None = None, match: bool = False,
                 template_dir: Path | None = None) -> Path:
    """Write ``out_dir/<class>/trends.html``: terms, charts and every pattern flagged in some term.

    :param match: also list fuzzy matches of writer names between consecutive terms.
    :returns: the path written.
    """
    from .trends import chart_overview, chart_pattern, compute_trends, writer_matches

    today = today or _dt.date.today().isoformat()
    tr = compute_trends(ws, class_name)
    matches = []
    if match:
        for t in tr.terms:
            matches += [(t["term"], cur, prev, score) for cur, prev, score in writer_matches(ws, t["class"], t["term"])]
    context = build_trends_context(
        tr, today=today, overview_chart=chart_overview(tr, top=TREND_CHART_PATTERNS) if tr.patterns else "",
        pattern_charts={p.key: chart_pattern(tr, p) for p in tr.patterns if not p.dismissed}, matches=matches)
    path = Path(out_dir) / slugify(class_name) / "trends.html"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(render("trends.html", context, template_dir=template_dir), encoding="utf-8")
    log.info("trends for %s written to %s", class_name, path)
    return path


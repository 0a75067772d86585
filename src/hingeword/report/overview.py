"""Template contexts of the teacher's pages: ``overview.html`` (every pattern, the
flagged ones in detail, run facts) and ``trends.html`` (terms and charts).
"""

from __future__ import annotations

import datetime as _dt
import json
import logging
import re

from markupsafe import Markup

from .. import __version__
from ..export import kwic
from ..score import STATUSES
from .context import RunData, _by_key, _common, _key, _label_of, _native, _sorted_figures
from .text import _num, fmt_dec, fmt_int, fmt_ratio, fmt_share, pattern_label, short_label

log = logging.getLogger("hingeword")

#: Concordance lines per flagged pattern in the overview (all of them: ``hingeword concordance``).
KWIC_LINES = 12
#: Patterns drawn in the trends overview chart (as :func:`hingeword.trends.chart_overview` draws them).
TREND_CHART_PATTERNS = 6


_MEASURES = {"oe": "observed / expected (oe)", "mi": "mutual information (mi)", "logdice": "logDice (logdice)"}
_POS = {"VERB": "verb", "ADJ": "adjective", "NOUN": "noun"}


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

"""Template contexts of the teacher's pages: ``overview.html`` (every pattern, the
flagged ones in detail, run facts) and ``trends.html`` (terms and charts).
"""

from __future__ import annotations

import datetime as _dt
import logging
import re

from markupsafe import Markup

from .. import __version__
from ..console import plural
from ..export import kwic
from ..record import STATUS_GLOSSES, STATUS_PLAIN, PatternRecord, Status, key_label, plain_label
from ..score import describe_settings
from ..view import RunView
from .context import by_key, common_context, native_of, since_for_teachers
from .text import fmt_dec, fmt_int, fmt_ratio, fmt_share

log = logging.getLogger("hingeword")

#: Concordance lines per flagged pattern in the overview (all of them: ``hingeword concordance``).
KWIC_LINES = 12
#: Patterns drawn in the trends overview chart (as :func:`hingeword.trends.chart_overview` draws them).
TREND_CHART_PATTERNS = 6


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


def _row(r: PatternRecord) -> dict:
    return {
        "pattern": key_label(r.governor, r.preposition), "pos": _POS.get(r.governor_pos, r.governor_pos),
        "flagged": r.flagged, "dismissed": r.dismissed,
        "status": f"{STATUS_PLAIN[r.status]} (dismissed)" if r.dismissed else STATUS_PLAIN[r.status],
        "learner_count": fmt_int(r.learner_count), "learner_writers": fmt_int(r.learner_writers),
        "learner_governor_count": fmt_int(r.learner_governor_count),
        "learner_share": fmt_share(r.learner_share),
        "reference_count": fmt_int(r.reference_count),
        "reference_governor_count": fmt_int(r.reference_governor_count),
        "reference_share": fmt_share(r.reference_share),
        "collocation_ratio": fmt_ratio(r.collocation_ratio),
        "log_likelihood": fmt_dec(r.log_likelihood, 1),
        "log_ratio": fmt_dec(r.log_ratio, 2, sign=True),
    }


#: A file name inside a reason or note ("maria_garcia.txt", 'class/tom.docx'): a dot and 1–5 letters or digits
#: starting with a letter, after at least one character that is not a space or quote.
_FILE_NAME = re.compile(r"[^\s'\"`]+\.[A-Za-z][A-Za-z0-9]{0,4}\b")


def file_namer(view: RunView):
    """A function that rewrites a text so that no essay file name, folder or writer id
    shows, for pages under pseudonyms (file names often carry students' names).

    An essay becomes "essay of S03" ("essay 2 of S03" when the writer has several), a
    writer id their pseudonym, a skipped file "file 4 (.pdf)" or, when it lies in a
    known writer's folder or carries their name, "a file of S03 (.pdf)"; any other file
    name left in the text becomes "a file".

    :returns: ``(rename, skipped_label)``: ``rename(text)`` and ``skipped_label(source)``.
    """
    per_writer: dict[str, list[str]] = {}
    for e in view.essays:
        per_writer.setdefault(e.writer, []).append(e.essay_id)
    known: dict[str, str] = {}
    for writer, ids in per_writer.items():
        code = view.pseudonym(writer)
        for k, eid in enumerate(ids, start=1):
            label = f"essay of {code}" if len(ids) == 1 else f"essay {k} of {code}"
            for form in (eid, eid.rsplit("/", 1)[-1]):
                known.setdefault(form, label)
    codes = dict(view.codes)
    skipped_labels: dict[str, str] = {}
    for n, s in enumerate(view.skipped, start=1):
        if ":line " in s.source:  # a manifest row: the manifest's own name, not a student's
            continue
        base = s.source.rsplit("/", 1)[-1]
        stem, dot, ext = base.rpartition(".")
        ext = f" (.{ext})" if dot and stem and 0 < len(ext) <= 5 else ""
        owner = next((codes[w] for w in (s.source.split("/", 1)[0], stem or base) if w in codes), None)
        skipped_labels[s.source] = f"a file of {owner}{ext}" if owner else f"file {n}{ext}"
    for source, label in skipped_labels.items():
        known.setdefault(source, label)
    for writer, code in codes.items():
        known.setdefault(writer, code)
    forms = sorted((f for f in known if len(f) >= 3), key=len, reverse=True)
    pattern = re.compile("|".join(re.escape(f) for f in forms)) if forms else None

    def rename(text: str) -> str:
        out = pattern.sub(lambda m: known[m.group(0)], text) if pattern else text
        return _FILE_NAME.sub("a file", out)

    def label(source: str) -> str:
        if source in skipped_labels:
            return skipped_labels[source]
        manifest, sep, line = source.rpartition(":line ")
        return source if sep and line.isdigit() else rename(source)

    return rename, label


def spelling_groups(view: RunView) -> list[dict]:
    """Every spelling grouping of the run, from its stored instances: the forms as written,
    the word they were counted as, uses and writers, and the scan option that undoes it."""
    groups: dict[tuple[str, str, str], dict] = {}
    for a in view.attachments:
        if not a.original_governor:
            continue
        g = groups.setdefault((a.original_governor, a.governor, a.governor_pos),
                              {"forms": set(), "uses": 0, "writers": set()})
        g["forms"].add(a.governor_text.lower())
        g["uses"] += 1
        g["writers"].add(a.writer)
    rows = []
    for (original, governor, pos), g in sorted(groups.items()):
        forms = sorted(g["forms"])
        rows.append({"written": ", ".join(forms), "counted_as": f"{governor} ({_POS.get(pos, pos)})",
                     "uses": fmt_int(g["uses"]), "writers": fmt_int(len(g["writers"])),
                     "undo": " ".join(f"--keep-spelling {f}" for f in forms)})
    return rows
def evidence_words(r: PatternRecord) -> str | None:
    """Where a flag's evidence comes from, when it is not this class alone."""
    if r.evidence != "workspace":
        return None
    classes = r.pooled_classes
    return (f"In this class: {plural(r.learner_count, 'use')} by {plural(r.learner_writers, 'writer')}; across "
            f"{plural(classes, 'class-term')} of this workspace: {plural(r.pooled_count, 'use')} by "
            f"{plural(r.pooled_writers, 'writer')} (the flag rests on all of them)")


def support_words(confidence: float) -> str:
    """A cause's confidence (0-1) in words: how strongly the reference (or the writers' first
    languages) supports it."""
    if confidence != confidence:
        return ""
    return "strong support" if confidence >= 0.5 else "some support" if confidence >= 0.2 else "weak support"


def strength_words(r: PatternRecord, confidence: float) -> str | None:
    """The rate ratio in words: "about 19 times as often as native writers would (at least 2.4 times, 95 % sure)"."""
    if not r.flagged or r.rate_ratio != r.rate_ratio:
        return None
    return (f"about {fmt_ratio(r.rate_ratio)} times as often as native writers would "
            f"(at least {fmt_ratio(r.rate_ratio_low)} times, with {confidence:.0%} confidence)")


#: Patterns the overview's table lists at most (in rank order: flagged first, then by status and
#: writers); a corpus has tens of thousands, most used once, and every one is in ``patterns.csv``.
OVERVIEW_ROWS = 2000


def build_overview_context(view: RunView, *, names: str = "pseudonyms", today: str) -> dict:
    """Context of ``overview.html``: every pattern, flagged details, run facts.

    Concordance lines carry writer codes (or names with ``names="real"``); essay ids,
    which are often file names with students' names, are shown only with real names:
    under pseudonyms, skipped files, duplicate notes and reasons name files by
    :func:`file_namer`.
    """
    records = view.records
    used = [r for r in records if r.learner_count > 0]
    rename, label = file_namer(view) if names != "real" else (str, str)
    # the native form a flagged pattern replaces, when the class used it less than natives do: one finding,
    # said with the flag, not a second row beside it
    by_key_rec = {r.key: r for r in records}
    instances = by_key(view.attachments)
    texts = {e.essay_id: e.text for e in view.essays}
    flagged = []
    for n, r in enumerate(view.teachable, start=1):
        _, native, suggestion = native_of(r)
        atts = sorted(instances.get(r.key, []),
                      key=lambda a: (view.writer_label(a.writer, names), a.essay_id, a.gov_start))
        lines = [{"writer": view.writer_label(w, names), "left": left, "key": key, "right": right, "essay": eid}
                 for w, left, key, right, eid in kwic(atts[:KWIC_LINES], texts)]
        advice = r.advice
        causes = [{"label": c.label or c.code or "?", "code": c.code,
                   "confidence": fmt_dec(c.confidence, 2) if c.confidence == c.confidence else "",
                   "support": support_words(c.confidence),
                   "evidence": c.evidence} for c in (advice.causes if advice else ())]
        top = advice.cause if advice else None
        share = advice.suggestion_share if advice else None
        native_side = []
        for slot in dict.fromkeys([advice.suggested_preposition] + [s for _, s in advice.by_object]
                                  if advice and advice.suggested_preposition else []):
            other = by_key_rec.get((r.governor, r.governor_pos, slot))
            if other is not None and other.status is Status.UNDER_USED:
                native_side.append(f"the class wrote “{key_label(r.governor, slot)}” only "
                                   f"{fmt_int(other.learner_count)} {'time' if other.learner_count == 1 else 'times'}"
                                   f" ({fmt_share(other.learner_share)} of its uses of '{r.governor}', natives "
                                   f"{fmt_share(other.reference_share)})")
        flagged.append({
            "number": n, "anchor": f"flag-{n}", "pattern": key_label(r.governor, r.preposition),
            "governor": r.governor,
            "class_pattern": plain_label(r.governor, r.preposition),
            "native_pattern": native, "suggestion": suggestion,
            "suggestion_share": fmt_share(share) if share is not None else None,
            "cause_label": (top.label if top else "") or None, "causes": causes,
            "native_side": native_side,
            "explanation": (advice.explanation if advice else "") or None,
            "since_last_term": since_for_teachers(r),
            "summary": (f"{plural(r.learner_count, 'time')} by {plural(r.learner_writers, 'writer')}; "
                        f"{fmt_share(r.learner_share)} of the class's uses of '{r.governor}' "
                        f"against {fmt_share(r.reference_share)} in the reference"),
            "evidence": evidence_words(r),
            "strength": strength_words(r, view.thresholds.confidence),
            "kwic": lines, "kwic_more": max(0, len(atts) - len(lines)),
        })
    dismissed = [{"pattern": key_label(r.governor, r.preposition),
                  "reason": r.decision.reason or "no reason given",
                  "date": r.decision.decided_on} for r in records if r.decision is not None]
    statuses = [(STATUS_PLAIN[s], sum(1 for r in records if r.status is s)) for s in Status]
    glosses = [(STATUS_PLAIN[s], STATUS_GLOSSES[s], str(s)) for s, c in zip(Status, (c for _, c in statuses)) if c]
    run = view.run
    thresholds = describe_settings(run.settings)
    if run.settings.get("term_start"):
        thresholds.append(("Term start", str(run.settings["term_start"])))
    return {
        **common_context(view, today, f"Teacher overview: {view.class_name}, {view.term}"),
        "show_essay_ids": names == "real",
        "example_pattern": flagged[0]["pattern"] if flagged else "discuss about",
        "run": {"created": _when(run.created), "model": run.model,
                "model_version": run.model_version, "tool_version": run.tool_version,
                "words": fmt_int(run.words), "essays_read": fmt_int(run.essays_read),
                "essays_skipped": fmt_int(run.essays_skipped),
                "writers": fmt_int(len({e.writer for e in view.essays}))},
        "reference": _reference(run.reference),
        "thresholds": thresholds,
        "summary": {"patterns": len(used), "not_used": len(records) - len(used), "flagged": len(flagged),
                    "dismissed": len(dismissed), "statuses": [(s, c) for s, c in statuses if c]},
        "status_glosses": glosses,
        "rows": [_row(r) for r in used[:OVERVIEW_ROWS]],
        "rows_more": max(0, len(used) - OVERVIEW_ROWS),
        "unused_rows": [_row(r) for r in records if r.learner_count == 0],
        "flagged": flagged, "dismissed": dismissed,
        "skipped": [{"source": label(s.source), "reason": rename(s.reason)} for s in view.skipped],
        "notes": [{"kind": n.kind, "message": _note_text(n, rename)} for n in view.notes],
        "file_names_hidden": names != "real" and bool(view.skipped or view.notes),
        "spelling": spelling_groups(view),
        "kept_spellings": [str(k) for k in run.settings.get("keep_spelling") or ()],
    }


_SCRIPTABLE = {"script", "foreignobject", "iframe", "object", "embed", "handler", "listener"}


def _svg_markup(svg: str) -> Markup | str:
    """Inline SVG drawn by matplotlib from our own numbers and labels, marked safe for the
    template after a check of its structure: no scriptable element, no event attribute,
    no link but to an id inside the drawing. Text content is not inspected: matplotlib
    escapes it, so a term named "javascript:" is only words on the chart."""
    svg = (svg or "").strip()
    if not svg:
        return ""
    import xml.etree.ElementTree as ET

    try:
        root = ET.fromstring(svg)
    except ET.ParseError:
        log.warning("a chart was left out: its SVG could not be read")
        return ""
    for el in root.iter():
        tag = el.tag.rsplit("}", 1)[-1].lower()
        links = [v for k, v in el.attrib.items() if k.rsplit("}", 1)[-1].lower() == "href"]
        if tag in _SCRIPTABLE or any(k.rsplit("}", 1)[-1].lower().startswith("on") for k in el.attrib) or \
                any(not v.strip().startswith("#") for v in links) or not root.tag.endswith("svg"):
            log.warning("a chart was left out: its SVG is not plain drawing markup")
            return ""
    return Markup(svg)


def build_trends_context(tr, *, today: str, overview_chart: str = "", pattern_charts: dict | None = None,
                         matches: list[tuple[str, str, str, float]] = ()) -> dict:
    """Context of ``trends.html`` from a :class:`hingeword.trends.Trends`.

    :param overview_chart: inline SVG of the rates of the top patterns (not dismissed).
    :param pattern_charts: inline SVG per pattern key (dismissed patterns too: their history stays readable).
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
                      "chart": _svg_markup(charts.get(p.key, "")),
                      "cells": [{"term": c.term, "rate": fmt_dec(c.rate, 1), "writers": c.writers,
                                 "flagged": c.flagged, "status": c.status} for c in p.cells]}
                     for p in tr.patterns],
        "matches": [{"term": t, "current": cur, "previous": prev, "score": f"{score:.0f}"}
                    for t, cur, prev, score in matches],
    }


def _note_text(note, rename) -> str:
    """A note in words without file names; a manifest problem keeps its row ("manifest.csv:line 3")."""
    if note.kind == "manifest" and ":line " in note.message:
        where, sep, rest = note.message.partition(": ")
        return where + sep + rename(rest)
    return rename(note.message)


def _when(stamp) -> str:
    """An ISO timestamp as "2026-01-12 09:30 UTC" (unparseable text is shown as it is)."""
    try:
        t = _dt.datetime.fromisoformat(str(stamp))
    except ValueError:
        return str(stamp or "")
    if t.tzinfo is not None:
        return t.astimezone(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return t.strftime("%Y-%m-%d %H:%M")

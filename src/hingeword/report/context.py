"""Template contexts of the class's pages: the run as plain data (:class:`RunData`,
:func:`load_run`), the example picker, and the contexts of ``handout.html`` and
``students.html``, plus the helpers the overview shares.

The ``build_*_context`` functions are pure (a :class:`RunData` in, a plain dict out)
so that tests can check what each template receives.
"""

from __future__ import annotations

from dataclasses import dataclass

from .. import __version__
from ..extract import NO_PREP, Attachment
from ..history import Workspace
from ..score import STATUSES
from .text import SentenceView, _num, answer_key, fmt_int, pattern_label, sentence_view, short_label

#: A student's own sentences shown per pattern on their sheet.
SHEET_SENTENCES = 4


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
    previous_term: str | None = None
    #: (writer, rows) with rows {governor, governor_pos, preposition, last_term, this_term}
    progress: tuple[tuple[str, tuple[dict, ...]], ...] = ()


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


def load_run(ws: Workspace, class_name: str, term: str, *, match: bool = False) -> RunData:
    """Read one run from the workspace, figures with the teacher's decisions and the
    comparison with last term (raises :class:`~hingeword.errors.WorkspaceError` if absent).

    :param match: also link writer ids of the previous term by name similarity
        (:func:`hingeword.trends.writer_matches`) for the per-writer progress.
    """
    run = dict(ws.run(class_name, term))
    rid = run["id"]
    figures = tuple(ws.figures_in_context(class_name, term))
    order = ws.runs_in_order(class_name)
    ids = [r["id"] for r in order]
    previous = order[ids.index(rid) - 1] if rid in ids and ids.index(rid) > 0 else None
    progress: tuple = ()
    if previous is not None:
        decided = ws.decisions_for(class_name)
        keys = {_key(f) for f in figures if f.get("flagged") and not f.get("dismissed")}
        keys |= {_key(f) for f in ws.figures(previous["id"])
                 if f.get("flagged") and (f["governor"], f["preposition"]) not in decided}
        same = {}
        if match:
            from ..trends import writer_matches

            same = {cur: prev for cur, prev, _ in writer_matches(ws, class_name, term)}
        rows = ws.writer_progress(class_name, term, sorted(keys), same_writer=same)
        progress = tuple(sorted((w, tuple(r)) for w, r in rows.items()))
    return RunData(
        class_name=class_name, term=term, run=run, figures=figures,
        attachments=tuple(ws.attachments(rid)), essays=tuple(dict(e) for e in ws.essays(rid)),
        skipped=tuple(dict(s) for s in ws.skipped(rid)), notes=tuple(dict(n) for n in ws.notes(rid)),
        codes=tuple(sorted(ws.writer_codes(class_name).items())),
        previous_term=previous["term"] if previous is not None else None, progress=progress,
    )


def since_for_learners(line: str | None, teacher: bool) -> str | None:
    """The "since last term" line in words for students (figures kept on the teacher copy)."""
    if not line or line.startswith("first term") or line.startswith("not seen"):
        return None
    figures = line[line.find("("):] if teacher and "(" in line else ""
    if line.startswith("also flagged"):
        text = "We wrote this last term too."
    elif line.startswith("seen last term"):
        text = "A few of us wrote this last term too."
    elif line.startswith("new this term"):
        text = "New this term."
    else:
        text = line[0].upper() + line[1:]
    return f"{text} {figures}".strip()


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
            "since": since_for_learners(f.get("since_last_term"), teacher),
            "writers": int(_num(f.get("learner_writers")) or 0),
            "examples": [{"segments": v.segments} for v in examples],
            "practice": item,
        })
    title = f"Small words that matter: {data.class_name}, {data.term}"
    return {**_common(data, today, title), "teacher_copy": teacher, "patterns": patterns,
            "more_count": max(0, len(flagged) - len(patterns))}


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
    progress = dict(data.progress)
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
                         "progress": [{"class_pattern": pattern_label(r["governor"], r["preposition"]),
                                       "last_term": r["last_term"], "this_term": r["this_term"]}
                                      for r in progress.get(writer, ())],
                         "sentence_count": sum(len(g["sentences"]) for g in groups)})
    students.sort(key=lambda s: (s["label"].casefold(), s["label"]))
    for i, s in enumerate(students, start=1):
        s["anchor"] = f"sheet-{i}"
    return {**_common(data, today, f"Feedback sheets: {data.class_name}, {data.term}"), "names": names,
            "students": students, "previous_term": data.previous_term}

"""Template contexts of the class's pages — ``handout.html`` and ``students.html`` —
the example picker, and the helpers the overview shares.

The ``build_*_context`` functions are pure (a :class:`~hingeword.view.RunView` in, a
plain dict out) so that tests can check what each template receives.
"""

from __future__ import annotations

from .. import __version__
from ..causes import native_words, reason_for_learners
from ..extract import Attachment
from ..record import NO_PREP, PatternRecord, Since, key_label, plain_label
from ..view import RunView
from .text import SentenceView, answer_key, fmt_int, sentence_view

#: A student's own sentences shown per pattern on their sheet.
SHEET_SENTENCES = 4


def native_of(r: PatternRecord, classes=None) -> tuple[str | None, str | None, str | None]:
    """(suggested preposition, native pattern in words, suggestion) of a record; ``None`` where unknown.

    :param classes: object classes of the sentences at hand (a student's own): the native
        pattern then names only the slots those sentences need ("arrive in a place …").
    """
    a = r.advice
    sp = (a.suggested_preposition if a else "") or None
    native = (a.native_pattern if a else "") or (plain_label(r.governor, sp) if sp else None)
    suggestion = (a.suggestion if a else "") or (key_label(r.governor, sp) if sp else None)
    if a is not None and a.by_object and classes is not None:
        slots = dict(a.by_object)
        pairs: list[tuple[str, str]] = []
        for c in dict.fromkeys(c or "other" for c in classes):
            k = c if c in slots else ("any other" if "any other" in slots else None)
            if k is not None and (k, slots[k]) not in pairs:
                pairs.append((k, slots[k]))
        if pairs:
            sp = pairs[0][1]
            plain = [p for p in pairs if p[0] != "any other"] == []
            native = native_words(r.governor, r.governor_pos, sp, [] if plain else pairs)
            suggestion = " / ".join(key_label(r.governor, x) for x in dict.fromkeys(p[1] for p in pairs))
    return sp, native, suggestion


def learner_reason(r: PatternRecord) -> str | None:
    """The likely cause as a sentence for learners, naming the related word ("By analogy with
    'hear': we say 'hear something', but 'listen' is different."); none if unclear."""
    return reason_for_learners(r.governor, r.preposition, r.advice.cause if r.advice else None)


def common_context(view: RunView, today: str, title: str) -> dict:
    return {"title": title, "class_name": view.class_name, "term": view.term, "today": today,
            "tool_version": __version__}


def by_key(attachments) -> dict[tuple, list[Attachment]]:
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


def since_for_teachers(r: PatternRecord) -> str | None:
    """The comparison with last term in words, with both rates ("also flagged last term (1.2 → 3.4 …)")."""
    c = r.comparison
    if c is None:
        return None
    rates = f"({(c.previous_rate or 0.0):.1f} → {c.rate:.1f} per 10,000 words)"
    return {
        Since.FIRST_TERM: "first term on record",
        Since.NEW: "new this term",
        Since.NOT_SEEN: "not seen this term or last",
        Since.ALSO_FLAGGED: f"also flagged last term {rates}",
        Since.SEEN_NOT_FLAGGED: f"seen last term but not flagged {rates}",
    }[c.since]


def since_for_learners(r: PatternRecord, teacher: bool) -> str | None:
    """The comparison with last term in words for students (the rates only on the teacher copy)."""
    c = r.comparison
    if c is None or c.since in (Since.FIRST_TERM, Since.NOT_SEEN):
        return None
    text = {Since.ALSO_FLAGGED: "We wrote this last term too.",
            Since.SEEN_NOT_FLAGGED: "A few of us wrote this last term too.",
            Since.NEW: "New this term."}[c.since]
    if teacher and c.since is not Since.NEW:
        text += f" ({(c.previous_rate or 0.0):.1f} → {c.rate:.1f} per 10,000 words)"
    return text


# ------------------------------------------------------------------ contexts


def build_handout_context(view: RunView, *, top: int = 5, today: str, teacher: bool = False) -> dict:
    """Context of ``handout.html``: the top ``top`` over-used, non-dismissed patterns.

    Student copy (``teacher=False``): no writer names or codes anywhere and every
    ``practice["answer"]`` is ``None``; the teacher copy fills in the answers.
    """
    flagged = view.teachable
    instances = by_key(view.attachments)
    patterns = []
    for n, r in enumerate(flagged[:max(0, top)], start=1):
        sp, native, suggestion = native_of(r)
        examples, practice = pick_examples(instances.get(r.key, []))
        item = None
        if practice is not None:
            fit = r.advice.preposition_for(practice.object_class) if r.advice else sp
            ans = answer_key(practice, r.preposition, fit or sp) if teacher else None
            item = {"segments": practice.segments, "answer": ans[0] if ans else None,
                    "answer_segments": ans[1] if ans else ()}
        patterns.append({
            "number": n, "anchor": f"pattern-{n}",
            "class_pattern": plain_label(r.governor, r.preposition),
            "no_preposition": r.preposition == NO_PREP,
            "native_pattern": native, "suggestion": suggestion,
            "reason": learner_reason(r), "explanation": (r.advice.explanation if r.advice else "") or None,
            "since": since_for_learners(r, teacher),
            "writers": r.learner_writers,
            "other_classes": (f"{r.pooled_writers - r.learner_writers} more in other classes"
                              if r.evidence == "workspace" and r.pooled_writers > r.learner_writers else None),
            "examples": [{"segments": v.segments} for v in examples],
            "practice": item,
        })
    title = f"Small words that matter: {view.class_name}, {view.term}"
    return {**common_context(view, today, title), "teacher_copy": teacher, "patterns": patterns,
            "more_count": max(0, len(flagged) - len(patterns))}


def build_key_context(view: RunView, *, today: str) -> dict:
    """Context of ``key.html``, the teacher's private key: each pseudonym with the writer (in full,
    never cut), their essays' ids and first language."""
    essays: dict[str, list] = {}
    for e in view.essays:
        essays.setdefault(e.writer, []).append(e)
    rows = [{"code": view.pseudonym(w), "writer": w, "essays": ", ".join(sorted(e.essay_id for e in es)),
             "l1": ", ".join(sorted({e.l1 for e in es if e.l1}))} for w, es in essays.items()]
    rows.sort(key=lambda r: (r["code"], r["writer"]))
    return {**common_context(view, today, f"Private key: who is who in {view.class_name}, {view.term}"),
            "rows": rows}


def build_students_context(view: RunView, *, names: str = "pseudonyms", today: str,
                           names_on_sheets: bool = False) -> dict:
    """Context of ``students.html``: one sheet per writer with their flagged sentences.

    :param names_on_sheets: print the student's name on the sheet's name line (the heading
        keeps the pseudonym unless ``names="real"``).
    """
    flagged = view.teachable
    rank = {r.key: i for i, r in enumerate(flagged)}
    rec = {r.key: r for r in flagged}
    mine: dict[str, dict[tuple, list[Attachment]]] = {}
    for a in view.attachments:
        if a.key in rank:
            mine.setdefault(a.writer, {}).setdefault(a.key, []).append(a)
    essays: dict[str, list] = {}
    for e in view.essays:
        essays.setdefault(e.writer, []).append(e)
    progress = dict(view.progress)
    students = []
    for writer in essays:
        groups = []
        for key in sorted(mine.get(writer, {}), key=rank.__getitem__):
            r = rec[key]
            views = sorted((sentence_view(a) for a in mine[writer][key]),
                           key=lambda v: (v.essay_id, v.position, v.gov or (0, 0)))
            _, native, suggestion = native_of(r, [v.object_class for v in views[:SHEET_SENTENCES]])
            explanation = (r.advice.explanation if r.advice else "") or None
            if r.advice is not None and r.advice.by_object and native != r.advice.native_pattern:
                # the class's explanation names slots this student's sentences do not need
                written = plain_label(r.governor, r.preposition)
                explanation = f"We say '{native}', not '{'be ' if r.governor_pos == 'ADJ' else ''}{written}'."
            groups.append({"class_pattern": plain_label(r.governor, r.preposition), "no_preposition": key[2] == NO_PREP,
                           "native_pattern": native,
                           "suggestion": suggestion, "explanation": explanation,
                           "reason": learner_reason(r),
                           "sentences": [{"segments": v.segments} for v in views[:SHEET_SENTENCES]],
                           "more": max(0, len(views) - SHEET_SENTENCES)})
        label = view.writer_label(writer, names)
        students.append({"label": label, "anchor": "", "name": writer if names_on_sheets else "", "essays": len(essays[writer]),
                         "words": fmt_int(sum(e.word_count for e in essays[writer])),
                         "patterns": groups, "nothing_flagged": not groups,
                         "progress": [{"class_pattern": plain_label(p.governor, p.preposition),
                                       "last_term": p.last_term, "this_term": p.this_term}
                                      for p in progress.get(writer, ())],
                         "sentence_count": sum(len(g["sentences"]) for g in groups)})
    students.sort(key=lambda s: (s["label"].casefold(), s["label"]))
    for i, s in enumerate(students, start=1):
        s["anchor"] = f"sheet-{i}"
    return {**common_context(view, today, f"Feedback sheets: {view.class_name}, {view.term}"), "names": names,
            "students": students, "previous_term": view.previous_term}

"""History across terms: trends, review decisions, writer progress, and their commands.

No parser here: each term's run is stored with ``Workspace.replace_run`` from essays,
attachments and figure dicts built by hand, so the statuses come from planted counts.
Every sentence, writer name and class below is invented for these tests.

The class "evening-b2" has three terms, stored out of date order (spring first,
autumn second, winter last, and with creation times in the reverse of term order)
so that only ``term_start`` can put them in order.
"""

from __future__ import annotations

import hashlib
import re

import pytest
from typer.testing import CliRunner

from hingeword.cli import app
from hingeword.errors import WorkspaceError
from hingeword.extract import Attachment
from hingeword.history import Workspace, per_10k
from hingeword.ingest import Essay
from hingeword.record import PatternRecord, Status
from hingeword.report.context import since_for_teachers
from hingeword.trends import writer_progress
from hingeword.view import load_run_view
from hingeword.trends import (
    MATCH_THRESHOLD,
    TREND_STATUSES,
    chart_overview,
    chart_pattern,
    compute_trends,
    match_writers,
    text_table,
    writer_matches,
)

CLASS = "evening-b2"

#: term -> (term_start, words in the run, creation time). Creation times run backwards.
TERMS = {
    "autumn": ("2025-09-15", 3000, "2026-05-03T10:00:00+00:00"),
    "winter": ("2026-01-12", 4000, "2026-05-02T10:00:00+00:00"),
    "spring": ("2026-04-13", 5000, "2026-05-01T10:00:00+00:00"),
}
INSERT_ORDER = ("spring", "autumn", "winter")

#: Invented sentence templates: (subject, governor as written, preposition as written, rest).
SENTENCES = {
    ("discuss", "VERB", "about"): ("We", "discussed", "about", "the school trip."),
    ("depend", "VERB", "of"): ("Everything", "depends", "of", "the weather."),
    ("married", "ADJ", "with"): ("My cousin is", "married", "with", "a baker."),
    ("enter", "VERB", "into"): ("The pupils", "entered", "into", "the hall."),
    ("listen", "VERB", "-"): ("I", "listen", "music", "every night."),
    ("go", "VERB", "to"): ("We", "go", "to", "the market on Sundays."),
}

#: Planted counts: pattern -> term -> ({writer: instances}, flagged).
#: Rates (per 10,000 words) follow from TERMS; the comment gives them per term.
PLAN = {
    # recurring: 20.0* -> 5.0 -> 20.0*  (flagged in terms 1 and 3; "fading" in between)
    ("discuss", "VERB", "about"): {
        "autumn": ({"Amara Okafor": 2, "Kenji Sato": 2, "Lucía Romero": 2}, True),
        "winter": ({"Amara Okafor": 2}, False),
        "spring": ({"Amara Okafor": 3, "Kenji Sato": 3, "Lucia Romero": 2, "Ines Duarte": 2}, True),
    },
    # fading: 10.0* -> 30.0* -> 20.0  (lower than the last flagged term, though above the first)
    ("depend", "VERB", "of"): {
        "autumn": ({"Kenji Sato": 2, "Tomasz Wójcik": 1}, True),
        "winter": ({"Kenji Sato": 6, "Tomasz Wójcik": 6}, True),
        "spring": ({"Kenji Sato": 10}, False),
    },
    # gone: 13.33* -> 2.5 -> absent
    ("married", "ADJ", "with"): {
        "autumn": ({"Amara Okafor": 2, "Tomasz Wójcik": 2}, True),
        "winter": ({"Tomasz Wójcik": 1}, False),
    },
    # steady: 10.0* -> 10.0 -> 12.0  (not flagged again, but no lower)
    ("enter", "VERB", "into"): {
        "autumn": ({"Lucía Romero": 2, "Kenji Sato": 1}, True),
        "winter": ({"Lucía Romero": 4}, False),
        "spring": ({"Lucia Romero": 6}, False),
    },
    # new: absent -> absent -> 8.0*
    ("listen", "VERB", "-"): {
        "spring": ({"Ines Duarte": 2, "Amara Okafor": 2}, True),
    },
    # never flagged: not tracked at all
    ("go", "VERB", "to"): {
        "autumn": ({"Amara Okafor": 3}, False),
        "winter": ({"Amara Okafor": 3}, False),
        "spring": ({"Amara Okafor": 3}, False),
    },
}

#: Expected status per term (autumn, winter, spring); the last is the overall status.
EXPECTED = {
    ("discuss", "VERB", "about"): ("new", "fading", "recurring"),
    ("depend", "VERB", "of"): ("new", "recurring", "fading"),
    ("married", "ADJ", "with"): ("new", "fading", "gone"),
    ("enter", "VERB", "into"): ("new", "steady", "steady"),
    ("listen", "VERB", "-"): ("-", "-", "new"),
}


def build_term(term: str, plan: dict = PLAN) -> tuple[list[Essay], list[Attachment], list[dict]]:
    """Essays (one per writer), attachments and figure dicts of one term from ``plan``."""
    sentences: dict[str, list[tuple[tuple, str, str]]] = {}
    for key, terms in plan.items():
        writers, _ = terms.get(term, ({}, False))
        for writer, n in writers.items():
            sentences.setdefault(writer, []).extend([(key, *SENTENCES[key][1:3])] * n)
    essays, atts = [], []
    for writer in sorted(sentences):
        essay_id = f"{writer.split()[0].lower()}-{term}.txt"
        text, spans = "", []
        for key, gov_word, prep_word in sentences[writer]:
            subject, _, _, rest = SENTENCES[key]
            start = len(text) + (1 if text else 0)
            sentence = f"{subject} {gov_word} {prep_word} {rest}"
            text = f"{text} {sentence}" if text else sentence
            g = start + len(subject) + 1
            p = g + len(gov_word) + 1
            spans.append((key, sentence, start, g, gov_word, p, prep_word))
        essay = Essay(essay_id=essay_id, writer=writer, text=text, sha256=hashlib.sha256(text.encode()).hexdigest(),
                      source=essay_id, encoding="utf-8")
        essays.append(essay)
        for (gov, pos, prep), sentence, start, g, gov_word, p, prep_word in spans:
            atts.append(Attachment(
                essay_id=essay_id, writer=writer, governor=gov, governor_pos=pos, governor_text=gov_word,
                preposition=prep, relation="dobj" if prep == "-" else "prep", sentence=sentence,
                sentence_start=start, gov_start=g, gov_end=g + len(gov_word), prep_start=p,
                prep_end=p + len(prep_word)))
    figures = []
    for (gov, pos, prep), terms in sorted(plan.items()):
        if term not in terms:
            continue
        writers, flagged = terms[term]
        figures.append(PatternRecord(gov, pos, prep, learner_count=sum(writers.values()), learner_writers=len(writers),
                                     flagged=flagged, status=Status.OVER_USED if flagged else Status.TOO_RARE))
    return essays, atts, figures


def store_term(ws: Workspace, term: str, *, class_name: str = CLASS, plan: dict = PLAN) -> int:
    term_start, words, created = TERMS[term]
    essays, atts, figures = build_term(term, plan)
    return ws.replace_run(
        class_name=class_name, term=term,
        run_meta={"tool_version": "t", "model": "m", "model_version": "1", "extractor_version": "1",
                  "source": "x", "words": words, "created": created, "settings": {"term_start": term_start}},
        essays=essays, skipped=[], notes=[], attachments=atts, records=figures,
    )


@pytest.fixture
def ws_path(tmp_path):
    """A workspace holding the three terms of :data:`CLASS`, stored out of order."""
    path = tmp_path / "ws"
    with Workspace(path) as ws:
        for term in INSERT_ORDER:
            store_term(ws, term)
    return path


@pytest.fixture
def ws(ws_path):
    with Workspace(ws_path) as w:
        yield w


def by_key(tr):
    return {p.key: p for p in tr.patterns}


def figures_in_context(ws, class_name, term):
    """A run's records with decisions and comparison, as flat rows; the comparison in the teacher's words."""
    rows = []
    for r in load_run_view(ws, class_name, term, progress=False).records:
        rows.append({**r.to_row(), "since_last_term": since_for_teachers(r)})
    return rows


def progress(ws, class_name, term, keys, same_writer=None):
    from dataclasses import asdict

    return {w: [asdict(r) for r in rows]
            for w, rows in writer_progress(ws, class_name, term, keys, same_writer=same_writer).items()}


def fig(figures, gov, prep):
    (f,) = [f for f in figures if f["governor"] == gov and f["preposition"] == prep]
    return f


# ------------------------------------------------------------------ statuses


def test_trends_plan_is_consistent_with_stored_attachments(ws):
    # The figures were built from the same plan as the attachments; check the builder
    # before trusting anything computed from it.
    for run in ws.runs(CLASS):
        counts = {}
        for a in ws.attachments(run.id):
            counts[a.key] = counts.get(a.key, 0) + 1
            essay_text = {e.essay_id: e.text for e in ws.essays(run.id)}[a.essay_id]
            assert essay_text[a.gov_start:a.gov_end] == a.governor_text
        assert {r.key: r.learner_count for r in ws.records(run.id)} == counts


def test_trends_terms_ordered_by_term_start_not_insertion(ws):
    assert [r.term for r in ws.runs(CLASS)] == ["spring", "winter", "autumn"]  # creation order
    assert [r.term for r in ws.runs_in_order(CLASS)] == ["autumn", "winter", "spring"]
    assert [r.term_start for r in ws.runs_in_order(CLASS)] == ["2025-09-15", "2026-01-12", "2026-04-13"]
    tr = compute_trends(ws, CLASS)
    assert [t["term"] for t in tr.terms] == ["autumn", "winter", "spring"]
    assert [t["words"] for t in tr.terms] == [3000, 4000, 5000]
    assert [t["essays"] for t in tr.terms] == [4, 4, 4]


@pytest.mark.parametrize("key", sorted(EXPECTED))
def test_trends_status_per_term_and_overall(ws, key):
    p = by_key(compute_trends(ws, CLASS))[key]
    assert tuple(c.status for c in p.cells) == EXPECTED[key]
    assert p.status == EXPECTED[key][-1]
    assert [c.term for c in p.cells] == ["autumn", "winter", "spring"]
    assert [c.flagged for c in p.cells] == [PLAN[key].get(t, ({}, False))[1] for t in ("autumn", "winter", "spring")]


def test_trends_never_flagged_pattern_is_not_tracked(ws):
    tr = compute_trends(ws, CLASS)
    assert ("go", "VERB", "to") not in by_key(tr)
    assert set(by_key(tr)) == set(EXPECTED)


def test_trends_rates_are_per_10000_words(ws):
    p = by_key(compute_trends(ws, CLASS))
    # 6 instances in 3,000 words = 20.0 per 10,000; 2 in 4,000 = 5.0; 10 in 5,000 = 20.0
    assert [(c.count, c.rate) for c in p[("discuss", "VERB", "about")].cells] == [(6, 20.0), (2, 5.0), (10, 20.0)]
    assert [c.writers for c in p[("discuss", "VERB", "about")].cells] == [3, 1, 4]
    # 4 in 3,000 = 13.33 (rounded to 2 places); absent = 0 instances, rate 0.0, 0 writers
    assert [(c.count, c.rate, c.writers) for c in p[("married", "ADJ", "with")].cells] == [
        (4, 13.33, 2), (1, 2.5, 1), (0, 0.0, 0)]
    assert [c.rate for c in p[("depend", "VERB", "of")].cells] == [10.0, 30.0, 20.0]
    assert per_10k(6, 3000) == 20.0
    assert per_10k(1, 3) == 3333.33
    assert per_10k(5, 0) == 0.0


def test_trends_fading_compares_with_last_flagged_term_not_first(tmp_path):
    # With all three terms depend+of goes 10.0* -> 30.0* -> 20.0: fading, as 20.0 is below the
    # last flagged rate (30.0) though above the first. Without the winter term it goes
    # 10.0* -> 20.0, no lower than the last flagged rate, so it is steady.
    with Workspace(tmp_path / "ws") as w:
        store_term(w, "autumn")
        store_term(w, "spring")
        p = by_key(compute_trends(w, CLASS))[("depend", "VERB", "of")]
        assert [(c.rate, c.status) for c in p.cells] == [(10.0, "new"), (20.0, "steady")]


def test_trends_sorted_by_status_then_rate(ws):
    tr = compute_trends(ws, CLASS)
    assert [p.status for p in tr.patterns] == ["new", "recurring", "fading", "gone", "steady"]
    ranks = [TREND_STATUSES.index(p.status) for p in tr.patterns]
    assert ranks == sorted(ranks)


def test_trends_unknown_class_raises_with_known_list(ws):
    with pytest.raises(WorkspaceError, match="no scans of class 'morning-a1'") as exc:
        compute_trends(ws, "morning-a1")
    assert "known: evening-b2" in str(exc.value)


def test_trends_text_table_lists_terms_rates_flags_and_statuses(ws):
    lines = text_table(compute_trends(ws, CLASS))
    head = lines[0]
    assert head.split() == ["pattern", "autumn", "winter", "spring", "status"]
    rows = {line.split("  ")[0].strip(): line for line in lines[2:-1]}
    assert list(rows) == ["listen + object", "discuss about", "depend of", "married with", "enter into"]
    assert re.search(r"20\.0\* \(3w\)\s+5\.0  \(1w\)\s+20\.0\* \(4w\)\s+recurring$", rows["discuss about"])
    assert re.search(r"0\.0  \(0w\)\s+0\.0  \(0w\)\s+8\.0\* \(2w\)\s+new$", rows["listen + object"])
    assert rows["married with"].endswith("0.0  (0w)  gone")
    assert lines[-1].startswith("rate = instances per 10,000 words")


def test_trends_charts_are_svg_reproducible_and_leave_out_dismissed(ws):
    ws.dismiss("married", "with", class_name=CLASS, reason="correct in the students' regional usage")
    tr = compute_trends(ws, CLASS)
    svg = chart_overview(tr)
    assert svg.startswith("<svg") and svg.rstrip().endswith("</svg>")
    assert chart_overview(tr) == svg
    # svg.fonttype "none": labels are SVG text elements (checked with matplotlib 3.11)
    assert ">discuss about</text>" in svg
    assert "married with" not in svg
    bar = chart_pattern(tr, by_key(tr)[("discuss", "VERB", "about")])
    assert bar.startswith("<svg") and ">winter</text>" in bar


# ---------------------------------------------------------------- linked classes


def test_trends_linked_classes_share_runs_and_statuses(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        store_term(w, "spring", class_name="evening-c1")  # the same students, promoted
        store_term(w, "autumn", class_name=CLASS)
        store_term(w, "winter", class_name=CLASS)
        alone = by_key(compute_trends(w, "evening-c1"))
        assert [c.term for c in alone[("discuss", "VERB", "about")].cells] == ["spring"]
        assert alone[("discuss", "VERB", "about")].status == "new"
        w.link_classes(CLASS, "evening-c1")
        assert [(r.class_name, r.term) for r in w.runs_in_order("evening-c1")] == [
            (CLASS, "autumn"), (CLASS, "winter"), ("evening-c1", "spring")]
        assert [r.id for r in w.runs_in_order(CLASS)] == [r.id for r in w.runs_in_order("evening-c1")]
        tr = compute_trends(w, "evening-c1")
        assert tr.classes == [CLASS, "evening-c1"]
        assert {k: tuple(c.status for c in p.cells) for k, p in by_key(tr).items()} == EXPECTED
        # the new class's first run now has a previous term
        f = fig(figures_in_context(w, "evening-c1", "spring"), "depend", "of")
        assert f["since_last_term"] == "also flagged last term (30.0 → 20.0 per 10,000 words)"


def test_trends_class_links_are_transitive_and_not_self(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        w.link_classes("a1", "a2")
        w.link_classes("a2", "b1")
        w.link_classes("a2", "b1")  # twice is harmless
        assert w.class_group("b1") == {"a1", "a2", "b1"}
        assert w.class_group("c1") == {"c1"}
        with pytest.raises(WorkspaceError, match="itself"):
            w.link_classes("a1", "a1")


# ------------------------------------------------------------------- decisions


def test_trends_dismissal_shows_in_figures_with_reason_and_date(ws):
    ws.dismiss("discuss", "about", class_name=CLASS, reason="we practised it on purpose", on="2026-04-20")
    figs = figures_in_context(ws, CLASS, "spring")
    d = fig(figs, "discuss", "about")
    assert (d["dismissed"], d["dismissed_reason"], d["dismissed_on"]) == (True, "we practised it on purpose", "2026-04-20")
    other = fig(figs, "listen", "-")
    assert (other["dismissed"], other["dismissed_reason"], other["dismissed_on"]) == (False, "", "")
    tr = compute_trends(ws, CLASS)
    assert by_key(tr)[("discuss", "VERB", "about")].dismissed
    assert any(line.startswith("discuss about [dismissed]") for line in text_table(tr))


def test_trends_dismissal_default_date_is_today_and_case_folded(ws):
    import datetime

    ws.dismiss("Discuss", "ABOUT", class_name=CLASS, reason="r")
    d = fig(figures_in_context(ws, CLASS, "autumn"), "discuss", "about")
    assert d["dismissed"] and d["dismissed_on"] == datetime.date.today().isoformat()


def test_trends_dismissal_persists_into_a_later_term(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        store_term(w, "autumn")
        w.dismiss("enter", "into", class_name=CLASS, reason="the textbook uses it")
    with Workspace(tmp_path / "ws") as w:  # a later session adds the next terms
        store_term(w, "winter")
        store_term(w, "spring")
        for term in ("autumn", "winter", "spring"):
            f = fig(figures_in_context(w, CLASS, term), "enter", "into")
            assert f["dismissed"] and f["dismissed_reason"] == "the textbook uses it"


def test_trends_dismissal_scope_class_vs_all_classes(ws):
    store_term(ws, "spring", class_name="morning-a2")
    ws.dismiss("discuss", "about", class_name=CLASS, reason="only for this class")
    assert not fig(figures_in_context(ws, "morning-a2", "spring"), "discuss", "about")["dismissed"]
    ws.dismiss("discuss", "about", class_name=None, reason="accepted everywhere")
    other = fig(figures_in_context(ws, "morning-a2", "spring"), "discuss", "about")
    assert other["dismissed"] and other["dismissed_reason"] == "accepted everywhere"
    # undoing the class decision leaves the all-classes one in force
    assert ws.restore("discuss", "about", class_name=CLASS)
    assert fig(figures_in_context(ws, CLASS, "spring"), "discuss", "about")["dismissed_reason"] == "accepted everywhere"
    assert ws.restore("discuss", "about", class_name=None)
    assert not fig(figures_in_context(ws, CLASS, "spring"), "discuss", "about")["dismissed"]
    assert not fig(figures_in_context(ws, "morning-a2", "spring"), "discuss", "about")["dismissed"]


def test_trends_restore_undoes_and_is_logged(ws):
    ws.dismiss("depend", "of", class_name=CLASS, reason="r1", on="2026-04-20")
    assert ws.restore("depend", "of", class_name=CLASS, on="2026-04-21")
    assert not fig(figures_in_context(ws, CLASS, "spring"), "depend", "of")["dismissed"]
    assert not by_key(compute_trends(ws, CLASS))[("depend", "VERB", "of")].dismissed
    assert ws.restore("depend", "of", class_name=CLASS) is False  # nothing left to undo
    log = [tuple(r) for r in ws.conn.execute("SELECT * FROM decision_log ORDER BY rowid")]
    assert log == [(CLASS, "depend", "of", "dismiss", "r1", "2026-04-20"),
                   (CLASS, "depend", "of", "restore", "", "2026-04-21")]


def test_trends_linked_classes_share_decisions(ws):
    store_term(ws, "spring", class_name="evening-c1")
    ws.dismiss("listen", "-", class_name=CLASS, reason="fine in speech")
    assert not fig(figures_in_context(ws, "evening-c1", "spring"), "listen", "-")["dismissed"]
    ws.link_classes(CLASS, "evening-c1")
    assert fig(figures_in_context(ws, "evening-c1", "spring"), "listen", "-")["dismissed"]
    ws.dismiss("enter", "into", class_name="evening-c1", reason="decided in the new class")
    assert set(ws.decisions_for(CLASS)) == {("listen", "-"), ("enter", "into")}


def test_trends_linked_class_can_restore_a_shared_decision(ws):
    store_term(ws, "spring", class_name="evening-c1")
    ws.link_classes(CLASS, "evening-c1")
    ws.dismiss("listen", "-", class_name=CLASS, reason="fine in speech")
    assert fig(figures_in_context(ws, "evening-c1", "spring"), "listen", "-")["dismissed"]
    assert ws.restore("listen", "-", class_name="evening-c1")
    assert not fig(figures_in_context(ws, "evening-c1", "spring"), "listen", "-")["dismissed"]


# ------------------------------------------------------------ since last term


def test_trends_since_last_term_lines(ws):
    spring = figures_in_context(ws, CLASS, "spring")
    assert fig(spring, "listen", "-")["since_last_term"] == "new this term"
    assert fig(spring, "listen", "-")["previous_rate"] == 0.0
    assert fig(spring, "depend", "of")["since_last_term"] == "also flagged last term (30.0 → 20.0 per 10,000 words)"
    assert fig(spring, "discuss", "about")["since_last_term"] == "seen last term but not flagged (5.0 → 20.0 per 10,000 words)"
    assert (fig(spring, "depend", "of")["rate"], fig(spring, "depend", "of")["previous_rate"]) == (20.0, 30.0)
    winter = figures_in_context(ws, CLASS, "winter")
    assert fig(winter, "married", "with")["since_last_term"] == "also flagged last term (13.3 → 2.5 per 10,000 words)"
    autumn = figures_in_context(ws, CLASS, "autumn")
    assert {f["since_last_term"] for f in autumn} == {"first term on record"}
    assert {f["previous_rate"] for f in autumn} == {None}


# ------------------------------------------------------------- writers


def test_trends_writer_progress_last_and_this_term(ws):
    keys = [("discuss", "VERB", "about"), ("depend", "VERB", "of"), ("enter", "VERB", "into")]
    prog = progress(ws, CLASS, "winter", keys)
    # all four winter writers also wrote in autumn (same spelling of their names)
    assert sorted(prog) == ["Amara Okafor", "Kenji Sato", "Lucía Romero", "Tomasz Wójcik"]
    assert prog["Kenji Sato"] == [  # rows follow the order of ``keys``
        {"governor": "discuss", "governor_pos": "VERB", "preposition": "about", "last_term": 2, "this_term": 0},
        {"governor": "depend", "governor_pos": "VERB", "preposition": "of", "last_term": 2, "this_term": 6},
        {"governor": "enter", "governor_pos": "VERB", "preposition": "into", "last_term": 1, "this_term": 0}]
    assert prog["Amara Okafor"] == [
        {"governor": "discuss", "governor_pos": "VERB", "preposition": "about", "last_term": 2, "this_term": 2}]
    assert prog["Lucía Romero"] == [
        {"governor": "discuss", "governor_pos": "VERB", "preposition": "about", "last_term": 2, "this_term": 0},
        {"governor": "enter", "governor_pos": "VERB", "preposition": "into", "last_term": 2, "this_term": 4}]
    assert progress(ws, CLASS, "autumn", keys) == {}  # no earlier term


def test_trends_writer_progress_follows_matched_names(ws):
    keys = [("enter", "VERB", "into")]
    prog = progress(ws, CLASS, "spring", keys)
    assert "Lucia Romero" not in prog  # spelled without the accent this term
    assert "Ines Duarte" not in prog  # only writes in spring
    matches = writer_matches(ws, CLASS, "spring")
    assert matches == [("Lucia Romero", "Lucía Romero", 100.0)]
    same = {cur: prev for cur, prev, _ in matches}
    prog = progress(ws, CLASS, "spring", keys, same_writer=same)
    assert prog["Lucia Romero"] == [
        {"governor": "enter", "governor_pos": "VERB", "preposition": "into", "last_term": 4, "this_term": 6}]


def test_trends_match_writers_proposes_only_close_names():
    # Scores seen (rapidfuzz 3.14 fuzz.ratio on accent-folded, lower-cased names):
    # "lucia romero"/"lucia romero" 100.0; "ana lima"/"ana silva" 70.6; "ana lima"/"lucia romero" 30.0;
    # "lucia romero"/"ana silva" 19.0. Only the first reaches MATCH_THRESHOLD (90).
    assert MATCH_THRESHOLD == 90.0
    assert match_writers(["Lucía Romero", "Ana Lima"], ["Lucia Romero", "Ana Silva"]) == [
        ("Lucia Romero", "Lucía Romero", 100.0)]
    assert match_writers(["Ana Lima"], ["Ana Silva"], threshold=70.0) == [("Ana Silva", "Ana Lima", 70.6)]
    # exact ids are not proposed; a previous id is used at most once; "John Smith" and
    # "Jon Smithe" both score 94.7 against "Jon Smith", and the tie goes to the first name
    assert match_writers(["Jon Smith", "Ana Lima"], ["Ana Lima", "John Smith", "Jon Smithe"]) == [
        ("John Smith", "Jon Smith", 94.7)]


def test_trends_writer_codes_stable_when_a_term_is_added(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        store_term(w, "winter")
        before = w.writer_codes(CLASS)
        store_term(w, "autumn")  # an earlier term stored late: codes follow term order
        store_term(w, "spring")
        after = w.writer_codes(CLASS)
    assert before == {"Amara Okafor": "S01", "Kenji Sato": "S02", "Lucía Romero": "S03", "Tomasz Wójcik": "S04"}
    assert after == {"Amara Okafor": "S01", "Kenji Sato": "S02", "Lucía Romero": "S03", "Tomasz Wójcik": "S04",
                     "Ines Duarte": "S05", "Lucia Romero": "S06"}


# --------------------------------------------------------------------- CLI

runner = CliRunner()


def cli(*args):
    return runner.invoke(app, [str(a) for a in args])


def one_line_error(result) -> str:
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("Error: ")
    return lines[0]


def test_trends_cli_prints_table_with_statuses(ws_path):
    r = cli("trends", "--class", CLASS, "-w", ws_path)
    assert r.exit_code == 0, r.stderr
    lines = r.stdout.splitlines()
    assert lines[0].split() == ["pattern", "autumn", "winter", "spring", "status"]
    status = {line.split("  ")[0].strip(): line.split()[-1] for line in lines[2:-1]}
    assert status == {"listen + object": "new", "discuss about": "recurring", "depend of": "fading",
                      "married with": "gone", "enter into": "steady"}


def test_trends_cli_match_writers(ws_path):
    r = cli("trends", "--class", CLASS, "-w", ws_path, "--match-writers")
    assert r.exit_code == 0, r.stderr
    assert "  spring: 'Lucia Romero' = 'Lucía Romero' (100, proposed)" in r.stdout.splitlines()
    assert "writer-matches.csv" in r.stdout  # where the teacher confirms or rejects it


def test_trends_cli_dismiss_then_restore(ws_path):
    r = cli("dismiss", "discuss", "about", "--class", CLASS, "--reason", "taught as a set phrase", "-w", ws_path)
    assert r.exit_code == 0, r.stderr
    assert r.stdout.strip() == f"dismissed 'discuss about' for {CLASS}: taught as a set phrase"
    with Workspace(ws_path) as w:
        f = fig(figures_in_context(w, CLASS, "spring"), "discuss", "about")
        assert f["dismissed"] and f["dismissed_reason"] == "taught as a set phrase"
    assert "discuss about [dismissed]" in cli("trends", "--class", CLASS, "-w", ws_path).stdout
    r = cli("restore", "discuss", "about", "--class", CLASS, "-w", ws_path)
    assert r.exit_code == 0, r.stderr
    assert r.stdout.strip() == f"restored 'discuss about' for {CLASS}"
    with Workspace(ws_path) as w:
        assert not fig(figures_in_context(w, CLASS, "spring"), "discuss", "about")["dismissed"]
    r = cli("restore", "discuss", "about", "--class", CLASS, "-w", ws_path)
    assert r.exit_code == 1
    assert one_line_error(r) == f"Error: 'discuss about' was not dismissed for {CLASS}"


def test_trends_cli_dismiss_all_classes(ws_path):
    r = cli("dismiss", "listen", "-", "--all-classes", "--reason", "fine in speech", "-w", ws_path)
    assert r.exit_code == 0, r.stderr
    assert r.stdout.strip() == "dismissed 'listen + object' for all classes: fine in speech"
    with Workspace(ws_path) as w:
        store_term(w, "spring", class_name="morning-a2")
        assert fig(figures_in_context(w, "morning-a2", "spring"), "listen", "-")["dismissed"]


@pytest.mark.parametrize("command", ["dismiss", "restore"])
@pytest.mark.parametrize("scope", [[], ["--class", CLASS, "--all-classes"]], ids=["neither", "both"])
def test_trends_cli_scope_needs_exactly_one_of_class_or_all(ws_path, command, scope):
    extra = ["--reason", "r"] if command == "dismiss" else []
    r = cli(command, "discuss", "about", *scope, *extra, "-w", ws_path)
    assert r.exit_code == 2
    assert one_line_error(r) == "Error: give either --class NAME or --all-classes"
    with Workspace(ws_path) as w:
        assert w.decisions_for(CLASS) == {}




def test_trends_cli_unknown_class_is_one_line(ws_path):
    r = cli("trends", "--class", "morning-a1", "-w", ws_path)
    assert r.exit_code == 1
    line = one_line_error(r)
    assert "no scans of class 'morning-a1'" in line
    assert r.stdout == ""


def test_trends_cli_missing_workspace_is_one_line(tmp_path):
    r = cli("trends", "--class", CLASS, "-w", tmp_path / "nowhere")
    assert r.exit_code == 1
    assert "no workspace at" in one_line_error(r)
    assert not (tmp_path / "nowhere").exists()


def test_trends_cli_link_classes(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        store_term(w, "autumn")
        store_term(w, "winter")
        store_term(w, "spring", class_name="evening-c1")
    before = cli("trends", "--class", "evening-c1", "-w", tmp_path / "ws")
    assert before.stdout.splitlines()[0].split() == ["pattern", "spring", "status"]
    r = cli("link-classes", CLASS, "evening-c1", "-w", tmp_path / "ws")
    assert r.exit_code == 0, r.stderr
    assert r.stdout.strip() == f"linked {CLASS} → evening-c1"
    after = cli("trends", "--class", "evening-c1", "-w", tmp_path / "ws")
    assert after.stdout.splitlines()[0].split() == ["pattern", "autumn", "winter", "spring", "status"]
    assert "discuss about" in after.stdout and after.stdout.count("recurring") == 1
    r = cli("link-classes", CLASS, CLASS, "-w", tmp_path / "ws")
    assert r.exit_code == 1
    assert one_line_error(r) == "Error: a class cannot be linked to itself"

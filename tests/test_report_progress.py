"""Reports across two terms: the handout's "since last term" line and each student's progress.

Writers, sentences and figures are invented for the test; no spaCy needed.
"""

from __future__ import annotations

import hashlib

import pytest
from bs4 import BeautifulSoup

from hingeword.extract import Attachment
from hingeword.history import Workspace
from hingeword.ingest import Essay
from hingeword.record import PatternRecord, Status
from hingeword.report import build_handout_context, build_students_context, load_run_view, write_reports

SENTENCE = "We discussed about the rent."


def essay(writer: str, text: str = SENTENCE) -> Essay:
    return Essay(essay_id=f"{writer}.txt", writer=writer, text=text,
                 sha256=hashlib.sha256(text.encode()).hexdigest(), source=f"{writer}.txt", encoding="utf-8")


def discuss_about(writer: str) -> Attachment:
    return Attachment(essay_id=f"{writer}.txt", writer=writer, governor="discuss", governor_pos="VERB",
                      governor_text="discussed", preposition="about", relation="prep", sentence=SENTENCE,
                      sentence_start=0, gov_start=3, gov_end=12, prep_start=13, prep_end=18)


def figure(count: int, writers: int, flagged: bool) -> PatternRecord:
    return PatternRecord.from_row({
        "governor": "discuss", "governor_pos": "VERB", "preposition": "about", "learner_count": count,
        "learner_writers": writers, "learner_governor_count": count + 2, "flagged": flagged,
        "status": (Status.OVER_USED if flagged else Status.TOO_RARE).value, "suggested_preposition": "-",
        "native_pattern": "discuss something", "suggestion": "discuss + direct object",
        "explanation": "We discuss something: no 'about'."})


def store(ws: Workspace, term: str, start: str, uses: dict[str, int], flagged: bool) -> None:
    essays = [essay(w) for w in uses]
    atts = [discuss_about(w) for w, n in uses.items() for _ in range(n)]
    ws.replace_run(class_name="k", term=term, essays=essays, skipped=[], notes=[], attachments=atts,
                   run_meta={"tool_version": "t", "model": "m", "model_version": "1", "extractor_version": "2",
                             "source": "x", "words": 1000, "settings": {"term_start": start}},
                   records=[figure(sum(uses.values()), sum(1 for n in uses.values() if n), flagged)])


@pytest.fixture
def ws(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        store(w, "autumn", "2025-09-01", {"ana": 2, "ben": 1, "cleo": 1}, flagged=True)
        store(w, "spring", "2026-01-10", {"ana": 0, "ben": 2, "cleo": 1, "dev": 1}, flagged=True)
        yield w


def test_report_progress_handout_since_line(ws):
    data = load_run_view(ws, "k", "spring")
    student = build_handout_context(data, today="2026-01-01")["patterns"][0]
    teacher = build_handout_context(data, today="2026-01-01", teacher=True)["patterns"][0]
    assert student["since"] == "We wrote this last term too."
    assert teacher["since"] == "We wrote this last term too. (40.0 → 40.0 per 10,000 words)"


def test_report_progress_student_sheets(ws):
    data = load_run_view(ws, "k", "spring")
    sheets = {s["label"]: s for s in build_students_context(data, names="real", today="2026-01-01")["students"]}
    assert sheets["ana"]["progress"] == [{"class_pattern": "discuss about something", "last_term": 2, "this_term": 0}]
    assert sheets["ben"]["progress"] == [{"class_pattern": "discuss about something", "last_term": 1, "this_term": 2}]
    assert sheets["dev"]["progress"] == []  # new this term: nothing to compare


def test_report_progress_rendered(ws, tmp_path):
    paths = write_reports(ws, "k", "spring", tmp_path / "out", names="real", today="2026-01-01")
    soup = BeautifulSoup(paths.students.read_text(encoding="utf-8"), "html.parser")
    ana = next(s for s in soup.select("section.sheet") if "Feedback for ana" in s.get_text())
    assert "Since last term (autumn)" in ana.get_text()
    assert "2 times last term, 0 times this term — fewer, well done." in " ".join(ana.get_text().split())
    handout = BeautifulSoup(paths.handout.read_text(encoding="utf-8"), "html.parser").get_text()
    assert "Since last term" in handout and "We wrote this last term too." in handout

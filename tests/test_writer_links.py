"""Writer matches the teacher confirms or rejects in writer-matches.csv (no parser: hand-made runs)."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from conftest import essay
from hingeword.errors import HingewordError
from hingeword.extract import Attachment
from hingeword.history import Workspace
from hingeword.report import make_trends
from hingeword.view import load_run_view
from hingeword.writer_links import path, read


def _store(ws: Workspace, term: str, start: str, writers: list[str]) -> None:
    essays = [essay(f"{w}.txt", w, "We discussed about the plan.") for w in writers]
    atts = [Attachment(e.essay_id, e.writer, "discuss", "VERB", "discussed", "about", "prep", e.text, 0, 3, 12, 13, 18)
            for e in essays]
    ws.replace_run(class_name="b2", term=term, run_meta={
        "tool_version": "t", "model": "m", "model_version": "1", "extractor_version": "5", "source": "x",
        "words": 20, "settings": {"term_start": start}, "reference": {}},
        essays=essays, skipped=[], notes=[], attachments=atts, records=[])


@pytest.fixture
def two_terms(tmp_path) -> Path:
    root = tmp_path / "ws"
    with Workspace(root) as ws:
        _store(ws, "2025-autumn", "2025-09-01", ["Lucía Romero", "Ben Okafor", "Ana Lima"])
        _store(ws, "2026-spring", "2026-03-01", ["Lucia Romero", "Ben Okafor", "Anna Lima"])
    return root


def test_writer_links_proposed_then_confirmed_keeps_the_code(two_terms):
    out = make_trends(two_terms, "b2", match=True)
    assert any("'Lucia Romero' = 'Lucía Romero'" in line and "proposed" in line for line in out.lines)
    assert any("write yes or no in the 'decision' column" in line for line in out.lines)
    rows = list(csv.DictReader(path(two_terms).read_text(encoding="utf-8").splitlines()))
    assert {(r["writer"], r["previous_writer"], r["decision"]) for r in rows} == {
        ("Lucia Romero", "Lucía Romero", ""), ("Anna Lima", "Ana Lima", "")}
    with Workspace(two_terms, read_only=True) as ws:
        before = dict(load_run_view(ws, "b2", "2026-spring").codes)
    assert before["Lucia Romero"] != before["Lucía Romero"]  # a proposal alone changes no code
    # the teacher confirms Lucía and rejects Ana/Anna (two students)
    text = path(two_terms).read_text(encoding="utf-8")
    lines = [line + ("yes" if line.startswith("b2,2026-spring,Lucia") else "no" if ",Anna Lima," in line else "")
             for line in text.splitlines()]
    path(two_terms).write_text("\n".join(lines) + "\n", encoding="utf-8")
    with Workspace(two_terms, read_only=True) as ws:
        view = load_run_view(ws, "b2", "2026-spring")
    codes = dict(view.codes)
    assert codes["Lucia Romero"] == codes["Lucía Romero"] == "S03"  # keeps last term's code
    assert codes["Anna Lima"] != codes["Ana Lima"]
    again = make_trends(two_terms, "b2", match=True)
    assert any("'Lucia Romero' = 'Lucía Romero'" in line and "confirmed" in line for line in again.lines)
    assert not any("'Anna Lima'" in line for line in again.lines)  # rejected: never proposed again
    assert {(r.writer, r.decision) for r in read(two_terms)} == {("Lucia Romero", "yes"), ("Anna Lima", "no")}


def test_writer_links_a_decision_that_is_not_yes_or_no_is_one_line(two_terms):
    path(two_terms).write_text("class,term,writer,previous_writer,similarity,decision\n"
                               "b2,2026-spring,Lucia Romero,Lucía Romero,96,maybe\n", encoding="utf-8")
    with pytest.raises(HingewordError, match="line 2: decision 'maybe' is not yes or no"):
        read(two_terms)

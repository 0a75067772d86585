"""Erasing a class or a term (hingeword.forget, Workspace.forget, ``hingeword forget``).
Runs are stored by hand (``conftest.store_hand_run``); no parser needed."""

from __future__ import annotations

import io

import pytest
from typer.testing import CliRunner

from conftest import HAND_TEXTS, db_counts, db_integrity, store_hand_run
from hingeword.cli import app
from hingeword.errors import WorkspaceError
from hingeword.forget import forget
from hingeword.history import Workspace
from hingeword.web import store

runner = CliRunner()


def fake_cache(ws_path, essays_sha) -> list:
    """A parse-cache file for each essay text, as ParseCache lays them out."""
    paths = []
    for sha in essays_sha:
        p = ws_path / "cache" / "en_core_web_sm-3.8.0" / sha[:2] / f"{sha}.spacy"
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(b"parsed")
        paths.append(p)
    return paths


def shas(ws_path, class_name, term):
    with Workspace(ws_path) as ws:
        return [e.sha256 for e in ws.essays(ws.run(class_name, term).id)]


def test_history_forget_one_term_keeps_the_others(tmp_path):
    ws_path = tmp_path / "ws"
    store_hand_run(ws_path, term="t1")
    store_hand_run(ws_path, term="t2", term_start="2026-04-01")
    with Workspace(ws_path) as ws:
        ws.dismiss("discuss", "about", class_name="morning-a2", reason="fine")
        gone = ws.forget("morning-a2", "t1")
        assert [r.term for r in gone.runs] == ["t1"] and gone.essays == 3
        assert gone.unused_texts == frozenset()  # t2 holds the same texts
        assert [r.term for r in ws.runs("morning-a2")] == ["t2"]
        assert ws.decisions_for("morning-a2")  # decisions stay when only a term goes
    assert db_counts(ws_path)["essays"] == 3 and db_integrity(ws_path) == "ok"


def test_history_forget_class_removes_decisions_links_and_text(tmp_path):
    ws_path = tmp_path / "ws"
    store_hand_run(ws_path)
    store_hand_run(ws_path, class_name="evening-b1")
    with Workspace(ws_path) as ws:
        ws.dismiss("discuss", "about", class_name="morning-a2", reason="fine")
        ws.dismiss("discuss", "about", class_name=None, reason="all classes")
        ws.link_classes("morning-a2", "morning-b1")
        gone = ws.forget("morning-a2")
        assert (gone.essays, gone.decisions, gone.links) == (3, 1, 1)
        assert ws.decisions_for("evening-b1")  # the all-class decision stays
        assert ws.forget("nobody").runs == ()
    counts = db_counts(ws_path)
    assert counts["runs"] == 1 and counts["class_links"] == 0
    assert db_integrity(ws_path) == "ok"


def test_forget_term_removes_unused_cached_parses_uploads_and_reports(tmp_path):
    ws_path = tmp_path / "ws"
    store_hand_run(ws_path, term="t1")
    cached = fake_cache(ws_path, shas(ws_path, "morning-a2", "t1"))
    folder = store.save_term(ws_path, "morning-a2", "t1", "2026-01-10")
    store.save_uploads(folder, [store.Upload("zofia.txt", io.BytesIO(HAND_TEXTS["zofia.txt"][1].encode()))])
    report = ws_path / "reports" / "morning-a2" / "t1" / "handout.html"
    report.parent.mkdir(parents=True)
    report.write_text("handout")
    res = forget(ws_path, "morning-a2", "t1")
    assert (res.runs, res.essays, res.cached_parses, res.uploaded_files, res.report_files) == (1, 3, 3, 1, 1)
    assert not any(p.exists() for p in cached) and not report.exists()
    assert not store.exists(ws_path, "morning-a2")
    assert res.lines()[0] == ("Erased morning-a2 / t1: 1 stored scan with 3 essays, 3 cached parses, "
                              "1 uploaded file, 1 report file.")
    data = (ws_path / "hingeword.sqlite").read_bytes()
    assert not any(text.encode() in data for _, text in HAND_TEXTS.values())


def test_forget_keeps_parses_another_run_still_uses(tmp_path):
    ws_path = tmp_path / "ws"
    store_hand_run(ws_path, class_name="morning-a2")
    store_hand_run(ws_path, class_name="evening-b1")  # the same three texts
    cached = fake_cache(ws_path, shas(ws_path, "morning-a2", "t1"))
    res = forget(ws_path, "morning-a2")
    assert res.cached_parses == 0 and all(p.exists() for p in cached)


def test_forget_nothing_stored_is_an_error(tmp_path):
    store_hand_run(tmp_path / "ws")
    with pytest.raises(WorkspaceError, match="^nothing is stored for class 'nope', term 't1' in "):
        forget(tmp_path / "ws", "nope", "t1")
    with pytest.raises(WorkspaceError, match="^no workspace at "):
        forget(tmp_path / "none", "x")


def test_cli_forget_asks_and_erases(hand_run, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(app, ["forget", "--class", "morning-a2", "-w", "ws"], input="n\n")
    assert result.exit_code == 1 and "Error: nothing was erased" in result.stderr
    assert db_counts(hand_run)["runs"] == 1
    result = runner.invoke(app, ["forget", "--class", "morning-a2", "--term", "t1", "-w", "ws", "--yes"])
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith("Erased morning-a2 / t1: 1 stored scan with 3 essays")
    assert db_counts(hand_run)["runs"] == 0
    result = runner.invoke(app, ["forget", "--class", "morning-a2", "-w", "ws", "--yes"])
    assert result.exit_code == 1 and result.stderr == "Error: nothing is stored for class 'morning-a2' in ws\n"

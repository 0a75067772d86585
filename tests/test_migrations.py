"""The workspace database over time: schema migrations, refusals, and crash safety.

A workspace of the first schema is built by hand with ``sqlite3`` (only
``MIGRATIONS[:1]`` applied, ``PRAGMA user_version = 1``) and a row put in every
table; ``Workspace`` must upgrade it without losing a row and keep a backup.

The crash tests (``slow``: they load the spaCy pipeline) kill a second scan of a
class and term with SIGKILL at three points — half-way through extraction, just
before the write, and inside the open ``BEGIN IMMEDIATE`` transaction — and check
that the database is sound and the first scan's run is intact.

Every essay, sentence and name below is invented for these tests.
"""

from __future__ import annotations

import gc
import hashlib
import json
import logging
import os
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import db_counts, db_integrity
from hingeword import history
from hingeword.errors import WorkspaceError
from hingeword.extract import Attachment
from hingeword.history import DB_NAME, MIGRATIONS, Workspace, schema_version
from hingeword.score import Thresholds

V1_TABLES = ["attachments", "essays", "notes", "pattern_stats", "runs", "skipped"]


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def raw_counts(db: Path) -> dict[str, int]:
    con = sqlite3.connect(db)
    try:
        tables = [r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
        return {t: con.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0] for t in tables}
    finally:
        con.close()


def raw_version(db: Path) -> int:
    con = sqlite3.connect(db)
    try:
        return con.execute("PRAGMA user_version").fetchone()[0]
    finally:
        con.close()


def columns(db: Path, table: str) -> list[str]:
    con = sqlite3.connect(db)
    try:
        return [r[1] for r in con.execute(f"PRAGMA table_info({table})")]
    finally:
        con.close()


ATT_V1 = dict(essay_id="olga.txt", writer="Olga Petrenko", governor="discuss", governor_pos="VERB",
              governor_text="discussed", preposition="about", relation="prep",
              sentence="Yesterday we discussed about the café menu.", sentence_start=0, gov_start=13, gov_end=22,
              prep_start=23, prep_end=28, original_governor="")


def make_v1(root: Path) -> Path:
    """A workspace folder whose database has only the first migration, one or more rows per table."""
    root.mkdir(parents=True)
    db = root / DB_NAME
    con = sqlite3.connect(db)
    con.executescript(MIGRATIONS[0][1])
    run_cols = ("id, class, term, created, tool_version, model, model_version, extractor_version, source, "
                "essays_read, essays_skipped, words, settings, reference")
    con.execute(f"INSERT INTO runs ({run_cols}) VALUES (1, 'evening-b2', 'autumn', '2025-09-20T08:00:00+00:00', "
                "'0.0.9', 'en_core_web_sm', '3.8.0', '1', 'essays/autumn', 2, 1, 3000, "
                "'{\"min_count\": 3, \"term_start\": \"2025-09-15\"}', '{\"name\": \"brown\"}')")
    # an older scan that recorded no term_start: the upgrade takes the creation date
    con.execute(f"INSERT INTO runs ({run_cols}) VALUES (2, 'evening-b2', 'winter', '2026-01-20T08:00:00+00:00', "
                "'0.0.9', 'en_core_web_sm', '3.8.0', '1', 'essays/winter', 1, 0, 4000, '{}', '{}')")
    con.execute("INSERT INTO skipped VALUES (1, 'notes.pdf', 'not an essay file (.pdf)')")
    con.execute("INSERT INTO notes VALUES (1, 'duplicate', 'identical essays (all kept): a.txt, b.txt')")
    essays = [
        (1, "olga.txt", "Olga Petrenko", "Yesterday we discussed about the café menu."),
        (1, "rui.txt", "Rui Matos", "It depends of the bus timetable."),
        (2, "olga.txt", "Olga Petrenko", "We discussed the menu again."),
    ]
    for run_id, eid, writer, text in essays:
        con.execute("INSERT INTO essays VALUES (?, ?, ?, ?, ?, 'utf-8', 'uk', 'B2', 'opinion', '{}', ?, ?)",
                    (run_id, eid, writer, hashlib.sha256(text.encode()).hexdigest(), eid, len(text.split()), text))
    con.execute(f"INSERT INTO attachments VALUES (1, {', '.join('?' * len(ATT_V1))})", list(ATT_V1.values()))
    con.execute("INSERT INTO attachments VALUES (1, 'rui.txt', 'Rui Matos', 'depend', 'VERB', 'depends', 'of', "
                "'prep', 'It depends of the bus timetable.', 0, 3, 10, 11, 13, '')")
    con.execute("INSERT INTO attachments VALUES (2, 'olga.txt', 'Olga Petrenko', 'discuss', 'VERB', 'discussed', "
                "'-', 'dobj', 'We discussed the menu again.', 0, 3, 12, 13, 21, '')")
    for run_id, gov, prep, n, flagged in [(1, "discuss", "about", 1, True), (1, "depend", "of", 1, True),
                                          (2, "discuss", "-", 1, False)]:
        figures = {"governor": gov, "governor_pos": "VERB", "preposition": prep, "learner_count": n,
                   "learner_writers": n, "flagged": flagged, "status": "over-used" if flagged else "as native"}
        con.execute("INSERT INTO pattern_stats VALUES (?, ?, 'VERB', ?, ?)", (run_id, gov, prep, json.dumps(figures)))
    con.execute("PRAGMA user_version = 1")
    con.commit()
    con.close()
    return root


# ----------------------------------------------------------------- upgrading


def test_migrations_v1_fixture_has_rows_in_every_table(tmp_path):
    db = make_v1(tmp_path / "ws") / DB_NAME
    counts = raw_counts(db)
    assert sorted(counts) == V1_TABLES
    assert all(n > 0 for n in counts.values()), counts
    assert raw_version(db) == 1


def test_migrations_upgrade_from_v1_keeps_every_row(tmp_path, caplog):
    root = make_v1(tmp_path / "ws")
    db = root / DB_NAME
    before = raw_counts(db)
    with caplog.at_level(logging.DEBUG, logger="hingeword"):
        with Workspace(root) as ws:
            assert ws.version() == schema_version() == len(MIGRATIONS)
            after = db_counts(ws.root)
            assert db_integrity(ws.root) == "ok"
    assert {t: after[t] for t in V1_TABLES} == before
    assert {t: after[t] for t in ("class_links", "decisions", "decision_log")} == {
        "class_links": 0, "decisions": 0, "decision_log": 0}
    assert [r.getMessage() for r in caplog.records if "applied migration" in r.getMessage()] == [
        "applied migration 0002_terms_links_decisions", "applied migration 0003_object_class"]
    assert any("backup written" in r.getMessage() for r in caplog.records)


def test_migrations_upgrade_backfills_term_start_and_old_rows_read_back(tmp_path):
    root = make_v1(tmp_path / "ws")
    with Workspace(root) as ws:
        runs = {r.term: r for r in ws.runs("evening-b2")}
        assert runs["autumn"].term_start == "2025-09-15"  # from the run's settings
        assert runs["winter"].term_start == "2026-01-20"  # from its creation date
        assert [r.term for r in ws.runs_in_order("evening-b2")] == ["autumn", "winter"]
        assert ws.attachments(1)[0] == Attachment(**ATT_V1)
        assert [e.text for e in ws.essays(1)] == ["Yesterday we discussed about the café menu.",
                                                    "It depends of the bus timetable."]
        assert [s.reason for s in ws.skipped(1)] == ["not an essay file (.pdf)"]
        # the upgraded history works with the features schema 2 added
        ws.dismiss("depend", "of", class_name="evening-b2", reason="checked by hand", on="2026-02-01")
        from hingeword.record import Since
        from hingeword.view import load_run_view

        recs = {r.governor: r for r in load_run_view(ws, "evening-b2", "winter").records}
        assert recs["discuss"].comparison.since is Since.NEW
        from hingeword.trends import compute_trends

        tr = compute_trends(ws, "evening-b2")
        assert [(p.label, p.status, p.dismissed) for p in tr.patterns] == [
            ("depend of", "gone", True), ("discuss about", "gone", False)]


def test_migrations_upgrade_writes_backup_with_old_rows(tmp_path):
    root = make_v1(tmp_path / "ws")
    before = raw_counts(root / DB_NAME)
    Workspace(root).close()
    backup = root / f"{DB_NAME}.v1.bak"
    assert backup.is_file()
    assert sorted(p.name for p in root.iterdir() if p.name.endswith(".bak")) == [backup.name]
    # open a copy, so that reading the backup cannot change it
    copy = tmp_path / "copy.sqlite"
    shutil.copy2(backup, copy)
    assert raw_version(copy) == 1
    assert raw_counts(copy) == before
    assert "term_start" not in columns(copy, "runs")


def test_migrations_upgrade_is_idempotent(tmp_path, caplog):
    root = make_v1(tmp_path / "ws")
    Workspace(root).close()
    backup = root / f"{DB_NAME}.v1.bak"
    stamp = (sha(backup), backup.stat().st_mtime_ns)
    with Workspace(root) as ws:
        counts = db_counts(ws.root)
    caplog.clear()
    with caplog.at_level(logging.DEBUG, logger="hingeword"):
        with Workspace(root) as ws:  # opening again applies nothing and backs up nothing
            assert ws.version() == len(MIGRATIONS)
            assert db_counts(ws.root) == counts
    assert not [r for r in caplog.records if "migration" in r.getMessage() or "backup" in r.getMessage()]
    assert (sha(backup), backup.stat().st_mtime_ns) == stamp
    assert columns(root / DB_NAME, "runs").count("term_start") == 1


def test_migrations_new_workspace_gets_latest_schema_without_backup(tmp_path):
    with Workspace(tmp_path / "ws") as ws:
        assert ws.version() == len(MIGRATIONS)
        assert set(db_counts(ws.root)) == set(V1_TABLES) | {"class_links", "decisions", "decision_log"}
    assert not list((tmp_path / "ws").glob("*.bak"))


def test_migrations_open_without_create_needs_an_existing_database(tmp_path):
    with pytest.raises(WorkspaceError, match="no workspace at"):
        Workspace(tmp_path / "none", create=False)
    (tmp_path / "empty").mkdir()
    with pytest.raises(WorkspaceError, match="no hingeword database in"):
        Workspace(tmp_path / "empty", create=False)
    assert not (tmp_path / "none").exists() and not list((tmp_path / "empty").iterdir())


def test_migrations_failed_migration_rolls_back_all_steps(tmp_path, monkeypatch):
    root = make_v1(tmp_path / "ws")
    before = raw_counts(root / DB_NAME)
    broken = MIGRATIONS + [("0099_broken", "CREATE TABLE extra (x TEXT); INSERT INTO no_such_table VALUES (1)")]
    monkeypatch.setattr(history, "MIGRATIONS", broken)
    with pytest.raises(sqlite3.OperationalError, match="no_such_table"):
        Workspace(root)
    gc.collect()  # the refused Workspace's connection
    monkeypatch.undo()
    # none of 0002, 0003 and the broken one was kept: still a version-1 database with its rows
    assert raw_version(root / DB_NAME) == 1
    assert raw_counts(root / DB_NAME) == before
    assert "term_start" not in columns(root / DB_NAME, "runs")
    with Workspace(root) as ws:  # and the real upgrade still works afterwards
        assert ws.version() == len(MIGRATIONS) and db_integrity(ws.root) == "ok"


# ------------------------------------------------------------ newer schemas


def newer_from_workspace(root: Path, version: int) -> Path:
    """A database written by a (hypothetical) later hingeword: ours, with a higher user_version."""
    with Workspace(root) as ws:
        ws.dismiss("discuss", "about", class_name=None, reason="kept", on="2026-01-01")
    con = sqlite3.connect(root / DB_NAME)
    con.execute(f"PRAGMA user_version = {version}")
    con.close()
    return root / DB_NAME


def test_migrations_newer_schema_is_refused_and_file_untouched(tmp_path):
    db = newer_from_workspace(tmp_path / "ws", len(MIGRATIONS) + 1)
    digest = sha(db)
    with pytest.raises(WorkspaceError) as exc:
        Workspace(tmp_path / "ws")
    message = str(exc.value)
    del exc  # its traceback holds the refused Workspace and its open connection
    gc.collect()
    assert message == (f"workspace {tmp_path / 'ws'} has schema version {len(MIGRATIONS) + 1}, newer than "
                              f"this hingeword understands ({len(MIGRATIONS)}); upgrade hingeword")
    assert sha(db) == digest
    assert raw_version(db) == len(MIGRATIONS) + 1
    assert sorted(p.name for p in (tmp_path / "ws").iterdir()) == [DB_NAME]


def test_migrations_newer_rollback_journal_schema_left_byte_identical(tmp_path):
    root = tmp_path / "ws"
    root.mkdir()
    db = root / DB_NAME
    con = sqlite3.connect(db)
    for _, sql in MIGRATIONS:
        con.executescript(sql)
    con.execute(f"PRAGMA user_version = {len(MIGRATIONS) + 5}")
    con.commit()
    con.close()
    digest = sha(db)
    with pytest.raises(WorkspaceError, match="newer than this hingeword understands"):
        Workspace(root)
    gc.collect()
    assert sha(db) == digest


# ------------------------------------------------------------ crash safety

#: Invented native sentences for the tiny reference.
NATIVE = {
    "a.txt": "The council discussed the plan on Monday. We discussed the costs with the builders. "
             "Prices depend on the season. Our answer depends on the weather. She listened to the radio.\n\n"
             "They talked about the new park. He is interested in old maps. We listened to the band.",
    "b.txt": "The students discussed the poem in class. Much depends on the teacher. "
             "I talked about my trip. They are interested in science. She listened to the news.",
}

#: Invented learner essays; the second scan adds two more.
FIRST = {
    "ayse.txt": "Last week we discussed about the school rules. I listen music every evening.",
    "bruno.txt": "Our plans depend of the weather. We discussed about the holidays with our teacher.",
    "chidi.txt": "In class we discussed about the new park. The price depends of the season.",
}
MORE = {
    "dana.txt": "My brother is interested for old maps. We discussed about the film after dinner.",
    "emil.txt": "I listen music on the bus. Everything depends of money in my town.",
}

CLASS, TERM = "evening-b2", "spring"

CHILD = r"""
import json, sys, time
from pathlib import Path

args = json.loads(sys.argv[1])
flag = Path(args["flag"])

import hingeword.pipeline as pipeline
from hingeword.history import Workspace
from hingeword.score import Thresholds


def hold(what):
    flag.write_text(what)
    time.sleep(600)


if args["mode"] == "extracting":
    real_extract = pipeline.extract_doc
    calls = []

    def slow_extract(doc, *a, **kw):
        calls.append(1)
        if len(calls) == 1:  # half-way: the three essays of the first scan come from the cache, two are new
            hold("extracting")
        return real_extract(doc, *a, **kw)

    pipeline.extract_doc = slow_extract
elif args["mode"] == "before_write":
    def slow_replace(self, **kw):
        hold("before_write")

    Workspace.replace_run = slow_replace
elif args["mode"] == "in_transaction":
    real_insert = Workspace._insert_records

    def slow_insert(self, run_id, records):
        real_insert(self, run_id, records)  # old run deleted, new rows written, not committed
        hold("in_transaction")

    Workspace._insert_records = slow_insert

pipeline.scan(args["folder"], class_name=args["class"], term=args["term"], workspace=args["workspace"],
              references=[args["reference"]], thresholds=Thresholds(min_reference=2),
              term_start="2026-04-13", processes=1)
flag.write_text("finished")
"""


def write_folder(folder: Path, texts: dict[str, str]) -> Path:
    folder.mkdir(parents=True)
    for name, text in texts.items():
        (folder / name).write_text(text + "\n", encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def first_scan(tmp_path_factory):
    """A tiny reference and a workspace holding one scan of :data:`FIRST`."""
    from hingeword import reference
    from hingeword.pipeline import scan

    base = tmp_path_factory.mktemp("crash")
    tiny_ref = reference.build(write_folder(base / "native", NATIVE), base / "tiny", name="tiny",
                               build_date="2026-01-05")
    ws = base / "ws"
    result = scan(write_folder(base / "first", FIRST), class_name=CLASS, term=TERM, workspace=ws,
                  references=[str(tiny_ref)], thresholds=Thresholds(min_reference=2),
                  term_start="2026-04-13", processes=1)
    second = write_folder(base / "second", {**FIRST, **MORE})
    return {"ref": tiny_ref, "ws": ws, "result": result, "second": second}


def snapshot(root: Path) -> dict:
    with Workspace(root, create=False) as ws:
        run = ws.run(CLASS, TERM)
        return {"run": run, "essays": ws.essays(run.id),
                "attachments": ws.attachments(run.id),
                "figures": [json.dumps(r.to_row(), sort_keys=True) for r in ws.records(run.id)],
                "counts": db_counts(ws.root), "integrity": db_integrity(ws.root)}


def db_is_write_locked(db: Path) -> bool:
    con = sqlite3.connect(db, timeout=0, isolation_level=None)
    try:
        con.execute("BEGIN IMMEDIATE")
        con.execute("ROLLBACK")
        return False
    except sqlite3.OperationalError as exc:
        assert "locked" in str(exc)
        return True
    finally:
        con.close()


@pytest.mark.slow
@pytest.mark.parametrize("mode", ["extracting", "before_write", "in_transaction"])
def test_migrations_scan_killed_half_way_leaves_previous_run_intact(first_scan, tmp_path, mode):
    ws = tmp_path / "ws"
    shutil.copytree(first_scan["ws"], ws)
    before = snapshot(ws)
    assert before["integrity"] == "ok"
    assert len(before["essays"]) == 3 and len(before["attachments"]) == first_scan["result"].attachments > 0
    flag = tmp_path / "flag"
    args = {"flag": str(flag), "mode": mode, "folder": str(first_scan["second"]), "class": CLASS, "term": TERM,
            "workspace": str(ws), "reference": str(first_scan["ref"])}
    with open(tmp_path / "child.err", "wb") as child_err:
        proc = subprocess.Popen([sys.executable, "-c", CHILD, json.dumps(args)], stdout=subprocess.DEVNULL,
                                stderr=child_err)
    try:
        deadline = time.monotonic() + 180
        while not flag.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.05)
        time.sleep(0.1)  # let the flag's text land
        assert proc.poll() is None, (tmp_path / "child.err").read_text()
        assert flag.read_text() == mode
        locked = db_is_write_locked(ws / DB_NAME)
        assert locked == (mode == "in_transaction")  # the kill comes inside the open write
    finally:
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    raw = sqlite3.connect(ws / DB_NAME)
    try:
        assert raw.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        raw.close()
    assert snapshot(ws) == before
    assert not db_is_write_locked(ws / DB_NAME)

    # the next scan of the same class and term goes through, reusing the parse cache
    from hingeword.pipeline import scan

    again = scan(first_scan["second"], class_name=CLASS, term=TERM, workspace=ws,
                 references=[str(first_scan["ref"])], thresholds=Thresholds(min_reference=2),
                 term_start="2026-04-13", processes=1)
    assert again.parse_stats.from_cache >= 3
    after = snapshot(ws)
    assert len(after["essays"]) == 5 and after["integrity"] == "ok"
    assert after["counts"]["runs"] == 1

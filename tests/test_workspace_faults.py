"""The workspace under faults (#15, defects 8, 9 and 10): damaged, empty and foreign
database files, read-only workspaces, a full disk, and several processes at once.

No spaCy: runs are stored by hand (``conftest.store_hand_run``). A read-only workspace
is made with permissions (``chmod``); as root, whom permissions do not stop, the
commands run in a child process without the capability to override them
(``setpriv``), and the case is skipped where neither is possible. A full disk is
simulated with SQLite's ``max_page_count`` (SQLite then answers "database or disk is
full", as on a real full disk) or a patched write; ``scripts/fault_cases.py`` repeats
these cases on real file systems.
"""

from __future__ import annotations

import json
import logging
import multiprocessing
import os
import shutil
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from conftest import db_counts, db_integrity, essay, store_hand_run
from hingeword import history
from hingeword.cli import app
from hingeword.errors import HingewordError, WorkspaceError
from hingeword.history import BACKUP_NAME, DB_NAME, Workspace

runner = CliRunner()
CLASS, TERM = "morning-a2", "t1"

READERS = {
    "report": ["report", "--class", CLASS, "--term", TERM, "--out", "{out}"],
    "export": ["export", "--class", CLASS, "--term", TERM, "-o", "{out}/patterns.csv"],
    "trends": ["trends", "--class", CLASS],
    "concordance": ["concordance", "discuss", "about", "--class", CLASS, "--term", TERM],
}
META = {"tool_version": "test", "model": "m", "model_version": "1", "extractor_version": "1", "source": "here",
        "words": 1, "settings": {}}
WRITER = ["dismiss", "discuss", "about", "--class", CLASS, "--reason", "fine here"]


def _args(command: list[str], workspace: Path, out: Path) -> list[str]:
    return [a.replace("{out}", str(out)) for a in command] + ["-w", str(workspace)]


def _one_error_line(result) -> str:
    assert result.exit_code == 1, result.output
    assert "Traceback" not in result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.output
    return lines[0]


# --------------------------------------------------------- damaged databases


def _damage(db: Path, how: str) -> None:
    if how == "empty":
        db.write_bytes(b"")
    elif how == "garbage":
        db.write_bytes(bytes(range(256)) * 40)
    elif how == "truncated":
        data = db.read_bytes()
        db.write_bytes(data[: len(data) // 2])
    elif how == "foreign":  # another program's SQLite database
        db.unlink()
        con = sqlite3.connect(db)
        con.execute("CREATE TABLE songs (title TEXT)")
        con.commit()
        con.close()


@pytest.mark.parametrize("how", ["empty", "garbage", "truncated", "foreign"])
@pytest.mark.parametrize("command", [*READERS, "dismiss", "reopen"])
def test_history_damaged_database_is_one_line_and_left_untouched(tmp_path, how, command):
    workspace = tmp_path / "ws"
    store_hand_run(workspace)
    (workspace / BACKUP_NAME).unlink()  # the message then says that there is no backup
    db = workspace / DB_NAME
    _damage(db, how)
    before = db.read_bytes()
    if command == "reopen":  # what a scan does first: open the workspace for writing
        with pytest.raises(WorkspaceError) as exc:
            Workspace(workspace)
        line = "Error: " + str(exc.value)
    else:
        line = _one_error_line(runner.invoke(app, _args(READERS.get(command, WRITER), workspace, tmp_path / "out")))
    assert f"workspace database {db} is damaged or not a hingeword database" in line
    assert "left untouched" in line and "no backup found: move the file away" in line
    assert db.read_bytes() == before  # never written to, never replaced
    # nothing else written: at most SQLite's empty companion files of a read-only connection
    assert {p.name for p in workspace.iterdir()} <= {DB_NAME, DB_NAME + "-wal", DB_NAME + "-shm"}
    assert not (workspace / (DB_NAME + "-wal")).exists() or not (workspace / (DB_NAME + "-wal")).stat().st_size


def test_history_damaged_database_message_names_the_backup_that_restores_it(hand_run, tmp_path):
    db, backup = hand_run / DB_NAME, hand_run / BACKUP_NAME
    assert backup.is_file()  # written after the run was stored
    _damage(db, "garbage")
    line = _one_error_line(runner.invoke(app, _args(READERS["report"], hand_run, tmp_path / "out")))
    assert f"restore the backup {backup}" in line
    shutil.copyfile(backup, db)  # what the message tells the teacher to do
    with Workspace(hand_run, read_only=True) as ws:
        assert len(ws.essays(ws.run(CLASS, TERM).id)) == 3


def test_history_new_workspace_is_created_whole(tmp_path):
    """A new database appears complete under its real name; no temporary file is left."""
    with Workspace(tmp_path / "ws") as ws:
        assert ws.version() == history.schema_version()
    assert sorted(p.name for p in (tmp_path / "ws").iterdir()) == [DB_NAME]
    assert db_integrity(tmp_path / "ws") == "ok"


# ------------------------------------------------------- read-only workspaces


def _cli_as_unprivileged(args_list: list[list[str]], cwd: Path) -> list[dict]:
    """Run CLI commands in a child process that folder and file permissions apply to.

    As root, ``setpriv`` removes the capabilities that override permissions; skipped
    where that cannot be done.
    """
    code = ("import json, sys\nfrom typer.testing import CliRunner\nfrom hingeword.cli import app\n"
            "out = []\nfor args in json.loads(sys.argv[1]):\n"
            "    r = CliRunner().invoke(app, args)\n"
            "    out.append({'code': r.exit_code, 'output': r.output})\n"
            "print(json.dumps(out))\n")
    cmd = [sys.executable, "-c", code, json.dumps(args_list)]
    if os.geteuid() == 0:
        setpriv = shutil.which("setpriv")
        if setpriv is None:
            pytest.skip("running as root without setpriv: a read-only folder cannot be simulated")
        cmd = [setpriv, "--bounding-set", "-dac_override,-dac_read_search", "--", *cmd]
    env = {**os.environ, "MPLCONFIGDIR": str(cwd)}
    proc = subprocess.run(cmd, cwd=cwd, capture_output=True, text=True, env=env, timeout=300)
    if proc.returncode != 0 and "Operation not permitted" in proc.stderr:
        pytest.skip(f"cannot drop privileges here: {proc.stderr.strip()[:200]}")
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _make_read_only(folder: Path) -> None:
    for p in folder.iterdir():
        p.chmod(0o444)
    folder.chmod(0o555)


@pytest.fixture
def read_only_workspace(hand_run, tmp_path):
    _make_read_only(hand_run)
    yield hand_run
    hand_run.chmod(0o755)
    for p in hand_run.iterdir():
        p.chmod(0o644)


def test_history_read_only_workspace_can_be_read_but_not_written(read_only_workspace, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    out.chmod(0o777)
    before = (read_only_workspace / DB_NAME).read_bytes()
    results = _cli_as_unprivileged([_args(c, read_only_workspace, out) for c in READERS.values()]
                                   + [_args(WRITER, read_only_workspace, out)], tmp_path)
    for name, res in zip(READERS, results):
        assert res["code"] == 0, (name, res["output"])
        assert "Traceback" not in res["output"]
    assert "discussed [about]" in results[3]["output"].replace("discussed about", "discussed [about]")
    writer = results[-1]
    assert writer["code"] == 1 and writer["output"].count("\n") == 1, writer["output"]
    assert writer["output"].startswith(f"Error: workspace {read_only_workspace / DB_NAME} is ")
    assert "read-only" in writer["output"] and "nothing was changed" in writer["output"]
    assert (read_only_workspace / DB_NAME).read_bytes() == before


def test_history_old_schema_on_a_read_only_workspace_is_a_clear_message(tmp_path):
    from test_migrations import make_v1

    workspace = make_v1(tmp_path / "old")
    _make_read_only(workspace)
    try:
        [res] = _cli_as_unprivileged([["trends", "--class", "evening-b2", "-w", str(workspace)]], tmp_path)
    finally:
        workspace.chmod(0o755)
    assert res["code"] == 1 and res["output"].count("\n") == 1, res["output"]
    assert "was written by an older hingeword (schema 1, this one reads 3) and cannot be upgraded" in res["output"]


def test_history_readers_never_write_to_the_database(hand_run, tmp_path, monkeypatch):
    """Report, export, trends and concordance open the database with SQLite's ``mode=ro``."""
    opened = []
    real = sqlite3.connect

    def spy(target, *args, **kwargs):
        opened.append(str(target))
        return real(target, *args, **kwargs)

    monkeypatch.setattr(history.sqlite3, "connect", spy)
    for name, command in READERS.items():
        opened.clear()
        result = runner.invoke(app, _args(command, hand_run, tmp_path / "out"))
        assert result.exit_code == 0, (name, result.output)
        assert opened and all(t.startswith("file:") and "mode=ro" in t for t in opened), (name, opened)


# ------------------------------------------------------------------ full disk


def _fill_up(ws: Workspace) -> None:
    """Let the database grow by no more than one page: SQLite then reports a full disk."""
    pages = ws.conn.execute("PRAGMA page_count").fetchone()[0]
    ws.conn.execute(f"PRAGMA max_page_count = {pages + 1}")


def test_history_full_disk_while_storing_a_run_keeps_the_previous_run(hand_run):
    with Workspace(hand_run) as ws:
        _fill_up(ws)
        big = [essay(f"e{i}.txt", f"w{i}", "We discussed about the long trip. " * 400) for i in range(20)]
        with pytest.raises(WorkspaceError, match=r"cannot write .*hingeword.sqlite: the disk is full; nothing was "
                                                 r"changed"):
            ws.replace_run(class_name=CLASS, term=TERM, run_meta=META, essays=big, skipped=[], notes=[],
                           attachments=[])
    with Workspace(hand_run, read_only=True) as ws:
        assert len(ws.essays(ws.run(CLASS, TERM).id)) == 3
    assert db_integrity(hand_run) == "ok"


def test_history_backup_on_a_full_disk_only_warns(hand_run, monkeypatch, caplog):
    def no_space(*args, **kwargs):
        raise OSError(28, "No space left on device")

    with Workspace(hand_run) as ws:
        monkeypatch.setattr(os, "replace", no_space)
        with caplog.at_level(logging.WARNING, logger="hingeword"):
            assert ws.backup() is None
    assert "not written" in caplog.text and "No space left on device" in caplog.text
    assert not [p for p in hand_run.iterdir() if p.name.endswith(".tmp")]


def test_report_on_a_full_disk_leaves_no_half_written_page(hand_run, tmp_path, monkeypatch):
    result = runner.invoke(app, _args(READERS["report"], hand_run, tmp_path / "out"))
    assert result.exit_code == 0, result.output
    folder = next((tmp_path / "out").glob("*/*"))
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    real_write = Path.write_text

    def full_after_two(self, text, *args, **kwargs):
        if self.name.endswith(".tmp") and "overview" in self.name:
            real_write(self, text[:100], *args, **kwargs)  # a part of it reached the disk
            raise OSError(28, "No space left on device")
        return real_write(self, text, *args, **kwargs)

    monkeypatch.setattr(Path, "write_text", full_after_two)
    line = _one_error_line(runner.invoke(app, _args(READERS["report"], hand_run, tmp_path / "out")))
    assert "overview.html: No space left on device" in line
    after = {p.name: p.read_bytes() for p in folder.iterdir()}
    assert after["overview.html"] == before["overview.html"]  # the earlier page, whole
    assert not [n for n in after if n.endswith(".tmp")]


def test_report_folder_blocked_by_a_file_is_one_line(hand_run, tmp_path):
    (tmp_path / "out").write_text("a file where the report folder should be", encoding="utf-8")
    line = _one_error_line(runner.invoke(app, _args(READERS["report"], hand_run, tmp_path / "out")))
    assert line.startswith("Error: cannot create the report folder")


def test_parse_cache_write_on_a_full_disk_only_warns(tmp_path, monkeypatch, caplog):
    import spacy
    from spacy.tokens import DocBin

    from hingeword.parse import ModelInfo, ParseCache

    def no_space(self, path, *args, **kwargs):
        Path(path).write_bytes(b"half")
        raise OSError(28, "No space left on device")

    cache = ParseCache(tmp_path / "cache", ModelInfo("p", "en_test", "1"))
    monkeypatch.setattr(DocBin, "to_disk", no_space)
    with caplog.at_level(logging.WARNING, logger="hingeword"):
        cache.put("ab" * 32, spacy.blank("en")("We discussed the plan."))
    assert "parse cache not written" in caplog.text
    assert not [p for p in (tmp_path / "cache").rglob("*") if p.is_file()]  # no half file, no temporary


# ---------------------------------------------------------- concurrent use


def _store_in_child(args) -> str:
    workspace, class_name, barrier = args
    barrier.wait(timeout=60)
    try:
        store_hand_run(Path(workspace), class_name=class_name)
    except Exception as exc:  # reported to the parent, which fails the test
        return f"{type(exc).__name__}: {exc}"
    return "ok"


def test_history_four_processes_create_and_write_one_workspace(tmp_path):
    """Four processes open a workspace that does not exist yet, at the same moment, and
    each stores a run: all succeed (the losers of the race wait for the write lock)."""
    try:
        ctx = multiprocessing.get_context("fork")
    except ValueError:
        pytest.skip("no fork start method on this system")
    for attempt in range(3):
        workspace = tmp_path / f"ws{attempt}"
        barrier = ctx.Manager().Barrier(4)
        with ctx.Pool(4) as pool:
            results = pool.map(_store_in_child, [(str(workspace), f"class-{i}", barrier) for i in range(4)])
        assert results == ["ok"] * 4
        assert db_counts(workspace)["runs"] == 4
        assert db_integrity(workspace) == "ok"
        assert not [p for p in workspace.iterdir() if p.name.startswith(".")]


def test_history_second_writer_gets_workspace_busy(hand_run, monkeypatch):
    holder = Workspace(hand_run)
    holder.conn.execute("BEGIN IMMEDIATE")  # another scan in the middle of storing its run
    try:
        monkeypatch.setattr(history, "BUSY_TIMEOUT", 0.2)
        result = runner.invoke(app, _args(WRITER, hand_run, hand_run))
        line = _one_error_line(result)
        assert line == (f"Error: workspace busy: another hingeword command is writing to {hand_run / DB_NAME}; "
                        "try again when it has finished")
    finally:
        holder.conn.execute("ROLLBACK")
        holder.close()
    assert runner.invoke(app, _args(WRITER, hand_run, hand_run)).exit_code == 0  # and works once it is free


def test_history_reader_is_not_blocked_by_a_writer(hand_run, tmp_path):
    holder = Workspace(hand_run)
    holder.conn.execute("BEGIN IMMEDIATE")
    holder.conn.execute("DELETE FROM essays")  # not committed: readers still see the stored run
    try:
        result = runner.invoke(app, _args(READERS["concordance"], hand_run, tmp_path))
        assert result.exit_code == 0, result.output
        assert "3 lines" in result.output
    finally:
        holder.conn.execute("ROLLBACK")
        holder.close()


def test_history_errors_are_workspace_errors_with_the_file_name(tmp_path):
    err = history._explain(sqlite3.OperationalError("database or disk is full"), tmp_path / DB_NAME)
    assert isinstance(err, HingewordError) and str(tmp_path / DB_NAME) in str(err)
    assert history._explain(sqlite3.OperationalError("no such table: x"), tmp_path / DB_NAME) is None

"""A scan of a folder where nothing can be read never replaces a stored run (reliability defect 2)."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from hingeword.cli import app
from hingeword.errors import HingewordError, IngestError
from hingeword.history import Workspace
from hingeword.pipeline import scan

runner = CliRunner()


def _unusable_folder(tmp_path):
    folder = tmp_path / "unusable"
    folder.mkdir()
    (folder / "empty.txt").write_text("", encoding="utf-8")
    (folder / "scan.pdf").write_bytes(b"%PDF-1.4")
    return folder


def test_pipeline_rescan_of_unusable_folder_keeps_the_stored_run(hand_run, tmp_path):
    with Workspace(hand_run) as ws:
        before = ws.run("morning-a2", "t1").id, len(ws.essays(ws.run("morning-a2", "t1").id))
    with pytest.raises(IngestError, match="no essay could be read.*earlier run of morning-a2 / t1 is kept"):
        scan(_unusable_folder(tmp_path), class_name="morning-a2", term="t1", workspace=hand_run)
    with Workspace(hand_run) as ws:
        run = ws.run("morning-a2", "t1")
        assert (run.id, len(ws.essays(run.id))) == before == (before[0], 3)


def test_cli_first_scan_of_empty_folder_fails(tmp_path):
    (tmp_path / "none").mkdir()
    result = runner.invoke(app, ["scan", str(tmp_path / "none"), "--class", "c", "--term", "t",
                                 "-w", str(tmp_path / "ws"), "-q"])
    assert result.exit_code == 1
    assert result.output.startswith("Error: no essay could be read from")
    assert "no essay files found" in result.output


def test_cli_rescan_of_unusable_folder_exits_1_and_lists_reasons(hand_run, tmp_path):
    result = runner.invoke(app, ["scan", str(_unusable_folder(tmp_path)), "--class", "morning-a2", "--term", "t1",
                                 "-w", str(hand_run), "-q"])
    assert result.exit_code == 1
    assert "2 file(s) skipped" in result.output and "empty.txt" in result.output


def test_history_refuses_a_run_without_essays(hand_run):
    with Workspace(hand_run) as ws, pytest.raises(HingewordError, match="no essays"):
        ws.replace_run(class_name="morning-a2", term="t1", run_meta={}, essays=[], skipped=[], notes=[],
                       attachments=[])
    with Workspace(hand_run) as ws:
        assert len(ws.essays(ws.run("morning-a2", "t1").id)) == 3

"""Progress bars: every long step reports its steps, the bars go to stderr on a terminal and
stay quiet otherwise. Runs are stored by hand (``conftest.store_hand_run``); no parser needed."""

from __future__ import annotations

import io

from rich.console import Console
from typer.testing import CliRunner

from hingeword import cli
from hingeword.export import export_run
from hingeword.report import REPORT_STEPS, make_reports

runner = CliRunner()


def test_report_progress_calls_every_step_in_order(hand_run, tmp_path):
    calls = []
    make_reports(hand_run, "morning-a2", "t1", tmp_path / "out", progress=lambda *a: calls.append(a))
    assert [c[0] for c in calls] == [*REPORT_STEPS, "written"]
    assert [c[1] for c in calls] == list(range(len(REPORT_STEPS))) + [len(REPORT_STEPS)]
    assert {c[2] for c in calls} == {len(REPORT_STEPS)}


def test_export_progress_calls_every_step_in_order(hand_run, tmp_path):
    calls = []
    export_run(hand_run, "morning-a2", "t1", tmp_path / "p.csv", concordance=tmp_path / "k.csv",
               progress=lambda *a: calls.append(a))
    assert calls == [("reading the run", 0, 3), ("patterns", 1, 3), ("concordance", 2, 3), ("written", 3, 3)]


def test_cli_progress_bar_on_a_terminal_only(hand_run, tmp_path, monkeypatch):
    shown = io.StringIO()
    terminal = cli._PlainConsole(file=shown, force_terminal=True, width=100, highlight=False, markup=False,
                                 emoji=False)
    monkeypatch.setattr(cli, "err", terminal)
    with cli._progress(False) as bar:
        task = bar.add_task("report", total=None)
        cli._steps(bar, task, "report")("overview", 3, 6)
        bar.refresh()
    assert "report: overview" in shown.getvalue()
    with cli._progress(True) as bar:  # --quiet
        assert bar.disable
    monkeypatch.setattr(cli, "err", Console(file=io.StringIO(), force_terminal=False))
    with cli._progress(False) as bar:  # not a terminal: quiet
        assert bar.disable


def test_cli_report_and_export_print_no_progress_when_not_a_terminal(hand_run, tmp_path):
    report = runner.invoke(cli.app, ["report", "--class", "morning-a2", "--term", "t1", "-w", str(hand_run),
                                     "--out", str(tmp_path / "out")])
    assert report.exit_code == 0 and "report:" not in report.output
    export = runner.invoke(cli.app, ["export", "--class", "morning-a2", "--term", "t1", "-w", str(hand_run),
                                     "-o", str(tmp_path / "p.xlsx")])
    assert export.exit_code == 0 and "export:" not in export.output

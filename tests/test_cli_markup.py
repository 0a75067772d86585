"""User text in console output is printed as written (#15, defect 11): class and term
names that look like rich markup ("10B[/]", "[evening]") neither crash a command nor
vanish from its output. Names are invented.
"""

from __future__ import annotations

import io

from typer.testing import CliRunner

from conftest import store_hand_run
from hingeword.cli import _PlainConsole, app

runner = CliRunner()
CLASS, TERM = "10B[/]", "[evening]"


def test_cli_markup_like_names_are_printed_as_written(tmp_path):
    workspace = tmp_path / "ws"
    store_hand_run(workspace, class_name=CLASS, term=TERM)
    base = ["--class", CLASS, "-w", str(workspace)]
    commands = {
        "trends": ["trends", *base],
        "concordance": ["concordance", "discuss", "about", *base, "--term", TERM],
        "report": ["report", *base, "--term", TERM, "--out", str(tmp_path / "out")],
        "export": ["export", *base, "--term", TERM, "-o", str(tmp_path / "p.csv")],
        "dismiss": ["dismiss", "discuss", "about", *base, "--reason", "[bold]fine[/bold] here"],
        "restore": ["restore", "discuss", "about", *base],
        "unknown term": ["export", *base, "--term", "[red]x[/]", "-o", str(tmp_path / "q.csv")],
    }
    outputs = {}
    for name, args in commands.items():
        result = runner.invoke(app, args)
        assert result.exit_code == (1 if name == "unknown term" else 0), (name, result.output)
        assert "Traceback" not in result.output
        outputs[name] = result.output
    assert TERM in outputs["trends"]
    assert "dismissed 'discuss about' for 10B[/]: [bold]fine[/bold] here" in outputs["dismiss"]
    assert "restored 'discuss about' for 10B[/]" in outputs["restore"]
    assert outputs["unknown term"].startswith("Error: no scan of class '10B[/]', term '[red]x[/]'")
    assert "10B[/]/[evening]" in outputs["unknown term"]


def test_cli_console_on_a_terminal_keeps_markup_and_drops_control_characters():
    buf = io.StringIO()
    console = _PlainConsole(file=buf, force_terminal=True, color_system=None, markup=False, emoji=False,
                            highlight=False, soft_wrap=True)
    console.print("10B[/] [evening] :smile: \x1b[31mred\x1b[0m")
    assert buf.getvalue() == "10B[/] [evening] :smile:  [31mred [0m\n"

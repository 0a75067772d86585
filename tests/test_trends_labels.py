"""Trends charts draw hostile term names as plain text (#15): a term named like TeX math
no longer stops ``trends`` (defect 12), a term containing ``javascript:`` no longer
makes the charts disappear (defect 14), and scriptable SVG is still refused.
The class and terms are invented.
"""

from __future__ import annotations

from bs4 import BeautifulSoup
from markupsafe import Markup
from typer.testing import CliRunner

from conftest import store_hand_run
from hingeword.cli import app
from hingeword.report.overview import _svg_markup

runner = CliRunner()
TERMS = [("$\\badcmd{x}$", "2026-01-10"), ("javascript:alert(1)", "2026-04-10"), ("<b>third</b> $5", "2026-09-01")]


def test_trends_hostile_term_names_are_drawn_as_text(tmp_path):
    workspace = tmp_path / "ws"
    for term, start in TERMS:
        store_hand_run(workspace, term=term, term_start=start)
    result = runner.invoke(app, ["trends", "--class", "morning-a2", "-w", str(workspace), "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    assert all(term[:14] in result.output for term, _ in TERMS)  # the table cuts terms at 14 characters
    [page] = (tmp_path / "out").rglob("trends.html")
    html = page.read_text(encoding="utf-8")
    soup = BeautifulSoup(html, "html.parser")
    svgs = soup.find_all("svg")
    assert len(svgs) >= 2  # the overview chart and the pattern's chart
    chart_text = " ".join(t.get_text(" ") for t in svgs)
    for term, _ in TERMS:
        assert term in chart_text  # written as it is, on the axis
    assert not soup.find_all("script") and "<b>third" not in html


def test_trends_svg_check_refuses_scriptable_markup_only():
    ok = '<svg xmlns="http://www.w3.org/2000/svg"><text>javascript:alert(1) onload=</text><use href="#a"/></svg>'
    assert isinstance(_svg_markup(ok), Markup)
    for bad in ('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>',
                '<svg xmlns="http://www.w3.org/2000/svg" onload="alert(1)"></svg>',
                '<svg xmlns="http://www.w3.org/2000/svg" xmlns:x="http://www.w3.org/1999/xlink">'
                '<a x:href="javascript:alert(1)"><text>t</text></a></svg>',
                '<svg xmlns="http://www.w3.org/2000/svg"><foreignObject><p>x</p></foreignObject></svg>',
                '<div>not svg</div>', '<svg><unclosed></svg>'):
        assert _svg_markup(bad) == "", bad

"""Report folders: one per class and term, readable, bounded, always under ``--out``
(#15, defect 5 and the long class name of defect 12). Class names are invented.
"""

from __future__ import annotations

import unicodedata

import pytest
from typer.testing import CliRunner

from conftest import store_hand_run
from hingeword.cli import app
from hingeword.history import Workspace
from hingeword.report import slugify, write_reports, write_trends

runner = CliRunner()

NAMES = ["10B", "10b", "10 b", "10-b", "Класс А", "Класс Б", "日本語クラス", "中文班", "Évening", "evening", "EVENING",
         "../..", "..", "/etc", "a/b", "a\\b", "con", "CON", "nul.txt", "trends.html", "x" * 300, "x" * 301, "",
         " ", "$\\badcmd{x}$", "javascript:alert(1)", "[evening]", "10B[/]"]


def test_report_folder_names_are_unique_even_without_case():
    slugs = [slugify(n) for n in NAMES]
    assert len({s.casefold() for s in slugs}) == len(NAMES)  # also on a case-insensitive file system
    for name, slug in zip(NAMES, slugs):
        assert slug == slugify(name)  # stable
        assert all(c in "-_" or unicodedata.category(c)[0] in "LNM" for c in slug), slug
        assert not slug.startswith((".", "-")) and "/" not in slug and "\\" not in slug
        assert len(slug.encode("utf-8")) <= 100


def test_report_folder_names_stay_readable():
    assert slugify("日本語クラス") == "日本語クラス"
    assert slugify("Класс А").startswith("класс-а-")
    assert slugify("10b") == "10b" and slugify("10B").startswith("10b-")
    assert slugify("evening-b2") == "evening-b2"
    assert slugify("x" * 300).startswith("x" * 80 + "-")


def _sheet_text(folder):
    return (folder / "students.html").read_text(encoding="utf-8")


def test_report_two_classes_differing_in_case_do_not_overwrite_each_other(tmp_path):
    workspace = tmp_path / "ws"
    store_hand_run(workspace, class_name="10B", term="autumn")
    store_hand_run(workspace, class_name="10b", term="autumn")
    store_hand_run(workspace, class_name="Класс А", term="autumn")
    store_hand_run(workspace, class_name="Класс Б", term="autumn")
    with Workspace(workspace) as ws:
        folders = [write_reports(ws, c, "autumn", tmp_path / "out").folder for c in ("10B", "10b", "Класс А", "Класс Б")]
        trends = [write_trends(ws, c, tmp_path / "out") for c in ("10B", "10b", "Класс А", "Класс Б")]
    assert len({f.parent.name.casefold() for f in folders}) == 4
    assert len(set(trends)) == 4
    for folder, name in zip(folders, ("10B", "10b", "Класс А", "Класс Б")):
        assert folder.parent.parent == tmp_path / "out"
        assert f"{name}, autumn" in (folder / "overview.html").read_text(encoding="utf-8")


@pytest.mark.parametrize("name", ["../../escape", "/etc", "..", "a/../../b"])
def test_report_hostile_class_and_term_names_stay_under_out(tmp_path, name):
    workspace = tmp_path / "ws"
    store_hand_run(workspace, class_name=name, term=name)
    out = tmp_path / "deep" / "out"
    result = runner.invoke(app, ["report", "--class", name, "--term", name, "-w", str(workspace), "--out", str(out)])
    assert result.exit_code == 0, result.output
    result = runner.invoke(app, ["trends", "--class", name, "-w", str(workspace), "--out", str(out)])
    assert result.exit_code == 0, result.output
    written = [p for p in tmp_path.rglob("*") if p.is_file() and p.suffix in (".html", ".csv")]
    assert written and all(out in p.parents for p in written)


def test_report_very_long_class_and_term_names(tmp_path):
    workspace = tmp_path / "ws"
    name, term = "Evening class of the language school " * 8, "term " * 70
    store_hand_run(workspace, class_name=name, term=term)
    result = runner.invoke(app, ["report", "--class", name, "--term", term, "-w", str(workspace),
                                 "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    result = runner.invoke(app, ["trends", "--class", name, "-w", str(workspace), "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    [overview] = (tmp_path / "out").rglob("overview.html")
    assert name.strip() in overview.read_text(encoding="utf-8")

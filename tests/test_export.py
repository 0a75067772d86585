"""What a researcher relies on in the exports: the run record inside every format, the data
dictionary (in the file and in docs/columns.md), readable causes, essay ids, one-line sentences,
booleans written one way, and an XLSX that opens ready to filter. No parser: hand-made runs."""

from __future__ import annotations

import csv
import json
import subprocess
import sys
from collections import Counter
from pathlib import Path

import openpyxl
import pytest

from conftest import essay
from hingeword.export import KWIC_COLUMNS, export_run, side_file
from hingeword.extract import Attachment
from hingeword.history import Workspace
from hingeword.patterns import Tally
from hingeword.record import EXPORT_COLUMNS, Advice, Cause
from hingeword.reference import Reference
from hingeword.score import Thresholds, score_patterns

REPO = Path(__file__).resolve().parents[1]
TEXTS = {"ana.txt": ("Ana Lima", "My journey\nWhen we arrived to Rome, it rained."),
         "ben.txt": ("Ben Okafor", "We arrived to Tokyo\nat night. It was late."),
         "eva.txt": ("Eva Nowak", "Then we arrived to Madrid.")}


@pytest.fixture
def run_ws(tmp_path) -> Path:
    """One stored run: three writers wrote "arrive to", one sentence with a glued title, one wrapped."""
    essays = [essay(eid, w, t, l1="es") for eid, (w, t) in TEXTS.items()]
    atts = []
    for e in essays:
        g = e.text.index("arrived")
        p = e.text.index("to", g)
        atts.append(Attachment(e.essay_id, e.writer, "arrive", "VERB", "arrived", "to", "prep", e.text, 0,
                               g, g + 7, p, p + 2, object_class="place"))  # the sentence as the parser cut it
    ref = Reference(manifest={"name": "hand", "words": 1000, "build_date": "2026-01-01", "extractor_version": "5",
                              "model": "none", "format_version": 2},
                    patterns=Counter({("arrive", "VERB", "at"): 30, ("arrive", "VERB", "in"): 25}))
    used = Thresholds(min_reference=5)
    records = score_patterns(Tally.from_attachments(atts), ref, used)
    advice = Advice(causes=(Cause("directional", 0.4, "'to' marks movement", "a word for movement"),
                            Cause("l1-transfer", 0.3, "3 of 3 uses by writers whose first language is Spanish",
                                  "carried over from the first language")),
                    suggestion="arrive in", suggested_preposition="in", by_object=(("place", "in"),))
    records = [r.with_(advice=advice) if r.preposition == "to" else r for r in records]
    workspace = tmp_path / "ws"
    with Workspace(workspace) as ws:
        ws.replace_run(class_name="evening-b2", term="2026-spring",
                       run_meta={"tool_version": "0.1.0", "model": "none", "model_version": "-",
                                 "extractor_version": "5", "source": "hand", "words": 25,
                                 "settings": {**used.as_dict(), "term_start": "2026-03-01"}, "reference": ref.manifest},
                       essays=essays, skipped=[], notes=[], attachments=atts, records=records)
        ws.dismiss("arrive", "to", class_name="evening-b2", reason="taught")
    return workspace


def _check_run(run: dict, table: str) -> None:
    assert run["table"] == table and run["class"] == "evening-b2" and run["term"] == "2026-spring"
    assert run["term_start"] == "2026-03-01" and run["model"] == "none" and run["hingeword_version_export"]
    assert run["thresholds"] == Thresholds(min_reference=5).as_dict()  # every threshold, as the run used it
    assert run["reference"]["parts"][0]["name"] == "hand" and run["reference"]["parts"][0]["words"] == 1000
    assert run["patterns_used_by_class"] == 1 and run["writers"] == 3 and run["dismissed"] == 1


@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".json"])
def test_export_run_record_and_columns_in_every_format(run_ws, tmp_path, suffix):
    out, kw = tmp_path / f"p{suffix}", tmp_path / f"k{suffix}"
    export_run(run_ws, "evening-b2", "2026-spring", out, concordance=kw)
    for path, table, columns in ((out, "patterns", list(EXPORT_COLUMNS)), (kw, "concordance", KWIC_COLUMNS)):
        if suffix == ".csv":
            side = json.loads(side_file(path).read_text(encoding="utf-8"))
            run, glosses = side["run"], side["columns"]
            rows = list(csv.DictReader(path.read_text(encoding="utf-8").splitlines()))
            header = list(rows[0])
        elif suffix == ".xlsx":
            wb = openpyxl.load_workbook(path)
            assert wb.sheetnames == [table, "run", "columns"]
            sheet = wb[table]
            assert sheet.freeze_panes == "A2" and sheet.auto_filter.ref  # header frozen, filters on
            assert sheet.column_dimensions["A"].width >= 8
            header = [c.value for c in sheet[1]]
            rows = [dict(zip(header, [c.value for c in r])) for r in sheet.iter_rows(min_row=2)]
            items = {r[0].value: r[1].value for r in wb["run"].iter_rows(min_row=2)}
            run = {"table": items["table"], "class": items["class"], "term": items["term"],
                   "term_start": items["term_start"], "model": items["model"],
                   "hingeword_version_export": items["hingeword_version_export"],
                   "thresholds": {k.split(".", 1)[1]: v for k, v in items.items() if k.startswith("thresholds.")},
                   "reference": {"parts": [{"name": items["reference.parts.1.name"],
                                            "words": items["reference.parts.1.words"]}]},
                   "patterns_used_by_class": items["patterns_used_by_class"], "writers": items["writers"],
                   "dismissed": items["dismissed"]}
            glosses = {r[0].value: r[1].value for r in wb["columns"].iter_rows(min_row=2)}
        else:
            doc = json.loads(path.read_text(encoding="utf-8"))
            assert list(doc) == ["run", "columns", "rows"]
            run, glosses, rows = doc["run"], doc["columns"], doc["rows"]
            header = list(rows[0])
        _check_run(run, table)
        assert header == columns and list(glosses) == columns and all(glosses.values())
        if table == "patterns":
            row = next(r for r in rows if r["preposition"] == "to")
            # causes as readable columns, not JSON; booleans one way; the slot per kind of object
            assert row["cause_1"] == "a word for movement" and row["cause_2_code"] == "l1-transfer"
            assert str(row["dismissed"]).lower() == "true" and str(row["flagged"]).lower() in ("true", "false")
            if suffix != ".json":
                assert row["dismissed"] == "true"
            assert row["suggestion_by_object"] == "place: in"
            assert not any(str(v).startswith(("[{", "{")) for v in row.values())
        else:
            assert [r["essay_id"] for r in rows] == ["S01-e1", "S02-e1", "S03-e1"]  # filled, no file names
            assert all("\n" not in r["sentence"] and "\r" not in r["sentence"] for r in rows)
            assert rows[1]["sentence"] == "We arrived to Tokyo at night. It was late."
            assert {r["object_class"] for r in rows} == {"place"}


def test_export_concordance_with_real_names_keeps_essay_ids(run_ws, tmp_path):
    export_run(run_ws, "evening-b2", "2026-spring", tmp_path / "p.csv", concordance=tmp_path / "k.csv", names="real")
    rows = list(csv.DictReader((tmp_path / "k.csv").read_text(encoding="utf-8").splitlines()))
    assert [(r["writer"], r["essay_id"]) for r in rows] == [
        ("Ana Lima", "ana.txt"), ("Ben Okafor", "ben.txt"), ("Eva Nowak", "eva.txt")]
    run = json.loads((tmp_path / "k.run.json").read_text(encoding="utf-8"))["run"]
    assert run["writers_shown_as"] == "names"


def test_export_columns_doc_is_up_to_date():
    result = subprocess.run([sys.executable, str(REPO / "scripts" / "build_columns_doc.py"), "--check"],
                            capture_output=True, text=True)
    assert result.returncode == 0, result.stderr
    text = (REPO / "docs" / "columns.md").read_text(encoding="utf-8")
    assert all(f"| `{c}` |" in text for c in (*EXPORT_COLUMNS, *KWIC_COLUMNS))

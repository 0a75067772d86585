"""Tests for hingeword.pipeline (the scan), typo grouping and the export contract.

Essays and native sentences are invented (see ``conftest.py``). Every scan uses
the tiny reference built from ``tests/data/reference/native/``, never the
bundled one.
"""

from __future__ import annotations

import csv
import json

import pandas as pd
import pytest

from conftest import ESSAYS, TERM_START, db_counts, db_integrity, tiny_thresholds
from hingeword.errors import HingewordError
from hingeword.export import CONTRACT, records_frame, write_table
from hingeword.history import Workspace
from hingeword.patterns import typo_map
from hingeword.record import PatternRecord, Status
from hingeword.pipeline import scan

HEADER = ("governor,governor_pos,preposition,learner_count,learner_writers,learner_governor_count,reference_count,"
          "reference_governor_count,collocation_ratio,log_likelihood,log_ratio,flagged,status,cause,suggestion")


def _scan(folder, workspace, ref, **kw):
    return scan(folder, class_name=kw.pop("class_name", "evening-b1"), term=kw.pop("term", "2026-spring"),
                workspace=workspace, references=[str(ref)], thresholds=tiny_thresholds(), term_start=TERM_START,
                processes=1, **kw)


# ------------------------------------------------------------------ the scan


@pytest.mark.slow
def test_pipeline_scan_lists_read_and_skipped_essays(scanned):
    workspace, result = scanned
    assert [e.essay_id for e in result.ingest.essays] == sorted(ESSAYS)
    assert [(s.source, s.reason) for s in result.ingest.skipped] == [
        ("empty.txt", "empty file"),
        ("notes.pdf", "unsupported file type '.pdf' (use .txt, .docx, .odt or .csv)"),
    ]
    with Workspace(workspace, create=False) as ws:
        run = ws.run("evening-b1", "2026-spring")
        assert run.id == result.run_id
        assert (run.essays_read, run.essays_skipped) == (4, 2)
        assert ws.skipped(run.id) == list(result.ingest.skipped)
        assert [e.writer for e in ws.essays(run.id)] == ["anna", "ben", "carla", "dawid"]
        assert len(ws.attachments(run.id)) == result.attachments > 0
        assert run.reference["name"] == "tiny"
        assert run.settings["term_start"] == TERM_START
    assert db_integrity(workspace) == "ok"


@pytest.mark.slow
def test_pipeline_scan_finds_the_class_pattern(scanned):
    """All four writers wrote "discuss about"; the tiny native reference never does."""
    _, result = scanned
    row = next(r for r in result.records if r.key == ("discuss", "VERB", "about"))
    assert (row.learner_count, row.learner_writers, row.reference_count) == (5, 4, 0)
    assert row.flagged and row.status is Status.OVER_USED
    assert row.advice is not None and row.advice.suggestion  # the categorise stage ran


@pytest.mark.slow
def test_pipeline_rescan_replaces_run_and_uses_cache(tiny_essays, tiny_ref_path, tmp_path):
    folder = tiny_essays()
    progress = []
    first = _scan(folder, tmp_path / "ws", tiny_ref_path, progress=lambda done, total: progress.append((done, total)))
    assert (first.parse_stats.parsed, first.parse_stats.from_cache) == (4, 0)
    assert progress[-1] == (4, 4)

    second = _scan(folder, tmp_path / "ws", tiny_ref_path)
    assert (second.parse_stats.parsed, second.parse_stats.from_cache) == (0, 4)
    with Workspace(tmp_path / "ws") as ws:
        runs = ws.runs("evening-b1")
        assert [r.id for r in runs] == [second.run_id]
        rows = db_counts(tmp_path / "ws")
        assert rows["runs"] == 1
        assert rows["essays"] == 4
        assert rows["attachments"] == first.attachments == second.attachments
        assert rows["skipped"] == 2
        assert rows["pattern_stats"] == len(second.records)
        assert ws.attachments(second.run_id) == sorted(
            ws.attachments(second.run_id), key=lambda a: (a.essay_id, a.gov_start, a.prep_start, a.preposition))

    # another term of the same class is a second run, not a replacement
    third = _scan(folder, tmp_path / "ws", tiny_ref_path, term="2026-autumn")
    with Workspace(tmp_path / "ws") as ws:
        assert sorted(r.id for r in ws.runs("evening-b1")) == sorted([second.run_id, third.run_id])


@pytest.mark.slow
def test_pipeline_failed_rescan_leaves_previous_run_intact(tiny_essays, tiny_ref_path, tmp_path, monkeypatch):
    first = _scan(tiny_essays(), tmp_path / "ws", tiny_ref_path)
    with Workspace(tmp_path / "ws") as ws:
        before = (db_counts(tmp_path / "ws"), ws.attachments(first.run_id), ws.essays(first.run_id),
                  ws.records(first.run_id))

    inserted = []

    def fail(self, run_id, records):
        # by now the new run, its essays and attachments are inserted
        inserted.append(self.conn.execute("SELECT COUNT(*) FROM attachments WHERE run_id = ?", (run_id,)).fetchone()[0])
        raise RuntimeError("disk full (simulated)")

    monkeypatch.setattr(Workspace, "_insert_records", fail)
    changed = tiny_essays({**ESSAYS, "emil.txt": "I am agree with my friend about this topic."}, junk=False)
    with pytest.raises(RuntimeError, match="simulated"):
        _scan(changed, tmp_path / "ws", tiny_ref_path)
    assert inserted and inserted[0] > 0
    monkeypatch.undo()

    assert db_integrity(tmp_path / "ws") == "ok"
    assert db_counts(tmp_path / "ws") == before[0]
    with Workspace(tmp_path / "ws") as ws:
        assert ws.run("evening-b1", "2026-spring").id == first.run_id
        assert ws.attachments(first.run_id) == before[1]
        assert ws.essays(first.run_id) == before[2]
        assert _same_records(ws.records(first.run_id), before[3])


@pytest.mark.slow
@pytest.mark.parametrize("sentence, key", [
    ("We discussed about our holidays in the lesson.", ("discuss", "VERB", "about")),
    ("They talked about the weekend for an hour.", ("talk", "VERB", "about")),
])
def test_pipeline_topic_preposition_before_time_noun_is_counted(nlp_and_info, sentence, key):
    from hingeword.extract import extract_doc

    nlp, _ = nlp_and_info
    assert key in [a.key for a in extract_doc(nlp(sentence))]


@pytest.mark.slow
def test_pipeline_rescan_of_old_term_keeps_writer_codes(tiny_essays, tiny_ref_path, tmp_path):
    ws_path = tmp_path / "ws"
    autumn = tiny_essays({k: ESSAYS[k] for k in ("anna.txt", "ben.txt")}, junk=False)
    spring = tiny_essays({k: ESSAYS[k] for k in ("anna.txt", "carla.txt")}, junk=False)
    for folder, term, start in ((autumn, "2020-autumn", "2020-09-01"), (spring, "2021-spring", "2021-02-01")):
        scan(folder, class_name="k", term=term, workspace=ws_path, references=[str(tiny_ref_path)],
             thresholds=tiny_thresholds(), term_start=start, processes=1)
    with Workspace(ws_path) as ws:
        before = ws.writer_codes("k")
    assert before == {"anna": "S01", "ben": "S02", "carla": "S03"}
    # the teacher fixes an essay of the old term and scans it again, without --term-start
    scan(autumn, class_name="k", term="2020-autumn", workspace=ws_path, references=[str(tiny_ref_path)],
         thresholds=tiny_thresholds(), processes=1)
    with Workspace(ws_path) as ws:
        assert ws.writer_codes("k") == before


# ------------------------------------------------------------------ typo grouping


@pytest.mark.slow
def test_pipeline_scan_groups_misspelt_governor(scanned):
    workspace, result = scanned
    # "dicuss" (zipf 1.1 in wordfreq) is one letter from "discuss", which the tiny reference has 6 times
    assert result.typo_groups.get(("dicuss", "VERB")) == ("discuss", "VERB")
    with Workspace(workspace, create=False) as ws:
        grouped = [a for a in ws.attachments(result.run_id) if a.original_governor]
        assert {(a.governor, a.original_governor, a.governor_text) for a in grouped} == {
            ("discuss", "dicuss", "dicuss"), ("interested", "intreste", "intrested")}
        assert {a.writer for a in grouped if a.governor == "discuss"} == {"ben", "dawid"}
        assert ("typo", "'dicuss' (VERB) grouped under 'discuss'") in [
            (n.kind, n.message) for n in ws.notes(result.run_id)]


@pytest.mark.slow
def test_pipeline_scan_groups_misspelt_adjective(scanned):
    _, result = scanned
    row = next(r for r in result.records if (r.governor, r.preposition) == ("interested", "in"))
    # anna wrote "intrested in", carla and dawid "interested in"
    assert (row.learner_count, row.learner_writers) == (3, 3)


LEXICON = {
    ("interested", "ADJ"): 40,
    ("interest", "VERB"): 12,
    ("discuss", "VERB"): 30,
    ("depend", "VERB"): 25,
    ("receive", "VERB"): 9,
    ("rare", "ADJ"): 3,  # below MIN_TARGET_TOKENS: not a grouping target
}


@pytest.mark.parametrize(
    "lemma, expected",
    [
        (("intrested", "ADJ"), "interested"),  # fuzz.ratio 94.7, zipf 2.03
        (("dicuss", "VERB"), "discuss"),  # 92.3, zipf 1.12
        (("recieve", "VERB"), "receive"),  # 85.7, zipf 2.75
        (("dicuss", "NOUN"), None),  # same POS only
        (("defend", "VERB"), None),  # a real word (zipf 4.47 >= 3) is never regrouped
        (("discuss", "VERB"), None),  # known to the reference
        (("rarre", "ADJ"), None),  # ratio 88.9 to "rare", but it has 3 < MIN_TARGET_TOKENS tokens
        (("dsc", "VERB"), None),  # too short to judge
        (("xylophonate", "VERB"), None),  # nothing close
    ],
)
def test_patterns_typo_map_hand_made_lexicon(lemma, expected):
    # ratios computed with rapidfuzz 3.14.6 fuzz.ratio, zipf values with wordfreq 3.1.1 zipf_frequency
    got = typo_map([lemma], LEXICON)
    assert got.get(lemma) == ((expected, lemma[1]) if expected else None)
    if expected is None:
        assert got == {}


def test_patterns_typo_map_respects_thresholds():
    assert typo_map([("recieve", "VERB")], LEXICON, ratio=90) == {}
    # with a zipf bar of 0 every lemma counts as a known word: nothing is grouped
    assert typo_map([("dicuss", "VERB")], LEXICON, known_zipf=0) == {}


# ------------------------------------------------------------------ export contract


def _same_records(a, b) -> bool:
    """Records equal field by field, NaN equal to NaN."""
    return [json.dumps(r.to_row(), sort_keys=True) for r in a] == [json.dumps(r.to_row(), sort_keys=True) for r in b]


def _hand_frame(workspace):
    with Workspace(workspace, create=False) as ws:
        return records_frame(ws.records(ws.run("morning-a2", "t1").id))


def test_export_header_and_flag_values(hand_run, tmp_path):
    df = _hand_frame(hand_run)
    path = write_table(df, tmp_path / "out" / "patterns.csv")
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0].startswith(HEADER)
    assert lines[0] == ",".join(df.columns)
    rows = list(csv.DictReader(lines))
    assert {r["flagged"] for r in rows} == {"true", "false"}  # discuss+about flagged; discuss+- under-used
    flagged = [r for r in rows if r["flagged"] == "true"]
    assert [(r["governor"], r["preposition"], r["status"]) for r in flagged] == [("discuss", "about", "over-used")]


def test_export_xlsx_and_json_read_back(hand_run, tmp_path):
    df = _hand_frame(hand_run)
    xlsx = pd.read_excel(write_table(df, tmp_path / "p.xlsx"), sheet_name="patterns")
    assert list(xlsx.columns) == list(df.columns)
    assert tuple(xlsx.columns[: len(CONTRACT)]) == CONTRACT
    assert sorted(xlsx.flagged.astype(str).str.lower()) == ["false", "true"]

    doc = json.loads(write_table(df, tmp_path / "p.json").read_text(encoding="utf-8"))
    assert list(doc) == ["run", "columns", "rows"]  # the run record first, the rows under "rows"
    records = doc["rows"]
    assert len(records) == len(df) == 2
    assert tuple(records[0])[: len(CONTRACT)] == CONTRACT
    assert sorted(r["flagged"] for r in records) == [False, True]  # JSON booleans: true / false
    assert [r["learner_count"] for r in records] == list(df.learner_count)


def test_record_round_trips_through_storage(hand_run):
    with Workspace(hand_run, create=False) as ws:
        stored = ws.records(ws.run("morning-a2", "t1").id)
    assert stored and all(isinstance(r, PatternRecord) for r in stored)
    again = [PatternRecord.from_row(r.to_row()) for r in stored]
    assert _same_records(again, stored)


def test_record_unknown_column_is_an_error():
    row = PatternRecord("discuss", "VERB", "about").to_row()
    with pytest.raises(KeyError, match="unknown pattern columns: flaged"):
        PatternRecord.from_row({**row, "flaged": True})


@pytest.mark.slow
def test_export_of_a_real_scan(scanned, tmp_path):
    workspace, result = scanned
    with Workspace(workspace, create=False) as ws:
        df = records_frame(ws.records(result.run_id))
    assert len(df) == len(result.records)
    text = write_table(df, tmp_path / "scan.csv").read_text(encoding="utf-8")
    header, *rows = text.splitlines()
    assert header.startswith(HEADER + ",")
    assert {r["flagged"] for r in csv.DictReader([header, *rows])} == {"true", "false"}


@pytest.mark.parametrize("name", ["patterns.txt", "patterns.xls", "patterns"])
def test_export_bad_suffix_is_refused(tmp_path, name):
    df = records_frame([])
    with pytest.raises(HingewordError) as exc:
        write_table(df, tmp_path / name)
    assert str(exc.value) == f"cannot export to '{name}': use a file ending in .csv, .xlsx or .json"
    assert not (tmp_path / name).exists()


def test_export_unflagged_record_is_written_false(tmp_path):
    df = records_frame([PatternRecord("rely", "VERB", "of", learner_count=2)])
    text = write_table(df, tmp_path / "p.csv").read_text(encoding="utf-8")
    assert list(csv.DictReader(text.splitlines()))[0]["flagged"] == "false"

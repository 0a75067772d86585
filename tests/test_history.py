"""Tests for hingeword.history: schema migrations, run round-trips, writer codes.

No spaCy here: runs are made of hand-written essays and attachments (invented
names and sentences) or of hypothesis-generated text. The round-trip test
follows sqlite-utils ``tests/test_hypothesis.py``: insert, read back, compare.
"""

from __future__ import annotations

import json
import sqlite3
from collections import Counter

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import TERM_START, essay, store_hand_run, db_counts, db_integrity
from hingeword import history
from hingeword.errors import WorkspaceError
from hingeword.extract import Attachment
from hingeword.history import DB_NAME, Workspace, schema_version
from hingeword.ingest import Essay, Skipped
from hingeword.record import Advice, Cause, PatternRecord, Status

META = {"tool_version": "test", "model": "m", "model_version": "1", "extractor_version": "1", "source": "here",
        "words": 0}


def _store(ws: Workspace, term: str, writers: list[str], term_start: str, class_name: str = "c") -> int:
    essays = [essay(f"{w}.txt", w, f"{w} wrote about the weather.") for w in writers]
    return ws.replace_run(class_name=class_name, term=term, run_meta={**META, "settings": {"term_start": term_start}},
                          essays=essays, skipped=[], notes=[], attachments=[])


# ------------------------------------------------------------------ migrations


def test_history_fresh_workspace_has_current_schema(tmp_path):
    with Workspace(tmp_path / "ws") as ws:
        assert ws.version() == schema_version() >= 1
        pass
    assert {"runs", "essays", "attachments", "skipped", "notes", "pattern_stats"} <= set(db_counts(tmp_path / "ws"))
    assert db_integrity(tmp_path / "ws") == "ok"
    # opening again applies nothing and keeps the data
    store_hand_run(tmp_path / "ws")
    with Workspace(tmp_path / "ws") as ws:
        assert ws.version() == schema_version()
        assert len(ws.runs()) == 1


def test_history_newer_schema_is_refused(tmp_path):
    root = tmp_path / "ws"
    root.mkdir()
    conn = sqlite3.connect(root / DB_NAME)
    conn.execute(f"PRAGMA user_version = {schema_version() + 1}")
    conn.close()
    with pytest.raises(WorkspaceError) as exc:
        Workspace(root)
    msg = str(exc.value)
    assert msg == (f"workspace {root} has schema version {schema_version() + 1}, newer than this hingeword "
                   f"understands ({schema_version()}); upgrade hingeword")


def test_history_missing_workspace_without_create(tmp_path):
    with pytest.raises(WorkspaceError, match=r"^no workspace at /.*nowhere \(run 'hingeword scan' first, or give the workspace folder with --workspace\)$"):
        Workspace(tmp_path / "nowhere", create=False)
    (tmp_path / "empty").mkdir()
    with pytest.raises(WorkspaceError, match=r"^no hingeword database in .*empty"):
        Workspace(tmp_path / "empty", create=False)


def test_history_older_schema_is_migrated_with_backup(tmp_path, monkeypatch):
    root = tmp_path / "ws"
    run_id = store_hand_run(root)
    added = ("0099_test_extra", "CREATE TABLE extra (x INTEGER); CREATE INDEX extra_x ON extra (x)")
    monkeypatch.setattr(history, "MIGRATIONS", [*history.MIGRATIONS, added])
    old = schema_version() - 1

    with Workspace(root) as ws:
        assert ws.version() == old + 1
        assert "extra" in db_counts(ws.root)
        assert len(ws.attachments(run_id)) == 3  # data survives the migration
    backup = root / f"{DB_NAME}.v{old}.bak"
    assert backup.is_file()
    conn = sqlite3.connect(backup)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == old
    assert conn.execute("SELECT COUNT(*) FROM attachments").fetchone()[0] == 3
    conn.close()

    # idempotent: opening again neither fails ("table extra already exists") nor backs up again
    backup.unlink()
    with Workspace(root) as ws:
        assert ws.version() == old + 1
    assert not backup.exists()


def test_history_failed_migration_leaves_workspace_unchanged(tmp_path, monkeypatch):
    root = tmp_path / "ws"
    store_hand_run(root)
    broken = ("0099_broken", "CREATE TABLE extra (x INTEGER); INSERT INTO no_such_table VALUES (1)")
    monkeypatch.setattr(history, "MIGRATIONS", [*history.MIGRATIONS, broken])
    with pytest.raises(sqlite3.OperationalError):
        Workspace(root)
    monkeypatch.undo()
    with Workspace(root) as ws:
        assert ws.version() == schema_version()
        assert "extra" not in db_counts(ws.root)  # the half-applied migration was rolled back
        assert db_counts(ws.root)["attachments"] == 3
        assert db_integrity(ws.root) == "ok"


# ------------------------------------------------------------------ round-trip

_text = st.text(max_size=25)
_ids = st.text(alphabet="abcdefghij/._-", min_size=1, max_size=12)
_essay = st.builds(
    lambda eid, writer, text, enc, l1, level, task, meta: Essay(
        essay_id=eid, writer=writer, text=text, sha256="0" * 64, source=eid, encoding=enc, l1=l1, level=level,
        task=task, meta=tuple(sorted(meta.items()))),
    _ids, _text, _text, st.sampled_from(["utf-8", "cp1250", "utf-16"]), st.none() | _text, st.none() | _text,
    st.none() | _text, st.dictionaries(_text, _text, max_size=3),
)
_offset = st.integers(min_value=0, max_value=2**40)


def _attachment_for(essays):
    return st.builds(
        Attachment,
        essay_id=st.sampled_from([e.essay_id for e in essays]),
        writer=_text, governor=_text, governor_pos=st.sampled_from(["VERB", "ADJ", "NOUN"]), governor_text=_text,
        preposition=_text, relation=st.sampled_from(["prep", "dobj", "prt", "multiword"]), sentence=_text,
        sentence_start=_offset, gov_start=_offset, gov_end=_offset, prep_start=_offset, prep_end=_offset,
        original_governor=_text,
    )


@st.composite
def _runs(draw):
    essays = draw(st.lists(_essay, min_size=1, max_size=5, unique_by=lambda e: e.essay_id))
    attachments = draw(st.lists(_attachment_for(essays), max_size=12))
    skipped = draw(st.lists(st.builds(Skipped, _text, _text), max_size=3))
    notes = draw(st.lists(st.tuples(_text, _text), max_size=3))
    scalar = st.none() | st.booleans() | st.integers(-(2**53), 2**53) | st.floats(allow_nan=False) | _text
    keys = st.tuples(_text, st.sampled_from(["VERB", "ADJ", "NOUN"]), _text)
    figure_keys = draw(st.lists(keys, max_size=4, unique=True))
    figures = [PatternRecord(g, p, prep, learner_count=draw(st.integers(0, 10**6)),
                             log_likelihood=draw(st.floats(allow_nan=False)), status=draw(st.sampled_from(Status)),
                             flagged=draw(st.booleans()),
                             advice=draw(st.none() | st.builds(Advice, causes=st.lists(st.builds(
                                 Cause, _text, st.floats(0, 1), _text, _text), max_size=2).map(tuple),
                                 suggestion=_text, explanation=_text)))
               for g, p, prep in figure_keys]
    run_settings = draw(st.dictionaries(_text, scalar, max_size=3))
    return essays, attachments, skipped, notes, figures, run_settings


@pytest.fixture(scope="module")
def shared_root(tmp_path_factory):
    """One workspace for every hypothesis example: each run replaces the previous one."""
    return tmp_path_factory.mktemp("hyp") / "ws"


@settings(max_examples=60, deadline=None)
@given(run=_runs())
def test_history_run_round_trips(shared_root, run):
    essays, attachments, skipped, notes, figures, run_settings = run
    with Workspace(shared_root) as ws:
        run_id = ws.replace_run(class_name="k", term="t", run_meta={**META, "settings": run_settings},
                                essays=essays, skipped=skipped, notes=notes, attachments=attachments,
                                records=figures)
        [row] = ws.runs()
        assert row.id == run_id
        assert (row.essays_read, row.essays_skipped) == (len(essays), len(skipped))
        assert row.settings == run_settings

        back = ws.essays(run_id)
        assert back == sorted(essays, key=lambda e: e.essay_id)
        assert [e.word_count for e in back] == [e.word_count for e in sorted(essays, key=lambda e: e.essay_id)]

        assert Counter(ws.attachments(run_id)) == Counter(attachments)
        assert sorted(ws.skipped(run_id), key=repr) == sorted(skipped, key=repr)
        assert [(n.kind, n.message) for n in ws.notes(run_id)] == notes
        stored = [json.dumps(r.to_row(), sort_keys=True) for r in ws.records(run_id)]
        assert stored == [json.dumps(r.to_row(), sort_keys=True) for r in sorted(figures, key=lambda r: r.key)]
    # nothing of earlier examples is left behind
    if True:
        counts = db_counts(shared_root)
        assert (counts["runs"], counts["essays"], counts["attachments"], counts["pattern_stats"]) == (
            1, len(essays), len(attachments), len(figures))


def test_history_replace_run_keeps_other_terms_and_classes(tmp_path):
    with Workspace(tmp_path / "ws") as ws:
        a = _store(ws, "autumn", ["ola"], "2025-09-01")
        b = _store(ws, "spring", ["ola", "piotr"], "2026-02-01")
        c = _store(ws, "autumn", ["xena"], "2025-09-01", class_name="other")
        new_a = _store(ws, "autumn", ["ola", "rafal"], "2025-09-01")
        assert sorted(r.id for r in ws.runs()) == sorted([new_a, b, c])
        assert [e.writer for e in ws.essays(new_a)] == ["ola", "rafal"]
        assert ws.essays(a) == []  # the replaced run's rows are gone (ON DELETE CASCADE)


def test_history_unknown_run_lists_known_ones(tmp_path):
    with Workspace(tmp_path / "ws") as ws:
        with pytest.raises(WorkspaceError) as exc:
            ws.run("nope", "t1")
        assert str(exc.value) == f"no scan of class 'nope', term 't1' in {ws.root} (known: none yet)"
        _store(ws, "t1", ["ola"], TERM_START)
        with pytest.raises(WorkspaceError, match=r"\(known: c/t1\)$"):
            ws.run("nope", "t1")


# ------------------------------------------------------------------ writer codes


def test_history_writer_codes_in_order_of_first_appearance(tmp_path):
    with Workspace(tmp_path / "ws") as ws:
        _store(ws, "autumn", ["zoe", "adam"], "2025-09-01")
        first = ws.writer_codes("c")
        assert first == {"adam": "S01", "zoe": "S02"}  # alphabetical within a run

        _store(ws, "spring", ["bella", "adam", "yuri"], "2026-02-01")
        second = ws.writer_codes("c")
        assert second == {"adam": "S01", "zoe": "S02", "bella": "S03", "yuri": "S04"}
        assert list(second) == ["adam", "zoe", "bella", "yuri"]

        # a term scanned later but starting earlier goes first (term order, not scan order)
        _store(ws, "summer-school", ["carl"], "2025-07-01")
        assert ws.writer_codes("c") == {"carl": "S01", "adam": "S02", "zoe": "S03", "bella": "S04", "yuri": "S05"}

        # re-scanning a term with the same start date changes nothing; other classes do not interfere
        _store(ws, "spring", ["yuri", "bella", "adam"], "2026-02-01")
        _store(ws, "spring", ["aaron"], "2026-02-01", class_name="other")
        assert ws.writer_codes("c") == {"carl": "S01", "adam": "S02", "zoe": "S03", "bella": "S04", "yuri": "S05"}
        assert ws.writer_codes("other") == {"aaron": "S01"}
        assert ws.writer_codes("nobody") == {}

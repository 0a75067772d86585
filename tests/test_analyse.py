"""Tests for hingeword.analyse: extraction where the parsing runs, and the extraction cache.

Cache behaviour is checked through :class:`~hingeword.parse.ParseStats` counters and through
what a re-scan does not touch (no ``Doc``, no pipeline, no spaCy import), never through
timings. The essays are invented (``conftest.ESSAYS`` and the sentences below).
"""

from __future__ import annotations

import json
import logging
import os
import signal
import subprocess
import sys
import textwrap

import pytest

from conftest import ESSAYS, TERM_START, TINY_SETTINGS, tiny_thresholds
from hingeword import analyse as an
from hingeword import parse
from hingeword.analyse import ExtractionCache, analyse, cached_rows, to_attachments
from hingeword.errors import ParseError
from hingeword.extract import extract_doc
from hingeword.forget import forget
from hingeword.history import Workspace
from hingeword.parse import ParseStats, model_info, text_key
from hingeword.pipeline import scan

#: Invented sentences, several a text, so that worker processes get several chunks.
TEXTS = [f"Text {i}: we discussed about the plan {i} times. My results depend of the weather. "
         f"She listened to the radio and I listen music. They arrived to the station at noon." for i in range(40)]


def _scan(folder, ws, ref, **kw):
    return scan(folder, class_name="evening-b1", term="2026-spring", workspace=ws, references=[str(ref)],
                thresholds=tiny_thresholds(), term_start=TERM_START, processes=1, **kw)


def _attachments(ws_path, run_id):
    with Workspace(ws_path) as ws:
        return ws.attachments(run_id)


@pytest.mark.slow
def test_analyse_rows_rebuild_the_extractor_attachments(nlp_and_info, tmp_path):
    nlp, info = nlp_and_info
    texts = {text_key(t): t for t in TEXTS[:3]}
    rows = dict(analyse(texts, nlp, info, cache_dir=tmp_path))
    for key, text in texts.items():
        assert to_attachments(rows[key], text, "e1", "w1") == extract_doc(nlp(text), "e1", "w1")
    # and the cache gives the same rows back
    assert cached_rows(texts, info, tmp_path) == rows


@pytest.mark.slow
def test_analyse_worker_processes_give_the_same_rows(nlp_and_info, tmp_path, monkeypatch):
    nlp, info = nlp_and_info
    texts = {text_key(t): t for t in TEXTS}
    one = dict(analyse(texts, nlp, info, cache_dir=None, processes=1))
    monkeypatch.setattr(an, "MIN_WORDS_FOR_PROCESSES", 0)
    stats = ParseStats()
    ticks = []
    calls = []
    two = dict(analyse(texts, nlp, info, cache_dir=tmp_path / "cache", processes=2, keep_parses=True, stats=stats,
                       progress=ticks.append, meanwhile=lambda: calls.append(stats.parsed)))
    assert two == one
    assert len(calls) == 1  # the caller's own work ran once, while the workers had theirs
    assert (stats.parsed, stats.from_cache, sum(ticks)) == (40, 0, 40)
    # the workers wrote both caches
    assert len(list((tmp_path / "cache").rglob("*.spacy"))) == 40
    assert cached_rows(texts, info, tmp_path / "cache") == one


def _dies_on_text_7(doc, *args, **kwargs):
    if doc.text.startswith("Text 7:"):
        os.kill(os.getpid(), signal.SIGKILL)  # as the system's out-of-memory killer would
    return extract_doc(doc, *args, **kwargs)


@pytest.mark.slow
def test_analyse_killed_worker_is_a_one_line_error_not_a_hang(nlp_and_info, tmp_path, monkeypatch):
    nlp, info = nlp_and_info
    texts = {text_key(t): t for t in TEXTS}
    monkeypatch.setattr(an, "MIN_WORDS_FOR_PROCESSES", 0)
    with pytest.raises(ParseError, match="^a parser process stopped before its essays were parsed"):
        dict(analyse(texts, nlp, info, cache_dir=tmp_path, processes=2, extract=_dies_on_text_7))
    # what the other chunks found is cached; a scan again parses only the rest
    assert 0 < len(cached_rows(texts, info, tmp_path)) < len(texts)


def _comparable(row: dict) -> dict:
    """A record's row with NaN as None (NaN is not equal to itself)."""
    return {k: None if isinstance(v, float) and v != v else v for k, v in row.items()}


@pytest.mark.slow
def test_analyse_rescan_touches_no_doc_and_loads_no_pipeline(tiny_essays, tiny_ref_path, tmp_path, monkeypatch):
    folder = tiny_essays()
    first = _scan(folder, tmp_path / "ws", tiny_ref_path)

    def refuse(*args, **kwargs):
        raise AssertionError("a re-scan of cached essays must not need this")

    monkeypatch.setattr(parse, "load_model", refuse)
    monkeypatch.setattr("hingeword.pipeline.load_model", refuse)
    monkeypatch.setattr(parse.ParseCache, "get", refuse)
    monkeypatch.setattr(an, "_analyse_chunk", refuse)
    second = _scan(folder, tmp_path / "ws", tiny_ref_path)
    assert (second.parse_stats.parsed, second.parse_stats.from_cache) == (0, 4)
    assert second.model == first.model
    assert _attachments(tmp_path / "ws", second.run_id) == _attachments(tmp_path / "ws", first.run_id) != []
    assert [_comparable(r.to_row()) for r in second.records] == [_comparable(r.to_row()) for r in first.records]


@pytest.mark.slow
def test_analyse_rescan_in_a_new_process_does_not_import_spacy(tiny_essays, tiny_ref_path, tmp_path):
    folder = tiny_essays()
    _scan(folder, tmp_path / "ws", tiny_ref_path)
    child = textwrap.dedent(f"""
        import json, sys
        from hingeword.pipeline import scan
        from hingeword.score import Thresholds
        r = scan({str(folder)!r}, class_name="evening-b1", term="2026-spring", workspace={str(tmp_path / "ws")!r},
                 references=[{str(tiny_ref_path)!r}], thresholds=Thresholds(**{json.dumps(TINY_SETTINGS)}),
                 processes=1)
        print(json.dumps([r.parse_stats.parsed, r.parse_stats.from_cache, "spacy" in sys.modules, str(r.model)]))
    """)
    out = subprocess.run([sys.executable, "-c", child], capture_output=True, text=True, check=True)
    parsed, cached, spacy_loaded, model = json.loads(out.stdout.strip().splitlines()[-1])
    assert (parsed, cached, spacy_loaded) == (0, 4, False)
    assert model == str(model_info(None))


@pytest.mark.slow
def test_analyse_scan_keeps_parses_only_when_asked(tiny_essays, tiny_ref_path, tmp_path):
    folder = tiny_essays()
    _scan(folder, tmp_path / "ws", tiny_ref_path)
    assert not list((tmp_path / "ws" / "cache").rglob("*.spacy"))
    assert len(list((tmp_path / "ws" / "cache").rglob("*.json"))) == 4
    _scan(folder, tmp_path / "ws2", tiny_ref_path, keep_parses=True)
    assert len(list((tmp_path / "ws2" / "cache").rglob("*.spacy"))) == 4


@pytest.mark.slow
def test_analyse_changed_essay_invalidates_only_itself(tiny_essays, tiny_ref_path, tmp_path):
    _scan(tiny_essays(), tmp_path / "ws", tiny_ref_path)
    changed = dict(ESSAYS, **{"ben.txt": ESSAYS["ben.txt"].replace("climate change", "the school garden")})
    second = _scan(tiny_essays(changed), tmp_path / "ws", tiny_ref_path)
    assert (second.parse_stats.parsed, second.parse_stats.from_cache) == (1, 3)
    ben = [a for a in _attachments(tmp_path / "ws", second.run_id) if a.essay_id == "ben.txt"]
    assert ben and all(a.sentence in changed["ben.txt"] for a in ben)


@pytest.mark.slow
def test_analyse_new_extractor_reuses_the_parse(nlp_and_info, tmp_path):
    nlp, info = nlp_and_info
    texts = {text_key(t): t for t in TEXTS[:2]}
    list(analyse(texts, nlp, info, cache_dir=tmp_path, keep_parses=True))
    for path in tmp_path.rglob("*.json"):  # as after an EXTRACTOR_VERSION bump: no extraction cached
        path.unlink()
    stats = ParseStats()
    rows = dict(analyse(texts, nlp, info, cache_dir=tmp_path, stats=stats))
    assert (stats.parsed, stats.from_cache) == (0, 2)  # from the parse cache
    assert rows == cached_rows(texts, info, tmp_path)


@pytest.mark.parametrize("damage", ["garbage", "other text", "offsets", "folder"])
def test_analyse_damaged_cache_entry_is_a_miss(tmp_path, caplog, damage):
    info = parse.ModelInfo("p", "en_test", "1")
    text = "We discussed about the plan."
    rows = [("discuss", "VERB", "discussed", "about", "prep", 0, 28, 3, 12, 13, 18, "")]
    cache = ExtractionCache(tmp_path, info)
    cache.put("ab" * 32, text, rows)
    assert cache.get("ab" * 32, text) == rows
    path = cache.path("ab" * 32)
    if damage == "garbage":
        path.write_bytes(b"\x00\xff not json")
    elif damage == "other text":
        assert cache.get("ab" * 32, "We talked about the plan at last.") is None
        return
    elif damage == "offsets":
        entry = json.loads(path.read_text())
        entry["rows"][0][8] = 99
        path.write_text(json.dumps(entry))
    else:
        path.unlink()
        path.mkdir()
    with caplog.at_level(logging.WARNING, logger="hingeword"):
        assert cache.get("ab" * 32, text) is None
    assert str(path) in caplog.text


def test_analyse_forget_removes_the_extraction_cache(tmp_path):
    from conftest import store_hand_run

    ws_path = tmp_path / "ws"
    store_hand_run(ws_path)
    with Workspace(ws_path) as ws:
        essays = ws.essays(ws.run("morning-a2", "t1").id)
    info = parse.ModelInfo("p", "en_test", "1")
    cache = ExtractionCache(ws_path / "cache", info)
    for e in essays:
        cache.put(e.sha256, e.text, [])
    res = forget(ws_path, "morning-a2")
    assert res.cached_parses == len({e.sha256 for e in essays}) > 0
    assert not list((ws_path / "cache").rglob("*.json"))


@pytest.mark.slow
def test_analyse_model_info_without_loading_matches_the_loaded_pipeline(nlp_and_info):
    assert model_info(None) == nlp_and_info[1]
    assert model_info("no_such_model") is None

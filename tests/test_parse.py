"""Tests for hingeword.parse: loading the pipeline and the on-disk parse cache.

The sentences are invented for these tests. Cache behaviour is checked through
:class:`~hingeword.parse.ParseStats` counters, never through timings.
"""

from __future__ import annotations

import dataclasses
import logging

import pytest

from hingeword.errors import ModelError
from hingeword.extract import extract_doc
from hingeword.parse import ParseStats, load_model, parse_texts, text_key

TEXTS = [
    "We discussed about the plan for the summer camp.",
    "My brother is good in maths but bad at sport.",
    "I listen music every evening after my homework.",
]


def _parse(texts, nlp_and_info, cache_dir, info=None):
    nlp, default_info = nlp_and_info
    stats = ParseStats()
    docs = list(parse_texts(texts, nlp, info or default_info, cache_dir=cache_dir, stats=stats))
    return docs, stats


def _analysis(doc):
    return [(t.text, t.lemma_, t.pos_, t.tag_, t.dep_, t.head.i, t.is_sent_start) for t in doc]


def _cache_files(cache_dir):
    return sorted(cache_dir.rglob("*.spacy"))


@pytest.mark.slow
def test_parse_second_call_reads_everything_from_cache(nlp_and_info, tmp_path):
    fresh, first = _parse(TEXTS, nlp_and_info, tmp_path)
    assert (first.parsed, first.from_cache) == (3, 0)
    assert len(_cache_files(tmp_path)) == 3

    cached, second = _parse(TEXTS, nlp_and_info, tmp_path)
    assert (second.parsed, second.from_cache) == (0, 3)
    # a cached parse is the parse: same tokens, tags, heads, sentences and attachments
    assert [_analysis(d) for d in cached] == [_analysis(d) for d in fresh]
    assert [extract_doc(d, "e", "w") for d in cached] == [extract_doc(d, "e", "w") for d in fresh]


@pytest.mark.slow
def test_parse_changed_text_is_parsed_again(nlp_and_info, tmp_path):
    _parse(TEXTS, nlp_and_info, tmp_path)
    changed = [TEXTS[0], TEXTS[1].replace("good in", "good at"), TEXTS[2]]
    docs, stats = _parse(changed, nlp_and_info, tmp_path)
    assert (stats.parsed, stats.from_cache) == (1, 2)
    assert [d.text for d in docs] == changed  # order kept when cached and fresh docs mix


@pytest.mark.slow
def test_parse_other_model_version_does_not_reuse_cache(nlp_and_info, tmp_path):
    _parse(TEXTS, nlp_and_info, tmp_path)
    other = dataclasses.replace(nlp_and_info[1], version="0.0.1-test")
    _, stats = _parse(TEXTS, nlp_and_info, tmp_path, info=other)
    assert (stats.parsed, stats.from_cache) == (3, 0)


@pytest.mark.slow
@pytest.mark.parametrize("damage", ["garbage", "empty", "truncated"])
def test_parse_damaged_cache_file_is_parsed_again(nlp_and_info, tmp_path, caplog, damage):
    fresh, _ = _parse(TEXTS, nlp_and_info, tmp_path)
    victim = next(p for p in _cache_files(tmp_path) if p.stem == text_key(TEXTS[1]))
    data = victim.read_bytes()
    victim.write_bytes({"garbage": b"\x00\xffnot a DocBin" * 7, "empty": b"", "truncated": data[: len(data) // 2]}[damage])

    with caplog.at_level(logging.WARNING, logger="hingeword"):
        docs, stats = _parse(TEXTS, nlp_and_info, tmp_path)
    assert (stats.parsed, stats.from_cache) == (1, 2)
    assert [_analysis(d) for d in docs] == [_analysis(d) for d in fresh]
    assert any(str(victim) in r.getMessage() for r in caplog.records)

    # the damaged file was replaced by a good one
    _, again = _parse(TEXTS, nlp_and_info, tmp_path)
    assert (again.parsed, again.from_cache) == (0, 3)


@pytest.mark.slow
def test_parse_without_cache_parses_all_and_reports_progress(nlp_and_info):
    nlp, info = nlp_and_info
    stats = ParseStats()
    ticks = []
    docs = list(parse_texts(TEXTS, nlp, info, cache_dir=None, stats=stats, progress=ticks.append))
    assert [d.text for d in docs] == TEXTS
    assert (stats.parsed, stats.from_cache) == (3, 0)
    assert stats.words == sum(len(t.split()) for t in TEXTS)
    assert sum(ticks) == 3


@pytest.mark.slow
def test_parse_default_model_has_a_parser(nlp_and_info):
    nlp, info = nlp_and_info
    assert "parser" in nlp.pipe_names
    assert "ner" not in nlp.pipe_names
    assert info.name.startswith("en_core_web_")
    assert str(info) == f"{info.name} {info.version}"


def test_parse_unknown_model_is_a_one_line_model_error():
    with pytest.raises(ModelError) as exc:
        load_model("no_such_model")
    msg = str(exc.value)
    assert msg.startswith("cannot load spaCy pipeline 'no_such_model': ")
    assert "\n" not in msg


def test_parse_pipeline_without_parser_is_refused(tmp_path):
    import spacy

    spacy.blank("en").to_disk(tmp_path / "blank")
    with pytest.raises(ModelError, match=r"^spaCy pipeline '.*blank' has no dependency parser$"):
        load_model(str(tmp_path / "blank"))


def test_parse_text_key_is_sha256_of_utf8():
    # sha256 of b"abc" (FIPS 180-2, appendix B.1)
    assert text_key("abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    assert text_key("Zürich") != text_key("Zurich")

"""Typo grouping groups only forms that are not words, lists every grouping in the
teacher overview, and ``scan --keep-spelling`` undoes one (#15, "typo grouping merges
real words"). Essays and counts are invented.
"""

from __future__ import annotations

import pytest
from bs4 import BeautifulSoup

from conftest import attachment, essay
from hingeword import __version__
from hingeword.history import Workspace
from hingeword.patterns import group_governors, participle_map, typo_map
from hingeword.report import write_reports
from hingeword.rules import load_rules

#: reference lemmas near the real words learners use ("aliment" is French and Spanish
#: for food; English has it too, rare): each is a grouping target (>= 5 tokens)
LEXICON = {("base", "VERB"): 40, ("alignment", "NOUN"): 20, ("alienation", "NOUN"): 12, ("align", "VERB"): 9,
           ("discuss", "VERB"): 30, ("interested", "ADJ"): 40, ("abandon", "VERB"): 15}


@pytest.fixture(scope="module")
def words():
    return load_rules().words


@pytest.mark.parametrize("lemma", [("abase", "VERB"), ("aliment", "NOUN"), ("alimentation", "NOUN")])
def test_patterns_real_words_are_never_grouped(words, lemma):
    assert typo_map([lemma], LEXICON) != {}  # wordfreq alone takes them for misspellings (Zipf < 3)
    assert typo_map([lemma], LEXICON, words=words) == {}


def test_patterns_misspellings_are_still_grouped(words):
    assert "dicuss" not in words and "intrested" not in words
    assert typo_map([("dicuss", "VERB")], LEXICON, words=words) == {("dicuss", "VERB"): ("discuss", "VERB")}
    assert participle_map([("intreste", "VERB", "intrested")], LEXICON, words=words) == {
        ("intreste", "VERB"): ("interested", "ADJ")}


def test_patterns_teacher_keeps_a_spelling_as_written_or_by_lemma(words):
    e = essay("a.txt", "ada", "We dicussed it. I am intrested in art.")
    atts = [attachment(e, "dicuss", "dicussed", "it", pos="VERB"),
            attachment(e, "intreste", "intrested", "in", pos="VERB")]
    _, groups = group_governors(atts, LEXICON, words=words)
    assert set(groups) == {("dicuss", "VERB"), ("intreste", "VERB")}
    _, groups = group_governors(atts, LEXICON, words=words, keep=["Intrested", "dicuss"])
    assert groups == {}


def _stored_with_groups(tmp_path):
    e1 = essay("a.txt", "ada", "We dicussed about the trip. We discussed about money.")
    e2 = essay("b.txt", "bo", "They dicussed about rules.")
    atts = [attachment(e1, "dicuss", "dicussed", "about"), attachment(e1, "discuss", "discussed", "about"),
            attachment(e2, "dicuss", "dicussed", "about")]
    atts, groups = group_governors(atts, LEXICON, words=load_rules().words)
    assert groups == {("dicuss", "VERB"): ("discuss", "VERB")}
    ws = Workspace(tmp_path / "ws")
    ws.replace_run(class_name="c", term="t", run_meta={
        "tool_version": __version__, "model": "m", "model_version": "1", "extractor_version": "1", "source": "x",
        "words": 12, "settings": {"keep_spelling": ["aliment"]}, "reference": {}}, essays=[e1, e2], skipped=[],
        notes=[], attachments=atts, records=[])
    return ws


def test_report_overview_lists_every_spelling_group_and_how_to_undo_it(tmp_path):
    ws = _stored_with_groups(tmp_path)
    try:
        paths = write_reports(ws, "c", "t", tmp_path / "out", today="2026-01-01")
    finally:
        ws.close()
    soup = BeautifulSoup(paths.overview.read_text(encoding="utf-8"), "html.parser")
    section = soup.find("h2", id="spelling").find_parent("section")
    rows = [[c.get_text(" ", strip=True) for c in tr.find_all(["th", "td"])] for tr in section.tbody.find_all("tr")]
    assert rows == [["dicussed", "discuss (verb)", "2", "2", "hingeword scan … --keep-spelling dicussed"]]
    assert "Kept as written at your request ( --keep-spelling ): aliment." in section.get_text(" ", strip=True)


@pytest.mark.slow
def test_pipeline_scan_keep_spelling_counts_the_word_as_written(tiny_essays, tiny_ref_path, tmp_path):
    from conftest import TERM_START, tiny_thresholds
    from hingeword.pipeline import scan

    result = scan(tiny_essays(junk=False), class_name="c", term="t", workspace=tmp_path / "ws",
                  references=[str(tiny_ref_path)], thresholds=tiny_thresholds(), term_start=TERM_START, processes=1,
                  keep_spelling=["dicuss"])
    assert ("dicuss", "VERB") not in result.typo_groups
    assert result.typo_groups.get(("intreste", "VERB")) == ("interested", "ADJ")  # the other one stays grouped
    assert result.settings["keep_spelling"] == ["dicuss"]
    assert any(r.governor == "dicuss" for r in result.records)
    with Workspace(tmp_path / "ws", read_only=True) as ws:
        paths = write_reports(ws, "c", "t", tmp_path / "out", today="2026-01-01")
    text = paths.overview.read_text(encoding="utf-8")
    assert "--keep-spelling intrested" in text and "Kept as written at your request" in text


def test_patterns_british_spellings_are_grouped_with_the_american_reference(words):
    lexicon = {("summarize", "VERB"): 20, ("organized", "ADJ"): 12, ("base", "VERB"): 30}
    assert "summarise" in words  # a word, yet the same word as "summarize"
    assert typo_map([("summarise", "VERB"), ("abase", "VERB")], lexicon, words=words) == {
        ("summarise", "VERB"): ("summarize", "VERB")}
    assert participle_map([("organise", "VERB", "organised")], lexicon, words=words, known_zipf=5) == {
        ("organise", "VERB"): ("organized", "ADJ")}
    assert typo_map([("summarise", "VERB")], lexicon, words=words, keep={"summarise"}) == {}

"""Tests of the report stage: contexts, answer keys, escaping, names, golden HTML.

Everything here is invented for this suite: the writers' names, the essays and
the figures (which are plausible but not computed from any corpus). No spaCy:
attachments are written by hand with their character offsets.

Golden files live in ``tests/golden/report/``; regenerate them after an intended
change with ``HINGEWORD_REGEN_GOLDEN=1 python -m pytest tests/test_report.py``.
"""

from __future__ import annotations

import csv
import hashlib
import os
import re
from pathlib import Path

import pytest
from bs4 import BeautifulSoup
from hypothesis import given
from hypothesis import strategies as st

from hingeword import __version__
from hingeword.errors import HingewordError
from hingeword.extract import Attachment
from hingeword.history import Workspace
from hingeword.ingest import Essay, Skipped
from hingeword.record import PatternRecord
from hingeword.score import Thresholds
from hingeword.report import (
    SentenceView,
    answer_key,
    fmt_dec,
    fmt_ratio,
    fmt_share,
    build_handout_context,
    build_overview_context,
    build_students_context,
    load_run_view,
    segments,
    sentence_view,
    slugify,
    write_reports,
    write_trends,
)

GOLDEN = Path(__file__).parent / "golden" / "report"
REGEN = "HINGEWORD_REGEN_GOLDEN=1 python -m pytest tests/test_report.py"
TODAY = "2026-01-01"
CLASS, TERM = "Evening B2", "2026 Spring"

#: Invented essays: (essay id, writer, text). Dov's essay carries markup that must stay text.
SCRIPT = "<script>alert(1)</script>"
ESSAYS = [
    ("ada/essay1.txt", "Ada Merrow",
     "Last week we discussed about the new timetable. My plans depend of the weather. "
     "I listen music on the bus every morning."),
    ("bram.txt", "Bram Okafor",
     "Our group discussed about money for the trip. Everything depends of the bus company. "
     "Teachers always emphasize on grammar."),
    ("chiara.txt", "Chiara Lindqvist",
     "Yesterday my friends and I discussed about films for a long time, and then we went home. "
     "I listen music when I cook. Our coach emphasizes on speed. We entered into the museum at ten."),
    ("dov.txt", "Dov Harel",
     f"In class we discussed about {SCRIPT} tags &amp; &lt; signs. The price depends of the season. "
     "The guide emphasized on safety. We entered into the old castle."),
    ("eline.txt", "Eline Sorensen",
     "I am interested in history. My brother and I listen music every night. "
     "We discussed about it with our parents."),
    ("farid.txt", "Farid Nasser", "I am interested in science and I read a lot about space."),
]
NAMES = [w for _, w, _ in ESSAYS]

#: (essay id, governor, POS, word as written, preposition, the preposition's or object's words)
INSTANCES = [
    ("ada/essay1.txt", "discuss", "VERB", "discussed", "about", "about"),
    ("ada/essay1.txt", "depend", "VERB", "depend", "of", "of"),
    ("ada/essay1.txt", "listen", "VERB", "listen", "-", "music"),
    ("bram.txt", "discuss", "VERB", "discussed", "about", "about"),
    ("bram.txt", "depend", "VERB", "depends", "of", "of"),
    ("bram.txt", "emphasize", "VERB", "emphasize", "on", "on"),
    ("chiara.txt", "discuss", "VERB", "discussed", "about", "about"),
    ("chiara.txt", "listen", "VERB", "listen", "-", "music"),
    ("chiara.txt", "emphasize", "VERB", "emphasizes", "on", "on"),
    ("chiara.txt", "enter", "VERB", "entered", "into", "into"),
    ("dov.txt", "discuss", "VERB", "discussed", "about", "about"),
    ("dov.txt", "depend", "VERB", "depends", "of", "of"),
    ("dov.txt", "emphasize", "VERB", "emphasized", "on", "on"),
    ("dov.txt", "enter", "VERB", "entered", "into", "into"),
    ("eline.txt", "interested", "ADJ", "interested", "in", "in"),
    ("eline.txt", "listen", "VERB", "listen", "-", "music"),
    ("eline.txt", "discuss", "VERB", "discussed", "about", "about"),
    ("farid.txt", "interested", "ADJ", "interested", "in", "in"),
]


def make_essay(essay_id: str, writer: str, text: str) -> Essay:
    return Essay(essay_id=essay_id, writer=writer, text=text, sha256=hashlib.sha256(text.encode()).hexdigest(),
                 source=essay_id, encoding="utf-8", l1="xx", level="B2", task="free")


def make_attachment(e: Essay, governor: str, pos: str, gov_word: str, prep: str, prep_word: str) -> Attachment:
    """Locate the words in the essay; the sentence runs from the previous '. ' to the next '.'."""
    g = e.text.index(gov_word)
    p = e.text.index(prep_word, g + len(gov_word))
    s_start = e.text.rfind(". ", 0, g)
    s_start = 0 if s_start == -1 else s_start + 2
    s_end = e.text.index(".", p) + 1
    return Attachment(essay_id=e.essay_id, writer=e.writer, governor=governor, governor_pos=pos,
                      governor_text=gov_word, preposition=prep, relation="dobj" if prep == "-" else "prep",
                      sentence=e.text[s_start:s_end], sentence_start=s_start, gov_start=g, gov_end=g + len(gov_word),
                      prep_start=p, prep_end=p + len(prep_word))


def fig(governor, pos, prep, count, writers, gov_count, ref_count, ref_gov, g2, lr, cr, status, **extra) -> PatternRecord:
    """An invented pattern record (built from its flat row, as storage reads it back)."""
    return PatternRecord.from_row({
        "governor": governor, "governor_pos": pos, "preposition": prep, "learner_count": count,
        "learner_writers": writers, "learner_governor_count": gov_count, "reference_count": ref_count,
        "reference_governor_count": ref_gov, "collocation_ratio": cr, "log_likelihood": g2, "log_ratio": lr,
        "flagged": status == "over-used", "status": status,
        "learner_share": count / gov_count if gov_count else 0.0,
        "reference_share": ref_count / ref_gov if ref_gov else 0.0,
        "p_value": 0.001, "fisher_p": 0.002, "fdr_q": 0.004, "dispersion_dp": 0.3,
        "collocation_ratio_low": cr / 3, "collocation_ratio_high": cr * 3, "mi_learner": 4.2, **extra,
    })


FIGURES = [
    # stored deliberately out of order: the report sorts (flagged by writers, then G²)
    fig("interested", "ADJ", "in", 2, 2, 2, 310, 402, 0.4, 0.36, 1.2, "as native"),
    fig("emphasize", "VERB", "on", 3, 3, 3, 1, 48, 14.2, 5.58, 38.0, "over-used"),  # no causes yet
    fig("listen", "VERB", "-", 3, 3, 3, 2, 96, 19.6, 5.58, 41.5, "over-used",
        suggestion="listen to", suggested_preposition="to", suggestion_share=0.81,
        native_pattern="listen to something",
        explanation="We listen to music, to the radio, to a friend."),
    fig("depend", "VERB", "of", 3, 3, 3, 3, 210, 23.1, 6.13, 70.2, "over-used",
        cause="related-word", cause_label="by analogy with a related word",
        causes=[{"code": "related-word", "confidence": 0.7, "label": "by analogy with a related word",
                 "evidence": "'independent of' 41 times in the reference"},
                {"code": "l1-transfer", "confidence": 0.2, "label": "from the first language",
                 "evidence": "teacher note for xx"}],
        suggestion="depend on", suggested_preposition="on", suggestion_share=0.87,
        native_pattern="depend on something", explanation="It depends on the weather."),
    fig("discuss", "VERB", "about", 5, 5, 5, 1, 320, 48.9, 8.64, 324.0, "over-used",
        cause="noun-pattern", cause_label="carried over from a noun",
        causes=[{"code": "noun-pattern", "confidence": 0.8, "label": "carried over from a noun",
                 "evidence": "'discussion about' 37 times, 'discuss' + object 251 times in the reference"}],
        suggestion="discuss + direct object", suggested_preposition="-", suggestion_share=0.78,
        native_pattern="discuss something",
        explanation="We discuss something: no 'about'. But: a discussion about something."),
    fig("enter", "VERB", "into", 2, 2, 2, 9, 180, 11.0, 4.2, 20.0, "over-used",
        causes=[{"code": "directional", "confidence": 0.5, "label": "read as movement into a place",
                 "evidence": "'enter' + object 150 of 180 uses in the reference"}], suggestion="enter + direct object",
        suggested_preposition="-", native_pattern="enter something", explanation="We enter a room."),
    fig("discuss", "VERB", "-", 0, 0, 5, 251, 320, 15.3, -6.0, 0.0, "under-used"),
]

SETTINGS = {**Thresholds(min_count=2).as_dict(), "term_start": "2026-01-10"}
REFERENCE = {"name": "brown", "words": 1012528, "source": "Brown corpus sample texts", "licence": "see PROVENANCE",
             "limits": "American English printed in 1961; no learner-age topics."}


def store(workspace: Path) -> Workspace:
    essays = [make_essay(*e) for e in ESSAYS]
    by_id = {e.essay_id: e for e in essays}
    atts = [make_attachment(by_id[i[0]], *i[1:]) for i in INSTANCES]
    ws = Workspace(workspace)
    ws.replace_run(
        class_name=CLASS, term=TERM,
        run_meta={"created": "2026-01-12T09:30:00+00:00", "tool_version": __version__, "model": "en_core_web_sm",
                  "model_version": "3.8.0", "extractor_version": "1", "source": "essays",
                  "words": sum(e.word_count for e in essays), "settings": SETTINGS, "reference": REFERENCE},
        essays=essays, skipped=[Skipped("notes.pdf", "not an essay: .pdf files are not read")],
        notes=[("typo", "'emphasise' (VERB) grouped under 'emphasize'")],
        attachments=atts, records=FIGURES)
    # the teacher's decision, kept apart from the figures (hingeword dismiss)
    ws.dismiss("enter", "into", class_name=CLASS, reason="entering a building is the topic of unit 4", on="2025-12-15")
    return ws


@pytest.fixture
def ws(tmp_path):
    w = store(tmp_path / "ws")
    yield w
    w.close()


@pytest.fixture
def data(ws):
    return load_run_view(ws, CLASS, TERM)


@pytest.fixture
def written(ws, tmp_path):
    return write_reports(ws, CLASS, TERM, tmp_path / "out", today=TODAY)


def soup_of(path: Path) -> BeautifulSoup:
    return BeautifulSoup(path.read_text(encoding="utf-8"), "html.parser")


def text_of(path: Path) -> str:
    return " ".join(soup_of(path).get_text(" ").split())


def normalise(html: str) -> str:
    html = re.sub(r"hingeword \d+(?:\.\d+)+\S*?(?=[\s<\"])", "hingeword VERSION", html)
    return re.sub(r"\d{4}-\d{2}-\d{2}(?:T\d{2}:\d{2}:\d{2}(?:[+-]\d{2}:\d{2}|Z)?)?", "DATE", html)


# ------------------------------------------------------------------ pure helpers


def test_report_slugify_makes_safe_folder_names():
    assert slugify("evening-b2") == "evening-b2"  # a plain name is its own folder name
    assert re.fullmatch(r"evening-b2-[0-9a-f]{8}", slugify("Evening B2"))  # changed: a hash of the name added
    assert re.fullmatch(r"2026-spring-[0-9a-f]{8}", slugify("2026 Spring"))
    assert re.fullmatch(r"évening-b2-[0-9a-f]{8}", slugify("Évening/B2 ../.."))
    assert re.fullmatch(r"unnamed-[0-9a-f]{8}", slugify("///"))


def test_report_figures_rounded_for_reading():
    values = (324.4, 41.52, 2.345, 0.0471, 0.00312, 1e-9, 0, None, float("inf"), float("nan"))
    assert [fmt_ratio(x) for x in values] == [
        "324", "41.5", "2.35", "0.047", "0.0031", "< 0.0001", "0", "–", "∞", "–"]
    assert [fmt_share(x) for x in (1, 0.123, 0.0996, 0.0034, 0, None)] == ["100%", "12%", "10%", "0.3%", "0%", "–"]
    assert (fmt_dec(8.6449, 2, sign=True), fmt_dec(-6, 2, sign=True), fmt_dec(0.001, 2, sign=True)) == (
        "+8.64", "−6.00", "0.00")
    assert fmt_dec(1012528.0, 0) == "1,012,528"


def test_report_segments_mark_spans_and_merge_overlaps():
    assert segments("we discussed about it", [(3, 12), (13, 18)]) == (
        ("we ", False), ("discussed", True), (" ", False), ("about", True), (" it", False))
    assert segments("abcdef", [(0, 3), (2, 4)]) == (("abcd", True), ("ef", False))
    assert segments("abc", [(2, 9)]) == (("abc", False),)  # out of range: ignored


def view(text: str, gov: str, prep: str, *, after: bool = True) -> SentenceView:
    g = text.index(gov)
    p = text.index(prep, g + len(gov)) if after else text.index(prep)
    return SentenceView("w", "e", text, (g, g + len(gov)), (p, p + len(prep)), 0)


@pytest.mark.parametrize(("text", "gov", "prep", "learner", "suggested", "expected", "after"), [
    # a preposition replaced by another
    ("My plans depend of the weather.", "depend", "of", "of", "on", "My plans depend on the weather.", True),
    # a preposition removed with the space after it, or before it when stranded
    ("We discussed about the trip.", "discussed", "about", "about", "-", "We discussed the trip.", True),
    ("It was the plan we discussed about.", "discussed", "about", "about", "-", "It was the plan we discussed.", True),
    # a preposition inserted before the object, or after the verb when the object comes first
    ("I listen music on the bus.", "listen", "music", "-", "to", "I listen to music on the bus.", True),
    ("It is the song that I listen every day.", "listen", "that", "-", "to",
     "It is the song that I listen to every day.", False),
    # capitals kept at the start of a sentence
    ("Of the weather it depends.", "depends", "Of", "of", "on", "On the weather it depends.", False),
])
def test_report_answer_key_three_slot_cases(text, gov, prep, learner, suggested, expected, after):
    v = view(text, gov, prep, after=after)
    answer, segs = answer_key(v, learner, suggested)
    assert answer == expected
    assert "".join(t for t, _ in segs) == expected
    keys = [t for t, k in segs if k]
    assert keys[0].lower() == gov.lower() or keys[-1].lower() == gov.lower()
    if suggested != "-":
        assert suggested in [k.lower() for k in keys]


def test_report_answer_key_none_without_a_usable_suggestion():
    v = view("We discussed about it.", "discussed", "about")
    assert answer_key(v, "about", None) is None
    assert answer_key(v, "about", "about") is None
    assert answer_key(SentenceView("w", "e", "x", None, None, 0), "about", "-") is None


def test_report_sentence_view_cuts_long_sentences_around_the_pattern():
    text = " ".join(["word"] * 60) + " we discussed about the plan " + " ".join(["more"] * 60) + "."
    g = text.index("discussed")
    p = text.index("about")
    a = Attachment("e", "w", "discuss", "VERB", "discussed", "about", "prep", text, 0, g, g + 9, p, p + 5)
    v = sentence_view(a, max_chars=80)
    assert v.text.startswith("… ") and v.text.endswith(" …")
    assert len(v.text) <= 80 + 4
    assert v.text[v.gov[0]:v.gov[1]] == "discussed" and v.text[v.prep[0]:v.prep[1]] == "about"
    assert " wor " not in v.text and "mor …" not in v.text  # whole words only


WORDS = st.text(alphabet="abcdefgh", min_size=1, max_size=9)


@given(st.lists(WORDS, min_size=4, max_size=80), st.data(), st.integers(min_value=30, max_value=200))
def test_report_sentence_view_keeps_the_pattern_whole(words, data, max_chars):
    """Cut or not, the view shows the governor and preposition exactly as written, within the length."""
    i = data.draw(st.integers(min_value=0, max_value=len(words) - 2))
    j = data.draw(st.integers(min_value=i + 1, max_value=min(len(words) - 1, i + 3)))
    text = " ".join(words) + "."
    starts = [sum(len(w) + 1 for w in words[:k]) for k in range(len(words))]
    g, p = (starts[i], starts[i] + len(words[i])), (starts[j], starts[j] + len(words[j]))
    a = Attachment("e", "w", words[i], "VERB", words[i], words[j], "prep", "  " + text + " ", 100 - 2,
                   100 + g[0], 100 + g[1], 100 + p[0], 100 + p[1])
    v = sentence_view(a, max_chars=max_chars)
    assert v.text[v.gov[0]:v.gov[1]] == words[i] and v.text[v.prep[0]:v.prep[1]] == words[j]
    assert len(v.text) <= max(max_chars, p[1] - g[0]) + 4
    core = v.text.removeprefix("… ").removesuffix(" …")
    assert core in text and (core == text) == (v.text == core)


def test_report_sentence_view_without_spans_when_offsets_are_damaged():
    a = Attachment("e", "w", "discuss", "VERB", "discussed", "about", "prep", "Short.", 0, 3, 12, 13, 18)
    v = sentence_view(a)
    assert (v.text, v.gov, v.segments) == ("Short.", None, (("Short.", False),))


# ------------------------------------------------------------------ contexts


def test_report_handout_context_top_patterns_examples_and_practice(data):
    ctx = build_handout_context(data, top=5, today=TODAY, teacher=False)
    assert [p["class_pattern"] for p in ctx["patterns"]] == [
        "discuss about something", "depend of something", "listen something", "emphasize on something"]
    assert ctx["more_count"] == 0
    first = ctx["patterns"][0]
    assert first["native_pattern"] == "discuss something"
    assert first["reason"] == "Carried over from the noun 'discussion': we say 'a discussion about something'."
    assert first["writers"] == 5
    # three examples, shortest first, from different writers; the practice sentence is none of them
    shown = ["".join(t for t, _ in ex["segments"]) for ex in first["examples"]]
    assert shown == ["We discussed about it with our parents.", "Our group discussed about money for the trip.",
                     "Last week we discussed about the new timetable."]
    practice = "".join(t for t, _ in first["practice"]["segments"])
    assert practice not in shown and practice.startswith("In class we discussed about")
    assert all(p["practice"] is None or p["practice"]["answer"] is None for p in ctx["patterns"])
    # a pattern the causes stage has not seen: no suggestion, no reason, no answer
    last = ctx["patterns"][-1]
    assert (last["native_pattern"], last["reason"], last["explanation"]) == (None, None, None)


def test_report_handout_context_top_limits_and_counts_the_rest(data):
    ctx = build_handout_context(data, top=2, today=TODAY)
    assert len(ctx["patterns"]) == 2 and ctx["more_count"] == 2


def test_report_teacher_context_answer_keys_for_the_three_slot_cases(data):
    ctx = build_handout_context(data, top=5, today=TODAY, teacher=True)
    answers = {p["class_pattern"]: p["practice"]["answer"] for p in ctx["patterns"] if p["practice"]}
    # removed preposition (discuss about -> discuss + object)
    assert answers["discuss about something"] == f"In class we discussed {SCRIPT} tags &amp; &lt; signs."
    # replaced preposition (depend of -> depend on): three sentences, so two examples and the longest to practise
    assert answers["depend of something"] == "Everything depends on the bus company."
    # inserted preposition (listen + object -> listen to)
    assert answers["listen something"] == "My brother and I listen to music every night."
    # no suggestion yet: the teacher copy says so instead of inventing one
    assert answers["emphasize on something"] is None


def test_report_overview_lists_at_most_overview_rows_and_says_where_the_rest_are(data, monkeypatch):
    """A corpus has tens of thousands of patterns, most used once: the overview's table keeps the first
    OVERVIEW_ROWS in rank order (flagged first) and says that every pattern is in patterns.csv."""
    import hingeword.report.overview as ov

    monkeypatch.setattr(ov, "OVERVIEW_ROWS", 3)
    ctx = build_overview_context(data, today=TODAY)
    assert [r["pattern"] for r in ctx["rows"]] == ["discuss about", "depend of", "listen + object"]
    assert ctx["rows_more"] == 3 and ctx["summary"]["patterns"] == 6  # the count stays the whole run's
    from hingeword.report.rendering import render

    html = render("overview.html", ctx)
    assert "The first 3 of 6 patterns" in html and "3 more patterns" in html and "patterns.csv" in html


def test_report_overview_context_rows_flagged_first_with_figures(data):
    ctx = build_overview_context(data, today=TODAY)
    pats = [r["pattern"] for r in ctx["rows"]]
    assert pats[:5] == ["discuss about", "depend of", "listen + object", "emphasize on", "enter into"]
    assert pats[5:] == ["interested in"]  # then by status order (as native); unused native forms apart:
    assert [r["pattern"] for r in ctx["unused_rows"]] == ["discuss + object"]
    assert ctx["summary"]["patterns"] == 6 and ctx["summary"]["not_used"] == 1
    row = ctx["rows"][0]
    assert (row["learner_count"], row["reference_governor_count"], row["collocation_ratio"], row["log_likelihood"],
            row["log_ratio"], row["learner_share"], row["reference_share"]) == (
        "5", "320", "324", "48.9", "+8.64", "100%", "0.3%")
    assert ctx["rows"][4]["status"] == "over-used (dismissed)"
    assert ctx["unused_rows"][0]["log_ratio"] == "−6.00"
    assert [f["pattern"] for f in ctx["flagged"]] == ["discuss about", "depend of", "listen + object", "emphasize on"]
    dep = ctx["flagged"][1]
    assert [c["label"] for c in dep["causes"]] == ["by analogy with a related word", "from the first language"]
    assert dep["causes"][0]["evidence"] == "'independent of' 41 times in the reference"
    assert [c["confidence"] for c in dep["causes"]] == ["0.70", "0.20"]
    assert dep["since_last_term"] == "first term on record"
    assert ctx["flagged"][2]["causes"] == [] and ctx["flagged"][2]["cause_label"] is None
    assert {line["writer"] for line in ctx["flagged"][0]["kwic"]} == {"S01", "S02", "S03", "S04", "S05"}
    assert ctx["dismissed"] == [{"pattern": "enter into", "reason": "entering a building is the topic of unit 4",
                                 "date": "2025-12-15"}]
    assert ("Different writers a pattern needs", "2") in ctx["thresholds"]
    assert ctx["reference"]["parts"][0]["limits"].startswith("American English printed in 1961")
    assert ctx["skipped"] == [{"source": "file 1 (.pdf)", "reason": "not an essay: .pdf files are not read"}]
    assert ctx["show_essay_ids"] is False


def test_report_students_context_one_sheet_per_writer(data):
    ctx = build_students_context(data, today=TODAY)
    assert [s["label"] for s in ctx["students"]] == ["S01", "S02", "S03", "S04", "S05", "S06"]
    dov = ctx["students"][3]
    assert [g["class_pattern"] for g in dov["patterns"]] == [
        "discuss about something", "depend of something", "emphasize on something"]  # not the dismissed one
    farid = ctx["students"][5]
    assert farid["nothing_flagged"] is True and farid["patterns"] == []
    real = build_students_context(data, names="real", today=TODAY)
    assert [s["label"] for s in real["students"]] == sorted(NAMES, key=str.casefold)


# ------------------------------------------------------------------ written pages


def test_report_write_reports_paths_and_csv(written, tmp_path):
    folder = tmp_path / "out" / slugify(CLASS) / slugify(TERM)
    assert written.folder == folder
    for p in (written.handout, written.handout_teacher, written.overview, written.students, written.patterns_csv):
        assert p.parent == folder and p.stat().st_size > 0
    with written.patterns_csv.open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(FIGURES)
    assert list(rows[0])[:3] == ["governor", "governor_pos", "preposition"]


PAGES = ["handout", "handout_teacher", "overview", "students"]


@pytest.mark.parametrize("page", PAGES)
def test_report_golden_html(written, page):
    html = normalise(getattr(written, page).read_text(encoding="utf-8"))
    golden = GOLDEN / (getattr(written, page).name)
    if os.environ.get("HINGEWORD_REGEN_GOLDEN"):
        golden.parent.mkdir(parents=True, exist_ok=True)
        golden.write_text(html, encoding="utf-8")
    assert golden.exists(), f"no golden file {golden}; create it with: {REGEN}"
    assert html == golden.read_text(encoding="utf-8"), (
        f"{golden.name} differs from the golden file; if the change is intended, regenerate with: {REGEN}")


@pytest.mark.parametrize("page", PAGES)
def test_report_pages_are_accessible_and_self_contained(written, page):
    soup = soup_of(getattr(written, page))
    assert soup.html["lang"] == "en"
    assert soup.find("meta", attrs={"name": "viewport"})
    assert soup.find("main") and soup.find("header") and soup.find("footer")
    assert len(soup.find_all("h1")) == 1
    assert not soup.find_all("script") and not soup.find_all("link") and not soup.find_all("img")
    assert not re.search(r"(?:src|href)\s*=\s*[\"']?(?:https?:)?//", str(soup))  # nothing from the network
    for table in soup.find_all("table"):
        assert table.find("caption")
        assert all(th.get("scope") in ("col", "row") for th in table.find_all("th"))
    css = soup.find("style").get_text()
    assert "@page { size: A4" in css and "thead { display: table-header-group; }" in css


def test_report_handout_titles_caution_and_no_writers(written):
    soup = soup_of(written.handout)
    assert soup.title.get_text() == "Small words that matter: Evening B2, 2026 Spring"
    assert [h.get_text() for h in soup.find_all("h2")][1:] == [
        "1. “discuss about something”", "2. “depend of something”", "3. “listen something”",
        "4. “emphasize on something”"]
    caution = soup.find("aside", class_="caution").get_text(" ")
    assert "These are patterns in the class's writing, not marks." in caution
    assert "ask your teacher" in caution
    text = text_of(written.handout)
    for name in NAMES + [e[0] for e in ESSAYS]:
        assert name not in text and name.split()[0] not in text
    assert not re.search(r"\bS\d\d\b", text)
    assert "Answer:" not in text
    marks = [m.get_text() for m in soup.find_all("mark")]
    assert "discussed" in marks and "about" in marks and "music" in marks
    assert all(m.find("strong") for m in soup.find_all("mark"))  # bold, not colour alone


def test_report_teacher_handout_has_answers(written):
    text = text_of(written.handout_teacher)
    assert "Teacher copy, with answers" in text
    assert "Answer: Everything depends on the bus company." in text
    assert "Answer: My brother and I listen to music every night." in text


def test_report_dismissed_pattern_leaves_handouts_stays_in_overview(written):
    for page in (written.handout, written.handout_teacher, written.students):
        assert "enter" not in text_of(page).lower()
    soup = soup_of(written.overview)
    section = soup.find("h2", id="dismissed").find_parent("section").get_text(" ")
    assert "enter into" in section and "entering a building is the topic of unit 4" in section
    assert "2025-12-15" in section


def test_report_overview_headings_tables_and_caution(written):
    soup = soup_of(written.overview)
    assert soup.title.get_text() == "Teacher overview: Evening B2, 2026 Spring"
    h2 = [h.get_text() for h in soup.find_all("h2")]
    assert h2 == ["Read this first", "At a glance", "Flagged patterns", "All patterns", "Dismissed patterns",
                  "Spelling groups", "Essays skipped", "Notes from the scan", "How this was measured"]
    caution = soup.find("aside", class_="caution").get_text()
    assert "Flags are candidates for your judgement, not verdicts." in caution
    # how to dismiss, with the pattern spelt as the page spells it, and that the handouts need a rebuild
    assert "hingeword dismiss discuss about --class 'Evening B2'" in caution
    assert "change only when you build the reports again" in caution
    assert "hingeword report --class 'Evening B2' --term '2026 Spring'" in caution
    table = soup.find("table", class_="figures")
    assert [th.get_text() for th in table.thead.find_all("th")] == [
        "Pattern", "Word class", "In class", "Writers", "All uses of the word (class)", "Class share", "In reference",
        "All uses of the word (reference)", "Reference share", "Collocation ratio", "G²", "Log Ratio", "Status"]
    assert [th.get_text() for th in table.tbody.find_all("th", scope="row")][:2] == ["discuss about", "depend of"]
    assert table.find_parent("div", class_="table-wrap")["tabindex"] == "0"
    text = text_of(written.overview)
    assert "'discussion about' 37 times" in text
    assert "file 1 (.pdf)" in text and "not an essay: .pdf files are not read" in text
    assert "notes.pdf" not in text and "File names are hidden here" in text
    assert "'emphasise' (VERB) grouped under 'emphasize'" in text
    assert "Limits: American English printed in 1961" in text


def test_report_students_one_sheet_per_page(written):
    soup = soup_of(written.students)
    sheets = soup.find_all("section", class_="sheet")
    assert [s.h2.get_text() for s in sheets] == [f"Feedback for S0{i}" for i in range(1, 7)]
    assert "break-after: page" in soup.find("style").get_text()
    assert "Nice work!" in sheets[5].get_text()
    assert sheets[0].find_all("mark")


def test_report_essay_markup_stays_text(written):
    for page in (written.handout, written.overview, written.students):
        html = page.read_text(encoding="utf-8")
        soup = BeautifulSoup(html, "html.parser")
        assert not soup.find_all("script")
        assert "<script>" not in html
    students = text_of(written.students)
    assert f"In class we discussed about {SCRIPT} tags &amp; &lt; signs." in students
    assert "&lt;script&gt;alert(1)&lt;/script&gt; tags &amp;amp; &amp;lt;" in written.students.read_text()
    assert SCRIPT in text_of(written.handout)


def test_report_pseudonyms_by_default_real_names_on_request(ws, written, tmp_path):
    for page in (written.handout, written.handout_teacher, written.overview, written.students):
        html = page.read_text(encoding="utf-8")
        for name in NAMES + ["ada/essay1.txt", "chiara.txt"]:
            assert name not in html, (page.name, name)
    real = write_reports(ws, CLASS, TERM, tmp_path / "real", names="real", today=TODAY)
    students = text_of(real.students)
    assert all(f"Feedback for {n}" in students for n in NAMES)
    overview = text_of(real.overview)
    assert "Ada Merrow" in overview and "ada/essay1.txt" in overview
    assert not any(n in text_of(real.handout) for n in NAMES)  # the class handout never names anyone


def test_report_template_dir_overrides_and_strict_names(ws, tmp_path):
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "_caution_students.html").write_text(
        '<aside class="caution"><h2>Note</h2><p>Our own words for {{ class_name }}.</p></aside>\n', encoding="utf-8")
    paths = write_reports(ws, CLASS, TERM, tmp_path / "o1", today=TODAY, template_dir=mine)
    assert "Our own words for Evening B2." in text_of(paths.handout)
    (mine / "overview.html").write_text("{{ no_such_name }}", encoding="utf-8")
    with pytest.raises(HingewordError, match="no_such_name"):
        write_reports(ws, CLASS, TERM, tmp_path / "o2", today=TODAY, template_dir=mine)


def test_report_rejects_unknown_names_option(ws, tmp_path):
    with pytest.raises(HingewordError, match="pseudonyms' or 'real"):
        write_reports(ws, CLASS, TERM, tmp_path / "o", names="initials")


def _luminance(hex_colour: str) -> float:
    """Relative luminance, WCAG 2.1 definition (W3C, "relative luminance", sRGB)."""
    rgb = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def _contrast(a: str, b: str) -> float:
    hi, lo = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def test_report_palette_contrast_meets_wcag_aa():
    """Every text colour on every background it is used on reaches 4.5:1 (WCAG 2.1, 1.4.3, level AA)."""
    css = (Path(__file__).parents[1] / "src" / "hingeword" / "templates" / "_style.css").read_text(encoding="utf-8")
    var = dict(re.findall(r"--([a-z-]+):\s*(#[0-9a-fA-F]{6});", css))
    assert _contrast("#000000", "#ffffff") == pytest.approx(21.0)  # the scale's end points
    pairs = [("ink", "paper"), ("ink", "page"), ("ink", "soft"), ("ink", "mark"), ("ink", "warm"),
             ("muted", "paper"), ("muted", "soft"), ("accent", "paper"), ("accent", "soft")]
    for fg, bg in pairs:
        assert _contrast(var[fg], var[bg]) >= 4.5, (fg, bg, round(_contrast(var[fg], var[bg]), 2))


def test_report_empty_run_still_writes_every_page(tmp_path):
    with Workspace(tmp_path / "ws") as w:
        e = make_essay("a.txt", "Ada Merrow", "I read a book.")
        w.replace_run(class_name="c", term="t", run_meta={
            "tool_version": __version__, "model": "m", "model_version": "1", "extractor_version": "1",
            "source": "x", "words": 4, "settings": {}, "reference": {}}, essays=[e], skipped=[], notes=[],
            attachments=[], records=[])
        paths = write_reports(w, "c", "t", tmp_path / "out", today=TODAY)
    assert "No pattern stood out" in text_of(paths.handout)
    assert "Nothing is flagged in this run." in text_of(paths.overview)
    assert "Nice work!" in text_of(paths.students)


def test_report_write_trends_page_with_inline_charts(ws, tmp_path):
    """Two terms: an earlier one where only "discuss about" was flagged (2 writers, invented)."""
    essays = [make_essay(*e) for e in ESSAYS[:2]]
    atts = [make_attachment(essays[i], "discuss", "VERB", "discussed", "about", "about") for i in (0, 1)]
    ws.replace_run(class_name=CLASS, term="2025 Autumn", run_meta={
        "created": "2025-09-20T09:00:00+00:00", "tool_version": __version__, "model": "m", "model_version": "1",
        "extractor_version": "1", "source": "x", "words": 40, "settings": {**SETTINGS, "term_start": "2025-09-01"},
        "reference": REFERENCE}, essays=essays, skipped=[], notes=[], attachments=atts,
        records=[fig("discuss", "VERB", "about", 2, 2, 2, 1, 320, 20.0, 8.0, 300.0, "over-used")])
    path = write_trends(ws, CLASS, tmp_path / "out", today=TODAY)
    assert path == tmp_path / "out" / slugify(CLASS) / "trends.html"
    soup = soup_of(path)
    assert soup.title.get_text() == "Trends across terms: Evening B2"
    assert not soup.find_all("script") and len(soup.find_all("svg")) >= 2
    table = soup.find("table", class_="figures")
    assert [th.get_text() for th in table.thead.find_all("th")] == ["Pattern", "2025 Autumn", "2026 Spring", "Status now"]
    rows = {tr.th.get_text(" ", strip=True): tr.find_all("td")[-1].get_text() for tr in table.tbody.find_all("tr")}
    assert rows["discuss about"] == "recurring" and rows["depend of"] == "new"
    assert rows["enter into (dismissed)"] == "new"
    # the overview of the later term now compares with the earlier one
    overview = text_of(write_reports(ws, CLASS, TERM, tmp_path / "out", today=TODAY).overview)
    assert re.search(r"1\. discuss about .* Trend: also flagged last term \(500\.0 → \d+\.\d per 10,000 words\)", overview)
    assert re.search(r"2\. depend of .* Trend: new this term\.", overview)



def test_report_private_key_says_who_is_who_and_no_page_links_to_it(ws, tmp_path):
    paths = write_reports(ws, CLASS, TERM, tmp_path / "out", today=TODAY)
    key = soup_of(paths.key)
    assert "Private: not for sharing" in key.get_text()
    rows = [[c.get_text() for c in tr.find_all(["th", "td"])] for tr in key.tbody.find_all("tr")]
    codes = dict(load_run_view(ws, CLASS, TERM).codes)
    assert [r[:2] for r in rows] == sorted([[code, w] for w, code in codes.items()])  # names whole, never cut
    for page in (paths.handout, paths.handout_teacher, paths.overview, paths.students):
        soup = soup_of(page)
        assert not [a for a in soup.find_all("a") if "key.html" in (a.get("href") or "")], page.name
        if page != paths.overview:  # the overview names the file for the teacher; student pages never do
            assert "key.html" not in page.read_text(encoding="utf-8")
        assert not any(w in soup.get_text() for w in codes if len(w) > 3), page.name  # pseudonyms by default
    # names on the sheets only when asked
    named = write_reports(ws, CLASS, TERM, tmp_path / "named", today=TODAY, names_on_sheets=True)
    lines = [p.get_text(" ", strip=True) for p in soup_of(named.students).find_all("p", class_="name-line")]
    assert sorted(lines) == sorted(f"Name: {w}" for w in codes)
    assert "Name:" in soup_of(paths.students).find("p", class_="name-line").get_text()
    assert not soup_of(paths.students).find("p", class_="filled")


def test_report_titles_never_wrap_at_a_hyphen_and_pages_say_made_on(written):
    for page in (written.handout, written.overview, written.students, written.key):
        soup = soup_of(page)
        assert soup.h1.find("span", class_="nowrap") is not None or "-" not in soup.h1.get_text()
        assert f"made on {TODAY}" in soup.get_text(" ").lower()


def test_report_overview_counts_read_in_the_singular():
    """A pooled flag the class wrote once reads "1 use by 1 writer", never "1 uses by 1 writers"."""
    from hingeword.report.overview import evidence_words

    r = PatternRecord(governor="discuss", governor_pos="VERB", preposition="about", learner_count=1,
                      learner_writers=1, flagged=True, evidence="workspace", pooled_count=12, pooled_writers=7,
                      pooled_classes=3)
    assert evidence_words(r) == ("In this class: 1 use by 1 writer; across 3 class-terms of this workspace: "
                                 "12 uses by 7 writers (the flag rests on all of them)")

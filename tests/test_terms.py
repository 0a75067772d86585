"""Term start dates from term names (hingeword.terms) and what a scan without --term-start says."""

from __future__ import annotations

import pytest

from conftest import store_hand_run
from hingeword.history import Workspace
from hingeword.pipeline import _term_start
from hingeword.terms import infer_term_start


@pytest.mark.parametrize("term,start", [
    ("2025-autumn", "2025-09-01"), ("2026-spring", "2026-03-01"), ("2026-summer", "2026-06-01"),
    ("Winter 2027", "2027-01-01"), ("fall 2026", "2026-09-01"), ("2026-01", "2026-01-01"),
    ("2026-01-12", "2026-01-12"), ("March 2026", "2026-03-01"), ("2026 sep", "2026-09-01"),
    ("term 2", None), ("B1 group", None), ("2025/2026 autumn", None), ("2026-13", None), ("2026 spring summer", None),
])
def test_terms_start_from_the_name(term, start):
    assert infer_term_start(term) == start


def test_terms_scan_without_term_start_says_how_the_date_was_chosen(tmp_path):
    root = tmp_path / "ws"
    store_hand_run(root, term="2025-autumn", term_start="2025-09-01")
    with Workspace(root) as ws:
        start, note = _term_start(ws, "morning-a2", "2026-spring", None)
        assert start == "2026-03-01" and "taken from the term name '2026-spring'" in note
        start, note = _term_start(ws, "morning-a2", "term 2", None)  # no date in the name: today, with a warning
        assert "no --term-start and none in the name 'term 2'" in note and "--term-start YYYY-MM-DD" in note
        old = ws.run("morning-a2", "2025-autumn")
        assert _term_start(ws, "morning-a2", "2025-autumn", old) == ("2025-09-01", "")  # a re-scan keeps its date
        assert _term_start(ws, "other-class", "term 2", None)[1] == ""  # a first term needs no warning


def test_terms_scan_summary_shows_the_order_the_warning_and_one_pattern_count():
    from types import SimpleNamespace

    from hingeword.console import scan_summary
    from hingeword.ingest import IngestResult
    from hingeword.parse import ParseStats
    from hingeword.record import Advice, PatternRecord, Status

    flagged = PatternRecord("listen", "VERB", "-", learner_count=5, learner_writers=4, learner_governor_count=6,
                            flagged=True, status=Status.OVER_USED,
                            advice=Advice(suggestion="listen to", suggested_preposition="to"))
    native = PatternRecord("listen", "VERB", "to", learner_count=0, learner_governor_count=6, reference_share=0.8,
                           status=Status.UNDER_USED)
    result = SimpleNamespace(
        ingest=IngestResult([]), parse_stats=ParseStats(), model="m", reference_name="r", class_name="b2",
        term="2026-spring", typo_groups={}, attachments=6, records=[flagged, native],
        term_note="term start 2026-03-01 taken from the term name '2026-spring'; …",
        term_order=[("2025-autumn", "2025-09-01"), ("2026-spring", "2026-03-01")])
    lines = scan_summary(result, 10)
    assert "  Warning: term start 2026-03-01 taken from the term name '2026-spring'; …" in lines
    assert "  terms of b2 in order: 2025-autumn (2025-09-01) → 2026-spring (2026-03-01)" in lines
    assert any(line.startswith("6 attachments in 1 pattern;") for line in lines)  # the patterns the class used
    assert not any(line.startswith("Under-used") for line in lines)  # "listen to" is the flag's other side
    assert any("the other side of these flags: listen to 0× in the class, natives 80%" in line for line in lines)

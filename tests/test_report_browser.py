"""Print and screenshot the reports in headless Chromium (Debian's ``chromium``).

Uses the invented run of ``test_report.py``. Skipped when ``chromium`` or
``pdftotext`` (poppler-utils) is missing; ``.ci/run`` installs both.
"""

from __future__ import annotations

import re
import shutil
import struct
import subprocess
from pathlib import Path

import pytest

from hingeword import __version__
from hingeword.history import Workspace
from hingeword.report import write_reports
from test_report import CLASS, SETTINGS, TERM, TODAY, fig, make_attachment, make_essay, store

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not (shutil.which("chromium") and shutil.which("pdftotext")),
                       reason="needs chromium and pdftotext (apt-get install chromium poppler-utils)"),
]


def chromium(tmp_path: Path, page: Path, *args: str) -> None:
    profile = tmp_path / f"profile-{len(list(tmp_path.glob('profile-*')))}"
    cmd = ["chromium", "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
           f"--user-data-dir={profile}", *args, page.resolve().as_uri()]
    subprocess.run(cmd, check=True, capture_output=True, timeout=180)


def print_pdf(tmp_path: Path, page: Path) -> Path:
    pdf = tmp_path / (page.stem + ".pdf")
    chromium(tmp_path, page, f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert pdf.stat().st_size > 1000
    return pdf


def page_count(pdf: Path) -> int:
    if shutil.which("pdfinfo"):
        info = subprocess.run(["pdfinfo", str(pdf)], check=True, capture_output=True, text=True).stdout
        return int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))
    pypdf = pytest.importorskip("pypdf")
    return len(pypdf.PdfReader(str(pdf)).pages)


def pdf_text(pdf: Path, page: int | None = None) -> str:
    pages = ["-f", str(page), "-l", str(page)] if page else []
    out = subprocess.run(["pdftotext", "-layout", *pages, str(pdf), "-"], check=True, capture_output=True, text=True)
    return " ".join(out.stdout.split())


def png_size(path: Path) -> tuple[int, int]:
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n", f"{path.name} is not a PNG"
    return struct.unpack(">II", head[16:24])


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("browser")
    ws = store(tmp / "ws")
    try:
        return write_reports(ws, CLASS, TERM, tmp / "out", today=TODAY)
    finally:
        ws.close()


#: A worst case for the page count: six flagged patterns, five writers each, long sentences
#: (all invented). (governor, word as written, preposition, its words, native suggestion)
LONG = [
    ("discuss", "discussed", "about", "about", "-"),
    ("depend", "depends", "of", "of", "on"),
    ("listen", "listen", "-", "music", "to"),
    ("emphasize", "emphasized", "on", "on", "-"),
    ("arrive", "arrived", "to", "to", "at"),
    ("interested", "interested", "for", "for", "in"),
]
SUBJECTS = ["my older cousin", "the new teacher", "our neighbour", "my best friend", "the team captain"]


def long_run(workspace: Path) -> None:
    essays, atts = [], []
    for i, (gov, word, prep, prep_word, _) in enumerate(LONG):
        for j, who in enumerate(SUBJECTS):
            pad = " quite honestly" * (j % 3)
            text = (f"After the long meeting on Friday afternoon{pad}, {who} {word} {prep_word} the plan for almost an "
                    f"hour, although nobody in the group could agree on what we should do next week.")
            e = make_essay(f"w{j}/e{i}.txt", f"writer {j}", text)
            essays.append(e)
            atts.append(make_attachment(e, gov, "ADJ" if gov == "interested" else "VERB", word, prep, prep_word))
    figures = [fig(gov, "ADJ" if gov == "interested" else "VERB", prep, 5, 5, 5, 2, 200, 30.0 - i, 6.0, 90.0,
                   "over-used", suggested_preposition=sug, cause="noun-pattern", cause_label="carried over from a noun",
                   explanation="Native writers use a different small word here; look at the answer together.")
               for i, (gov, _, prep, _, sug) in enumerate(LONG)]
    with Workspace(workspace) as ws:
        ws.replace_run(class_name=CLASS, term=TERM, run_meta={
            "created": "2026-01-12T09:30:00+00:00", "tool_version": __version__, "model": "m", "model_version": "1",
            "extractor_version": "1", "source": "x", "words": 1000, "settings": SETTINGS, "reference": {}},
            essays=essays, skipped=[], notes=[], attachments=atts, records=figures)


@pytest.mark.parametrize("copy", ["handout", "handout_teacher"])
def test_report_browser_five_long_patterns_fit_three_pages(tmp_path, copy):
    long_run(tmp_path / "ws")
    with Workspace(tmp_path / "ws") as ws:
        paths = write_reports(ws, CLASS, TERM, tmp_path / "out", top=5, today=TODAY)
    pdf = print_pdf(tmp_path, getattr(paths, copy))
    assert page_count(pdf) <= 3
    text = pdf_text(pdf)
    assert "5. “arrive to something”" in text and "interested for" not in text


def test_report_browser_handout_prints_on_one_to_three_pages(reports, tmp_path):
    pdf = print_pdf(tmp_path, reports.handout)
    assert 1 <= page_count(pdf) <= 3
    text = pdf_text(pdf)
    for expected in ("Small words that matter: Evening B2, 2026 Spring", "Before you start",
                     "discuss about something", "depend on something", "listen to something",
                     "emphasize on something", "In class we discussed about <script>alert(1)</script>"):
        assert expected in text
    assert "Answer:" not in text and "S01" not in text


def test_report_browser_teacher_handout_prints_answers(reports, tmp_path):
    pdf = print_pdf(tmp_path, reports.handout_teacher)
    assert 1 <= page_count(pdf) <= 3
    text = pdf_text(pdf)
    assert "Answer: Everything depends on the bus company." in text
    assert "Answer: My brother and I listen to music every night." in text


def test_report_browser_student_sheets_one_per_page(reports, tmp_path):
    pdf = print_pdf(tmp_path, reports.students)
    assert page_count(pdf) == 6
    for i in range(1, 7):
        text = pdf_text(pdf, i)
        assert f"Feedback for S0{i}" in text
        assert not any(f"Feedback for S0{j}" in text for j in range(1, 7) if j != i)
    assert "Nice work!" in pdf_text(pdf, 6)


def test_report_browser_overview_prints_and_screenshots(reports, tmp_path):
    pdf = print_pdf(tmp_path, reports.overview)
    text = pdf_text(pdf)
    assert "Flags are candidates for your judgement" in text and "entering a building is the topic of unit 4" in text
    for name, (w, h) in {"phone": (390, 844), "desktop": (1280, 900)}.items():
        shot = tmp_path / f"overview-{name}.png"
        chromium(tmp_path, reports.overview, f"--screenshot={shot}", f"--window-size={w},{h}")
        assert shot.stat().st_size > 5000
        assert png_size(shot) == (w, h)


def word_heights(pdf: Path) -> list[tuple[float, str]]:
    """(height in points, word) of every word of a PDF, from pdftotext's bounding boxes."""
    out = subprocess.run(["pdftotext", "-bbox", str(pdf), "-"], check=True, capture_output=True, text=True).stdout
    return [(float(m.group(2)) - float(m.group(1)), m.group(3)) for m in
            re.finditer(r'<word xMin="[\d.]+" yMin="([\d.]+)" xMax="[\d.]+" yMax="([\d.]+)">([^<]*)</word>', out)]


def test_report_browser_print_keeps_patterns_whole_gives_lines_and_nine_points(tmp_path):
    long_run(tmp_path / "ws")
    with Workspace(tmp_path / "ws") as ws:
        paths = write_reports(ws, CLASS, TERM, tmp_path / "out", top=5, today=TODAY)
    pdf = print_pdf(tmp_path, paths.handout)
    pages = [pdf_text(pdf, i) for i in range(1, page_count(pdf) + 1)]
    for n in range(1, 6):  # each pattern starts and ends on one page: heading, examples, practice, lines
        [where] = [i for i, text in enumerate(pages) if re.search(rf"\b{n}\. “", text)]
        page = pages[where]
        tail = page[page.index(f"{n}. “"):]
        assert "Your turn" in tail and "Write it here:" in tail, (n, page)
    assert sum(p.count("Write it here:") for p in pages) == 5
    assert f"Made on {TODAY}" in pages[0]
    # nothing printed smaller than 9 pt: the overview's tables and concordance lines included
    for page in (paths.overview, paths.handout, paths.students):
        heights = word_heights(print_pdf(tmp_path, page))
        small = [w for h, w in heights if h < 9.0 * 0.95]  # a word box is about the font size tall
        assert heights and not small, (page.name, small[:10])

"""Under pseudonyms no page names a student through a file name (#15, defect 4):
skipped files, duplicate notes and reasons name files by pseudonym or a neutral label.

The students, files and texts are invented for this test.
"""

from __future__ import annotations

import zipfile

from bs4 import BeautifulSoup

from hingeword import __version__
from hingeword.history import Workspace
from hingeword.ingest import read_essays
from hingeword.pipeline import ingest_notes
from hingeword.report import write_reports

TEXT = "Last week we discussed about the new rules in our school and the trip."
NAMES = ["tomasz_kowalski", "maria_garcia", "julia_nowak", "anna_lis", "piotr_zielinski", "Tomasz", "Garcia"]


def _class_folder(tmp_path):
    folder = tmp_path / "essays"
    (folder / "piotr_zielinski").mkdir(parents=True)
    (folder / "tomasz_kowalski.txt").write_text(TEXT, encoding="utf-8")
    (folder / "maria_garcia.txt").write_text(TEXT, encoding="utf-8")  # identical: a duplicate note
    (folder / "maria_garcia.docx").write_bytes(b"not a zip")  # skipped, and hers
    (folder / "julia_nowak.odt").write_bytes(b"PK broken")  # skipped, nobody's essay read
    (folder / "piotr_zielinski" / "essay.txt").write_text("I listen music on the bus every day.", encoding="utf-8")
    (folder / "piotr_zielinski" / "scan.pdf").write_bytes(b"%PDF-1.4")
    with zipfile.ZipFile(folder / "julia_nowak.docx", "w") as z:
        z.writestr("readme.txt", "no document in here")
    manifest = tmp_path / "manifest.csv"
    manifest.write_text("file,writer\nanna_lis.txt,Anna Lis\ntomasz_kowalski.txt,tomasz_kowalski\n", encoding="utf-8")
    return folder, manifest


def _stored(tmp_path):
    folder, manifest = _class_folder(tmp_path)
    ingest = read_essays(folder, manifest=manifest)
    assert ingest.duplicates and len(ingest.skipped) >= 4
    ws = Workspace(tmp_path / "ws")
    ws.replace_run(class_name="c", term="t", run_meta={
        "tool_version": __version__, "model": "m", "model_version": "1", "extractor_version": "1", "source": "x",
        "words": ingest.word_count, "settings": {}, "reference": {}}, essays=ingest.essays, skipped=ingest.skipped,
        notes=ingest_notes(ingest), attachments=[], records=[])
    return ws


def test_report_pseudonymised_pages_name_no_file_and_no_writer(tmp_path):
    ws = _stored(tmp_path)
    try:
        paths = write_reports(ws, "c", "t", tmp_path / "out", today="2026-01-01")
        real = write_reports(ws, "c", "t", tmp_path / "real", names="real", today="2026-01-01")
    finally:
        ws.close()
    for page in (paths.overview, paths.handout, paths.handout_teacher, paths.students):
        html = page.read_text(encoding="utf-8").lower()
        for name in NAMES:
            assert name.lower() not in html, (page.name, name)
    text = " ".join(BeautifulSoup(paths.overview.read_text(encoding="utf-8"), "html.parser").get_text(" ").split())
    text = text.replace(" : ", ": ")
    # pseudonyms in order of writer ids: maria_garcia S01, piotr_zielinski S02, tomasz_kowalski S03
    assert "identical essays (all kept): essay of S01, essay of S03" in text
    assert "a file of S01 (.docx): could not be read as .docx" in text  # maria's unreadable .docx
    assert "a file of S02 (.pdf): unsupported file type" in text  # in piotr's folder
    assert "file 1 (.docx)" in text and "file 2 (.odt)" in text  # nobody's essay was read from these
    assert "manifest.csv:line 2: manifest row names a file that does not exist: a file" in text
    assert "File names are hidden here" in text
    real_text = real.overview.read_text(encoding="utf-8")
    assert "maria_garcia.txt" in real_text and "anna_lis.txt" in real_text and "julia_nowak.odt" in real_text

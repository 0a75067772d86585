"""Ingest under hostile or oversized input (#15): one oversized essay or document bomb is
skipped with a reason and the rest is read (defect 6); UTF-16 without a byte-order mark
is text, a document without its text part gets a plain reason (defect 14); and the
cases that already held keep holding (XXE and billion laughs in .docx/.odt, FIFOs,
sockets, links to devices, NUL bytes, unreadable files).

Every text here is invented.
"""

from __future__ import annotations

import io
import os
import socket
import time
import zipfile
from pathlib import Path

import docx
import pytest
from odf.opendocument import OpenDocumentText
from odf.text import P

from hingeword.ingest import MAX_ESSAY_CHARS, IngestResult, Skipped, read_essays
from hingeword.ingest.decode import MAX_PARAGRAPHS
from hingeword.pipeline import within_parser_limit

GOOD = "We discussed the plan for the school garden and everybody agreed on the first steps."
W_NS = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
ODT_NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
          'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"')


def _folder(tmp_path: Path) -> Path:
    folder = tmp_path / "essays"
    folder.mkdir()
    (folder / "good.txt").write_text(GOOD, encoding="utf-8")
    return folder


def _docx_with(path: Path, document_xml: str, extra: dict[str, bytes] | None = None) -> None:
    """A real .docx (python-docx's template) whose word/document.xml is replaced."""
    buf = io.BytesIO()
    docx.Document().save(buf)
    with zipfile.ZipFile(buf) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    parts["word/document.xml"] = document_xml.encode("utf-8")
    parts.update(extra or {})
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)


def _odt_with(path: Path, content_xml: str | None) -> None:
    """A real .odt (odfpy) whose content.xml is replaced, or left out (``None``)."""
    buf = io.BytesIO()
    doc = OpenDocumentText()
    doc.text.addElement(P(text="x"))
    doc.write(buf)
    with zipfile.ZipFile(buf) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    if content_xml is None:
        del parts["content.xml"]
    else:
        parts["content.xml"] = content_xml.encode("utf-8")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)


def _docx_body(paragraphs: str, doctype: str = "") -> str:
    return (f'<?xml version="1.0" encoding="UTF-8"?>{doctype}<w:document xmlns:w="{W_NS}"><w:body>'
            f"{paragraphs}</w:body></w:document>")


def _odt_body(paragraphs: str, doctype: str = "") -> str:
    return (f'<?xml version="1.0" encoding="UTF-8"?>{doctype}<office:document-content {ODT_NS}><office:body>'
            f"<office:text>{paragraphs}</office:text></office:body></office:document-content>")


def _only_skip(result: IngestResult, name: str) -> str:
    assert [e.essay_id for e in result.essays] == ["good.txt"]
    [skip] = [s for s in result.skipped if s.source == name]
    return skip.reason


# ------------------------------------------------------------ oversized essays


def test_ingest_text_over_the_character_limit_is_skipped(tmp_path):
    folder = _folder(tmp_path)
    (folder / "long.txt").write_text("word " * 240_000, encoding="utf-8")  # 1.2 M characters, under 2 MB
    reason = _only_skip(read_essays(folder), "long.txt")
    assert reason == (f"longer than the {MAX_ESSAY_CHARS:,}-character limit for one essay (1,199,999 characters); "
                      "split it into one essay a file")


def test_ingest_csv_row_over_the_character_limit_is_skipped(tmp_path):
    folder = tmp_path / "essays"
    folder.mkdir()
    long_row = "word " * 50_000  # 250,000 characters: over the limit and over the csv module's default cap
    (folder / "class.csv").write_text(f"writer,text\nada,{GOOD}\nbo,{long_row}\ncy,{GOOD} Yes.\n", encoding="utf-8")
    result = read_essays(folder)
    assert [e.writer for e in result.essays] == ["ada", "cy"]
    assert result.skipped == [Skipped("class.csv", f"CSV row 2: longer than the {MAX_ESSAY_CHARS:,}-character limit "
                                                   "for one essay (249,999 characters); split it into one essay a file")]


def test_ingest_docx_with_too_much_text_stops_early(tmp_path):
    folder = _folder(tmp_path)
    _docx_with(folder / "long.docx", _docx_body(f"<w:p><w:r><w:t>{'word ' * 60_000}</w:t></w:r></w:p>"))
    reason = _only_skip(read_essays(folder), "long.docx")
    assert reason.startswith(f"longer than the {MAX_ESSAY_CHARS:,}-character limit for one essay (at least ")


@pytest.mark.parametrize("kind", ["docx", "odt"])
def test_ingest_document_bomb_of_many_nodes_is_skipped_fast(tmp_path, kind):
    folder = _folder(tmp_path)
    if kind == "docx":
        _docx_with(folder / "bomb.docx", _docx_body("<w:p><w:r><w:t>a</w:t></w:r></w:p>" * 300_000))
    else:
        _odt_with(folder / "bomb.odt", _odt_body("<text:p>a</text:p>" * 300_000))
    start = time.perf_counter()
    reason = _only_skip(read_essays(folder), f"bomb.{kind}")
    elapsed = time.perf_counter() - start
    assert reason == (f"could not be read as .{kind}: more than {MAX_PARAGRAPHS:,} paragraphs "
                      "(far more than an essay: a damaged or crafted file)")
    assert elapsed < 30  # not a timing test: the unbounded parse took minutes and gigabytes


def test_ingest_zip_bomb_part_is_refused_before_unpacking(tmp_path):
    folder = _folder(tmp_path)
    _docx_with(folder / "zip.docx", _docx_body("<w:p><w:r><w:t>fine</w:t></w:r></w:p>"),
               extra={"word/media/huge.bin": bytes(30_000_000)})  # compresses to about 30 KB
    assert (folder / "zip.docx").stat().st_size < 200_000
    reason = _only_skip(read_essays(folder), "zip.docx")
    assert reason == "could not be read as .docx: a part unpacks to 30 MB, over the 25 MB limit (a damaged file " \
                     "or a zip bomb)"


def test_pipeline_essays_over_the_parser_limit_are_skipped_not_fatal(tmp_path):
    folder = _folder(tmp_path)
    (folder / "medium.txt").write_text("word " * 300, encoding="utf-8")
    result = within_parser_limit(read_essays(folder), max_length=1_000)
    assert [e.essay_id for e in result.essays] == ["good.txt"]
    assert result.skipped == [Skipped("medium.txt", "longer than the parser's limit of 1,000 characters (1,499); "
                                                    "split it into one essay a file")]


@pytest.mark.slow
def test_pipeline_scan_goes_on_past_an_oversized_essay(tiny_essays, tiny_ref_path, tmp_path):
    from conftest import TERM_START, tiny_thresholds
    from hingeword.history import Workspace
    from hingeword.pipeline import scan

    folder = tiny_essays(junk=False)
    (folder / "huge.txt").write_text("We discussed about it. " * 50_000, encoding="utf-8")  # 1.15 M characters
    result = scan(folder, class_name="c", term="t", workspace=tmp_path / "ws", references=[str(tiny_ref_path)],
                  thresholds=tiny_thresholds(), term_start=TERM_START, processes=1)
    assert len(result.ingest.essays) == 4
    assert [s.source for s in result.ingest.skipped] == ["huge.txt"]
    with Workspace(tmp_path / "ws", read_only=True) as ws:
        assert ws.run("c", "t").essays_read == 4


# -------------------------------------------------------------- minor cases


@pytest.mark.parametrize("codec", ["utf-16-le", "utf-16-be"])
def test_ingest_utf16_without_byte_order_mark_is_text(tmp_path, codec):
    folder = _folder(tmp_path)
    text = "Zażółć gęślą jaźń: we discussed the trip."
    (folder / "win.txt").write_bytes(text.encode(codec))
    result = read_essays(folder)
    essay = {e.essay_id: e for e in result.essays}["win.txt"]
    assert essay.text == text and essay.encoding == codec and result.skipped == []


def test_ingest_nul_bytes_are_still_binary(tmp_path):
    folder = _folder(tmp_path)
    (folder / "blob.txt").write_bytes(bytes(range(256)) * 8)
    (folder / "nul.txt").write_bytes(b"We discussed\x00\x00 the\x00 plan.\x00" * 20)
    result = read_essays(folder)
    assert {s.source: s.reason for s in result.skipped} == {"blob.txt": "binary file (not text)",
                                                            "nul.txt": "binary file (not text)"}


def test_ingest_odt_without_content_gets_a_plain_reason(tmp_path):
    folder = _folder(tmp_path)
    _odt_with(folder / "empty.odt", None)
    reason = _only_skip(read_essays(folder), "empty.odt")
    assert reason == ("could not be read as .odt: not a .odt document: it has no content.xml "
                      "(damaged, or another format renamed)")


# ------------------------------------------------- cases that already held


XXE = '<!DOCTYPE d [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>'
LAUGHS = ('<!DOCTYPE d [<!ENTITY a "lol"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">'
          '<!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;"><!ENTITY d "&c;&c;&c;&c;&c;&c;&c;&c;&c;&c;">'
          '<!ENTITY e "&d;&d;&d;&d;&d;&d;&d;&d;&d;&d;"><!ENTITY f "&e;&e;&e;&e;&e;&e;&e;&e;&e;&e;">'
          '<!ENTITY g "&f;&f;&f;&f;&f;&f;&f;&f;&f;&f;"><!ENTITY h "&g;&g;&g;&g;&g;&g;&g;&g;&g;&g;">]>')


@pytest.mark.parametrize("kind", ["docx", "odt"])
@pytest.mark.parametrize("doctype, entity", [(XXE, "xxe"), (LAUGHS, "h")], ids=["xxe", "billion-laughs"])
def test_ingest_entities_in_documents_are_never_expanded(tmp_path, kind, doctype, entity):
    folder = _folder(tmp_path)
    if kind == "docx":
        _docx_with(folder / f"x.{kind}", _docx_body(f"<w:p><w:r><w:t>Hi &{entity}; there</w:t></w:r></w:p>", doctype))
    else:
        _odt_with(folder / f"x.{kind}", _odt_body(f"<text:p>Hi &{entity}; there</text:p>", doctype))
    result = read_essays(folder)
    texts = " ".join(e.text for e in result.essays)
    assert "root:" not in texts and "lollol" not in texts
    assert len(texts) < 1_000
    assert {e.essay_id for e in result.essays} | {s.source for s in result.skipped} >= {"good.txt", f"x.{kind}"}


def test_ingest_fifo_socket_and_device_link_are_skipped(tmp_path):
    folder = _folder(tmp_path)
    if not hasattr(os, "mkfifo"):
        pytest.skip("no FIFOs on this system")
    os.mkfifo(folder / "pipe.txt")
    sock = socket.socket(socket.AF_UNIX)
    try:
        sock.bind(str(folder / "sock.txt"))
        os.symlink("/dev/zero", folder / "zero.txt")
        result = read_essays(folder)  # would block forever on the FIFO or read /dev/zero without end
    finally:
        sock.close()
    assert {s.source: s.reason for s in result.skipped} == {
        "pipe.txt": "not a regular file", "sock.txt": "not a regular file",
        "zero.txt": "symbolic link leading outside the essay folder"}
    assert [e.essay_id for e in result.essays] == ["good.txt"]


def test_ingest_unreadable_file_is_skipped(tmp_path):
    """Read by a process that permissions apply to (as root: without the capabilities that
    override them, through ``setpriv``; skipped where that cannot be done)."""
    import json
    import shutil
    import subprocess
    import sys

    folder = _folder(tmp_path)
    (folder / "locked.txt").write_text(GOOD + " More.", encoding="utf-8")
    (folder / "locked.txt").chmod(0)
    code = ("import json, sys\nfrom hingeword.ingest import read_essays\nr = read_essays(sys.argv[1])\n"
            "print(json.dumps([[e.essay_id for e in r.essays], [[s.source, s.reason] for s in r.skipped]]))")
    cmd = [sys.executable, "-c", code, str(folder)]
    if os.geteuid() == 0:
        if shutil.which("setpriv") is None:
            pytest.skip("running as root without setpriv: permissions cannot be applied")
        cmd = [shutil.which("setpriv"), "--bounding-set", "-dac_override,-dac_read_search", "--", *cmd]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    finally:
        (folder / "locked.txt").chmod(0o600)
    if proc.returncode != 0 and "Operation not permitted" in proc.stderr:
        pytest.skip(f"cannot drop privileges here: {proc.stderr.strip()[:200]}")
    assert proc.returncode == 0, proc.stderr
    essays, skipped = json.loads(proc.stdout)
    assert essays == ["good.txt"]
    assert skipped == [["locked.txt", "could not be read: Permission denied"]]

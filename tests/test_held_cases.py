"""Cases of #15 that already held, kept under test: hostile text is escaped on every
report page and the trends page; a parse-cache entry replaced by a folder (or the cache
replaced by a file) costs a re-parse, not the scan; ``reference info`` of a name with a
path part says so in one line, as ``reference build`` refuses such a name.
Every name and text here is invented.
"""

from __future__ import annotations

import logging

import spacy
from bs4 import BeautifulSoup
from typer.testing import CliRunner

from conftest import attachment, essay
from hingeword import __version__
from hingeword.cli import app
from hingeword.history import Workspace
from hingeword.ingest import Skipped
from hingeword.parse import ModelInfo, ParseStats, parse_texts
from hingeword.patterns import Tally
from hingeword.reference import Reference
from hingeword.score import Thresholds, score_patterns

runner = CliRunner()
EVIL = '<script>alert(1)</script><img src=x onerror="alert(2)">'


def test_report_hostile_text_is_escaped_on_every_page(tmp_path):
    class_name, term = f"Class {EVIL}", f"Term {EVIL}"
    texts = [f"We discussed about {EVIL} today.", f"They discussed about it {EVIL}.", "I discussed about art."]
    essays = [essay(f"{EVIL}{i}.txt", f"Writer {i} {EVIL}", t) for i, t in enumerate(texts)]
    atts = [attachment(e, "discuss", "discussed", "about") for e in essays]
    ref = Reference(manifest={"name": f"ref {EVIL}", "limits": EVIL},
                    patterns={("discuss", "VERB", "-"): 40, ("talk", "VERB", "about"): 30})
    used = Thresholds(min_reference=5)
    records = score_patterns(Tally.from_attachments(atts), ref, used)
    assert any(r.flagged for r in records)
    with Workspace(tmp_path / "ws") as ws:
        for t, start in ((f"{term} 1", "2026-01-01"), (term, "2026-04-01")):
            ws.replace_run(class_name=class_name, term=t, run_meta={
                "tool_version": __version__, "model": EVIL, "model_version": "1", "extractor_version": "1",
                "source": EVIL, "words": 20, "settings": {**used.as_dict(), "term_start": start},
                "reference": ref.manifest}, essays=essays, skipped=[Skipped(f"{EVIL}.pdf", f"reason {EVIL}")],
                notes=[("typo", f"note {EVIL}")], attachments=atts, records=records)
        ws.dismiss("talk", "about", class_name=class_name, reason=f"because {EVIL}")
    for names in ("pseudonyms", "real"):
        out = tmp_path / names
        result = runner.invoke(app, ["report", "--class", class_name, "--term", term, "-w", str(tmp_path / "ws"),
                                     "--out", str(out), "--names", names])
        assert result.exit_code == 0, result.output
        result = runner.invoke(app, ["trends", "--class", class_name, "-w", str(tmp_path / "ws"), "--out", str(out)])
        assert result.exit_code == 0, result.output
        pages = sorted(out.rglob("*.html"))
        assert len(pages) == 6  # handout, teacher copy, overview, sheets, the private key, trends
        for page in pages:
            soup = BeautifulSoup(page.read_text(encoding="utf-8"), "html.parser")
            assert not soup.find_all("script") and not soup.find_all("img"), page.name
            assert not [t for t in soup.find_all(True) if any(a.startswith("on") for a in t.attrs)], page.name
            assert "<script>alert(1)</script>" in soup.get_text(), page.name  # shown as text


def test_parse_cache_entry_replaced_by_a_folder_is_parsed_again(tmp_path, caplog):
    nlp, info = spacy.blank("en"), ModelInfo("blank", "en_blank", "1")
    texts = ["We discussed the plan.", "They listened to music."]
    list(parse_texts(texts, nlp, info, cache_dir=tmp_path / "cache"))
    for f in (tmp_path / "cache").rglob("*.spacy"):
        f.unlink()
        f.mkdir()
    stats = ParseStats()
    with caplog.at_level(logging.WARNING, logger="hingeword"):
        docs = list(parse_texts(texts, nlp, info, cache_dir=tmp_path / "cache", stats=stats))
    assert [d.text for d in docs] == texts and stats.parsed == 2
    assert "parse cache not written" in caplog.text
    (tmp_path / "file").write_text("not a folder", encoding="utf-8")
    docs = list(parse_texts(texts, nlp, info, cache_dir=tmp_path / "file"))
    assert [d.text for d in docs] == texts


def test_cli_reference_names_with_path_parts_are_refused_by_build_and_info(tmp_path):
    (tmp_path / "src").mkdir()
    (tmp_path / "src" / "a.conllu").write_text("# text = Hi.\n1\tHi\thi\tINTJ\tUH\t_\t0\troot\t_\t_\n\n",
                                               encoding="utf-8")
    build = runner.invoke(app, ["reference", "build", str(tmp_path / "src"), "--name", "sub/dir", "--format", "conllu",
                                "-w", str(tmp_path / "ws"), "-q"])
    assert build.exit_code == 1 and build.output.startswith("Error: reference name 'sub/dir' is not allowed")
    info = runner.invoke(app, ["reference", "info", "sub/dir", "-w", str(tmp_path / "ws")])
    assert info.exit_code == 1 and info.output == "Error: no reference at sub/dir (missing manifest.json)\n"

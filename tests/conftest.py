"""Shared fixtures for the foundation and reference tests.

Everything a test reads was invented for this suite: the learner essays below,
the native sentences in ``tests/data/reference/native/`` and the gold parses in
``tests/data/reference/conllu/tiny.conllu``. No text comes from a corpus, book,
exam or website.

The spaCy pipeline takes about a second to load, so the fixtures that need it
are session-scoped and built once: ``nlp_and_info``, ``tiny_ref_path`` (a
reference built from the native text folder) and ``scanned`` (one scan of the
``tiny_essays`` folder against that reference). Tests that use them are marked
``slow``. ``hand_run`` stores a run made without any parser, for fast tests of
the workspace, the export and the command line.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable
from pathlib import Path

import pytest
from hypothesis import settings as _hypothesis_settings

# Timing is not what these properties test: a loaded 2-core machine must not make them flaky.
_hypothesis_settings.register_profile("hingeword", deadline=None)
_hypothesis_settings.load_profile("hingeword")

DATA = Path(__file__).parent / "data" / "reference"
NATIVE_DIR = DATA / "native"
CONLLU_DIR = DATA / "conllu"

#: Fixed build date, so reference artefacts are comparable byte for byte.
BUILD_DATE = "2026-01-05"
TERM_START = "2026-01-10"

#: Thresholds for the tiny reference: it has only 11 attachments of "discuss", fewer than the
#: default ``min_reference`` of 20, and so little evidence that the lower bound of the rate
#: ratio for "discuss about" (5 of 7 class uses, 0 of 11 native) is 1.9, below the default 2.
TINY_SETTINGS = {"min_reference": 5, "min_rate_ratio": 1.5}


def tiny_thresholds():
    from hingeword.score import Thresholds

    return Thresholds(**TINY_SETTINGS)

#: Invented learner essays (four writers). "discuss about" is written by all
#: four, "dicuss" is a misspelling of "discuss", "intrested" of "interested".
ESSAYS = {
    "anna.txt": "Last week we discussed about the new rules in our school. I am very intrested in music "
                "and I listen music every evening. My plans depend of the weather.",
    "ben.txt": "In the lesson we discussed about climate change. Our teacher wants to dicuss about the test "
               "tomorrow. I listen music when I do my homework.",
    "carla.txt": "We discussed about our trip yesterday. My sister is interested in football. "
                 "Everything depends of money in this city.",
    "dawid.txt": "Students must dicuss about problems with the teacher. I am interested in history and art. "
                 "We discussed the film after class.",
}


def write_essays(folder: Path, essays: dict[str, str] | None = None, *, junk: bool = True) -> Path:
    """Write ``essays`` (default :data:`ESSAYS`) to ``folder``; with ``junk``, add an
    empty ``empty.txt`` and a ``notes.pdf`` that the scan must skip."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in (ESSAYS if essays is None else essays).items():
        (folder / name).write_text(text + "\n", encoding="utf-8")
    if junk:
        (folder / "empty.txt").write_bytes(b"")
        (folder / "notes.pdf").write_bytes(b"%PDF-1.4 not an essay\n")
    return folder


@pytest.fixture(scope="session")
def tiny_essays(tmp_path_factory) -> Callable[..., Path]:
    """Factory: ``tiny_essays(essays=None, junk=True)`` → a new folder of essays."""

    def make(essays: dict[str, str] | None = None, *, junk: bool = True) -> Path:
        return write_essays(tmp_path_factory.mktemp("essays"), essays, junk=junk)

    return make


@pytest.fixture(scope="session")
def nlp_and_info():
    """The default spaCy pipeline and its :class:`~hingeword.parse.ModelInfo`."""
    from hingeword.parse import load_model

    return load_model(None)


@pytest.fixture(scope="session")
def tiny_ref_path(tmp_path_factory) -> Path:
    """A reference built once from the invented native texts (parsed by spaCy)."""
    from hingeword import reference

    out = tmp_path_factory.mktemp("refs") / "tiny"
    return reference.build(NATIVE_DIR, out, name="tiny", build_date=BUILD_DATE)


@pytest.fixture(scope="session")
def conllu_ref_path(tmp_path_factory) -> Path:
    """A reference built from the invented gold CoNLL-U file (no parser)."""
    from hingeword import reference

    out = tmp_path_factory.mktemp("refs") / "gold"
    return reference.build(CONLLU_DIR, out, name="gold", fmt="conllu", build_date=BUILD_DATE)


@pytest.fixture(scope="session")
def scanned(tmp_path_factory, tiny_essays, tiny_ref_path):
    """One scan of :data:`ESSAYS` (plus the junk files): ``(workspace, ScanResult)``.

    Read it, never write to it: other tests share it.
    """
    from hingeword.pipeline import scan

    workspace = tmp_path_factory.mktemp("ws")
    result = scan(tiny_essays(), class_name="evening-b1", term="2026-spring", workspace=workspace,
                  references=[str(tiny_ref_path)], thresholds=tiny_thresholds(), term_start=TERM_START, processes=1)
    return workspace, result


# ------------------------------------------------------------- runs without a parser


def essay(essay_id: str, writer: str, text: str, **kw):
    """An :class:`~hingeword.ingest.Essay` as ingest would make it."""
    import hashlib

    from hingeword.ingest import Essay

    return Essay(essay_id=essay_id, writer=writer, text=text, sha256=hashlib.sha256(text.encode()).hexdigest(),
                 source=essay_id, encoding="utf-8", **kw)


def attachment(e, governor: str, gov_word: str, prep: str, prep_word: str | None = None, pos: str = "VERB"):
    """An :class:`~hingeword.extract.Attachment` located by searching ``e.text``."""
    from hingeword.extract import Attachment

    g = e.text.index(gov_word)
    p = e.text.index(prep_word or prep, g + len(gov_word))
    return Attachment(essay_id=e.essay_id, writer=e.writer, governor=governor, governor_pos=pos,
                      governor_text=gov_word, preposition=prep, relation="prep", sentence=e.text,
                      sentence_start=0, gov_start=g, gov_end=g + len(gov_word), prep_start=p,
                      prep_end=p + len(prep_word or prep))


HAND_TEXTS = {
    "zofia.txt": ("zofia", "We discussed about the trip."),
    "marek.txt": ("marek", "They discussed about money."),
    "lena.txt": ("lena", "I discussed about the rules with Tom."),
}


def store_hand_run(workspace: Path, *, class_name: str = "morning-a2", term: str = "t1",
                   term_start: str = TERM_START) -> int:
    """Store a run whose attachments were written by hand and scored for real
    against a hand-made reference (no spaCy); return its id."""
    from hingeword.history import Workspace
    from hingeword.patterns import Tally
    from hingeword.reference import Reference
    from hingeword.score import Thresholds, score_patterns

    essays = [essay(eid, w, t) for eid, (w, t) in HAND_TEXTS.items()]
    atts = [attachment(e, "discuss", "discussed", "about") for e in essays]
    ref = Reference(manifest={"name": "hand"},
                    patterns=Counter({("discuss", "VERB", "-"): 40, ("discuss", "VERB", "with"): 5,
                                      ("talk", "VERB", "about"): 30}))
    used = Thresholds(min_reference=5)
    records = score_patterns(Tally.from_attachments(atts), ref, used)
    with Workspace(workspace) as ws:
        return ws.replace_run(
            class_name=class_name, term=term,
            run_meta={"tool_version": "test", "model": "none", "model_version": "-", "extractor_version": "1",
                      "source": "hand", "words": sum(e.word_count for e in essays),
                      "settings": {**used.as_dict(), "term_start": term_start}, "reference": ref.manifest},
            essays=essays, skipped=[], notes=[], attachments=atts, records=records,
        )


@pytest.fixture
def hand_run(tmp_path) -> Path:
    """A workspace (``tmp_path/"ws"``) holding one hand-made run of class
    ``morning-a2``, term ``t1``: three writers wrote "discussed about"."""
    workspace = tmp_path / "ws"
    store_hand_run(workspace)
    return workspace


def db_counts(workspace: Path) -> dict[str, int]:
    """Rows per table of a workspace database (read directly: a probe for tests only)."""
    import sqlite3

    conn = sqlite3.connect(Path(workspace) / "hingeword.sqlite")
    try:
        tables = [r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
        return {t: conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0] for t in tables}
    finally:
        conn.close()


def db_integrity(workspace: Path) -> str:
    import sqlite3

    conn = sqlite3.connect(Path(workspace) / "hingeword.sqlite")
    try:
        return conn.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        conn.close()

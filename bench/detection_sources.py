"""Held-out native text for ``bench_detection.py``, cut into essays.

The documents come from the project's reader, ``scripts/native_sources.py``
(:func:`native_sources.held_out_documents`): one document in ten by the hash rule
``int(sha256(f"{source}:{doc_id}")[:8], 16) % 10 == 0``, the documents that no
bundled reference is built from. This module keeps the written registers close to
what learners write and leaves out spoken transcripts (GUM conversation, vlog,
podcast, court; MASC face-to-face, telephone, court and debate transcripts), MASC
jokes, tweets and film scripts, and the pros/cons fragments of the product reviews.

Essays are cut at sentence boundaries (gold sentences for EWT and GUM, a line for
the one-sentence-a-line film and product reviews, a regular-expression split
elsewhere), one essay per writer. Nothing read here goes into the repository:
essays are written under ``build/`` only.
"""

from __future__ import annotations

import importlib.util
import random
import re
import sys
from dataclasses import dataclass
from pathlib import Path

#: (source, genre) pairs left out: speech transcribed, jokes, lists of fragments.
SKIP_GENRES = frozenset({
    ("gum", "conversation"), ("gum", "vlog"), ("gum", "podcast"), ("gum", "court"),
    ("masc", "face-to-face"), ("masc", "telephone"), ("masc", "court-transcript"), ("masc", "debate-transcript"),
    ("masc", "jokes"), ("masc", "twitter"), ("masc", "movie-script"), ("masc", "uncategorised"),
    ("product-reviews", "pros-cons"),
})


class NoSources(RuntimeError):
    """The project's reader or the data it reads is not there."""


def load_reader(repo: Path):
    """Import ``scripts/native_sources.py`` from the repository."""
    path = repo / "scripts" / "native_sources.py"
    if not path.exists():
        raise NoSources(f"{path} not found")
    spec = importlib.util.spec_from_file_location("native_sources", path)
    mod = importlib.util.module_from_spec(spec)
    sys.modules["native_sources"] = mod
    spec.loader.exec_module(mod)
    return mod


_SENT_END = re.compile(r"(?:(?<=[.!?])|(?<=[.!?][\"')\]]))\s+(?=[\"'(\[]?[A-Z0-9])")


def split_sentences(text: str) -> list[str]:
    """A plain regular-expression sentence splitter (enough for cutting essays)."""
    return [p for p in _SENT_END.split(" ".join(text.split())) if p]


@dataclass(frozen=True)
class Doc:
    source: str
    genre: str
    doc_id: str
    sentences: tuple[str, ...]


def held_out_docs(repo: Path, data_dir: Path) -> list[Doc]:
    """The held-out documents of the kept genres, as sentences, in the reader's order."""
    ns = load_reader(repo)
    if not ns.available(data_dir):
        raise NoSources(f"native tarballs not found under {data_dir / 'native'}")
    out = []
    for d in ns.held_out_documents(data_dir=data_dir):
        if (d.source, d.genre) in SKIP_GENRES:
            continue
        if d.sentences:
            sents = [s.text for s in d.sentences if s.text]
        else:
            sents = [s for line in d.text.splitlines() if line.strip() for s in split_sentences(line)]
        out.append(Doc(d.source, d.genre, d.doc_id, tuple(sents)))
    return out


@dataclass
class Essay:
    essay_id: str
    source: str
    genre: str
    doc_ids: tuple[str, ...]
    sentences: tuple[str, ...]

    @property
    def text(self) -> str:
        return " ".join(self.sentences)

    @property
    def words(self) -> int:
        return sum(len(s.split()) for s in self.sentences)


def cut_essays(docs: list[Doc], seed: int, low: int = 150, high: int = 330) -> list[Essay]:
    """Cut documents into essays of about ``low``–``high`` words at sentence boundaries.

    Each essay will be one writer. A document's tail shorter than ``low`` words is
    carried into the next document of the same source (short reviews and mails
    are pooled into one essay: a pseudo-writer); a source's last short tail is
    dropped. Sentences over 80 words (lists, tables) or under 3 words (headings,
    sign-offs) are skipped.
    """
    rng = random.Random(seed)
    out: list[Essay] = []
    for source in sorted({d.source for d in docs}):
        buf: list[str] = []
        ids: list[str] = []
        genre = ""
        words = 0
        target = rng.randint(low, high)

        def emit() -> None:
            nonlocal buf, words, target
            out.append(Essay(f"{source}-{len(out):05d}", source, genre, tuple(dict.fromkeys(ids)), tuple(buf)))
            buf, words = [], 0
            target = rng.randint(low, high)

        for d in (d for d in docs if d.source == source):
            if not buf:
                ids, genre = [d.doc_id], d.genre
            else:
                ids.append(d.doc_id)
            for s in d.sentences:
                n = len(s.split())
                if n < 3 or n > 80:
                    continue
                if not buf:
                    ids, genre = [d.doc_id], d.genre
                buf.append(s)
                words += n
                if words >= target:
                    emit()
            if words >= low:
                emit()
    return out

"""Plain records of the ingest stage: :class:`Essay`, :class:`Skipped`,
:class:`NearDuplicate`, :class:`IngestResult`, and the private ``_Found`` (a file
found in the folder) and ``_Info`` (writer and metadata) with the ``_essay`` factory.
"""

from __future__ import annotations

import functools
import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path

_WORD = re.compile(r"[^\W\d_]+(?:['’-][^\W\d_]+)*")


@dataclass(frozen=True)
class Essay:
    """One essay, its writer and metadata.

    ``essay_id`` is the file's path relative to the essay folder, in POSIX form
    (``"anna/essay1.txt"``); a CSV row is ``"essays.csv#3"`` (1-based data row).
    ``text`` is normalised: Unicode NFC, newlines as ``\\n``, no BOM, stripped.
    """

    essay_id: str
    writer: str
    text: str
    sha256: str
    source: str
    encoding: str
    l1: str | None = None
    level: str | None = None
    task: str | None = None
    meta: tuple[tuple[str, str], ...] = ()

    @functools.cached_property
    def word_count(self) -> int:
        """Number of words: runs of letters, with inner apostrophes or hyphens (counted once)."""
        return sum(1 for _ in _WORD.finditer(self.text))


@dataclass(frozen=True)
class Skipped:
    """A file, CSV row or manifest row that was not used, with a one-line reason."""

    source: str
    reason: str


@dataclass(frozen=True)
class NearDuplicate:
    """Two essays whose normalised texts are almost the same (rapidfuzz ratio, 0..100)."""

    first: str
    second: str
    similarity: float


@dataclass
class IngestResult:
    """Everything :func:`read_essays` found.

    ``duplicates`` groups ids of essays with identical text (all copies stay in
    ``essays``); ``near_duplicates`` is a warning list and excludes exact copies.
    """

    essays: list[Essay]
    skipped: list[Skipped] = field(default_factory=list)
    duplicates: list[tuple[str, ...]] = field(default_factory=list)
    near_duplicates: list[NearDuplicate] = field(default_factory=list)
    #: problems of the manifest itself (a row naming a missing file, a first language that is not a
    #: code): reported as such, not as skipped essays
    manifest_problems: list[Skipped] = field(default_factory=list)

    @property
    def word_count(self) -> int:
        """Total words over all essays."""
        return sum(e.word_count for e in self.essays)


@dataclass(frozen=True)
class _Found:
    rel: str          # logical POSIX path under the root
    path: Path        # path to open
    resolved: Path
    via_link: bool


@dataclass(frozen=True)
class _Info:
    """Writer and metadata from a manifest row or a CSV row."""

    writer: str
    l1: str | None
    level: str | None
    task: str | None
    meta: dict[str, str]


def _essay(essay_id: str, text: str, source: str, encoding: str, info: _Info) -> Essay:
    return Essay(essay_id=essay_id, writer=info.writer, text=text,
                 sha256=hashlib.sha256(text.encode("utf-8")).hexdigest(),
                 source=source, encoding=encoding, l1=info.l1, level=info.level,
                 task=info.task, meta=tuple(sorted(info.meta.items())))

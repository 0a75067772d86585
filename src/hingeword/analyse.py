"""Parse and extract, essay by essay, where the parsing runs; what extraction produced is cached.

A scan needs of each essay only its attachments. :func:`analyse` returns them per text:

* from the **extraction cache** (:class:`ExtractionCache`) when this text was analysed before
  with the same pipeline (name, version) and the same :data:`hingeword.EXTRACTOR_VERSION`.
  A re-scan of an unchanged folder reads only these small files: no ``Doc`` is loaded,
  and the pipeline itself need not be (:func:`hingeword.parse.model_info` reads its
  name and version from the installed package);
* otherwise the text is parsed (or its ``Doc`` read from the parse cache of
  :mod:`hingeword.parse`, when only the extractor changed and the ``Doc`` was kept:
  ``keep_parses``, ``scan --keep-parses``) and extracted **in the process that parses it**.
  From :data:`~hingeword.parse.MIN_WORDS_FOR_PROCESSES` words on, ``processes`` worker
  processes (one too) each parse a chunk of texts, extract the attachments of each ``Doc`` as
  it comes out of the parser, write the caches and send back only the attachments: the
  calling process never deserialises a ``Doc`` and is free for other work meanwhile (the
  scan loads its rules then: ``meanwhile``). Fewer words are parsed in the calling process.

Rows are attachments without the essay's id and writer (the cache is keyed by text, and two
essays may have the same text) and without the sentence, which is cut from the essay text by
its offsets: the extraction cache holds no running text.
"""

from __future__ import annotations

import ctypes
import gc
import json
import logging
import multiprocessing
import signal
import sys
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path

from . import EXTRACTOR_VERSION
from .errors import HingewordError, ParseError
from .extract import Attachment, extract_doc
from .files import atomic_path
from .parse import MIN_WORDS_FOR_PROCESSES, ModelInfo, ParseCache, ParseStats

log = logging.getLogger("hingeword")

#: One attachment without essay id, writer and sentence text: (governor, governor_pos,
#: governor_text, preposition, relation, sentence_start, sentence_end, gov_start, gov_end,
#: prep_start, prep_end, object_class).
Row = tuple
#: Texts a worker process parses in one task (also ``nlp.pipe``'s batch size).
CHUNK = 16
_FORMAT = 2


def to_rows(attachments: Iterable[Attachment]) -> list[Row]:
    return [(a.governor, a.governor_pos, a.governor_text, a.preposition, a.relation, a.sentence_start,
             a.sentence_start + len(a.sentence), a.gov_start, a.gov_end, a.prep_start, a.prep_end, a.object_class)
            for a in attachments]


def to_attachments(rows: Iterable[Row], text: str, essay_id: str, writer: str) -> list[Attachment]:
    """The essay's attachments from its rows and text (see :data:`Row`); attachments of one
    sentence share one string."""
    sentences: dict[tuple[int, int], str] = {}
    out = []
    for r in rows:
        sentence = sentences.get((r[5], r[6]))
        if sentence is None:
            sentence = sentences[(r[5], r[6])] = text[r[5]:r[6]]
        # the words of a pattern recur across essays: one string each (sys.intern)
        out.append(Attachment(essay_id, writer, sys.intern(r[0]), sys.intern(r[1]), r[2], sys.intern(r[3]),
                              sys.intern(r[4]), sentence, r[5], r[7], r[8], r[9], r[10],
                              object_class=sys.intern(r[11])))
    return out


def _valid(rows, text: str) -> bool:
    """Rows that fit this text: the right shape, offsets inside it, the governor where it says."""
    if not isinstance(rows, list):
        return False
    n = len(text)
    for r in rows:
        if not (isinstance(r, list) and len(r) == 12 and all(isinstance(x, str) for x in r[:5])
                and all(isinstance(x, int) for x in r[5:11]) and isinstance(r[11], str)):
            return False
        if not (0 <= r[5] <= r[7] <= r[8] <= r[6] <= n and 0 <= r[9] <= r[10] <= n and r[5] <= r[9]):
            return False
        if text[r[7]:r[8]] != r[2]:
            return False
    return True


class ExtractionCache:
    """One small JSON file per text, ``<root>/<model>-<version>/<key[:2]>/<key>.x<EXTRACTOR_VERSION>.json``,
    beside the text's parse (:class:`~hingeword.parse.ParseCache`), holding its :data:`Row`\\ s.

    A missing, damaged or foreign entry is a miss (the text is analysed again and the entry
    rewritten); an entry that cannot be written only costs time.
    """

    def __init__(self, root: str | Path, info: ModelInfo, extractor_version: str = EXTRACTOR_VERSION):
        self.dir = Path(root) / f"{info.name}-{info.version}"
        self.suffix = f".x{extractor_version}.json"

    def path(self, key: str) -> Path:
        return self.dir / key[:2] / f"{key}{self.suffix}"

    def get(self, key: str, text: str) -> list[Row] | None:
        path = self.path(key)
        try:
            data = path.read_bytes()
        except FileNotFoundError:
            return None
        except OSError as exc:  # a folder in its place, no permission: analysed again
            log.warning("extraction cache file %s unreadable (%s); parsing again", path, exc)
            return None
        try:
            entry = json.loads(data)
            ok = (isinstance(entry, dict) and entry.get("format") == _FORMAT and entry.get("chars") == len(text)
                  and _valid(entry.get("rows"), text))
        except (ValueError, TypeError) as exc:
            log.warning("extraction cache file %s unreadable (%s); parsing again", path, exc)
            return None
        if not ok:
            log.warning("extraction cache file %s does not fit its text; parsing again", path)
            return None
        return [tuple(r) for r in entry["rows"]]

    def put(self, key: str, text: str, rows: list[Row]) -> None:
        data = json.dumps({"format": _FORMAT, "chars": len(text), "rows": rows}, ensure_ascii=False,
                          separators=(",", ":"))
        try:
            with atomic_path(self.path(key)) as tmp:
                tmp.write_text(data, encoding="utf-8")
        except HingewordError as exc:
            log.warning("extraction cache not written: %s", exc)


# ------------------------------------------------------------------ the work, in any process

_STATE: dict = {}


def _setup(nlp, info: ModelInfo, cache_dir, keep_parses: bool, extract: Callable) -> None:
    _STATE.clear()
    _STATE.update(
        nlp=nlp, extract=extract,
        parses=ParseCache(cache_dir, info) if cache_dir is not None else None,
        extracted=ExtractionCache(cache_dir, info) if cache_dir is not None else None,
        keep_parses=keep_parses and cache_dir is not None,
    )


def _keep_freed_memory() -> None:
    """Let glibc's allocator keep the memory a worker frees for its next chunk.

    Measured on Linux: a forked worker returned its parse buffers to the system after every
    chunk of 16 texts and faulted them in again (13,000 page faults a chunk, 8 % of the parse in
    system time); with these two thresholds (glibc's ``mallopt``, the same as the environment
    variables ``MALLOC_TRIM_THRESHOLD_``/``MALLOC_MMAP_THRESHOLD_``) a chunk has a few dozen.
    Elsewhere (another C library, another system) this does nothing.
    """
    if not sys.platform.startswith("linux"):
        return
    try:
        libc = ctypes.CDLL(None)
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return
    m_trim_threshold, m_mmap_threshold = -1, -3  # from glibc's malloc.h
    mallopt(m_trim_threshold, 256 << 20)
    mallopt(m_mmap_threshold, 32 << 20)


def _init_worker(package: str, info: ModelInfo, cache_dir, keep_parses: bool, extract: Callable) -> None:
    """A worker process: Ctrl-C is the main process's business; the pipeline comes with the
    fork (or is loaded once, where processes are spawned)."""
    from .parse import load_model

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _keep_freed_memory()
    nlp, _ = load_model(package)
    _setup(nlp, info, cache_dir, keep_parses, extract)


def _analyse_chunk(chunk: Sequence[tuple[str, str]]) -> list[tuple[str, list[Row], bool]]:
    """Parse (or read the cached parse of) each ``(key, text)``, extract, write the caches;
    return ``(key, rows, parsed)`` per text, in order."""
    nlp, extract = _STATE["nlp"], _STATE["extract"]
    parses, extracted = _STATE["parses"], _STATE["extracted"]
    docs: dict[int, object] = {}
    if parses is not None:
        for i, (key, text) in enumerate(chunk):
            doc = parses.get(key, nlp.vocab)
            if doc is not None and doc.text == text:
                docs[i] = doc
    todo = [i for i in range(len(chunk)) if i not in docs]
    fresh = iter(nlp.pipe((chunk[i][1] for i in todo), batch_size=CHUNK))
    out = []
    for i, (key, text) in enumerate(chunk):
        doc = docs.pop(i, None)
        parsed = doc is None
        if parsed:
            doc = next(fresh)
            if _STATE["keep_parses"]:
                parses.put(key, doc)
        rows = to_rows(extract(doc, "", "", text=text))
        del doc
        if extracted is not None:
            extracted.put(key, text, rows)
        out.append((key, rows, parsed))
    return out


def analyse(
    texts: dict[str, str],
    nlp,
    info: ModelInfo,
    *,
    cache_dir: str | Path | None = None,
    processes: int = 1,
    keep_parses: bool = False,
    extract: Callable = extract_doc,
    stats: ParseStats | None = None,
    progress: Callable[[int], None] | None = None,
    weights: dict[str, int] | None = None,
    meanwhile: Callable[[], object] | None = None,
) -> Iterator[tuple[str, list[Row]]]:
    """Parse and extract ``texts`` (key → text, keys from :func:`hingeword.parse.text_key`) that are
    not in the extraction cache; yield ``(key, rows)`` as each text is done (not in order).

    Call :func:`cached_rows` first for the texts already analysed.

    :param processes: worker processes, used when the texts hold at least
        :data:`~hingeword.parse.MIN_WORDS_FOR_PROCESSES` words (fewer run here, in this process).
    :param keep_parses: also cache each ``Doc`` (the parse cache), so that a newer extractor
        does not need to parse again (costs about a tenth of the parsing time). A ``Doc`` cached
        earlier is used either way.
    :param extract: the extractor (``extract(doc, essay_id, writer, text=...)``).
    :param weights: how many essays each key stands for (counted in ``stats`` and ``progress``).
    :param meanwhile: called once, as soon as the worker processes have their work (before the
        parsing when it runs here): the caller's own work then runs while the workers parse.
    """
    stats = stats if stats is not None else ParseStats()
    weights = weights or {}
    items = list(texts.items())
    chunks = [items[i:i + CHUNK] for i in range(0, len(items), CHUNK)]
    words = sum(len(t.split()) for t in texts.values())
    # worker processes (one too: the calling process meanwhile does its own work) when the
    # texts are many enough to pay for starting them
    n_process = min(max(1, processes), len(chunks)) if words >= MIN_WORDS_FOR_PROCESSES else 0

    def account(key: str, parsed: bool) -> None:
        n = weights.get(key, 1)
        if parsed:
            stats.parsed += n
        else:
            stats.from_cache += n
        stats.words += len(texts[key].split()) * n
        if progress:
            progress(n)

    if n_process == 0:
        if meanwhile:
            meanwhile()
        _setup(nlp, info, cache_dir, keep_parses, extract)
        for chunk in chunks:
            for key, rows, parsed in _analyse_chunk(chunk):
                account(key, parsed)
                yield key, rows
        return
    # Objects that exist now (the pipeline, the essays, the caller's data) are left out of the
    # cyclic garbage collector's passes while the workers run: a forked worker then never walks
    # (and so never copies) the parent's memory, and the parent's own passes stay short.
    gc.freeze()
    # concurrent.futures rather than multiprocessing.Pool: a worker that dies (killed, out of
    # memory) breaks the pool with an error here instead of leaving its chunk waiting forever
    workers = ProcessPoolExecutor(n_process, mp_context=multiprocessing.get_context(), initializer=_init_worker,
                                  initargs=(info.package, info, cache_dir, keep_parses, extract))
    try:
        futures = [workers.submit(_analyse_chunk, chunk) for chunk in chunks]  # the workers start on them now
        if meanwhile:
            meanwhile()
        for done in as_completed(futures):
            for key, rows, parsed in done.result():
                account(key, parsed)
                yield key, rows
    except BrokenProcessPool:
        raise ParseError("a parser process stopped before its essays were parsed (out of memory, or killed); "
                         "nothing was stored. Essays parsed so far are cached: scan again, with --processes 1 "
                         "if memory is short") from None
    finally:
        workers.shutdown(wait=False, cancel_futures=True)
        gc.unfreeze()


def cached_rows(texts: dict[str, str], info: ModelInfo, cache_dir: str | Path | None) -> dict[str, list[Row]]:
    """The rows of the texts (key → text) already in the extraction cache."""
    if cache_dir is None:
        return {}
    cache = ExtractionCache(cache_dir, info)
    found = {}
    for key, text in texts.items():
        rows = cache.get(key, text)
        if rows is not None:
            found[key] = rows
    return found

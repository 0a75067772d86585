"""Read a class's essays from a folder: plain text, Word, OpenDocument and CSV tables.

:func:`read_essays` walks the folder, decodes each supported file, assigns writer
ids (optionally from a manifest CSV), and reports what it could not use in
``skipped`` instead of stopping. Only a missing folder or an unusable manifest
raises :class:`~hingeword.errors.IngestError`.

Supported files: ``.txt`` (encoding detected), ``.docx`` (python-docx), ``.odt``
(odfpy) and ``.csv`` essay tables with ``writer`` and ``text`` columns.
"""

from __future__ import annotations

import codecs
import csv
import hashlib
import io
import logging
import os
import re
import unicodedata
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import charset_normalizer
from rapidfuzz import fuzz

from hingeword.errors import IngestError

log = logging.getLogger("hingeword")

SUPPORTED = (".txt", ".docx", ".odt", ".csv")
_USE = "use .txt, .docx, .odt or .csv"
_SYSTEM_FILES = {".ds_store", "thumbs.db", "ehthumbs.db", "desktop.ini", ".localized"}
_SYSTEM_DIRS = {"__macosx", ".spotlight-v100", ".trashes", ".fseventsd", ".temporaryitems"}
_WORD = re.compile(r"[^\W\d_]+(?:['’-][^\W\d_]+)*")
_NON_ASCII = re.compile(r"[^\x00-\x7f]")
_NON_ASCII_WORD = re.compile(r"\w*[^\x00-\x7f]\w*")
_LETTERS = re.compile(r"[^\W\d_]+")
_THREE = re.compile(r"[^\x00-\x7f]{3}")
_SCRIPTS = {"LATIN", "CYRILLIC", "GREEK", "ARABIC", "HEBREW", "ARMENIAN", "GEORGIAN", "THAI"}
_CJK = {"CJK", "HIRAGANA", "KATAKANA", "HANGUL", "IDEOGRAPHIC"}
_WINDOWS = ("cp1250", "cp1251", "cp1253", "cp1254", "cp1257", "cp1255", "cp1256", "cp1258")
_BOMS = ((codecs.BOM_UTF32_LE, "utf-32"), (codecs.BOM_UTF32_BE, "utf-32"),
         (codecs.BOM_UTF16_LE, "utf-16"), (codecs.BOM_UTF16_BE, "utf-16"))
_STANDARD = ("l1", "level", "task")


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

    @property
    def word_count(self) -> int:
        """Number of words: runs of letters, with inner apostrophes or hyphens."""
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


def read_essays(folder: str | Path, *, manifest: str | Path | None = None,
                max_bytes: int = 2_000_000,
                near_duplicate_threshold: float = 95.0) -> IngestResult:
    """Read every essay under ``folder``.

    :param folder: the essay folder; searched recursively in sorted order.
    :param manifest: optional CSV with columns ``file`` and ``writer`` (plus
        ``l1``, ``level``, ``task`` and any others) that sets the writer and
        metadata of the files it names. ``file`` is relative to ``folder``.
    :param max_bytes: files larger than this are skipped unread.
    :param near_duplicate_threshold: rapidfuzz ratio (0..100) from which two
        different essays are reported as near-duplicates.
    :returns: essays in a deterministic order, plus skipped items and duplicates.
    :raises IngestError: the folder or the manifest cannot be used at all.
    """
    if max_bytes <= 0:
        raise ValueError("max_bytes must be positive")
    if not 0 <= near_duplicate_threshold <= 100:
        raise ValueError("near_duplicate_threshold must be between 0 and 100")
    root = Path(folder)
    if not root.exists():
        raise IngestError(f"essay folder not found: {root}")
    if not root.is_dir():
        raise IngestError(f"not a folder: {root} (give the folder that holds the essays)")
    root_res = root.resolve()
    skipped: list[Skipped] = []
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
        essays.extend(_read_one(f, max_bytes, manifest_rows.get(f.resolved), skipped))
    skipped.sort(key=lambda s: _order_key(s.source))
    skipped.extend(manifest_skips)

    result = IngestResult(essays, skipped, _exact_duplicates(essays),
                          _near_duplicates(essays, near_duplicate_threshold))
    log.info("read %d essays (%d words) from %s; %d skipped, %d duplicate groups, "
             "%d near-duplicate pairs", len(essays), result.word_count, root,
             len(skipped), len(result.duplicates), len(result.near_duplicates))
    return result


# --- walking the folder --------------------------------------------------------

def _order_key(source: str) -> tuple:
    """Sort key: path parts, then CSV row number (so ``#10`` follows ``#9``)."""
    path, _, row = source.rpartition("#")
    if not row.isdigit():
        path, row = source, "0"
    return (tuple(path.split("/")), int(row))


def _name_problem(name: str, is_dir: bool) -> str | None:
    low = name.lower()
    if is_dir and low in _SYSTEM_DIRS:
        return "system folder"
    if not is_dir and (low in _SYSTEM_FILES or name.startswith(("~$", "._"))):
        return "system file"
    if name.startswith("."):
        what = "folder" if is_dir else "file"
        return f"hidden {what} (rename it without the leading '.' to read it)"
    return None


def _scan(root: Path, root_res: Path, skipped: list[Skipped]) -> list[_Found]:
    """Find candidate files: the real tree first, then symbolic links in sorted order.

    Links leading outside the folder are skipped; a folder or file reached a second
    time (through a link) is read once, under its real path when it has one.
    """
    files: list[_Found] = []
    links: list[tuple[str, Path]] = []
    seen_dirs: dict[Path, str] = {root_res: "."}

    def walk(start: Path, prefix: str, via_link: bool) -> None:
        stack = [(start, prefix)]
        while stack:
            directory, pre = stack.pop()
            try:
                entries = sorted(os.scandir(directory), key=lambda e: e.name)
            except OSError as exc:
                skipped.append(Skipped(pre.rstrip("/") or ".",
                                       f"folder could not be read: {exc.strerror or exc}"))
                continue
            for entry in entries:
                rel = pre + entry.name
                try:
                    is_dir = entry.is_dir()
                    problem = _name_problem(entry.name, is_dir)
                    if problem:
                        skipped.append(Skipped(rel, problem))
                    elif entry.is_symlink():
                        links.append((rel, Path(entry.path)))
                    elif is_dir:
                        seen_dirs.setdefault(Path(entry.path).resolve(), rel)
                        stack.append((Path(entry.path), rel + "/"))
                    elif entry.is_file():
                        p = Path(entry.path)
                        files.append(_Found(rel, p, p.resolve(), via_link))
                    else:
                        skipped.append(Skipped(rel, "not a regular file"))
                except OSError as exc:
                    skipped.append(Skipped(rel, f"could not be read: {exc.strerror or exc}"))

    walk(root, "", False)
    done = 0
    while done < len(links):
        links[done:] = sorted(links[done:], key=lambda x: _order_key(x[0]))
        rel, path = links[done]
        done += 1
        try:
            target = path.resolve(strict=True)
        except (OSError, RuntimeError):
            skipped.append(Skipped(rel, "broken symbolic link (its target is missing)"))
            continue
        if not target.is_relative_to(root_res):
            skipped.append(Skipped(rel, "symbolic link leading outside the essay folder"))
        elif target.is_dir():
            if target in seen_dirs:
                skipped.append(Skipped(rel, f"symbolic link to a folder already read as "
                                            f"'{seen_dirs[target]}'"))
            else:
                seen_dirs[target] = rel
                walk(path, rel + "/", True)
        elif target.is_file():
            files.append(_Found(rel, path, target, True))
        else:
            skipped.append(Skipped(rel, "not a regular file"))

    keep: dict[Path, _Found] = {}
    for f in sorted(files, key=lambda f: (f.via_link, _order_key(f.rel))):
        if f.resolved in keep:
            skipped.append(Skipped(f.rel, f"same file as '{keep[f.resolved].rel}' "
                                          "(reached again through a symbolic link)"))
        else:
            keep[f.resolved] = f
    return sorted(keep.values(), key=lambda f: _order_key(f.rel))


# --- decoding --------------------------------------------------------------------

def _normalise(text: str) -> str:
    text = text.replace("\ufeff", "").replace("\r\n", "\n").replace("\r", "\n")
    return unicodedata.normalize("NFC", text).strip()


def _script(char: str) -> str | None:
    first = unicodedata.name(char, "?").split()[0]
    return "CJK" if first in _CJK else first if first in _SCRIPTS else None


def _oddity(text: str) -> int:
    """Count signs that the non-ASCII characters of ``text`` were decoded wrongly.

    Each counts one: a symbol, digit or control character stuck to a letter
    ("M³ller", "£ukasz"); a capital right after a small letter ("ItĹs"); a word
    mixing scripts ("cafй"); three non-ASCII Latin letters in a row ("Äìèòðèé").
    Real words in any script rarely show these.
    """
    score = 0
    for m in _NON_ASCII.finditer(text):
        i, char = m.start(), m.group()
        cat = unicodedata.category(char)
        before = text[i - 1] if i else ""
        after = text[i + 1] if i + 1 < len(text) else ""
        if cat[0] in "SNC" and (before.isalpha() or after.isalpha()):
            score += 1
        elif cat == "Lu" and before.islower():
            score += 1
    for m in _NON_ASCII_WORD.finditer(text):
        for word in _LETTERS.findall(m.group()):
            scripts = {_script(c) for c in word} - {None}
            if len(scripts) > 1 or (scripts == {"LATIN"} and _THREE.search(word)):
                score += 1
    return score


def _decode(data: bytes) -> tuple[str, str] | None:
    """Decode bytes: a BOM, else strict UTF-8, else the least odd single-byte guess.

    If charset-normalizer finds no match the bytes are not text. Otherwise the
    guesses are cp1252, its best match, then the other Windows code pages; the one
    with the lowest :func:`_oddity` wins, the earlier on a tie.
    charset-normalizer alone is unreliable on English text with a few accented
    letters: with version 3.5.3 it reads cp1252 "naïve" as cp1250 "naďve" or cp775
    "na’ve", and often misses cp1251/cp1253 names among English words.

    :returns: ``(text, encoding)``, or None if nothing fits.
    """
    for bom, name in _BOMS:
        if data.startswith(bom):
            try:
                return data.decode(name), name
            except UnicodeDecodeError:
                return None
    try:
        return data.decode("utf-8-sig"), "utf-8"
    except UnicodeDecodeError:
        pass
    best = charset_normalizer.from_bytes(data).best()
    if best is None:  # charset-normalizer finds no text encoding at all
        return None
    names = ["cp1252", best.encoding, *_WINDOWS]
    guesses = []
    for name in dict.fromkeys(codecs.lookup(n).name for n in names):
        try:
            text = data.decode(name)
        except UnicodeDecodeError:
            continue
        guesses.append((_oddity(text), len(guesses), text, name))
    if not guesses:
        return None
    _, _, text, name = min(guesses)
    return text, name


def _short(exc: Exception) -> str:
    text = str(exc.args[0]) if isinstance(exc, KeyError) and exc.args else str(exc)
    lines = text.strip().splitlines()
    msg = lines[0] if lines else type(exc).__name__
    return msg if len(msg) <= 100 else msg[:97] + "..."


def _size(n: int) -> str:
    for unit, factor in (("MB", 1_000_000), ("KB", 1_000)):
        if n >= factor:
            return f"{n / factor:.1f}".removesuffix(".0") + f" {unit}"
    return f"{n} bytes"


def _docx_text(path: Path) -> str:
    import docx

    return "\n".join(p.text for p in docx.Document(str(path)).paragraphs)


def _odt_text(path: Path) -> str:
    from odf import teletype
    from odf.namespaces import TEXTNS
    from odf.opendocument import load

    wanted = {(TEXTNS, "p"), (TEXTNS, "h")}
    parts: list[str] = []

    def visit(node) -> None:
        for child in node.childNodes:
            if getattr(child, "qname", None) in wanted:
                parts.append(teletype.extractText(child))
            else:
                visit(child)

    visit(load(str(path)).text)
    return "\n".join(parts)


# --- reading one file ------------------------------------------------------------

def _default_writer(rel: str) -> str:
    parts = rel.split("/")
    return parts[0] if len(parts) > 1 else Path(parts[0]).stem


def _essay(essay_id: str, text: str, source: str, encoding: str, info: _Info) -> Essay:
    return Essay(essay_id=essay_id, writer=info.writer, text=text,
                 sha256=hashlib.sha256(text.encode("utf-8")).hexdigest(),
                 source=source, encoding=encoding, l1=info.l1, level=info.level,
                 task=info.task, meta=tuple(sorted(info.meta.items())))


def _read_one(f: _Found, max_bytes: int, info: _Info | None,
              skipped: list[Skipped]) -> list[Essay]:
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
                raw = _docx_text(f.path) if kind == "docx" else _odt_text(f.path)
            except Exception as exc:  # noqa: BLE001 - any parser failure is per-file
                skipped.append(Skipped(f.rel, f"could not be read as {suffix}: {_short(exc)}"))
                return []
            decoded: tuple[str, str] | None = (raw, kind)
        else:
            data = f.path.read_bytes()
            if b"\x00" in data[:8192] and not data.startswith(
                    tuple(b for b, _ in _BOMS)):
                skipped.append(Skipped(f.rel, "binary file (not text)"))
                return []
            decoded = _decode(data)
    except OSError as exc:
        skipped.append(Skipped(f.rel, f"could not be read: {exc.strerror or exc}"))
        return []
    if decoded is None:
        skipped.append(Skipped(f.rel, "encoding could not be detected (save it as UTF-8)"))
        return []
    text, encoding = decoded
    if suffix == ".csv":
        return _csv_essays(f.rel, text, encoding, info, skipped)
    text = _normalise(text)
    if not text:
        skipped.append(Skipped(f.rel, "empty file"))
        return []
    info = info or _Info(_default_writer(f.rel), None, None, None, {})
    return [_essay(f.rel, text, f.rel, encoding, info)]


# --- CSV tables: essay tables and the manifest ----------------------------------

def _table(text: str, required: tuple[str, ...]) -> tuple[list[str], list[tuple[int, list[str]]]]:
    """Parse CSV text; the delimiter (``,`` ``;`` or tab) is the one whose header has
    the required columns. :returns: stripped header and ``(line number, cells)`` rows.
    """
    first = text.lstrip("\ufeff").split("\n", 1)[0]
    delimiter = ","
    for d in (",", ";", "\t"):
        if set(required) <= {c.strip().lower() for c in next(csv.reader([first], delimiter=d), [])}:
            delimiter = d
            break
    reader = csv.reader(io.StringIO(text.lstrip("\ufeff"), newline=""), delimiter=delimiter)
    header = [c.strip() for c in next(reader, [])]
    rows = []
    start = reader.line_num + 1
    for cells in reader:
        rows.append((start, cells))
        start = reader.line_num + 1
    return header, rows


def _row_info(header: list[str], cells: list[str], writer: str) -> _Info:
    values: dict[str, str] = {}
    meta: dict[str, str] = {}
    for name, value in zip(header, cells):
        key, value = name.lower(), value.strip()
        if not name or not value or key in values:
            continue
        values[key] = value
        if key not in ("file", "writer", "text") + _STANDARD:
            meta.setdefault(name, value)
    return _Info(writer, values.get("l1"), values.get("level"), values.get("task"), meta)


def _csv_essays(rel: str, text: str, encoding: str, named: _Info | None,
                skipped: list[Skipped]) -> list[Essay]:
    """Essays from a CSV table with ``writer`` and ``text`` columns, one per row.

    If the manifest names the table, its l1/level/task/meta fill what a row leaves
    empty; each row keeps its own writer.
    """
    try:
        header, rows = _table(text, ("writer", "text"))
    except csv.Error as exc:
        skipped.append(Skipped(rel, f"could not be read as .csv: {_short(exc)}"))
        return []
    lower = [h.lower() for h in header]
    if "writer" not in lower or "text" not in lower:
        hint = (" (it looks like a manifest: pass it as the manifest instead)"
                if "file" in lower and "writer" in lower else "")
        skipped.append(Skipped(rel, f"CSV has no 'writer' and 'text' columns{hint}"))
        return []
    wi, ti = lower.index("writer"), lower.index("text")
    essays = []
    for n, (_, cells) in enumerate(rows, start=1):
        if not any(c.strip() for c in cells):
            continue
        writer = cells[wi].strip() if wi < len(cells) else ""
        body = _normalise(cells[ti]) if ti < len(cells) else ""
        if not body:
            skipped.append(Skipped(rel, f"empty text in CSV row {n}"))
            continue
        if not writer:
            skipped.append(Skipped(rel, f"empty writer in CSV row {n} (fill in the 'writer' column)"))
            continue
        info = _row_info(header, cells, writer)
        if named is not None:
            info = _Info(writer, info.l1 or named.l1, info.level or named.level,
                         info.task or named.task, {**named.meta, **info.meta})
        essays.append(_essay(f"{rel}#{n}", body, rel, encoding, info))
    return essays


def _read_manifest(path: Path, root: Path, root_res: Path, found: list[_Found],
                   skips: list[Skipped]) -> dict[Path, _Info]:
    """Read the manifest into ``{resolved file path: info}``; bad rows go to ``skips``."""
    if not path.exists():
        raise IngestError(f"manifest file not found: {path}")
    if not path.is_file():
        raise IngestError(f"manifest is not a file: {path} (give the CSV file itself)")
    try:
        decoded = _decode(path.read_bytes())
    except OSError as exc:
        raise IngestError(f"manifest could not be read: {path}: {exc.strerror or exc}") from exc
    if decoded is None:
        raise IngestError(f"manifest encoding could not be detected: {path} (save it as UTF-8)")
    try:
        header, rows = _table(decoded[0], ("file", "writer"))
    except csv.Error as exc:
        raise IngestError(f"manifest is not a readable CSV: {path}: {_short(exc)}") from exc
    missing = [c for c in ("file", "writer") if c not in {h.lower() for h in header}]
    if missing:
        raise IngestError(f"manifest {path} lacks the column(s) {', '.join(missing)} "
                          "(it needs 'file' and 'writer')")
    lower = [h.lower() for h in header]
    fi, wi = lower.index("file"), lower.index("writer")
    known = {f.resolved for f in found}
    out: dict[Path, _Info] = {}
    first_line: dict[Path, int] = {}
    for line, cells in rows:
        if not any(c.strip() for c in cells):
            continue
        where = f"{path.name}:line {line}"
        name = cells[fi].strip() if fi < len(cells) else ""
        writer = cells[wi].strip() if wi < len(cells) else ""
        if not name:
            skips.append(Skipped(where, "manifest row has no file name"))
            continue
        target = root / name
        if not target.exists() and "\\" in name:
            target = root / name.replace("\\", "/")
        resolved = target.resolve()
        if not resolved.is_relative_to(root_res):
            skips.append(Skipped(where, f"manifest row points outside the essay folder: {name}"))
        elif not resolved.exists():
            skips.append(Skipped(where, f"manifest row names a file that does not exist: {name}"))
        elif resolved.is_dir():
            skips.append(Skipped(where, f"manifest row names a folder, not a file: {name}"))
        elif not writer:
            skips.append(Skipped(where, f"manifest row has no writer for {name} "
                                        "(the file keeps its default writer id)"))
        elif resolved in first_line:
            skips.append(Skipped(where, f"manifest row repeats {name}, already listed on "
                                        f"line {first_line[resolved]}"))
        elif resolved not in known:
            skips.append(Skipped(where, f"manifest row names a file that is not read as an "
                                        f"essay: {name} (see its own entry)"))
        else:
            first_line[resolved] = line
            out[resolved] = _row_info(header, cells, writer)
    return out


# --- duplicates ------------------------------------------------------------------

def _exact_duplicates(essays: list[Essay]) -> list[tuple[str, ...]]:
    groups: dict[str, list[str]] = {}
    for e in essays:
        groups.setdefault(e.sha256, []).append(e.essay_id)
    return [tuple(ids) for ids in groups.values() if len(ids) > 1]


def _fuzzy_form(text: str) -> str:
    return " ".join(re.sub(r"[^\w\s]|_", "", text.lower()).split())


def _near_duplicates(essays: list[Essay], threshold: float) -> list[NearDuplicate]:
    """Pairs of non-identical essays with ``fuzz.ratio`` ≥ ``threshold``.

    ratio = 100 · 2M / (len_a + len_b) cannot exceed 100 · 2·min / (len_a + len_b),
    so pairs whose lengths alone rule out the threshold are never compared
    (for 95 that is a length difference above about 10%).
    """
    forms = sorted(((len(t), i, t) for i, t in
                    enumerate(_fuzzy_form(e.text) for e in essays)))
    pairs = []
    for a in range(len(forms)):
        la, i, ta = forms[a]
        for b in range(a + 1, len(forms)):
            lb, j, tb = forms[b]
            if 200 * la < threshold * (la + lb):
                break  # longer texts only widen the gap
            if essays[i].sha256 == essays[j].sha256:
                continue
            score = fuzz.ratio(ta, tb, score_cutoff=threshold)
            if score >= threshold:
                first, second = sorted((i, j))
                pairs.append(NearDuplicate(essays[first].essay_id, essays[second].essay_id,
                                           round(score, 2)))
    order = {e.essay_id: k for k, e in enumerate(essays)}
    return sorted(pairs, key=lambda p: (-p.similarity, order[p.first], order[p.second]))

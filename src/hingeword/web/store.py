"""The web page's uploaded essays, kept inside the workspace where the teacher can erase them.

Layout (every name on disk is made here; nothing from an upload reaches the filesystem
unchecked)::

    WORKSPACE/uploads/<class key>/class.json               {"class": name}
    WORKSPACE/uploads/<class key>/<term key>/term.json     {"class", "term", "term_start"}
    WORKSPACE/uploads/<class key>/<term key>/essays/       the essay files
    WORKSPACE/uploads/<class key>/<term key>/manifest.csv  the manifest, when one was given
    WORKSPACE/uploads/<class key>/<term key>/last-upload.json  what the last upload left out, and why
    WORKSPACE/reports/<class>/<term>/                      report files written after each scan

A key is the name made safe (:func:`hingeword.report.slugify`) plus ten hex digits of its
SHA-256, so two names never share a folder. An uploaded file is stored under its name
reduced to a safe alphabet (letters, digits, space and ``- _ . ( ) , ' + &``), with ``..``,
absolute paths and Windows device names refused, inside the term's ``essays`` folder and
checked to stay there; that name is what the scan and the reports show. Zip files are
unpacked here with bounds on entries and on the bytes actually unpacked (not the sizes the
zip claims). Whatever cannot be stored is listed with a reason, like the scan's skipped files.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import re
import shutil
import stat
import unicodedata
import zipfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

from ..errors import HingewordError
from ..files import atomic_path, clean_text, write_text
from ..ingest import Skipped
from ..report.text import slugify

#: Largest essay file kept (the scan's own limit, ``read_essays(max_bytes=...)``).
MAX_FILE_BYTES = 2_000_000
#: Largest manifest kept.
MAX_MANIFEST_BYTES = 1_000_000
#: A zip may list at most this many entries and unpack to at most this many bytes.
MAX_ZIP_ENTRIES = 2_000
MAX_ZIP_BYTES = 100_000_000
#: Deepest folder nesting kept inside an upload (one folder per student needs two levels).
MAX_DEPTH = 6
#: Longest class or term name.
MAX_NAME = 80

_UNSAFE = re.compile(r"[^\w .()+,'&-]")
_DEVICES = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)), *(f"lpt{i}" for i in range(1, 10))}
_MANIFEST = "manifest.csv"


def uploads_dir(workspace: str | Path) -> Path:
    return Path(workspace) / "uploads"


def reports_dir(workspace: str | Path) -> Path:
    """Where the web page writes each run's report files."""
    return Path(workspace) / "reports"


def key(name: str) -> str:
    """A folder name for a class or term name: readable, unique, safe."""
    return f"{slugify(name)[:40]}-{hashlib.sha256(name.encode('utf-8')).hexdigest()[:10]}"


def check_name(name: str, what: str) -> str:
    """A class or term name, trimmed; raises :class:`HingewordError` when empty, too long or with control characters."""
    name = unicodedata.normalize("NFC", (name or "").strip())
    if not name:
        raise HingewordError(f"give the {what} a name")
    if len(name) > MAX_NAME:
        raise HingewordError(f"the {what} name is longer than {MAX_NAME} characters")
    if clean_text(name) != name or "\n" in name or "\t" in name:
        raise HingewordError(f"the {what} name contains control characters")
    return name


def check_date(text: str) -> str:
    """A term start date in ISO form (YYYY-MM-DD)."""
    try:
        return _dt.date.fromisoformat((text or "").strip()).isoformat()
    except ValueError:
        raise HingewordError(f"the term start must be a date like 2026-09-07, not '{clean_text(text or '')[:40]}'") from None


# ------------------------------------------------------------------ classes and terms


@dataclass(frozen=True)
class TermFolder:
    """The upload folder of one class and term."""

    class_name: str
    term: str
    term_start: str
    path: Path

    @property
    def essays(self) -> Path:
        return self.path / "essays"

    @property
    def manifest(self) -> Path | None:
        m = self.path / _MANIFEST
        return m if m.is_file() else None

    def files(self) -> list[tuple[str, int]]:
        """The stored essay files as (name relative to the essays folder, bytes), sorted."""
        if not self.essays.is_dir():
            return []
        return sorted((p.relative_to(self.essays).as_posix(), p.stat().st_size)
                      for p in self.essays.rglob("*") if p.is_file() and not p.is_symlink())

    def last_upload(self) -> list[Skipped]:
        """What the last upload left out, with reasons."""
        try:
            rows = json.loads((self.path / "last-upload.json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return []
        return [Skipped(str(r[0]), str(r[1])) for r in rows if isinstance(r, list) and len(r) == 2]


def term_path(workspace: str | Path, class_name: str, term: str) -> Path:
    return uploads_dir(workspace) / key(class_name) / key(term)


def save_term(workspace: str | Path, class_name: str, term: str, term_start: str) -> TermFolder:
    """Create (or update the start date of) a class and term; names and date are checked."""
    class_name = check_name(class_name, "class")
    term = check_name(term, "term")
    term_start = check_date(term_start)
    path = term_path(workspace, class_name, term)
    path.mkdir(parents=True, exist_ok=True)
    write_text(path.parent / "class.json", json.dumps({"class": class_name}, ensure_ascii=False))
    write_text(path / "term.json", json.dumps({"class": class_name, "term": term, "term_start": term_start},
                                              ensure_ascii=False))
    return TermFolder(class_name, term, term_start, path)


def find_term(workspace: str | Path, class_name: str, term: str) -> TermFolder | None:
    return next((t for t in terms(workspace) if t.class_name == class_name and t.term == term), None)


def terms(workspace: str | Path) -> list[TermFolder]:
    """Every class and term created on the web page (scanned or not)."""
    found = []
    for meta in sorted(uploads_dir(workspace).glob("*/*/term.json")):
        try:
            data = json.loads(meta.read_text(encoding="utf-8"))
            found.append(TermFolder(str(data["class"]), str(data["term"]), str(data["term_start"]), meta.parent))
        except (OSError, ValueError, KeyError, TypeError):
            continue
    return found


def clear_files(folder: TermFolder) -> int:
    """Delete a term's uploaded essays and manifest (the class and term stay); returns files deleted."""
    count = len(folder.files()) + (1 if folder.manifest else 0)
    shutil.rmtree(folder.essays, ignore_errors=True)
    for name in (_MANIFEST, "last-upload.json"):
        (folder.path / name).unlink(missing_ok=True)
    return count


def exists(workspace: str | Path, class_name: str, term: str | None = None) -> bool:
    """Whether the web page holds a folder for this class (or term)."""
    target = uploads_dir(workspace) / key(class_name)
    return (target / key(term) if term is not None else target).is_dir()


def remove(workspace: str | Path, class_name: str, term: str | None = None) -> int:
    """Delete the upload folder of a class (or of one term); returns the files deleted (essays and manifests)."""
    gone = [t for t in terms(workspace) if t.class_name == class_name and (term is None or t.term == term)]
    count = sum(len(t.files()) + (1 if t.manifest else 0) for t in gone)
    target = uploads_dir(workspace) / key(class_name)
    if term is not None:
        target = target / key(term)
    if target.is_dir():
        shutil.rmtree(target)
    parent = target.parent
    if term is not None and parent.is_dir() and not any(parent.glob("*/term.json")):
        shutil.rmtree(parent)  # the class's last term: the class folder goes too
    return count


# ------------------------------------------------------------------ uploads


@dataclass(frozen=True)
class Upload:
    """One uploaded file: the name the browser sent (may hold folders) and a binary file object."""

    name: str
    file: BinaryIO


@dataclass
class UploadReport:
    stored: list[str] = field(default_factory=list)
    skipped: list[Skipped] = field(default_factory=list)
    manifest: str | None = None  # the name the manifest came under


def label(name: str) -> str:
    """An uploaded name as shown to the teacher: control characters removed, at most 160 characters."""
    text = " ".join(clean_text(unicodedata.normalize("NFC", name or "")).split())
    return text if len(text) <= 160 else text[:157] + "…"


def safe_parts(name: str) -> list[str]:
    """The path an uploaded name is stored under, as checked parts.

    :raises HingewordError: an absolute path, ``..``, or a path nested deeper than :data:`MAX_DEPTH`.
    """
    text = unicodedata.normalize("NFC", name or "").replace("\\", "/")
    if text.startswith("/") or re.match(r"^[A-Za-z]:", text):
        raise HingewordError("absolute path; not stored")
    raw = [p for p in text.split("/") if p not in ("", ".")]
    if any(p == ".." for p in raw):
        raise HingewordError("path leads out of its folder ('..'); not stored")
    if not raw:
        raise HingewordError("no file name; not stored")
    if len(raw) > MAX_DEPTH:
        raise HingewordError(f"nested deeper than {MAX_DEPTH} folders; not stored")
    parts = []
    for p in raw:
        p = _UNSAFE.sub("_", p).strip(" ")
        p = p.rstrip(". ") or "_"
        stem, dot, suffix = p.rpartition(".") if "." in p.lstrip(".") else (p, "", "")
        if stem.split(".")[0].lower() in _DEVICES:
            p = "_" + p
        if len(p) > 100:
            keep = (dot + suffix)[:20]
            p = p[:100 - len(keep)] + keep
        parts.append(p)
    return parts


def _common_folder(names: list[str]) -> int:
    """1 when every name sits in one shared top folder (a browser folder upload or a zipped
    folder), so that folder is dropped; else 0. System folders (``__MACOSX``) are not counted."""
    split = [n.replace("\\", "/").strip("/").split("/") for n in names]
    counted = [s for s in split if s[0].lower() != "__macosx"]
    if counted and all(len(s) > 1 for s in counted) and len({s[0] for s in counted}) == 1:
        return 1
    return 0


def _strip(name: str, drop: int) -> str:
    parts = name.replace("\\", "/").strip("/").split("/")
    return "/".join(parts[drop:]) if drop and len(parts) > drop and parts[0].lower() != "__macosx" else name


def _read_bounded(fh: BinaryIO, limit: int) -> bytes:
    return fh.read(limit + 1)


def _size_text(n: int) -> str:
    return f"{n / 1_000_000:.0f} MB" if n >= 1_000_000 else f"{n / 1000:.0f} kB"


def _zip_entries(up_label: str, fh: BinaryIO, skipped: list[Skipped]) -> Iterator[tuple[str, str, bytes]]:
    """The files inside an uploaded zip as (name without the shared top folder, name as shown, bytes),
    within the bounds; problems go to ``skipped``."""
    try:
        zf = zipfile.ZipFile(fh)
    except (zipfile.BadZipFile, OSError, ValueError, EOFError):
        skipped.append(Skipped(up_label, "not a readable zip file; nothing was taken from it"))
        return
    with zf:
        infos = [i for i in zf.infolist() if not i.is_dir()]
        if len(infos) > MAX_ZIP_ENTRIES:
            skipped.append(Skipped(up_label, f"the zip holds {len(infos):,} files, more than the {MAX_ZIP_ENTRIES:,} "
                                             "allowed; nothing was taken from it"))
            return
        drop = _common_folder([i.filename for i in infos])
        total = 0
        for info in infos:
            where = f"{up_label}: {label(info.filename)}"
            mode = info.external_attr >> 16
            if mode and stat.S_ISLNK(mode):
                skipped.append(Skipped(where, "symbolic link inside the zip; not unpacked"))
                continue
            if info.flag_bits & 0x1:
                skipped.append(Skipped(where, "password-protected; not unpacked"))
                continue
            if info.filename.lower().endswith(".zip"):
                skipped.append(Skipped(where, "a zip inside the zip; unpack it and upload its files"))
                continue
            if info.file_size > MAX_FILE_BYTES:
                skipped.append(Skipped(where, f"larger than the {_size_text(MAX_FILE_BYTES)} limit for one essay file"))
                continue
            try:
                with zf.open(info) as member:
                    data = _read_bounded(member, MAX_FILE_BYTES)
            except (zipfile.BadZipFile, OSError, ValueError, NotImplementedError, RuntimeError, EOFError) as exc:
                skipped.append(Skipped(where, f"could not be unpacked: {label(str(exc)) or type(exc).__name__}"))
                continue
            if len(data) > MAX_FILE_BYTES:
                skipped.append(Skipped(where, f"unpacks to more than the {_size_text(MAX_FILE_BYTES)} limit for one "
                                              "essay file (the zip understates its size)"))
                continue
            total += len(data)
            if total > MAX_ZIP_BYTES:
                skipped.append(Skipped(up_label, f"the zip unpacks to more than {_size_text(MAX_ZIP_BYTES)}; "
                                                 "the files after this point were not unpacked"))
                return
            yield _strip(info.filename, drop), where, data


def _store(folder: TermFolder, name: str, data: bytes, written: set[str], report: UploadReport, shown: str) -> None:
    """Write one file under its checked name inside the term's essays folder."""
    try:
        parts = safe_parts(name)
    except HingewordError as exc:
        report.skipped.append(Skipped(shown, str(exc)))
        return
    rel = "/".join(parts)
    n = 2
    while rel.lower() in written:  # two different names made the same safe name
        stem, dot, suffix = parts[-1].rpartition(".") if "." in parts[-1] else (parts[-1], "", "")
        rel = "/".join([*parts[:-1], f"{stem} ({n}){dot}{suffix}"])
        n += 1
    root = folder.essays.resolve()
    target = folder.essays / rel
    if not target.resolve().is_relative_to(root) or target.is_dir():
        report.skipped.append(Skipped(shown, "a folder of the same name was uploaded before; not stored"))
        return
    try:
        with atomic_path(target) as tmp:
            tmp.write_bytes(data)
    except HingewordError as exc:
        report.skipped.append(Skipped(shown, f"could not be stored: {exc}"))
        return
    written.add(rel.lower())
    report.stored.append(rel)


def save_uploads(folder: TermFolder, files: Iterable[Upload] = (), *, folder_files: Iterable[Upload] = (),
                 manifest: Upload | None = None) -> UploadReport:
    """Store uploaded essays and an optional manifest in a term's folder.

    :param files: single files (a ``.zip`` is unpacked, its one shared top folder dropped).
    :param folder_files: the files of a folder the browser uploaded, named ``folder/...``; the
        chosen folder's own name is dropped, so sub-folders (one per student) stay as in a scan.
    :param manifest: the manifest CSV. Without it, a top-level ``manifest.csv`` in the folder
        or zip is taken as the manifest.

    Files uploaded again under the same name replace the earlier copy. What is not stored is
    listed with a reason in the report and in ``last-upload.json``.
    """
    report = UploadReport()
    folder.essays.mkdir(parents=True, exist_ok=True)
    written: set[str] = set()
    if manifest is not None and not manifest.name:
        manifest = None
    folder_files = [f for f in folder_files if f.name]
    drop = _common_folder([f.name for f in folder_files])
    batch = [(f, 0) for f in files if f.name] + [(f, drop) for f in folder_files]
    found_manifest: tuple[str, bytes] | None = None

    def take(name: str, data: bytes, shown: str) -> None:
        nonlocal found_manifest
        if name.lower() == _MANIFEST and "/" not in name.strip("/"):
            if manifest is None and found_manifest is None:
                found_manifest = (shown, data)
                return
            report.skipped.append(Skipped(shown, "a second manifest; the one uploaded separately is used"))
            return
        _store(folder, name, data, written, report, shown)

    for up, drop in batch:
        shown = label(up.name)
        if up.name.lower().endswith(".zip"):
            for name, where, data in _zip_entries(shown, up.file, report.skipped):
                take(name, data, where)
            continue
        data = _read_bounded(up.file, MAX_FILE_BYTES)
        if len(data) > MAX_FILE_BYTES:
            report.skipped.append(Skipped(shown, f"larger than the {_size_text(MAX_FILE_BYTES)} limit for one essay file"))
            continue
        take(_strip(up.name, drop), data, shown)

    if manifest is not None:
        found_manifest = (label(manifest.name), _read_bounded(manifest.file, MAX_MANIFEST_BYTES))
    if found_manifest is not None:
        shown, data = found_manifest
        if not shown.lower().endswith(".csv"):
            report.skipped.append(Skipped(shown, "the manifest must be a .csv file (columns file,writer[,l1,level,task])"))
        elif len(data) > MAX_MANIFEST_BYTES:
            report.skipped.append(Skipped(shown, f"manifest larger than {_size_text(MAX_MANIFEST_BYTES)}"))
        else:
            with atomic_path(folder.path / _MANIFEST) as tmp:
                tmp.write_bytes(data)
            report.manifest = shown
    write_text(folder.path / "last-upload.json",
               json.dumps([[s.source, s.reason] for s in report.skipped], ensure_ascii=False))
    return report

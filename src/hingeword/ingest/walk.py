"""Walking the essay folder: sorted recursive scan, system and hidden files, symbolic
links (followed inside the folder, read once), and the manifest CSV that maps files
to writers and metadata.
"""

from __future__ import annotations

import csv
import os
import re
from pathlib import Path

from hingeword.errors import IngestError

from .decode import _decode, _short
from .records import Skipped, _Found, _Info
from .tables import _row_info, _table

_SYSTEM_FILES = {".ds_store", "thumbs.db", "ehthumbs.db", "desktop.ini", ".localized"}
_SYSTEM_DIRS = {"__macosx", ".spotlight-v100", ".trashes", ".fseventsd", ".temporaryitems"}


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
            twin = _case_twin(resolved)
            skips.append(Skipped(where, f"manifest row names a file that does not exist: {name}"
                                 + (f" (the folder has '{twin}', which differs only in case: write the name exactly)"
                                    if twin else "")))
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
            l1 = out[resolved].l1
            if l1 and not _ISO_639_1.fullmatch(l1.strip()):
                skips.append(Skipped(where, f"first language '{l1}' of {name} is not an ISO 639-1 code such as "
                                            "'es' or 'pt-br': the essay is read, but no first-language note "
                                            "applies to it"))
    return out


#: An ISO 639-1 code, optionally with a region ("es", "pt-br", "zh_TW"): two letters (the form is checked,
#: not membership of the list).
_ISO_639_1 = re.compile(r"[A-Za-z]{2}(?:[-_][A-Za-z0-9]{2,8})?")


def _case_twin(path: Path) -> str | None:
    """The name of a file beside ``path`` that differs from it only in case, if any."""
    try:
        return next((p.name for p in path.parent.iterdir() if p.name.casefold() == path.name.casefold()), None)
    except OSError:
        return None

"""CSV essay tables: one essay per row with ``writer`` and ``text`` columns, the
delimiter found from the header; the row parser is shared with the manifest.
"""

from __future__ import annotations

import csv
import io

from .decode import too_long_reason, _normalise, _short
from .records import Essay, Skipped, _essay, _Info

_STANDARD = ("l1", "level", "task")


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
    # a cell may hold a whole essay: the csv module's default cap (131,072 characters) would
    # refuse the whole table for one long essay, which the length check then skips alone
    limit = csv.field_size_limit()
    csv.field_size_limit(max(limit, len(text) + 1))
    try:
        reader = csv.reader(io.StringIO(text.lstrip("\ufeff"), newline=""), delimiter=delimiter)
        header = [c.strip() for c in next(reader, [])]
        rows = []
        start = reader.line_num + 1
        for cells in reader:
            rows.append((start, cells))
            start = reader.line_num + 1
    finally:
        csv.field_size_limit(limit)
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
                skipped: list[Skipped], max_chars: int | None = None) -> list[Essay]:
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
        if max_chars is not None and len(body) > max_chars:
            skipped.append(Skipped(rel, f"CSV row {n}: {too_long_reason(len(body), max_chars)}"))
            continue
        info = _row_info(header, cells, writer)
        if named is not None:
            info = _Info(writer, info.l1 or named.l1, info.level or named.level,
                         info.task or named.task, {**named.meta, **info.meta})
        essays.append(_essay(f"{rel}#{n}", body, rel, encoding, info))
    return essays

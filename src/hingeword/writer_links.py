"""Writer matches the teacher confirms or rejects: ``WORKSPACE/writer-matches.csv``.

``--match-writers`` (on ``trends`` and ``report``) proposes that a writer of one term is
a writer of the term before whose name differs slightly ("Lucia Romero" = "Lucía
Romero"). The proposals are written to ``writer-matches.csv`` in the workspace with the
columns ``class, term, writer, previous_writer, similarity, decision``; the teacher
writes ``yes`` (the same student) or ``no`` (two students) in ``decision`` with any
spreadsheet or text editor. Then:

* a ``yes`` row always links the two ids: the progress lines follow the student, and the
  student keeps the code of the earlier term (S07 stays S07), with or without
  ``--match-writers``;
* a ``no`` row is never proposed or used again;
* an empty ``decision`` is a proposal: used only with ``--match-writers``.

Rows the teacher decided are kept when proposals are written again.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path

from .errors import HingewordError
from .files import write_text

FILE_NAME = "writer-matches.csv"
COLUMNS = ("class", "term", "writer", "previous_writer", "similarity", "decision")
_YES, _NO = {"yes", "y", "true", "1", "same"}, {"no", "n", "false", "0", "different"}


@dataclass(frozen=True)
class Link:
    class_name: str
    term: str
    writer: str
    previous_writer: str
    similarity: float
    decision: str  # "yes", "no" or "" (a proposal)


def path(workspace: str | Path) -> Path:
    return Path(workspace) / FILE_NAME


def read(workspace: str | Path) -> list[Link]:
    """The rows of ``writer-matches.csv`` (none when there is no file); a bad decision is a one-line error."""
    p = path(workspace)
    if not p.is_file():
        return []
    try:
        rows = list(csv.DictReader(io.StringIO(p.read_text(encoding="utf-8-sig"))))
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise HingewordError(f"{p} cannot be read: {exc}") from None
    out = []
    for n, row in enumerate(rows, start=2):
        if not all(row.get(c) for c in ("class", "term", "writer", "previous_writer")):
            continue
        raw = (row.get("decision") or "").strip().lower()
        decision = "yes" if raw in _YES else "no" if raw in _NO else ""
        if raw and not decision:
            raise HingewordError(f"{p}, line {n}: decision '{row.get('decision')}' is not yes or no")
        try:
            sim = float(row.get("similarity") or 0)
        except ValueError:
            sim = 0.0
        out.append(Link(row["class"], row["term"], row["writer"], row["previous_writer"], sim, decision))
    return out


def links_for(workspace: str | Path, class_name: str, term: str) -> tuple[dict[str, str], set[tuple[str, str]]]:
    """(confirmed: writer -> previous writer, rejected pairs) of one class and term."""
    confirmed, rejected = {}, set()
    for link in read(workspace):
        if (link.class_name, link.term) != (class_name, term):
            continue
        if link.decision == "yes":
            confirmed[link.writer] = link.previous_writer
        elif link.decision == "no":
            rejected.add((link.writer, link.previous_writer))
    return confirmed, rejected


def confirmed_in_class(workspace: str | Path, class_name: str) -> dict[str, str]:
    """Every confirmed link of a class: writer -> the previous writer it is."""
    return {link.writer: link.previous_writer for link in read(workspace)
            if link.class_name == class_name and link.decision == "yes"}


def propose(workspace: str | Path, proposals: list[tuple[str, str, str, str, float]]) -> Path:
    """Merge ``(class, term, writer, previous writer, similarity)`` proposals into the file, keeping
    every row already there (and its decision); return the file's path."""
    p = path(workspace)
    rows = read(workspace)
    known = {(r.class_name, r.term, r.writer, r.previous_writer) for r in rows}
    rows += [Link(c, t, w, pw, s, "") for c, t, w, pw, s in proposals if (c, t, w, pw) not in known]
    buf = io.StringIO()
    out = csv.writer(buf, lineterminator="\n")
    out.writerow(COLUMNS)
    for r in sorted(rows, key=lambda r: (r.class_name, r.term, r.writer, r.previous_writer)):
        out.writerow([r.class_name, r.term, r.writer, r.previous_writer, f"{r.similarity:.0f}", r.decision])
    write_text(p, buf.getvalue())
    return p

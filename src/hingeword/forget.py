"""Erasing a class's or one term's essays and results (schools must be able to erase).

:func:`forget` is what ``hingeword forget`` and the web page's "Erase" buttons call. In the
workspace it deletes, for the class (or the one term):

* the stored runs: essays, instances, figures, skipped files, notes (one transaction;
  deleted rows are overwritten in the database file, see :meth:`Workspace.forget`);
  for a whole class also its decisions, their log and its links to other classes;
* the cached parses and extracted attachments of essays that no remaining run holds;
* the essays uploaded on the web page (``uploads/``) and the report files the web page
  wrote (``reports/``); the trends page of a class that keeps other terms is written again
  without the erased term.

Reports written elsewhere with ``hingeword report --out DIR`` and exports saved by hand are
not known to the workspace: the result says so, and they are the teacher's to delete.
"""

from __future__ import annotations

import shutil
from dataclasses import dataclass
from pathlib import Path

from .console import plural
from .errors import WorkspaceError
from .history import Workspace
from .parse import forget_cached
from .report.text import slugify
from .web import store


@dataclass(frozen=True)
class ForgetResult:
    class_name: str
    term: str | None
    runs: int
    essays: int
    cached_parses: int
    uploaded_files: int
    report_files: int
    decisions: int
    links: int

    @property
    def what(self) -> str:
        return f"{self.class_name} / {self.term}" if self.term else f"class {self.class_name} (every term)"

    def lines(self) -> list[str]:
        """What was erased, as lines for the terminal or the page."""
        out = [f"Erased {self.what}: {plural(self.runs, 'stored scan')} with {plural(self.essays, 'essay')}, "
               f"{plural(self.cached_parses, 'cached parse')}, {plural(self.uploaded_files, 'uploaded file')}, "
               f"{plural(self.report_files, 'report file')}"
               + (f", {plural(self.decisions, 'decision')} and {plural(self.links, 'class link')}"
                  if self.term is None else "") + "."]
        out.append("Reports or exports saved outside the workspace (hingeword report --out, downloads) "
                   "are not touched: delete those yourself.")
        return out


def _files_under(path: Path) -> int:
    if path.is_file():
        return 1
    return sum(1 for p in path.rglob("*") if p.is_file()) if path.is_dir() else 0


def forget(workspace: str | Path, class_name: str, term: str | None = None) -> ForgetResult:
    """Erase a class (``term=None``: every term) or one term of it from the workspace.

    :raises WorkspaceError: no workspace, or nothing at all is stored for that class or term.
    """
    created = store.exists(workspace, class_name, term)
    with Workspace(workspace, create=False) as ws:
        gone = ws.forget(class_name, term)
        cached = forget_cached(ws.cache_dir, gone.unused_texts)
        left = ws.runs(class_name)
    reports = store.reports_dir(workspace) / slugify(class_name)
    report_files = 0
    if term is None:
        report_files = _files_under(reports)
        shutil.rmtree(reports, ignore_errors=True)
    else:
        folder = reports / slugify(term)
        report_files = _files_under(folder)
        shutil.rmtree(folder, ignore_errors=True)
        trends = reports / "trends.html"
        if trends.is_file():
            if left:
                from .report import make_trends  # written again without the erased term

                make_trends(workspace, class_name, out_dir=store.reports_dir(workspace))
            else:
                trends.unlink()
                report_files += 1
    uploaded = store.remove(workspace, class_name, term)
    if not (gone.runs or created or report_files or gone.decisions or gone.links):
        what = f"class '{class_name}', term '{term}'" if term else f"class '{class_name}'"
        raise WorkspaceError(f"nothing is stored for {what} in {workspace}")
    return ForgetResult(class_name=class_name, term=term, runs=len(gone.runs), essays=gone.essays,
                        cached_parses=cached, uploaded_files=uploaded, report_files=report_files,
                        decisions=gone.decisions, links=gone.links)

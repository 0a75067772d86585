"""The teacher's review: dismiss and restore patterns, link classes.

One function per command; each opens the workspace, checks what it is told and
returns what happened, so that the command line and the web page say the same.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .errors import WorkspaceError
from .history import Workspace
from .record import key_label


@dataclass(frozen=True)
class ReviewResult:
    governor: str
    preposition: str
    scope: str  # a class name, or "all classes"
    occurrences: int  # uses of the pattern in the scope's stored runs

    @property
    def label(self) -> str:
        return key_label(self.governor, self.preposition)


def _occurrences(ws: Workspace, governor: str, preposition: str, class_name: str | None) -> int:
    runs = ws.runs_in_order(class_name) if class_name else ws.runs()
    return sum(len(ws.attachments(r.id, key=(governor, None, preposition))) for r in runs)


def dismiss(workspace: str | Path, governor: str, preposition: str, *, class_name: str | None, reason: str,
            on: str | None = None) -> ReviewResult:
    """Dismiss a pattern for a class (``class_name=None``: every class); persists across terms.

    :raises WorkspaceError: no such class, or an empty reason.
    """
    if not reason.strip():
        raise WorkspaceError("give a reason for dismissing (it is shown in the teacher overview)")
    with Workspace(workspace, create=False) as ws:
        if class_name:
            class_name = ws.canonical_class(class_name)
            ws.require_class(class_name)
        found = _occurrences(ws, governor, preposition, class_name)
        ws.dismiss(governor, preposition, class_name=class_name, reason=reason, on=on)
    return ReviewResult(governor, preposition, class_name or "all classes", found)


def restore(workspace: str | Path, governor: str, preposition: str, *, class_name: str | None,
            on: str | None = None) -> ReviewResult:
    """Undo a dismissal.

    :raises WorkspaceError: no such class, or the pattern was not dismissed there.
    """
    with Workspace(workspace, create=False) as ws:
        if class_name:
            class_name = ws.canonical_class(class_name)
            ws.require_class(class_name)
        if not ws.restore(governor, preposition, class_name=class_name, on=on):
            raise WorkspaceError(f"'{key_label(governor, preposition)}' was not dismissed for {class_name or 'all classes'}")
        found = _occurrences(ws, governor, preposition, class_name)
    return ReviewResult(governor, preposition, class_name or "all classes", found)


def link_classes(workspace: str | Path, old: str, new: str) -> None:
    """Record that class ``new`` continues class ``old`` (the same students under a new name)."""
    with Workspace(workspace, create=False) as ws:
        ws.link_classes(old, new)

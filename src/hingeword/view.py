"""The run view: one stored run with everything a reader of it needs, built once.

:func:`load_run_view` reads a run from the workspace and joins, per pattern, the
teacher's decision and the comparison with the previous term (from the trends stage),
plus each writer's progress since last term. The report pages, the exports, the
trends page and the command line all consume a :class:`RunView`; none of them goes
back to the database or works out "the previous run" on its own.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

from .extract import Attachment
from .history import Note, RunInfo, Workspace
from .ingest import Essay, Skipped
from .record import PatternRecord
from .score import Thresholds, ranked
from .trends import ProgressRow, compare_with_previous, writer_matches, writer_progress
from .writer_links import confirmed_in_class, links_for


@dataclass(frozen=True)
class RunView:
    """One run as plain data: records (ranked, with decisions and comparison), instances, essays."""

    run: RunInfo
    records: tuple[PatternRecord, ...]
    attachments: tuple[Attachment, ...]
    essays: tuple[Essay, ...]
    skipped: tuple[Skipped, ...] = ()
    notes: tuple[Note, ...] = ()
    codes: tuple[tuple[str, str], ...] = ()  # (writer, pseudonym)
    previous_term: str | None = None
    progress: tuple[tuple[str, tuple[ProgressRow, ...]], ...] = ()

    @property
    def class_name(self) -> str:
        return self.run.class_name

    @property
    def term(self) -> str:
        return self.run.term

    @property
    def thresholds(self) -> Thresholds:
        """The thresholds the run was scored with (run settings minus term facts)."""
        return Thresholds.from_mapping(self.run.settings, ignore=_RUN_FACTS, strict=False)

    @property
    def teachable(self) -> list[PatternRecord]:
        """Flagged and not dismissed, in rank order: what the handouts show."""
        return [r for r in self.records if r.teachable]

    @functools.cached_property
    def _code_of(self) -> dict[str, str]:
        return dict(self.codes)

    def pseudonym(self, writer: str) -> str:
        return self._code_of.get(writer, "S??")

    def writer_label(self, writer: str, names: str) -> str:
        """The writer as a report shows them: a pseudonym, or the id with ``names="real"``."""
        return writer if names == "real" else self.pseudonym(writer)


#: Run settings that are facts of the term, not thresholds.
_RUN_FACTS = ("term_start", "l1", "keep_spelling")


def load_run_view(ws: Workspace, class_name: str, term: str, *, match: bool = False,
                  progress: bool = True) -> RunView:
    """Read one run (raises :class:`~hingeword.errors.WorkspaceError` if absent) and join
    decisions, the comparison with last term and writer progress.

    :param match: link writer ids of the previous term by name similarity
        (:func:`hingeword.trends.writer_matches`) for the per-writer progress.
    :param progress: compute the per-writer progress (the student sheets need it).
    """
    class_name = ws.canonical_class(class_name)  # class names match whatever their case
    run = ws.run(class_name, term)
    previous = ws.previous_run(class_name, term)
    stored = ws.records(run.id)
    decisions = ws.decisions_for(class_name)
    prev_records = ws.records(previous.id) if previous is not None else []
    comparison = compare_with_previous(stored, run, previous, prev_records)
    records = tuple(ranked([r.with_(decision=decisions.get((r.governor, r.preposition)), comparison=comparison[r.key])
                            for r in stored]))
    rows: tuple = ()
    if previous is not None and progress:
        keys = {r.key for r in records if r.teachable}
        keys |= {r.key for r in prev_records if r.flagged and (r.governor, r.preposition) not in decisions}
        confirmed, rejected = links_for(ws.root, class_name, term)
        same = {cur: prev for cur, prev, _ in writer_matches(ws, class_name, term)
                if (cur, prev) not in rejected} if match else {}
        same.update(confirmed)
        rows = tuple(sorted(writer_progress(ws, class_name, term, sorted(keys), same_writer=same).items()))
    return RunView(
        run=run, records=records, attachments=tuple(ws.attachments(run.id)), essays=tuple(ws.essays(run.id)),
        skipped=tuple(ws.skipped(run.id)), notes=tuple(ws.notes(run.id)),
        codes=tuple(sorted(ws.writer_codes(class_name, same_as=confirmed_in_class(ws.root, class_name)).items())),
        previous_term=previous.term if previous is not None else None, progress=rows,
    )

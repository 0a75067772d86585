"""Scans started from the web page, run in a background thread so that the page stays live.

One scan runs at a time per workspace: a second request while one runs is refused with a
message naming the running scan (the teacher starts it again when the first is done).
The stages are the scan's own (``pipeline.scan(stage=...)``) plus writing the reports.
"""

from __future__ import annotations

import datetime as _dt
import logging
import threading
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path

from ..errors import HingewordError

log = logging.getLogger("hingeword")

#: Stage names as the page shows them, in order.
STAGES = {
    "queued": "Starting",
    "read": "Reading the essays",
    "parse": "Parsing the essays and finding the patterns",
    "score": "Comparing with the native reference",
    "store": "Saving the results",
    "report": "Writing the handouts and reports",
}


@dataclass(frozen=True)
class Job:
    """The state of one scan, as the progress endpoint reports it."""

    class_name: str
    term: str
    state: str = "running"  # running, done, failed
    stage: str = "queued"
    done: int = 0
    total: int = 0
    message: str = ""
    lines: tuple[str, ...] = ()  # what the scan found, as the command line prints it
    started: str = field(default_factory=lambda: _dt.datetime.now().strftime("%H:%M:%S"))

    @property
    def running(self) -> bool:
        return self.state == "running"

    def as_dict(self) -> dict:
        return {"class": self.class_name, "term": self.term, "state": self.state, "stage": self.stage,
                "stage_label": STAGES.get(self.stage, self.stage), "done": self.done, "total": self.total,
                "message": self.message, "started": self.started, "lines": list(self.lines),
                "stage_number": list(STAGES).index(self.stage) if self.stage in STAGES else 0,
                "stages": len(STAGES) - 1}


class ScanBusy(HingewordError):
    """A scan of this workspace is already running."""


class Scanner:
    """Runs one scan at a time in a daemon thread and keeps the last state of each class and term.

    :param work: ``work(class_name, term, update)`` does the scan; ``update(**fields)`` moves the
        job's stage and counts; it returns the summary lines to show.
    """

    def __init__(self, work: Callable[..., list[str]]):
        self._work = work
        self._lock = threading.Lock()
        self._jobs: dict[tuple[str, str], Job] = {}
        self._running: tuple[str, str] | None = None
        self._thread: threading.Thread | None = None

    def start(self, class_name: str, term: str) -> Job:
        """Start a scan; :class:`ScanBusy` when one is running."""
        with self._lock:
            if self._running is not None:
                job = self._jobs[self._running]
                raise ScanBusy(f"a scan of {job.class_name} / {job.term} is running "
                               f"({STAGES.get(job.stage, job.stage).lower()}); start this one when it has finished")
            job = Job(class_name, term)
            self._jobs[(class_name, term)] = job
            self._running = (class_name, term)
            self._thread = threading.Thread(target=self._run, args=(class_name, term), daemon=True,
                                            name=f"hingeword-scan-{class_name}-{term}")
            self._thread.start()
            return job

    def job(self, class_name: str, term: str) -> Job | None:
        with self._lock:
            return self._jobs.get((class_name, term))

    def running(self) -> Job | None:
        with self._lock:
            return self._jobs.get(self._running) if self._running else None

    def forget(self, class_name: str, term: str | None = None) -> None:
        """Drop finished jobs' states of a class (or term), e.g. after it was erased."""
        with self._lock:
            for k in [k for k in self._jobs if k[0] == class_name and (term is None or k[1] == term)]:
                if k != self._running:
                    del self._jobs[k]

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for the running scan (tests, shutdown); True when none is running afterwards."""
        thread = self._thread
        if thread is not None:
            thread.join(timeout)
        return self.running() is None

    def _update(self, key: tuple[str, str], **changes) -> None:
        with self._lock:
            self._jobs[key] = replace(self._jobs[key], **changes)

    def _run(self, class_name: str, term: str) -> None:
        key = (class_name, term)
        try:
            lines = self._work(class_name, term, lambda **c: self._update(key, **c))
            self._update(key, state="done", stage="report", lines=tuple(lines), message="")
        except HingewordError as exc:
            self._update(key, state="failed", message=str(exc))
        except Exception as exc:  # noqa: BLE001 - a bug must not kill the server; it is logged in full
            log.exception("scan of %s / %s failed", class_name, term)
            self._update(key, state="failed", message=f"unexpected error ({type(exc).__name__}); "
                                                      "the terminal running 'hingeword serve' shows the details")
        finally:
            with self._lock:
                self._running = None


def scan_work(workspace: Path, *, scan_options: dict, folder_of: Callable, top: int = 5) -> Callable[..., list[str]]:
    """The work of one web scan: :func:`hingeword.pipeline.scan` on the term's uploaded essays,
    then the report files (:func:`hingeword.report.make_reports`, :func:`~hingeword.report.make_trends`).

    :param folder_of: ``folder_of(class_name, term)`` → the term's :class:`~hingeword.web.store.TermFolder`.
    """
    from ..console import scan_summary
    from ..pipeline import scan
    from ..report import make_reports, make_trends
    from .store import reports_dir

    def work(class_name: str, term: str, update: Callable[..., None]) -> list[str]:
        folder = folder_of(class_name, term)
        if folder is None or not folder.files():
            raise HingewordError(f"no essays are uploaded for {class_name} / {term} yet; upload them first")
        result = scan(folder.essays, class_name=class_name, term=term, workspace=workspace,
                      manifest=folder.manifest, term_start=folder.term_start, processes=1,
                      progress=lambda done, total: update(done=done, total=total),
                      stage=lambda name: update(stage=name), **scan_options)
        update(stage="report")
        out = reports_dir(workspace)
        make_reports(workspace, class_name, term, out, top=top)
        make_trends(workspace, class_name, out_dir=out)
        return scan_summary(result, top)

    return work

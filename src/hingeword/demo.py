"""The one-command demo: an invented language school's two classes over three terms.

:func:`run_demo` scans the six class-terms listed in ``demo_essays/scenario.csv``
in term order into a workspace (a fresh temporary one unless given), then writes
handouts, overviews, student sheets, exports and trends for each class.
"""

from __future__ import annotations

import csv
import tempfile
from collections.abc import Callable
from importlib import resources
from pathlib import Path

from . import __version__
from .errors import HingewordError
from .record import key_label


def demo_dir() -> Path:
    """The demo essays: inside the installed package, or the checkout's ``demo_essays/``."""
    installed = Path(str(resources.files("hingeword"))) / "demo_essays"
    if (installed / "scenario.csv").is_file():
        return installed
    here = Path(__file__).resolve().parents[2] / "demo_essays"
    if (here / "scenario.csv").is_file():
        return here
    raise HingewordError("demo essays not found (expected demo_essays/scenario.csv in the package or checkout)")


def first_handout(out: Path) -> Path:
    """The file a newcomer should open first: the evening class's last handout."""
    rows = [r for r in scenario(demo_dir()) if r["class"] == "evening-b2"]
    return out / rows[-1]["class"] / rows[-1]["term"] / "handout.html"


def scenario(root: Path) -> list[dict]:
    with (root / "scenario.csv").open(encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def run_demo(
    *,
    workspace: str | Path | None = None,
    out_dir: str | Path = "hingeword-demo",
    processes: int | None = 1,
    today: str | None = None,
    log: Callable[[str], None] | None = None,
) -> list[str]:
    """Run the whole demo; returns the summary lines to print.

    :param today: fixed date for the reports (tests and the committed ``reports/``).
    """
    from .history import Workspace
    from .pipeline import scan
    from .report import write_reports, write_trends
    from .trends import compute_trends

    root = demo_dir()
    out = Path(out_dir)
    tmp = None
    if workspace is None:
        tmp = tempfile.TemporaryDirectory(prefix="hingeword-demo-")
        workspace = tmp.name
    say = log or (lambda m: None)
    lines: list[str] = []
    try:
        classes: list[str] = []
        for row in scenario(root):
            folder = root / row["folder"]
            manifest = folder / "manifest.csv"
            say(f"scanning {row['class']} / {row['term']} …")
            res = scan(folder, class_name=row["class"], term=row["term"], workspace=workspace,
                       manifest=manifest if manifest.exists() else None, processes=processes,
                       term_start=row["term_start"])
            flagged = res.flagged
            skipped = "; ".join(f"{s.source}: {s.reason}" for s in res.ingest.skipped) or "none"
            lines.append(f"{row['class']} / {row['term']}: {len(res.ingest.essays)} essays, "
                         f"{res.ingest.word_count:,} words, {len(flagged)} patterns flagged "
                         f"({', '.join(key_label(r.governor, r.preposition) for r in flagged) or 'none'}); "
                         f"skipped: {skipped}")
            enc = [e for e in res.ingest.essays if e.encoding not in ("utf-8", "ascii", "docx", "odt")]
            for e in enc:
                lines.append(f"  read {e.source} from the legacy encoding {e.encoding}")
            if row["class"] not in classes:
                classes.append(row["class"])
            model_line = f"model {res.model} · reference {res.reference_name} · hingeword {__version__}"
        lines.insert(0, model_line)
        with Workspace(workspace, create=False) as ws:
            # the teacher's review after reading the concordance (invented, like the rest)
            decisions = root / "decisions.csv"
            if decisions.is_file():
                with decisions.open(encoding="utf-8") as fh:
                    for d in csv.DictReader(fh):
                        ws.dismiss(d["governor"], d["preposition"], class_name=d["class"], reason=d["reason"],
                                   on=d["decided_on"])
                        lines.append(f"teacher dismissed {key_label(d['governor'], d['preposition'])} for {d['class']}: "
                                     f"{d['reason']}")
            for row in scenario(root):
                write_reports(ws, row["class"], row["term"], out, today=today, match=True)
            for cls in classes:
                path = write_trends(ws, cls, out, today=today)
                tr = compute_trends(ws, cls)
                lines.append(f"{cls} trends: " + ", ".join(f"{p.label} {p.status}" + (" (dismissed)" if p.dismissed else "")
                                                           for p in tr.patterns))
                lines.append(f"  {path}")
        lines.append(f"Open first: {first_handout(out)} (the evening class's latest handout), "
                     f"then overview.html beside it and {out / 'evening-b2' / 'trends.html'}")
        lines.append(f"All reports are under {out}/ (workspace: {workspace if tmp is None else 'temporary, removed'}). "
                     "Everything in the demo is invented.")
    finally:
        if tmp is not None:
            tmp.cleanup()
    return lines

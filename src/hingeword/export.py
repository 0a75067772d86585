"""Exports for researchers: one row per pattern (CSV, XLSX, JSON) and KWIC lines.

Column contract (order and spelling fixed): :data:`hingeword.record.CONTRACT` —
``governor, governor_pos, preposition, learner_count, learner_writers,
learner_governor_count, reference_count, reference_governor_count,
collocation_ratio, log_likelihood, log_ratio, flagged, status, cause,
suggestion`` — then the further columns of :data:`hingeword.record.EXPORT_COLUMNS`
(the candidate causes written out as ``cause_1`` … ``cause_4``: no cell holds JSON).
Every column's meaning is in ``docs/columns.md`` (from :data:`hingeword.record.GLOSSES`).

Every export carries its **run record** (:func:`run_record`: class, term, model,
references, every threshold, versions, dates): an XLSX file has the sheets
``patterns`` (or ``concordance``), ``run`` and ``columns``; a JSON file is one object
``{"run": …, "columns": …, "rows": [...]}``; a CSV file gets ``<name>.run.json``
beside it. Booleans are ``true``/``false`` everywhere (JSON booleans, the same words in
CSV and XLSX cells).
"""

from __future__ import annotations

import datetime as _dt
import io
import json
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from . import __version__
from .errors import HingewordError
from .extract import Attachment
from .files import _C0, atomic_path, clean_text, neutralise_cell, write_text
from .record import COLUMNS, CONTRACT, EXPORT_COLUMNS, GLOSSES, PatternRecord, export_row

__all__ = ["COLUMNS", "CONTRACT", "EXPORT_COLUMNS", "KWIC_COLUMNS", "KWIC_GLOSSES", "SUFFIXES", "ExportResult",
           "concordance_frame", "export_run", "kwic", "records_frame", "run_record", "write_table"]

SUFFIXES = (".csv", ".xlsx", ".json")
_BOOLEAN_COLUMNS = ("flagged", "dismissed")
#: Widest XLSX column, in characters.
_MAX_WIDTH = 60


def records_frame(records: Sequence[PatternRecord]) -> pd.DataFrame:
    """Pattern records as a DataFrame with the :data:`~hingeword.record.EXPORT_COLUMNS`, in the order given."""
    return pd.DataFrame([export_row(r) for r in records], columns=list(EXPORT_COLUMNS))


def _is_true(v) -> bool:
    return v is not pd.NA and v is not None and v == True  # noqa: E712


def one_line(text) -> str:
    """A text cell on one line: every run of whitespace (line breaks included) becomes one space."""
    return " ".join(str(text).split()) if isinstance(text, str) else text


def write_table(df: pd.DataFrame, path: str | Path, run: Mapping | None = None,
                glosses: Mapping[str, str] | None = None) -> Path:
    """Write any export table by the file's suffix: .csv (UTF-8), .xlsx or .json.

    :param run: the run record (:func:`run_record`), written inside the file (XLSX sheet
        ``run``, JSON key ``run``) or beside it (``<name>.run.json`` for CSV).
    :param glosses: column meanings (XLSX sheet ``columns``, JSON key ``columns``, and the
        side file of a CSV).

    Safe to open: control characters are replaced by spaces in every format; in XLSX every
    text cell is stored as text (never as a formula); in CSV a text cell that a spreadsheet
    would run as a formula gets a leading apostrophe (:func:`hingeword.files.neutralise_cell`).
    Files are written under a temporary name and renamed into place.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise HingewordError(f"cannot export to '{path.name}': use a file ending in .csv, .xlsx or .json")
    out = df.copy()
    booleans = [c for c in _BOOLEAN_COLUMNS if c in out.columns]
    for col in booleans:  # JSON true/false; the words "true"/"false" in CSV and XLSX cells
        truth = out[col].map(_is_true)
        out[col] = truth if suffix == ".json" else truth.map({True: "true", False: "false"})
    text_columns = []
    for col in out.columns:
        dtype = out[col].dtype
        if col in booleans or pd.api.types.is_numeric_dtype(dtype):  # no text, no nested values
            continue
        if isinstance(dtype, pd.StringDtype):  # text only (or missing)
            text_columns.append(col)
            if out[col].str.contains(_C0.pattern, regex=True, na=False).any():
                out[col] = out[col].map(clean_text, na_action="ignore")
            continue
        values = out[col].tolist()
        if any(isinstance(v, (list, dict)) for v in values):  # anything nested left (a caller's own frame) as JSON text
            values = [json.dumps(v, ensure_ascii=False) if isinstance(v, (list, dict)) else v for v in values]
            out[col] = pd.Series(values, index=out.index, dtype=object)
        texts = [v for v in values if isinstance(v, str)]
        if texts:
            text_columns.append(col)
            if _C0.search("".join(texts)):
                out[col] = out[col].map(clean_text)
    glosses = {c: glosses[c] for c in out.columns if c in glosses} if glosses else {}
    with atomic_path(path) as tmp:
        if suffix == ".csv":
            for col in text_columns:
                out[col] = out[col].map(neutralise_cell)
            out.to_csv(tmp, index=False, float_format="%.6g", lineterminator="\n")
        elif suffix == ".xlsx":
            sheet = "patterns" if "governor_pos" in out.columns and "learner_count" in out.columns else "concordance"
            _write_xlsx(out, tmp, sheet, run, glosses)
        else:
            rows = json.loads(out.to_json(orient="records", double_precision=10))
            doc = {"run": dict(run or {}), "columns": glosses, "rows": rows}
            tmp.write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    if suffix == ".csv" and (run is not None or glosses):
        write_text(side_file(path), json.dumps({"run": dict(run or {}), "columns": glosses}, indent=1,
                                               ensure_ascii=False) + "\n")
    return path


def side_file(path: str | Path) -> Path:
    """The run record beside a CSV export: ``patterns.csv`` -> ``patterns.run.json``."""
    path = Path(path)
    return path.with_name(path.stem + ".run.json")


def _cell(v):
    if v is None or v is pd.NA or (isinstance(v, float) and v != v):
        return None
    return v.item() if hasattr(v, "item") else v


def _sheet(wb, name: str, header: Sequence[str], rows) -> None:
    """Fill one sheet: a bold, frozen header row with filters, text cells written as text, sensible widths."""
    ws = wb.add_worksheet(name)
    write_string, write_number, write_boolean = ws.write_string, ws.write_number, ws.write_boolean
    bold = wb.add_format({"bold": True})
    widths = [len(str(c)) for c in header]
    for j, c in enumerate(header):
        write_string(0, j, str(c), bold)
    n = 0
    for n, row in enumerate(rows, start=1):
        for j, v in enumerate(row):
            v = _cell(v)
            if v is None:
                continue
            if isinstance(v, str):
                write_string(n, j, v)
            elif isinstance(v, bool):
                write_boolean(n, j, v)
            elif isinstance(v, (int, float)):
                write_number(n, j, v)
            else:
                v = str(v)
                write_string(n, j, v)
            if widths[j] < _MAX_WIDTH:
                widths[j] = max(widths[j], len(v) if isinstance(v, str) else len(repr(v)))
    ws.freeze_panes(1, 0)
    if n and header:
        ws.autofilter(0, 0, n, len(header) - 1)
    for j, w in enumerate(widths):
        ws.set_column(j, j, min(_MAX_WIDTH, max(8, w + 2)))


def flat_run(run: Mapping) -> list[tuple[str, object]]:
    """The run record as (key, value) rows: nested parts as ``thresholds.min_count``, ``reference.1.name``."""
    out: list[tuple[str, object]] = []

    def walk(prefix: str, v) -> None:
        if isinstance(v, Mapping):
            for k, x in v.items():
                walk(f"{prefix}.{k}" if prefix else str(k), x)
        elif isinstance(v, (list, tuple)) and any(isinstance(x, Mapping) for x in v):
            for i, x in enumerate(v, start=1):
                walk(f"{prefix}.{i}", x)
        elif isinstance(v, (list, tuple)):
            out.append((prefix, ", ".join(map(str, v))))
        elif isinstance(v, bool):
            out.append((prefix, "true" if v else "false"))
        else:
            out.append((prefix, v))

    walk("", run)
    return out


def _write_xlsx(df: pd.DataFrame, path: Path, sheet: str, run: Mapping | None = None,
                glosses: Mapping[str, str] | None = None) -> None:
    """The table's sheet (header row frozen, filters, widths), then ``run`` and ``columns`` sheets;
    strings are written as text, so "=..." is never a formula.

    XlsxWriter rather than openpyxl: it writes cells without building an object for each
    (a 1,000-essay export has half a million cells: 3.7 s with openpyxl, 1.8 s here).
    """
    import xlsxwriter

    # built in memory and written in one piece: a full disk is then one clean OSError, not a
    # half-written zip file
    buf = io.BytesIO()
    wb = xlsxwriter.Workbook(buf, {"in_memory": True, "strings_to_formulas": False, "strings_to_urls": False,
                                   "strings_to_numbers": False, "nan_inf_to_errors": True})
    _sheet(wb, sheet, list(df.columns), df.itertuples(index=False, name=None))
    if run is not None:
        _sheet(wb, "run", ["item", "value"], flat_run(run))
    if glosses:
        _sheet(wb, "columns", ["column", "meaning"], glosses.items())
    wb.close()
    path.write_bytes(buf.getvalue())


def run_record(view, *, names: str = "pseudonyms", table: str = "patterns", today: str | None = None) -> dict:
    """What a researcher needs to read an export alone: class, term, scan and export dates, hingeword,
    parser and extractor versions, the reference(s) with their manifests' facts, every threshold
    the run used, and the counts of the run (patterns as the scan summary and the overview count them).

    :param view: a :class:`hingeword.view.RunView`.
    """
    run = view.run
    ref = run.reference or {}
    parts = ref.get("combined_from") or [ref]
    used = sum(1 for r in view.records if r.learner_count > 0)
    return {
        "table": table,
        "class": run.class_name, "term": run.term, "term_start": run.term_start,
        "scanned": run.created, "exported": today or _dt.date.today().isoformat(),
        "hingeword_version_scan": run.tool_version, "hingeword_version_export": __version__,
        "model": run.model, "model_version": run.model_version, "extractor_version": run.extractor_version,
        "writers_shown_as": "names" if names == "real" else "pseudonyms",
        "essays_read": run.essays_read, "essays_skipped": run.essays_skipped,
        "writers": len({e.writer for e in view.essays}), "words": run.words,
        "patterns_used_by_class": used,
        "patterns_not_used_by_class": len(view.records) - used,
        "flagged": sum(1 for r in view.records if r.flagged),
        "dismissed": sum(1 for r in view.records if r.dismissed),
        "first_language_default": run.settings.get("l1") or "",
        "keep_spelling": list(run.settings.get("keep_spelling") or ()),
        "thresholds": view.thresholds.as_dict(),
        "reference": {"name": ref.get("name", "?"), "words": ref.get("words"),
                      "parts": [{k: p.get(k) for k in ("name", "words", "documents", "sentences", "attachments",
                                                       "build_date", "extractor_version", "model",
                                                       "model_version", "format_version", "licence")
                                 if p.get(k) is not None} for p in parts]},
    }


def kwic(attachments: list[Attachment], texts: dict[str, str], width: int = 40,
         marks: bool = True) -> list[tuple[str, str, str, str, str]]:
    """Key-word-in-context lines: (writer, left, governor…preposition, right, essay id).

    The key spans from the governor to the preposition (or the object for ``-``),
    whichever comes first, so stranded prepositions read naturally. Context is on one
    line; with ``marks`` a context cut short is marked with "…" (the pages and the
    command line; exports keep the plain characters).
    """
    lines = []
    for a in attachments:
        text = texts.get(a.essay_id, "")
        start, end = min(a.gov_start, a.prep_start), max(a.gov_end, a.prep_end)
        before = " ".join(text[max(0, start - width * 2):start].split())
        after = " ".join(text[end:end + width * 2].split())
        left, right = before[-width:], after[:width]
        if marks and (len(before) > len(left) or (start > width * 2 and left)):
            cut = left.split(" ", 1)  # start at a whole word
            left = "…" + (cut[1] if len(cut) > 1 and len(before) > len(left) and before[-len(left) - 1] != " "
                          else left).lstrip()
        if marks and (len(after) > len(right) or (end + width * 2 < len(text) and right)):
            whole = len(after) > len(right) and after[len(right)] != " " and " " in right
            right = (right.rsplit(" ", 1)[0] if whole else right).rstrip() + "…"
        key = " ".join(text[start:end].split())
        lines.append((a.writer, left, key, right, a.essay_id))
    return lines


KWIC_COLUMNS = ["writer", "essay_id", "governor", "governor_pos", "preposition", "governor_text", "object_class",
                "left", "key", "right", "sentence"]
#: The concordance columns' meanings (the data dictionary of KWIC exports).
KWIC_GLOSSES = {
    "writer": "the writer: a pseudonym (S01, S02 …, as on the reports) or, with --names real, the writer id",
    "essay_id": "the essay: its id (file name) with --names real, else the pseudonym and the essay's number (S03-e1)",
    "governor": GLOSSES["governor"],
    "governor_pos": GLOSSES["governor_pos"],
    "preposition": GLOSSES["preposition"],
    "governor_text": "the governor as written in the essay",
    "object_class": "kind of object: place, building, event, time, person, group, idea, nature, name, other "
                    "(docs/columns.md)",
    "left": "up to 40 characters before the pattern",
    "key": "the pattern as written, from the governor to the preposition (or the object)",
    "right": "up to 40 characters after it",
    "sentence": "the whole sentence, on one line",
}


def essay_codes(view) -> dict[str, str]:
    """Essay id -> a label without the file name: the writer's pseudonym and the essay's number ("S03-e1")."""
    per_writer: dict[str, list[str]] = {}
    for e in view.essays:
        per_writer.setdefault(e.writer, []).append(e.essay_id)
    return {eid: f"{view.pseudonym(w)}-e{i}" for w, ids in per_writer.items() for i, eid in enumerate(sorted(ids), 1)}


def concordance_frame(attachments: list[Attachment], texts: dict[str, str], codes: dict[str, str] | None,
                      width: int = 40, essays: Mapping[str, str] | None = None) -> pd.DataFrame:
    """Every instance as a key-word-in-context row, in essay order; the sentence on one line.

    :param codes: writer id -> pseudonym; ``None`` keeps the writer ids.
    :param essays: essay id -> the label shown under pseudonyms (:func:`essay_codes`); the
        essay id itself (often a file named after the student) is shown only without ``codes``.
    """
    rows = []
    for a, (writer, left, key, right, essay) in zip(attachments, kwic(attachments, texts, width, marks=False)):
        shown = essay if codes is None else (essays or {}).get(essay) or f"{codes.get(writer, 'S??')}-e?"
        rows.append([writer if codes is None else codes.get(writer, "S??"), shown,
                     a.governor, a.governor_pos, a.preposition, a.governor_text, a.object_class or "",
                     left, key, right, one_line(a.sentence)])
    return pd.DataFrame(rows, columns=KWIC_COLUMNS)


@dataclass(frozen=True)
class ExportResult:
    patterns: int
    path: Path
    concordance_lines: int = 0
    concordance_path: Path | None = None


def export_run(workspace: str | Path, class_name: str, term: str, output: str | Path, *,
               concordance: str | Path | None = None, names: str = "pseudonyms",
               progress: Callable[[str, int, int], None] | None = None) -> ExportResult:
    """Write one run's patterns (and optionally every instance as KWIC rows) by the files' suffixes.

    :param names: writer ids in the concordance: ``"pseudonyms"`` (default) or ``"real"``.
    :param progress: called as ``progress(step, done, total)`` before each step (reading the
        run, the patterns, the concordance) and once at the end.
    """
    total = 2 if concordance is None else 3
    step = progress or (lambda name, done, total: None)
    from .history import Workspace
    from .view import load_run_view

    for target in (output, concordance):
        if target is not None and Path(target).suffix.lower() not in SUFFIXES:
            raise HingewordError(f"cannot export to '{Path(target).name}': use a file ending in .csv, .xlsx or .json")
    step("reading the run", 0, total)
    with Workspace(workspace, read_only=True) as ws:
        view = load_run_view(ws, class_name, term, progress=False)
    path = write_table(records_frame(view.records), output, run_record(view, names=names), GLOSSES)
    step("patterns", 1, total)
    if concordance is None:
        step("written", total, total)
        return ExportResult(len(view.records), path)
    step("concordance", 2, total)
    codes = None if names == "real" else dict(view.codes)
    texts = {e.essay_id: e.text for e in view.essays}
    kwic_df = concordance_frame(list(view.attachments), texts, codes, essays=essay_codes(view))
    kpath = write_table(kwic_df, concordance, run_record(view, names=names, table="concordance"), KWIC_GLOSSES)
    step("written", total, total)
    return ExportResult(len(view.records), path, len(kwic_df), kpath)


def concordance_lines(workspace: str | Path, class_name: str, term: str, governor: str, preposition: str, *,
                      names: str = "pseudonyms", width: int = 40) -> list[str]:
    """Key-word-in-context lines of one pattern, each starting with the writer (a pseudonym by default).

    :raises HingewordError: no such run, or the pattern does not occur in it.
    """
    from .history import Workspace
    from .record import key_label

    with Workspace(workspace, read_only=True) as ws:
        class_name = ws.canonical_class(class_name)
        run = ws.run(class_name, term)
        atts = ws.attachments(run.id, key=(governor.lower(), None, preposition.lower()))
        if not atts:
            raise HingewordError(f"no '{key_label(governor, preposition)}' in {class_name} / {term}")
        wanted = {a.essay_id for a in atts}
        texts = {e.essay_id: e.text for e in ws.essays(run.id) if e.essay_id in wanted}
        codes = ws.writer_codes(class_name)
    rows = [(writer if names == "real" else codes.get(writer, "S??"), left, key, right)
            for writer, left, key, right, _ in kwic(atts, texts, width)]
    pad = max(len(r[0]) for r in rows)
    return [f"{who:<{pad}} {left:>{width}} [{key}] {right}" for who, left, key, right in rows]

"""Exports for researchers: one row per pattern (CSV, XLSX, JSON) and KWIC lines.

Column contract (order and spelling fixed): :data:`hingeword.record.CONTRACT` —
``governor, governor_pos, preposition, learner_count, learner_writers,
learner_governor_count, reference_count, reference_governor_count,
collocation_ratio, log_likelihood, log_ratio, flagged, status, cause,
suggestion`` — then the further columns of :data:`hingeword.record.COLUMNS`.
``flagged`` and ``dismissed`` are written ``true``/``false``.
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from .errors import HingewordError
from .extract import Attachment
from .files import _C0, atomic_path, clean_text, neutralise_cell
from .record import COLUMNS, CONTRACT, PatternRecord

__all__ = ["COLUMNS", "CONTRACT", "KWIC_COLUMNS", "SUFFIXES", "ExportResult", "concordance_frame", "export_run",
           "kwic", "records_frame", "write_table"]

SUFFIXES = (".csv", ".xlsx", ".json")
_BOOLEAN_COLUMNS = ("flagged", "dismissed")


def records_frame(records: Sequence[PatternRecord]) -> pd.DataFrame:
    """Pattern records as a DataFrame with the :data:`~hingeword.record.COLUMNS`, in the order given."""
    return pd.DataFrame([r.to_row() for r in records], columns=list(COLUMNS))


def write_table(df: pd.DataFrame, path: str | Path) -> Path:
    """Write any export table by the file's suffix: .csv (UTF-8), .xlsx or .json (records).

    Safe to open: control characters are replaced by spaces in every format; in XLSX every
    text cell is stored as text (never as a formula); in CSV a text cell that a spreadsheet
    would run as a formula gets a leading apostrophe (:func:`hingeword.files.neutralise_cell`).
    The file is written under a temporary name and renamed into place.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise HingewordError(f"cannot export to '{path.name}': use a file ending in .csv, .xlsx or .json")
    out = df.copy()
    for col in _BOOLEAN_COLUMNS:
        if col in out.columns:
            out[col] = out[col].map(lambda v: "true" if v is not pd.NA and v is not None and v == True else "false")  # noqa: E712
    text_columns = []
    for col in out.columns:
        dtype = out[col].dtype
        if pd.api.types.is_numeric_dtype(dtype):  # no text, no nested values
            continue
        if isinstance(dtype, pd.StringDtype):  # text only (or missing)
            text_columns.append(col)
            if out[col].str.contains(_C0.pattern, regex=True, na=False).any():
                out[col] = out[col].map(clean_text, na_action="ignore")
            continue
        values = out[col].tolist()
        if suffix in (".csv", ".xlsx") and any(isinstance(v, (list, dict)) for v in values):
            # nested values (all causes with evidence) as a JSON column
            values = [json.dumps(v, ensure_ascii=False) if isinstance(v, (list, dict)) else v for v in values]
            out[col] = pd.Series(values, index=out.index, dtype=object)
        texts = [v for v in values if isinstance(v, str)]
        if texts:
            text_columns.append(col)
            if _C0.search("".join(texts)):
                out[col] = out[col].map(clean_text)
    with atomic_path(path) as tmp:
        if suffix == ".csv":
            for col in text_columns:
                out[col] = out[col].map(neutralise_cell)
            out.to_csv(tmp, index=False, float_format="%.6g", lineterminator="\n")
        elif suffix == ".xlsx":
            _write_xlsx(out, tmp, "patterns" if "governor_pos" in out.columns and "learner_count" in out.columns
                        else "concordance")
        else:
            records = json.loads(out.to_json(orient="records", double_precision=10))
            tmp.write_text(json.dumps(records, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    return path


def _write_xlsx(df: pd.DataFrame, path: Path, sheet: str) -> None:
    """One sheet, header row first; strings are written as text, so "=..." is never a formula.

    XlsxWriter rather than openpyxl: it writes cells without building an object for each
    (a 1,000-essay export has half a million cells: 3.7 s with openpyxl, 1.8 s here).
    """
    import xlsxwriter

    # built in memory and written in one piece: a full disk is then one clean OSError, not a
    # half-written zip file
    buf = io.BytesIO()
    wb = xlsxwriter.Workbook(buf, {"in_memory": True, "strings_to_formulas": False, "strings_to_urls": False,
                                   "strings_to_numbers": False, "nan_inf_to_errors": True})
    ws = wb.add_worksheet(sheet)
    write_string, write_number, write_boolean = ws.write_string, ws.write_number, ws.write_boolean
    for j, name in enumerate(df.columns):
        write_string(0, j, str(name))
    for i, row in enumerate(df.itertuples(index=False, name=None), start=1):
        for j, v in enumerate(row):
            if v is None or v is pd.NA or (isinstance(v, float) and v != v):
                continue
            if hasattr(v, "item"):  # a NumPy scalar
                v = v.item()
            if isinstance(v, str):
                write_string(i, j, v)
            elif isinstance(v, bool):
                write_boolean(i, j, v)
            elif isinstance(v, (int, float)):
                write_number(i, j, v)
            else:
                write_string(i, j, str(v))
    wb.close()
    path.write_bytes(buf.getvalue())


def kwic(attachments: list[Attachment], texts: dict[str, str], width: int = 40) -> list[tuple[str, str, str, str, str]]:
    """Key-word-in-context lines: (writer, left, governor…preposition, right, essay id).

    The key spans from the governor to the preposition (or the object for ``-``),
    whichever comes first, so stranded prepositions read naturally.
    """
    lines = []
    for a in attachments:
        text = texts.get(a.essay_id, "")
        start, end = min(a.gov_start, a.prep_start), max(a.gov_end, a.prep_end)
        left = " ".join(text[max(0, start - width * 2):start].split())[-width:]
        right = " ".join(text[end:end + width * 2].split())[:width]
        key = " ".join(text[start:end].split())
        lines.append((a.writer, left, key, right, a.essay_id))
    return lines


KWIC_COLUMNS = ["writer", "essay_id", "governor", "governor_pos", "preposition", "governor_text", "left", "key",
                "right", "sentence"]


def concordance_frame(attachments: list[Attachment], texts: dict[str, str], codes: dict[str, str] | None,
                      width: int = 40) -> pd.DataFrame:
    """Every instance as a key-word-in-context row, in essay order.

    :param codes: writer id -> pseudonym; ``None`` keeps the writer ids. With
        pseudonyms the essay id (often a file named after the student) is left out.
    """
    rows = []
    for a, (writer, left, key, right, essay) in zip(attachments, kwic(attachments, texts, width)):
        rows.append([writer if codes is None else codes.get(writer, "S??"), essay if codes is None else "",
                     a.governor, a.governor_pos, a.preposition, a.governor_text, left, key, right, a.sentence])
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
    step("patterns", 1, total)
    path = write_table(records_frame(view.records), output)
    if concordance is None:
        step("written", total, total)
        return ExportResult(len(view.records), path)
    step("concordance", 2, total)
    codes = None if names == "real" else dict(view.codes)
    texts = {e.essay_id: e.text for e in view.essays}
    kwic_df = concordance_frame(list(view.attachments), texts, codes)
    kpath = write_table(kwic_df, concordance)
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

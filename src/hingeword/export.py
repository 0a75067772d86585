"""Exports for researchers: one row per pattern (CSV, XLSX, JSON) and KWIC lines.

Column contract (order and spelling fixed): ``governor, governor_pos,
preposition, learner_count, learner_writers, learner_governor_count,
reference_count, reference_governor_count, collocation_ratio, log_likelihood,
log_ratio, flagged, status, cause, suggestion``, then the extra figures.
``flagged`` is written ``true``/``false``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from .errors import HingewordError
from .extract import Attachment
from .score import CONTRACT as SCORE_CONTRACT
from .score import EXTRA

CONTRACT = [*SCORE_CONTRACT, "cause", "suggestion"]
SUFFIXES = (".csv", ".xlsx", ".json")


def patterns_frame(figures: list[dict]) -> pd.DataFrame:
    """The stored figures of a run as a DataFrame in contract order, rows as stored."""
    df = pd.DataFrame(figures)
    for col in CONTRACT:
        if col not in df.columns:
            df[col] = "" if col in ("cause", "suggestion", "status") else pd.NA
    extra = [c for c in EXTRA if c in df.columns] + sorted(c for c in df.columns if c not in CONTRACT and c not in EXTRA)
    return df[CONTRACT + extra]


def write_patterns(df: pd.DataFrame, path: str | Path) -> Path:
    """Write by the file's suffix: .csv (UTF-8), .xlsx or .json (records)."""
    return write_table(df, path)


def write_table(df: pd.DataFrame, path: str | Path) -> Path:
    """Write any export table by the file's suffix: .csv (UTF-8), .xlsx or .json (records)."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise HingewordError(f"cannot export to '{path.name}': use a file ending in .csv, .xlsx or .json")
    path.parent.mkdir(parents=True, exist_ok=True)
    out = df.copy()
    if "flagged" in out.columns:
        out["flagged"] = out["flagged"].map(lambda v: "true" if v is not pd.NA and v is not None and v == True else "false")  # noqa: E712
    if suffix in (".csv", ".xlsx"):  # nested values (all causes with evidence) as a JSON column
        for col in out.columns:
            if out[col].map(lambda v: isinstance(v, (list, dict))).any():
                out[col] = out[col].map(lambda v: json.dumps(v, ensure_ascii=False) if isinstance(v, (list, dict)) else v)
    if suffix == ".csv":
        out.to_csv(path, index=False, float_format="%.6g", lineterminator="\n")
    elif suffix == ".xlsx":
        out.to_excel(path, index=False, sheet_name="patterns" if "governor_pos" in out.columns and "learner_count" in out.columns else "concordance")
    else:
        records = json.loads(out.to_json(orient="records", double_precision=10))
        path.write_text(json.dumps(records, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    return path


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

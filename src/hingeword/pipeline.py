"""The scan: ingest → parse → extract → (typo grouping) → score → store.

:func:`scan` is what ``hingeword scan`` calls; everything it does can be done from
Python with the same function.
"""

from __future__ import annotations

import datetime as _dt
import logging
from collections import Counter, defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from . import EXTRACTOR_VERSION, __version__
from .extract import extract_doc, regroup_typos
from .errors import IngestError
from .history import Workspace
from .ingest import IngestResult, read_essays
from .parse import ModelInfo, ParseStats, default_processes, load_model, parse_texts
from .patterns import count_patterns, participle_map, typo_map

log = logging.getLogger("hingeword")


@dataclass
class ScanResult:
    run_id: int
    class_name: str
    term: str
    model: ModelInfo
    ingest: IngestResult
    parse_stats: ParseStats
    attachments: int
    patterns: object  # pandas DataFrame of scored patterns
    figures: list = field(default_factory=list)  # scored rows with causes, as stored
    typo_groups: dict = field(default_factory=dict)
    reference_name: str = ""
    settings: dict = field(default_factory=dict)


def ingest_notes(result: IngestResult) -> list[tuple[str, str]]:
    """Duplicate and near-duplicate warnings as (kind, message) notes."""
    notes = []
    for group in result.duplicates:
        notes.append(("duplicate", f"identical essays (all kept): {', '.join(group)}"))
    for nd in result.near_duplicates:
        notes.append(("near-duplicate", f"{nd.first} and {nd.second} are {nd.similarity:.0f}% similar (both kept; check for copying or a double upload)"))
    return notes


def scan(
    folder: str | Path,
    *,
    class_name: str,
    term: str,
    workspace: str | Path,
    manifest: str | Path | None = None,
    model: str | None = None,
    processes: int | None = None,
    references: Sequence[str] = (),
    settings: dict | None = None,
    term_start: str | None = None,
    l1: str | None = None,
    rules_dirs: Sequence[str | Path] = (),
    encoding: str | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> ScanResult:
    """Scan one class's essays for one term and store the run in the workspace.

    :param settings: scoring thresholds (see :data:`hingeword.score.DEFAULTS`).
    :param progress: called as ``progress(done, total)`` while parsing.
    """
    from . import reference as ref_mod
    from .causes import categorise_figures
    from .rules import load_rules
    from .score import score_run

    ingest = read_essays(folder, manifest=manifest, encoding=encoding)
    if not ingest.essays:
        reasons = "; ".join(f"{s.source}: {s.reason}" for s in ingest.skipped[:3])
        more = f" (and {len(ingest.skipped) - 3} more)" if len(ingest.skipped) > 3 else ""
        raise IngestError(
            f"no essay could be read from {folder}"
            + (f" — {len(ingest.skipped)} file(s) skipped: {reasons}{more}" if ingest.skipped else " (no essay files found)")
            + f"; nothing was stored and any earlier run of {class_name} / {term} is kept"
        )
    rules = load_rules([Path(d) for d in rules_dirs])
    reference = ref_mod.load_many(references, workspace)
    nlp, info = load_model(model)
    ws = Workspace(workspace)
    try:
        stats = ParseStats()
        texts = [e.text for e in ingest.essays]
        done = 0

        def tick(n: int) -> None:
            nonlocal done
            done += n
            if progress:
                progress(done, len(texts))

        attachments = []
        docs = parse_texts(texts, nlp, info, cache_dir=ws.cache_dir, processes=processes or default_processes(),
                           stats=stats, progress=tick)
        for essay, doc in zip(ingest.essays, docs):
            attachments.extend(extract_doc(doc, essay.essay_id, essay.writer))
        groups: dict = typo_map({(a.governor, a.governor_pos) for a in attachments}, reference.lemmas)
        unmatched = {(a.governor, a.governor_pos, a.governor_text) for a in attachments
                     if (a.governor, a.governor_pos) not in groups}
        groups.update(participle_map(unmatched, reference.lemmas))
        attachments = regroup_typos(attachments, groups)
        counts = count_patterns(attachments)
        scored, used = score_run(counts, attachments, reference, settings or {})
        l1_of = {e.writer: (e.l1 or l1 or "").strip().lower() for e in ingest.essays}
        l1_by_pattern: dict = defaultdict(Counter)
        for a in attachments:
            if l1_of.get(a.writer):
                l1_by_pattern[a.key][l1_of[a.writer]] += 1
        figures = categorise_figures(scored.to_dict("records"), reference, rules, l1_by_pattern)
        if term_start is None:  # a re-scan keeps the term's recorded start, so term order holds
            old = ws.conn.execute("SELECT term_start FROM runs WHERE class = ? AND term = ?", (class_name, term)).fetchone()
            term_start = old[0] if old and old[0] else _dt.date.today().isoformat()
        run_settings = {**used, "term_start": term_start, "l1": l1}
        run_meta = {
            "tool_version": __version__,
            "model": info.name,
            "model_version": info.version,
            "extractor_version": EXTRACTOR_VERSION,
            "source": str(Path(folder)),
            "words": sum(e.word_count for e in ingest.essays),
            "settings": run_settings,
            "reference": reference.manifest,
        }
        notes = ingest_notes(ingest)
        notes += [("rules", str(p)) for p in rules.problems]
        notes += [("typo", f"'{k[0]}' ({k[1]}) grouped under '{v if isinstance(v, str) else v[0]}'"
                   + ("" if isinstance(v, str) else f" ({v[1]})")) for k, v in sorted(groups.items())]
        ref_model = str(reference.manifest.get("model", ""))
        if ref_model and ref_model != info.name and not ref_model.startswith("gold") and "," not in ref_model:
            notes.append(("model", f"essays parsed with {info.name}, reference with {ref_model}: counts may differ by parser"))
        run_id = ws.replace_run(
            class_name=class_name,
            term=term,
            run_meta=run_meta,
            essays=ingest.essays,
            skipped=ingest.skipped,
            notes=notes,
            attachments=attachments,
            pattern_figures=figures,
        )
    finally:
        ws.close()
    return ScanResult(
        run_id=run_id, class_name=class_name, term=term, model=info, ingest=ingest, parse_stats=stats,
        attachments=len(attachments), patterns=scored, figures=figures, typo_groups=groups, reference_name=reference.name,
        settings=run_settings,
    )

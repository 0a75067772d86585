"""The scan: ingest → parse → extract → (typo grouping) → score → store.

:func:`scan` is what ``hingeword scan`` calls; everything it does can be done from
Python with the same function.
"""

from __future__ import annotations

import datetime as _dt
import logging
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

from . import EXTRACTOR_VERSION, __version__
from .analyse import analyse, cached_rows, to_attachments
from .errors import IngestError
from .extract import extract_doc
from .history import Workspace
from .ingest import IngestResult, Skipped, read_essays
from .parse import ModelInfo, ParseStats, default_processes, load_model, model_info
from .patterns import GovernorMap, Tally, group_governors
from .record import PatternRecord
from .score import Pool, Thresholds

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
    records: list[PatternRecord] = field(default_factory=list)  # ranked, with advice, as stored
    typo_groups: GovernorMap = field(default_factory=dict)
    reference_name: str = ""
    thresholds: Thresholds = field(default_factory=Thresholds)
    settings: dict = field(default_factory=dict)
    #: how the term's start date was chosen when --term-start was not given ("" when it was, or kept)
    term_note: str = ""
    #: the class's terms in order after this scan: (term, start date)
    term_order: list[tuple[str, str]] = field(default_factory=list)

    @property
    def flagged(self) -> list[PatternRecord]:
        return [r for r in self.records if r.flagged]


def ingest_notes(result: IngestResult) -> list[tuple[str, str]]:
    """Manifest problems, duplicate and near-duplicate warnings as (kind, message) notes."""
    notes = [("manifest", f"{p.source}: {p.reason}") for p in result.manifest_problems]
    for group in result.duplicates:
        notes.append(("duplicate", f"identical essays (all kept): {', '.join(group)}"))
    for nd in result.near_duplicates:
        notes.append(("near-duplicate", f"{nd.first} and {nd.second} are {nd.similarity:.0f}% similar (both kept; check for copying or a double upload)"))
    return notes


def _require_essays(ingest: IngestResult, folder, class_name: str, term: str) -> None:
    """Refuse a scan with no essay to store: the earlier run of the class and term is kept."""
    if ingest.essays:
        return
    reasons = "; ".join(f"{s.source}: {s.reason}" for s in ingest.skipped[:3])
    more = f" (and {len(ingest.skipped) - 3} more)" if len(ingest.skipped) > 3 else ""
    raise IngestError(
        f"no essay could be read from {folder}"
        + (f" — {len(ingest.skipped)} file(s) skipped: {reasons}{more}" if ingest.skipped else " (no essay files found)")
        + f"; nothing was stored and any earlier run of {class_name} / {term} is kept"
    )


def within_parser_limit(ingest: IngestResult, max_length: int) -> IngestResult:
    """Move essays longer than the parser accepts (spaCy's ``nlp.max_length``) to the skipped list.

    Ingest already skips essays over :data:`hingeword.ingest.MAX_ESSAY_CHARS`; a pipeline
    with a lower limit must not stop the scan with a traceback either.
    """
    long = [e for e in ingest.essays if len(e.text) > max_length]
    if not long:
        return ingest
    ids = {e.essay_id for e in long}
    skipped = list(ingest.skipped) + [
        Skipped(e.essay_id, f"longer than the parser's limit of {max_length:,} characters ({len(e.text):,}); "
                            "split it into one essay a file") for e in long]
    return replace(ingest, essays=[e for e in ingest.essays if e.essay_id not in ids], skipped=skipped,
                   duplicates=[g for g in (tuple(i for i in grp if i not in ids) for grp in ingest.duplicates)
                               if len(g) > 1],
                   near_duplicates=[n for n in ingest.near_duplicates if n.first not in ids and n.second not in ids])


def pooled_tally(ws: Workspace, class_name: str, term: str, scope: Pool, tally: Tally) -> Tally | None:
    """This run's counts plus those of the workspace's other runs in ``scope`` (``None`` when there are none)."""
    if scope is Pool.NONE:
        return None
    runs = ws.runs() if scope is Pool.WORKSPACE else ws.runs_in_order(class_name)
    others = [r for r in runs if (r.class_name, r.term) != (class_name, term)]
    if not others:
        return None
    stored = Tally.from_rows(ws.pattern_counts([r.id for r in others]), words=sum(r.words for r in others),
                             classes=len(others))
    return stored.merged(tally, as_class=class_name)


def _load_rules(dirs: Sequence[str | Path]):
    """The rules, and wordfreq's word list read once (typo grouping looks words up in it)."""
    from wordfreq import zipf_frequency

    from .rules import load_rules

    rules = load_rules([Path(d) for d in dirs])
    zipf_frequency("the", "en")
    return rules


def _attachment_rows(ingest: IngestResult, folder, class_name: str, term: str, nlp, info: ModelInfo,
                     model: str | None, cache_dir: Path, processes: int, keep_parses: bool, stats: ParseStats,
                     progress: Callable[[int, int], None] | None,
                     meanwhile: Callable[[], object]) -> tuple[dict, IngestResult, ModelInfo]:
    """Attachment rows of every essay text (by ``Essay.sha256``): from the extraction cache, the
    rest parsed and extracted (:func:`hingeword.analyse.analyse`). The pipeline is loaded only
    when a text is not in the cache; then essays over its length limit are skipped.

    :param meanwhile: called once: while the worker processes parse, or at once when nothing
        is parsed in them.
    """
    texts = {e.sha256: e.text for e in ingest.essays}
    rows = cached_rows(texts, info, cache_dir)
    if len(rows) < len(texts) and nlp is None:
        nlp, loaded = load_model(model)
        if loaded != info:  # the package's meta data and the loaded pipeline disagree: trust the pipeline
            info, rows = loaded, cached_rows(texts, loaded, cache_dir)
        ingest = within_parser_limit(ingest, nlp.max_length)
        _require_essays(ingest, folder, class_name, term)
        texts = {e.sha256: e.text for e in ingest.essays}
    essays_per_text = Counter(e.sha256 for e in ingest.essays)
    total = len(ingest.essays)
    done = sum(essays_per_text[k] for k in rows)
    stats.from_cache += done
    stats.words += sum(len(texts[k].split()) * essays_per_text[k] for k in rows)
    if progress:
        progress(done, total)

    def tick(n: int) -> None:
        nonlocal done
        done += n
        if progress:
            progress(done, total)

    todo = {k: t for k, t in texts.items() if k not in rows}
    if not todo:
        meanwhile()
        return rows, ingest, info
    for key, found in analyse(todo, nlp, info, cache_dir=cache_dir, processes=processes, keep_parses=keep_parses,
                              extract=extract_doc, stats=stats, progress=tick, weights=essays_per_text,
                              meanwhile=meanwhile):
        rows[key] = found
    return rows, ingest, info


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
    thresholds: Thresholds | None = None,
    term_start: str | None = None,
    l1: str | None = None,
    rules_dirs: Sequence[str | Path] = (),
    encoding: str | None = None,
    keep_spelling: Sequence[str] = (),
    keep_parses: bool = False,
    progress: Callable[[int, int], None] | None = None,
    stage: Callable[[str], None] | None = None,
) -> ScanResult:
    """Scan one class's essays for one term and store the run in the workspace.

    :param thresholds: the flag decision's thresholds (default :class:`~hingeword.score.Thresholds`).
    :param keep_spelling: forms never grouped under another word as misspellings (as written or
        their lemma); the overview lists every grouping and this undoes one.
    :param keep_parses: also cache each essay's parse (spaCy ``Doc``), not only what extraction
        found, so that a hingeword whose extraction changed need not parse again. Off by default:
        writing the ``Doc``\ s costs about a tenth of the parsing time and takes disk space.
    :param progress: called as ``progress(done, total)`` (essays) while parsing and extracting;
        essays read from the cache count as done at once.
    :param stage: called with the name of each stage as it starts: ``"read"``, ``"parse"``
        (parsing and extraction, essay by essay), ``"score"``, ``"store"``.
    """
    from . import reference as ref_mod
    from .causes import categorise, l1_tallies, object_tallies
    from .rules import check_rule_dirs
    from .score import score_patterns

    thresholds = thresholds or Thresholds()
    say = stage or (lambda name: None)
    say("read")
    check_rule_dirs([Path(d) for d in rules_dirs])  # before any work; the rules load while the parser works
    loaded: dict = {}
    ingest = read_essays(folder, manifest=manifest, encoding=encoding)
    _require_essays(ingest, folder, class_name, term)
    ref_mod.resolve_many(references, workspace)  # a wrong name or manifest before any work; counts load while parsing
    info = model_info(model)  # name and version from the installed package; the pipeline loads only if needed
    nlp = None
    if info is None:  # not found this way: loading it says what is wrong, before the workspace is touched
        nlp, info = load_model(model)
    ws = Workspace(workspace)
    try:
        class_name = ws.canonical_class(class_name)  # "Evening-B2" joins the stored "evening-b2"
        stats = ParseStats()
        say("parse")
        rows, ingest, info = _attachment_rows(ingest, folder, class_name, term, nlp, info, model, ws.cache_dir,
                                              processes or default_processes(), keep_parses, stats, progress,
                                              meanwhile=lambda: loaded.update(
                                                  rules=_load_rules(rules_dirs),
                                                  reference=ref_mod.load_many(references, workspace)))
        attachments = [a for e in ingest.essays for a in to_attachments(rows[e.sha256], e.text, e.essay_id, e.writer)]
        del rows  # the attachments hold all of it
        rules, reference = loaded["rules"], loaded["reference"]
        say("score")
        keep = sorted({k.strip().lower() for k in keep_spelling if k.strip()})
        attachments, groups = group_governors(attachments, reference.lemmas, words=rules.words, keep=keep)
        words = sum(e.word_count for e in ingest.essays)
        tally = Tally.from_attachments(attachments, words=words)
        pool = pooled_tally(ws, class_name, term, thresholds.pool, tally)
        records = score_patterns(tally, reference, thresholds, pool=pool)
        l1_of = {e.writer: (e.l1 or l1 or "").strip().lower() for e in ingest.essays}
        records = categorise(records, reference, rules, l1_tallies(attachments, l1_of), object_tallies(attachments))
        term_note = ""
        if term_start is None:  # a re-scan keeps the term's recorded start, so term order holds
            old = ws.find_run(class_name, term)
            term_start, term_note = _term_start(ws, class_name, term, old)
        run_settings = {**thresholds.as_dict(), "term_start": term_start, "l1": l1, "keep_spelling": keep}
        run_meta = {
            "tool_version": __version__,
            "model": info.name,
            "model_version": info.version,
            "extractor_version": EXTRACTOR_VERSION,
            "source": str(Path(folder)),
            "words": words,
            "settings": run_settings,
            "reference": reference.manifest,
        }
        notes = ingest_notes(ingest)
        notes += [("rules", str(p)) for p in rules.problems]
        notes += [("typo", f"'{k[0]}' ({k[1]}) grouped under '{v[0]}'" + ("" if v[1] == k[1] else f" ({v[1]})"))
                  for k, v in sorted(groups.items())]
        other = sorted(reference.parsers() - {info.name})
        if other:
            notes.append(("model", f"essays parsed with {info.name}, reference with {', '.join(other)}: "
                                   "counts may differ by parser"))
        say("store")
        run_id = ws.replace_run(
            class_name=class_name,
            term=term,
            run_meta=run_meta,
            essays=ingest.essays,
            skipped=ingest.skipped,
            notes=notes,
            attachments=attachments,
            records=records,
        )
        order = [(r.term, r.term_start) for r in ws.runs_in_order(class_name)]
    finally:
        ws.close()
    return ScanResult(
        run_id=run_id, class_name=class_name, term=term, model=info, ingest=ingest, parse_stats=stats,
        attachments=len(attachments), records=records, typo_groups=groups, reference_name=reference.name,
        thresholds=thresholds, settings=run_settings, term_note=term_note, term_order=order,
    )


def _term_start(ws: Workspace, class_name: str, term: str, old) -> tuple[str, str]:
    """The start date of a term scanned without ``--term-start``, and a note saying how it was chosen:
    the recorded one on a re-scan, else the date the term's name carries
    (:func:`hingeword.terms.infer_term_start`), else today (a warning when the class has other terms)."""
    from .terms import infer_term_start

    if old is not None:
        return old.term_start, ""
    guessed = infer_term_start(term)
    if guessed:
        return guessed, (f"term start {guessed} taken from the term name '{term}'; if that is wrong, scan again "
                         "with --term-start YYYY-MM-DD (terms are ordered by their start dates)")
    today = _dt.date.today().isoformat()
    if any(r.term != term for r in ws.runs_in_order(class_name)):
        return today, (f"no --term-start and none in the name '{term}': today ({today}) is taken as its start; "
                       "terms are ordered by their start dates, so scan again with --term-start YYYY-MM-DD "
                       "if this term is not the latest")
    return today, ""

"""Plain-text summaries for the terminal: what ``hingeword scan`` prints, and
key-word-in-context lines. Pure functions returning lines; the CLI prints them.
"""

from __future__ import annotations

from collections.abc import Sequence

from . import __version__
from .record import PatternRecord, Status


def plural(n: int, word: str, many: str | None = None) -> str:
    """ "1 essay", "2 essays" (``many`` for irregular plurals)."""
    return f"{n:,} {word if n == 1 else (many or word + 's')}"


def pattern_lines(records: Sequence[PatternRecord]) -> list[str]:
    """One line per pattern with its class and native figures."""
    lines = []
    for r in records:
        lines.append(
            f"{r.label:<24} {r.learner_count:>3}× by {plural(r.learner_writers, 'writer')} "
            f"({100 * r.learner_share:.0f}% of {r.governor}); native {r.reference_count} of "
            f"{r.reference_governor_count} ({100 * r.reference_share:.1f}%); rate ×{r.rate_ratio:.1f} (at least "
            f"×{r.rate_ratio_low:.1f})"
            + (f"; pooled over {plural(r.pooled_classes, 'class-term')}: {r.pooled_count}× by "
               f"{plural(r.pooled_writers, 'writer')}" if r.evidence == "workspace" else "")
        )
    return lines


def scan_summary(result, top: int) -> list[str]:
    """What a scan found, in lines: essays, skipped files, groupings, flagged and under-used patterns.

    :param result: a :class:`hingeword.pipeline.ScanResult`.
    """
    ing = result.ingest
    st = result.parse_stats
    lines = [f"hingeword {__version__} · model {result.model} · reference {result.reference_name}",
             f"{result.class_name} / {result.term}: {plural(len(ing.essays), 'essay')} read, {len(ing.skipped)} skipped, "
             f"{plural(ing.word_count, 'word')}; parsed {st.parsed}, from cache {st.from_cache}"]
    lines += [f"  skipped {s.source}: {s.reason}" for s in ing.skipped]
    lines += [f"  manifest problem, {s.source}: {s.reason}" for s in getattr(ing, "manifest_problems", ())]
    lines += [f"  identical essays (kept): {', '.join(group)}" for group in ing.duplicates]
    lines += [f"  near-duplicates (kept): {nd.first} ~ {nd.second} ({nd.similarity:.0f}%)" for nd in ing.near_duplicates]
    for (lemma, pos), (known, known_pos) in sorted(result.typo_groups.items()):
        target = f"'{known}'" if known_pos == pos else f"'{known}' ({known_pos})"
        lines.append(f"  spelling: '{lemma}' ({pos}) counted as {target}")
    if result.typo_groups:
        lines.append("  (a word right as written: scan again with --keep-spelling WORD; the overview lists them all)")
    if getattr(result, "term_note", ""):
        lines.append(f"  Warning: {result.term_note}")
    order = getattr(result, "term_order", [])
    if len(order) > 1:
        lines.append(f"  terms of {result.class_name} in order: "
                     + " → ".join(f"{t} ({start})" for t, start in order))
    records = result.records
    used = [r for r in records if r.learner_count > 0]
    flagged = [r for r in records if r.flagged]
    under = [r for r in records if r.status is Status.UNDER_USED]
    lines.append(f"{plural(result.attachments, 'attachment')} in {plural(len(used), 'pattern')}; "
                 f"{len(flagged)} flagged as over-used, {len(under)} under-used")
    if flagged:
        lines.append("Over-used (candidates for your judgement, not verdicts):")
        lines += ["  " + line for line in pattern_lines(flagged[:top])]
        lines.append("Likely reasons and native use:")
        for r in flagged[:top]:
            a = r.advice
            cause = a.cause.label if a and a.cause else ""
            lines.append(f"  {r.label}: {cause} → {a.suggestion if a else ''} — {a.explanation if a else ''}")
    # a native form the class avoids where it over-uses another is the same finding: said with the flag
    sides = {(r.governor, r.governor_pos, s) for r in flagged if r.advice
             for s in {r.advice.suggested_preposition, *(x for _, x in r.advice.by_object)}}
    folded = [r for r in under if r.key in sides]
    under = [r for r in under if r.key not in sides]
    if folded:
        lines.append("  (the other side of these flags: " + "; ".join(
            f"{r.label} {r.learner_count}× in the class, natives {100 * r.reference_share:.0f}%" for r in folded) + ")")
    if under:
        lines.append("Under-used (native patterns the class avoids):")
        lines += ["  " + line for line in pattern_lines(under[:top])]
    if not flagged:
        lines.append("Most used patterns:")
        most = sorted(used, key=lambda r: (-r.learner_writers, -r.learner_count, r.key))
        lines += ["  " + line for line in pattern_lines(most[:top])]
    return lines

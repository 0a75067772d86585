"""Command-line interface (typer). Each command parses options, calls one library
function and prints a short summary: data to stdout, progress and messages to stderr.
"""

from __future__ import annotations

import logging
import sys
from pathlib import Path
from typing import Optional

import typer
from rich.console import Console

from . import __version__
from .errors import HingewordError
from .patterns import key_label

app = typer.Typer(
    help="Find the preposition patterns a class over-uses compared with native writing.",
    no_args_is_help=True,
    pretty_exceptions_show_locals=False,  # essays are private: never dump locals
    add_completion=False,
)
reference_app = typer.Typer(help="Build, list and describe native references.", no_args_is_help=True)
app.add_typer(reference_app, name="reference")

out = Console(highlight=False, soft_wrap=True)
err = Console(stderr=True, highlight=False, soft_wrap=True)

DEFAULT_WORKSPACE = Path("hingeword-workspace")
WorkspaceOpt = typer.Option(DEFAULT_WORKSPACE, "--workspace", "-w", help="Workspace folder (database, parse cache, references).")
ClassOpt = typer.Option(..., "--class", help="Class name, e.g. 'evening-b2'.")
TermOpt = typer.Option(..., "--term", help="Term name, e.g. '2026-spring'.")


def _fail(msg: str, code: int = 1):
    err.print(f"Error: {msg}", markup=False)
    raise typer.Exit(code)


def _check_names(names: str) -> None:
    if names not in ("pseudonyms", "real"):
        _fail(f"--names must be 'pseudonyms' or 'real', not '{names}'", 2)


def _setup_logging(verbose: bool) -> None:
    logging.basicConfig(level=logging.DEBUG if verbose else logging.WARNING, format="%(levelname)s: %(message)s")


def _version(value: bool) -> None:
    if value:
        out.print(f"hingeword {__version__}")
        raise typer.Exit(0)


@app.callback()
def _main(
    verbose: bool = typer.Option(False, "--verbose", "-v", help="Show debug messages."),
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True, help="Print the version and exit."),
):
    _setup_logging(verbose)


@app.command()
def scan(
    essays: Path = typer.Argument(..., help="Folder of essays (.txt, .docx, .odt, or one .csv with writer,text)."),
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    manifest: Optional[Path] = typer.Option(None, "--manifest", help="CSV with columns file,writer[,l1,level,task]."),
    model: Optional[str] = typer.Option(None, "--model", help="spaCy pipeline (package name or path)."),
    processes: Optional[int] = typer.Option(None, "--processes", min=1, help="Parser processes (default: all cores)."),
    reference: list[str] = typer.Option([], "--reference", help="Reference name or folder (repeatable; default: brown)."),
    min_count: int = typer.Option(3, "--min-count", min=1, help="Instances a pattern needs to be flagged."),
    min_writers: int = typer.Option(2, "--min-writers", min=1, help="Distinct writers a pattern needs to be flagged."),
    min_reference: int = typer.Option(20, "--min-reference", min=0, help="Attachments the governor needs in the reference."),
    min_g2: float = typer.Option(10.83, "--min-g2", min=0, help="Log-likelihood G2 threshold (10.83: p < .001)."),
    min_log_ratio: float = typer.Option(1.0, "--min-log-ratio", help="Log Ratio threshold (1 = twice the native rate)."),
    max_native_share: float = typer.Option(0.05, "--max-native-share", min=0, max=1, help="Not flagged when natives use the form this often (share of the governor's uses)."),
    max_dispersion: float = typer.Option(0.8, "--max-dispersion", min=0, max=1, help="Not flagged when Gries's DP over writers is higher (use concentrated in a few writers)."),
    measure: str = typer.Option("oe", "--measure", help="Score of the collocation ratio: oe, mi or logdice."),
    term_start: Optional[str] = typer.Option(None, "--term-start", help="First day of the term, YYYY-MM-DD (orders terms; default: today)."),
    l1: Optional[str] = typer.Option(None, "--l1", help="Learners' first language (ISO 639-1) when the manifest has none."),
    rules: list[Path] = typer.Option([], "--rules", help="Extra rules folder overlaying the bundled rules (repeatable)."),
    encoding: Optional[str] = typer.Option(None, "--encoding", help="Decode non-UTF-8 text files with this codec (e.g. cp1254) instead of guessing."),
    top: int = typer.Option(10, "--top", min=0, help="How many patterns to list."),
    report: bool = typer.Option(False, "--report", help="Also write the handouts, overview and student sheets."),
    out_dir: Path = typer.Option(Path("hingeword-reports"), "--out", help="Folder for reports (with --report)."),
    names: str = typer.Option("pseudonyms", "--names", help="pseudonyms (default) or real."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar."),
):
    """Scan a folder of essays for one class and term, and store the run."""
    from rich.progress import Progress

    from .pipeline import scan as run_scan

    if not essays.exists():
        _fail(f"essay folder not found: {essays}")
    settings = dict(min_count=min_count, min_writers=min_writers, min_reference=min_reference, min_g2=min_g2,
                    min_log_ratio=min_log_ratio, max_native_share=max_native_share, max_dispersion=max_dispersion, measure=measure)
    try:
        with Progress(console=err, transient=True, disable=quiet) as bar:
            task = bar.add_task("parsing essays", total=None)
            result = run_scan(
                essays, class_name=class_name, term=term, workspace=workspace, manifest=manifest, model=model,
                processes=processes, references=reference, settings=settings, term_start=term_start, l1=l1,
                rules_dirs=rules, encoding=encoding, progress=lambda done, total: bar.update(task, completed=done, total=total),
            )
    except HingewordError as exc:
        _fail(str(exc))
    print_scan_summary(result, top)
    if report:
        _write_reports(workspace, class_name, term, out_dir, top=5, names=names)


def _write_reports(workspace: Path, class_name: str, term: str, out_dir: Path, *, top: int, names: str,
                   match: bool = False) -> None:
    from .history import Workspace
    from .report import write_reports

    _check_names(names)
    try:
        with Workspace(workspace, create=False) as ws:
            paths = write_reports(ws, class_name, term, out_dir, top=top, names=names, match=match)
    except HingewordError as exc:
        _fail(str(exc))
    out.print(f"reports written to {paths.folder}; open {paths.handout} first", markup=False)


@app.command()
def report(
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    out_dir: Path = typer.Option(Path("hingeword-reports"), "--out", help="Folder to write into."),
    top: int = typer.Option(5, "--top", min=1, help="Patterns on the class handout."),
    names: str = typer.Option("pseudonyms", "--names", help="pseudonyms (default) or real."),
    match_writers: bool = typer.Option(False, "--match-writers", help="Link writers to last term's by name similarity (see 'trends --match-writers')."),
):
    """Write the class handout (with teacher copy), teacher overview, student sheets and patterns.csv."""
    _write_reports(workspace, class_name, term, out_dir, top=top, names=names, match=match_writers)


def print_scan_summary(result, top: int) -> None:
    ing = result.ingest
    st = result.parse_stats
    out.print(f"hingeword {__version__} · model {result.model} · reference {result.reference_name}")
    out.print(f"{result.class_name} / {result.term}: {len(ing.essays)} essays read, {len(ing.skipped)} skipped, "
              f"{ing.word_count:,} words; parsed {st.parsed}, from cache {st.from_cache}")
    for s in ing.skipped:
        out.print(f"  skipped {s.source}: {s.reason}", markup=False)
    for group in ing.duplicates:
        out.print(f"  identical essays (kept): {', '.join(group)}", markup=False)
    for nd in ing.near_duplicates:
        out.print(f"  near-duplicates (kept): {nd.first} ~ {nd.second} ({nd.similarity:.0f}%)", markup=False)
    for (lemma, pos), known in sorted(result.typo_groups.items()):
        target = known if isinstance(known, str) else f"{known[0]}' ({known[1]}"
        out.print(f"  spelling: '{lemma}' ({pos}) counted as '{target}'", markup=False)
    df = result.patterns
    out.print(f"{result.attachments:,} attachments in {int((df.learner_count > 0).sum()):,} patterns; "
              f"{int(df.flagged.sum())} flagged as over-used, {int((df.status == 'under-used').sum())} under-used")
    flagged = df[df.flagged]
    if len(flagged):
        out.print("Over-used (candidates for your judgement, not verdicts):")
        for line in pattern_lines(flagged.head(top)):
            out.print("  " + line, markup=False)
        by_key = {(f["governor"], f["governor_pos"], f["preposition"]): f for f in result.figures}
        out.print("Likely reasons and native use:")
        for r in flagged.head(top).itertuples():
            f = by_key.get((r.governor, r.governor_pos, r.preposition), {})
            out.print(f"  {key_label(r.governor, r.preposition)}: {f.get('cause', '')} → {f.get('suggestion', '')} "
                      f"— {f.get('explanation', '')}", markup=False)
    under = df[df.status == "under-used"]
    if len(under):
        out.print("Under-used (native patterns the class avoids):")
        for line in pattern_lines(under.head(top)):
            out.print("  " + line, markup=False)
    if not len(flagged):
        out.print("Most used patterns:")
        for line in pattern_lines(df.sort_values(["learner_writers", "learner_count"], ascending=False).head(top)):
            out.print("  " + line, markup=False)


def pattern_lines(df) -> list[str]:
    lines = []
    for r in df.itertuples():
        label = key_label(r.governor, r.preposition)
        writers = f"{r.learner_writers} writer{'' if r.learner_writers == 1 else 's'}"
        lines.append(
            f"{label:<24} {r.learner_count:>3}× by {writers} "
            f"({100 * r.learner_share:.0f}% of {r.governor}); native {r.reference_count} of "
            f"{r.reference_governor_count} ({100 * r.reference_share:.1f}%); LR {r.log_ratio:+.1f}, G2 {r.log_likelihood:.1f}"
        )
    return lines


@app.command()
def export(
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    output: Path = typer.Option(..., "-o", "--output", help="File to write: .csv, .xlsx or .json."),
    kwic_output: Optional[Path] = typer.Option(None, "--concordance", help="Also write every instance as a KWIC line to this .csv/.xlsx/.json file."),
    names: str = typer.Option("pseudonyms", "--names", help="Writer ids in the concordance: pseudonyms (default) or real."),
):
    """Export one row per pattern (CSV, XLSX or JSON by the file's suffix), with the teacher's decisions."""
    from .export import concordance_frame, patterns_frame, write_table
    from .history import Workspace

    _check_names(names)
    try:
        with Workspace(workspace, create=False) as ws:
            df = patterns_frame(ws.figures_in_context(class_name, term))
            if kwic_output is not None:
                run = ws.run(class_name, term)
                codes = None if names == "real" else ws.writer_codes(class_name)
                texts = {e["essay_id"]: e["text"] for e in ws.essays(run["id"])}
                kwic_df = concordance_frame(ws.attachments(run["id"]), texts, codes)
        write_table(df, output)
        if kwic_output is not None:
            write_table(kwic_df, kwic_output)
            err.print(f"wrote {len(kwic_df)} concordance lines to {kwic_output}")
    except HingewordError as exc:
        _fail(str(exc))
    err.print(f"wrote {len(df)} patterns to {output}")


@app.command()
def concordance(
    governor: str = typer.Argument(..., help="Governor lemma, e.g. discuss."),
    preposition: str = typer.Argument(..., help="Preposition, or - for a direct object."),
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    width: int = typer.Option(40, "--width", min=10, help="Characters of context on each side."),
    names: str = typer.Option("pseudonyms", "--names", help="pseudonyms (default: stable codes S01, S02 …) or real."),
):
    """Print key-word-in-context lines of one pattern with writer ids (pseudonymised by default)."""
    from .export import kwic
    from .history import Workspace

    try:
        with Workspace(workspace, create=False) as ws:
            run = ws.run(class_name, term)
            atts = [a for a in ws.attachments(run["id"])
                    if a.governor == governor.lower() and a.preposition == preposition.lower()]
            texts = {e["essay_id"]: e["text"] for e in ws.essays(run["id"])}
            codes = ws.writer_codes(class_name)
    except HingewordError as exc:
        _fail(str(exc))
    _check_names(names)
    if not atts:
        _fail(f"no '{governor} + {preposition}' in {class_name} / {term}")
    for writer, left, key, right, _ in kwic(atts, texts, width):
        who = writer if names == "real" else codes.get(writer, "S??")
        out.print(f"{who[:14]:<14} {left:>{width}} [{key}] {right}", markup=False)
    err.print(f"{len(atts)} lines")


@app.command()
def trends(
    class_name: str = ClassOpt,
    workspace: Path = WorkspaceOpt,
    out_dir: Optional[Path] = typer.Option(None, "--out", help="Also write trends.html (with charts) into this folder."),
    match_writers: bool = typer.Option(False, "--match-writers", help="Propose fuzzy matches of writer names across terms."),
):
    """Show per term what recurs, what is new, what is fading and what has gone."""
    from .history import Workspace
    from .trends import MATCH_THRESHOLD, compute_trends, text_table, writer_matches

    try:
        with Workspace(workspace, create=False) as ws:
            tr = compute_trends(ws, class_name)
            for line in text_table(tr):
                out.print(line, markup=False)
            if match_writers:
                out.print(f"Proposed writer matches (name similarity ≥ {MATCH_THRESHOLD:.0f}; please check):")
                found = False
                for t in tr.terms:
                    for cur, prev, score in writer_matches(ws, t["class"], t["term"]):
                        found = True
                        out.print(f"  {t['term']}: '{cur}' = '{prev}' ({score:.0f})", markup=False)
                if not found:
                    out.print("  none")
            if out_dir is not None:
                from .report import write_trends

                path = write_trends(ws, class_name, out_dir, match=match_writers)
                out.print(f"wrote {path}", markup=False)
    except HingewordError as exc:
        _fail(str(exc))


ScopeClass = typer.Option(None, "--class", help="The class the decision applies to.")
AllClasses = typer.Option(False, "--all-classes", help="Apply to every class.")


def _scope(class_name: Optional[str], all_classes: bool) -> Optional[str]:
    if bool(class_name) == bool(all_classes):
        _fail("give either --class NAME or --all-classes", 2)
    return None if all_classes else class_name


@app.command()
def dismiss(
    governor: str = typer.Argument(..., help="Governor lemma, e.g. 'discuss'."),
    preposition: str = typer.Argument(..., help="Preposition, or - for a direct object."),
    class_name: Optional[str] = ScopeClass,
    all_classes: bool = AllClasses,
    reason: str = typer.Option(..., "--reason", help="Why (shown in the teacher overview)."),
    workspace: Path = WorkspaceOpt,
):
    """Dismiss a flagged pattern: it leaves the handouts and stays listed in the overview."""
    from .history import Workspace

    scope = _scope(class_name, all_classes)
    try:
        with Workspace(workspace, create=False) as ws:
            if scope:
                ws.require_class(scope)
            ws.dismiss(governor, preposition, class_name=scope, reason=reason)
    except HingewordError as exc:
        _fail(str(exc))
    out.print(f"dismissed '{governor} + {preposition}' for {scope or 'all classes'}: {reason}", markup=False)


@app.command()
def restore(
    governor: str = typer.Argument(..., help="Governor lemma."),
    preposition: str = typer.Argument(..., help="Preposition, or -."),
    class_name: Optional[str] = ScopeClass,
    all_classes: bool = AllClasses,
    workspace: Path = WorkspaceOpt,
):
    """Undo a dismissal."""
    from .history import Workspace

    scope = _scope(class_name, all_classes)
    try:
        with Workspace(workspace, create=False) as ws:
            done = ws.restore(governor, preposition, class_name=scope)
    except HingewordError as exc:
        _fail(str(exc))
    if not done:
        _fail(f"'{governor} + {preposition}' was not dismissed for {scope or 'all classes'}")
    out.print(f"restored '{governor} + {preposition}' for {scope or 'all classes'}", markup=False)


@app.command("link-classes")
def link_classes(
    old: str = typer.Argument(..., help="Earlier class name."),
    new: str = typer.Argument(..., help="Class name that continues it."),
    workspace: Path = WorkspaceOpt,
):
    """Group two classes (the same students under a new class name) for trends and decisions."""
    from .history import Workspace

    try:
        with Workspace(workspace, create=False) as ws:
            ws.link_classes(old, new)
    except HingewordError as exc:
        _fail(str(exc))
    out.print(f"linked {old} → {new}", markup=False)


@app.command()
def demo(
    workspace: Optional[Path] = typer.Option(None, "--workspace", "-w", help="Workspace folder (default: a fresh temporary one)."),
    out_dir: Path = typer.Option(Path("hingeword-demo"), "--out", help="Folder for the demo's reports."),
    quiet: bool = typer.Option(False, "--quiet", "-q"),
):
    """Run the invented demo: two classes, three terms each, end to end."""
    from .demo import run_demo

    try:
        summary = run_demo(workspace=workspace, out_dir=out_dir, log=None if quiet else lambda m: err.print(m, markup=False))
    except HingewordError as exc:
        _fail(str(exc))
    for line in summary:
        out.print(line, markup=False)


# ------------------------------------------------------------------ reference


@reference_app.command("build")
def reference_build(
    source: Path = typer.Argument(..., help="Folder of native .txt files (recursive), or of .conllu files."),
    name: str = typer.Option(..., "--name", help="Name of the new reference."),
    fmt: str = typer.Option("text", "--format", help="text or conllu."),
    workspace: Path = WorkspaceOpt,
    output: Optional[Path] = typer.Option(None, "--output", "-o", help="Folder to write (default: WORKSPACE/references/NAME)."),
    model: Optional[str] = typer.Option(None, "--model", help="spaCy pipeline for text input."),
    processes: int = typer.Option(1, "--processes", min=1, help="Parser processes."),
    description: str = typer.Option("", "--description", help="What the texts are (stored in the manifest)."),
    licence: str = typer.Option("not stated", "--licence", help="Licence of the source texts."),
    limits: str = typer.Option("", "--limits", help="What the reference does not represent."),
    build_date: Optional[str] = typer.Option(None, "--build-date", help="Date to record (default: today)."),
    quiet: bool = typer.Option(False, "--quiet", "-q"),
):
    """Build a reference from native writing (resumes after an interruption)."""
    from rich.progress import Progress

    from . import reference as ref

    target = output or ref.references_dir(workspace) / name
    try:
        with Progress(console=err, transient=True, disable=quiet) as bar:
            task = bar.add_task(f"building {name}", total=None)
            path = ref.build(source, target, name=name, fmt=fmt, model=model, processes=processes,
                             description=description, licence=licence, limits=limits, build_date=build_date,
                             progress=lambda p: bar.update(task, completed=p.files_done, total=p.files_total))
        manifest = ref.read_manifest(path)
    except HingewordError as exc:
        _fail(str(exc))
    out.print(f"built {name} at {path}: {manifest['documents']} files, {manifest['words']:,} words, "
              f"{manifest['attachments']:,} attachments, parser {manifest['model']} {manifest['model_version']}")


@reference_app.command("list")
def reference_list(workspace: Path = WorkspaceOpt):
    """List the bundled references and those in the workspace."""
    from . import reference as ref

    for path, man in ref.list_references(workspace):
        if "error" in man:
            out.print(f"{man['name']:<16} {man['error']}", markup=False)
        else:
            out.print(f"{man['name']:<16} {int(man.get('words', 0)):>11,} words  {man.get('source', '')}  [{path}]", markup=False)


@reference_app.command("info")
def reference_info(name: str = typer.Argument(..., help="Reference name or folder."), workspace: Path = WorkspaceOpt):
    """Show a reference's manifest: source, licence, size, parser, limits."""
    from . import reference as ref

    try:
        path = ref.resolve(name, workspace)
        man = ref.read_manifest(path)
    except HingewordError as exc:
        _fail(str(exc))
    for key in ("name", "source", "licence", "limits", "words", "sentences", "documents", "attachments", "patterns",
                "model", "model_version", "extractor_version", "build_date"):
        if key in man:
            val = f"{man[key]:,}" if isinstance(man[key], int) else man[key]
            out.print(f"{key:<18} {val}", markup=False)
    out.print(f"{'path':<18} {path}", markup=False)


def main() -> None:
    try:
        app()
    except HingewordError as exc:  # a library error that slipped past a command
        err.print(f"Error: {exc}", markup=False)
        sys.exit(1)

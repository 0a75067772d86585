"""Command-line interface (typer). Each command parses options, calls one library
function and prints a short summary: data to stdout, progress and messages to stderr.

A :class:`~hingeword.errors.HingewordError` from any command becomes one line
``Error: …`` and exit code 1 (in :func:`_command`); usage errors exit 2.
"""

from __future__ import annotations

import functools
import inspect
import logging
import sys
from collections.abc import Callable
from dataclasses import fields
from enum import Enum
from pathlib import Path
from typing import Optional

import typer
from rich.console import Console
from rich.markup import escape

from . import __version__
from .errors import HingewordError
from .files import clean_text
from .record import parse_slot
from .score import Thresholds

def _classic_help() -> None:
    """Help that reads as plain words: recent typer versions print an option's Python type
    (``<bool>``, ``<str>``, ``<list[Path]>``) and wrap required arguments in braces
    (``{essays}``). Flags get no type, values a short upper-case word (TEXT, PATH, N, or the
    choices), arguments their name in capitals. Older typer versions lack these hooks and are
    left as they are."""
    core = getattr(typer, "core", None)
    option, argument = getattr(core, "TyperOption", None), getattr(core, "TyperArgument", None)
    if option is None or argument is None or not hasattr(option, "display_type_rich"):
        return
    words = {"str": "TEXT", "path": "PATH", "int": "N", "float": "NUMBER"}

    def display(self, ctx):
        if self.metavar is not None:
            return self.metavar
        if getattr(self, "is_flag", False) or getattr(self, "is_bool_flag", False):
            return None
        try:
            label = self.display_type(ctx).strip("<>")
        except Exception:  # noqa: BLE001 - help must never fail
            return None
        if label == "bool":
            return None
        if "|" in label and not label.startswith("list"):
            return f"[{label}]"
        base = label.removeprefix("list[").removesuffix("]").split(" ")[0].lower()
        return words.get(base, base.upper())

    option.display_type_rich = display
    argument.display_type_rich = lambda self, ctx: None
    if hasattr(argument, "_usage_display_name"):
        def usage(self):
            name = (self.metavar or self.name or "").upper()
            return (name if self.required else f"[{name}]") + ("..." if self.nargs != 1 else "")

        argument._usage_display_name = usage


_classic_help()

app = typer.Typer(
    help="Find the preposition patterns a class over-uses compared with native writing.",
    no_args_is_help=True,
    pretty_exceptions_show_locals=False,  # essays are private: never dump locals
    add_completion=False,
)
reference_app = typer.Typer(help="Build, list and describe native references.", no_args_is_help=True)
app.add_typer(reference_app, name="reference")

class _PlainConsole(Console):
    """User text (class names, essays, file names) is printed as it is: no markup, no emoji
    codes, and control characters (escape sequences in an essay) replaced by spaces."""

    def print(self, *objects, **kwargs) -> None:  # noqa: A003
        super().print(*(clean_text(o) for o in objects), **kwargs)


out = _PlainConsole(highlight=False, soft_wrap=True, markup=False, emoji=False)
err = _PlainConsole(stderr=True, highlight=False, soft_wrap=True, markup=False, emoji=False)


class Names(str, Enum):
    pseudonyms = "pseudonyms"
    real = "real"


class RefFormat(str, Enum):
    text = "text"
    conllu = "conllu"


DEFAULT_WORKSPACE = Path("hingeword-workspace")
WorkspaceOpt = typer.Option(DEFAULT_WORKSPACE, "--workspace", "-w", help="Workspace folder (database, parse cache, references).")
ClassOpt = typer.Option(..., "--class", help="Class name, e.g. 'evening-b2'.")
TermOpt = typer.Option(..., "--term", help="Term name, e.g. '2026-spring'.")
NamesOpt = typer.Option(Names.pseudonyms, "--names", help="Writers as pseudonyms (S01, S02 …; the default) or real names.")
QuietOpt = typer.Option(False, "--quiet", "-q", help="No progress bar.")
GovernorArg = typer.Argument(..., help="The word the preposition belongs to (verb, adjective or noun), e.g. 'discuss'.",
                             metavar="WORD")
SlotArg = typer.Argument(..., help="Preposition ('about', 'in front of'), or 'object' (also '+ object' or '-') "
                                   "for a direct object: the spelling the reports print is accepted.",
                         metavar="PREPOSITION")


def _fail(msg: str, code: int = 1):
    err.print(f"Error: {msg}")
    raise typer.Exit(code)


def _command(target: typer.Typer, name: str | None = None):
    """Register a command; a :class:`HingewordError` it raises becomes ``Error: …`` and exit 1."""
    def deco(fn: Callable) -> Callable:
        @functools.wraps(fn)
        def wrapper(*args, **kwargs):
            try:
                return fn(*args, **kwargs)
            except HingewordError as exc:
                _fail(str(exc))

        target.command(name)(wrapper)
        return fn

    return deco


def _with_threshold_options(fn: Callable) -> Callable:
    """Give ``fn`` one option per :class:`~hingeword.score.Thresholds` field (``min_count`` → ``--min-count``),
    with the field's default and help, collected into a ``thresholds`` argument."""
    sig = inspect.signature(fn)
    params = [p for p in sig.parameters.values() if p.name != "thresholds"]
    defaults = Thresholds()
    annotations = dict(fn.__annotations__)
    annotations.pop("thresholds", None)
    names = []
    for f in fields(Thresholds):
        default = getattr(defaults, f.name)
        kind = type(default)
        extra = {k: f.metadata[k] for k in ("min", "max") if f.metadata.get(k) is not None}
        option = typer.Option(default, "--" + f.name.replace("_", "-"), help=f.metadata["help"], **extra)
        params.append(inspect.Parameter(f.name, inspect.Parameter.KEYWORD_ONLY, default=option, annotation=kind))
        annotations[f.name] = kind
        names.append(f.name)

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        values = {n: kwargs.pop(n) for n in names}
        return fn(*args, thresholds=Thresholds(**values), **kwargs)

    del wrapper.__wrapped__
    wrapper.__signature__ = sig.replace(parameters=params)
    wrapper.__annotations__ = annotations
    return wrapper


def _progress(quiet: bool):
    from rich.progress import Progress

    return Progress(console=err, transient=True, disable=quiet or not err.is_terminal)


def _setup_logging(verbose: bool) -> None:
    logging.basicConfig(level=logging.DEBUG if verbose else logging.WARNING, format="%(levelname)s: %(message)s")
    # Dask (reference build --cluster) logs through its own handler, at its own levels
    logging.getLogger("distributed").propagate = False


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


@_command(app)
@_with_threshold_options
def scan(
    essays: Path = typer.Argument(..., help="Folder of essays (.txt, .docx, .odt), or one .csv file with writer,text.",
                                  metavar="ESSAYS"),
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    manifest: Optional[Path] = typer.Option(None, "--manifest", help="CSV with columns file,writer[,l1,level,task]."),
    model: Optional[str] = typer.Option(None, "--model", help="spaCy pipeline (package name or path)."),
    processes: Optional[int] = typer.Option(None, "--processes", min=1, help="Parser processes (default: all cores)."),
    reference: list[str] = typer.Option([], "--reference", help="Reference name or folder (repeatable; default: brown and contemporary combined)."),
    term_start: Optional[str] = typer.Option(None, "--term-start", help="First day of the term, YYYY-MM-DD (orders terms; default: the date in the term's name, e.g. '2026-spring' → 2026-03-01, else today, with a warning)."),
    l1: Optional[str] = typer.Option(None, "--l1", help="Learners' first language (ISO 639-1) when the manifest has none."),
    rules: list[Path] = typer.Option([], "--rules", help="Extra rules folder overlaying the bundled rules (repeatable)."),
    encoding: Optional[str] = typer.Option(None, "--encoding", help="Decode non-UTF-8 text files with this codec (e.g. cp1254) instead of guessing."),
    keep_spelling: list[str] = typer.Option([], "--keep-spelling", metavar="WORD", help="Count this word as written, never as a misspelling of another (repeatable; the overview lists every spelling grouping)."),
    keep_parses: bool = typer.Option(False, "--keep-parses", help="Also cache each essay's parse, so that a newer hingeword whose extraction changed need not parse again (about 10% slower, more disk space)."),
    top: int = typer.Option(10, "--top", min=0, help="How many patterns to list."),
    report: bool = typer.Option(False, "--report", help="Also write the handouts, overview and student sheets."),
    out_dir: Path = typer.Option(Path("hingeword-reports"), "--out", help="Folder for reports (with --report)."),
    names: Names = NamesOpt,
    quiet: bool = QuietOpt,
    thresholds: Thresholds = None,
):
    """Scan a folder of essays for one class and term, and store the run."""
    from .console import scan_summary
    from .pipeline import scan as run_scan

    if not essays.exists():
        _fail(f"essay folder not found: {essays}")
    with _progress(quiet) as bar:
        task = bar.add_task(SCAN_STAGES["read"], total=None)
        result = run_scan(
            essays, class_name=class_name, term=term, workspace=workspace, manifest=manifest, model=model,
            processes=processes, references=reference, thresholds=thresholds, term_start=term_start, l1=l1,
            rules_dirs=rules, encoding=encoding, keep_spelling=keep_spelling, keep_parses=keep_parses,
            progress=lambda done, total: bar.update(task, completed=done, total=total),
            stage=lambda name: bar.update(task, description=SCAN_STAGES.get(name, name)),
        )
    for line in scan_summary(result, top):
        out.print(line)
    if report:
        _reports(workspace, class_name, term, out_dir, top=5, names=names, match=False, quiet=quiet)


#: What the scan's progress bar says in each stage of :func:`hingeword.pipeline.scan`.
SCAN_STAGES = {"read": "reading essays", "parse": "parsing and extracting", "score": "scoring patterns",
               "store": "storing the run"}


def _steps(bar, task, what: str):
    """A ``progress(step, done, total)`` callback that shows ``what: step`` on ``bar``."""
    return lambda step, done, total: bar.update(task, description=f"{what}: {step}", completed=done, total=total)


def _reports(workspace: Path, class_name: str, term: str, out_dir: Path, *, top: int, names: Names, match: bool,
             names_on_sheets: bool = False, quiet: bool = False) -> None:
    from .report import make_reports

    with _progress(quiet) as bar:
        paths = make_reports(workspace, class_name, term, out_dir, top=top, names=names.value, match=match,
                             names_on_sheets=names_on_sheets,
                             progress=_steps(bar, bar.add_task("report", total=None), "report"))
    out.print(f"reports written to {paths.folder}; open {paths.handout} first")
    out.print(f"who is who (private, not for sharing): {paths.key}")


@_command(app)
def report(
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    out_dir: Path = typer.Option(Path("hingeword-reports"), "--out", help="Folder to write into."),
    top: int = typer.Option(5, "--top", min=1, help="Patterns on the class handout."),
    names: Names = NamesOpt,
    match_writers: bool = typer.Option(False, "--match-writers", help="Link writers to last term's by name similarity (see 'trends --match-writers')."),
    names_on_sheets: bool = typer.Option(False, "--names-on-sheets", help="Print each student's name on their feedback sheet (other pages keep --names)."),
    quiet: bool = QuietOpt,
):
    """Write the class handout (with teacher copy), teacher overview, student sheets, patterns.csv and the private key.html."""
    _reports(workspace, class_name, term, out_dir, top=top, names=names, match=match_writers,
             names_on_sheets=names_on_sheets, quiet=quiet)


@_command(app)
def export(
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    output: Path = typer.Option(..., "-o", "--output", help="File to write: .csv, .xlsx or .json."),
    kwic_output: Optional[Path] = typer.Option(None, "--concordance", help="Also write every instance as a KWIC line to this .csv/.xlsx/.json file."),
    names: Names = NamesOpt,
    quiet: bool = QuietOpt,
):
    """Export one row per pattern (CSV, XLSX or JSON by the file's suffix), with the teacher's decisions."""
    from .export import export_run

    with _progress(quiet) as bar:
        res = export_run(workspace, class_name, term, output, concordance=kwic_output, names=names.value,
                         progress=_steps(bar, bar.add_task("export", total=None), "export"))
    if res.concordance_path is not None:
        err.print(f"wrote {res.concordance_lines} concordance lines to {res.concordance_path}")
    err.print(f"wrote {res.patterns} patterns to {res.path}")


@_command(app)
def concordance(
    governor: str = GovernorArg,
    preposition: list[str] = SlotArg,
    class_name: str = ClassOpt,
    term: str = TermOpt,
    workspace: Path = WorkspaceOpt,
    width: int = typer.Option(40, "--width", min=10, help="Characters of context on each side."),
    names: Names = NamesOpt,
):
    """Print key-word-in-context lines of one pattern with writer ids (pseudonymised by default)."""
    from .export import concordance_lines

    lines = concordance_lines(workspace, class_name, term, governor, parse_slot(" ".join(preposition)),
                              names=names.value, width=width)
    for line in lines:
        out.print(line)
    err.print(f"{len(lines)} lines")


@_command(app)
def trends(
    class_name: str = ClassOpt,
    workspace: Path = WorkspaceOpt,
    out_dir: Optional[Path] = typer.Option(None, "--out", help="Also write trends.html (with charts) into this folder."),
    match_writers: bool = typer.Option(False, "--match-writers", help="Propose fuzzy matches of writer names across terms."),
):
    """Show per term what recurs, what is new, what is fading and what has gone."""
    from .report import make_trends

    res = make_trends(workspace, class_name, out_dir=out_dir, match=match_writers)
    for line in res.lines:
        out.print(line)
    if res.path is not None:
        out.print(f"wrote {res.path}")


ScopeClass = typer.Option(None, "--class", help="The class the decision applies to.")
AllClasses = typer.Option(False, "--all-classes", help="Apply to every class.")


def _scope(class_name: Optional[str], all_classes: bool) -> Optional[str]:
    if bool(class_name) == bool(all_classes):
        _fail("give either --class NAME or --all-classes", 2)
    return None if all_classes else class_name


@_command(app)
def dismiss(
    governor: str = GovernorArg,
    preposition: list[str] = SlotArg,
    class_name: Optional[str] = ScopeClass,
    all_classes: bool = AllClasses,
    reason: str = typer.Option(..., "--reason", help="Why (shown in the teacher overview)."),
    workspace: Path = WorkspaceOpt,
):
    """Dismiss a flagged pattern: it leaves the handouts and stays listed in the overview."""
    from .review import dismiss as do_dismiss

    res = do_dismiss(workspace, governor.lower(), parse_slot(" ".join(preposition)),
                     class_name=_scope(class_name, all_classes), reason=reason)
    out.print(f"dismissed '{res.label}' for {res.scope}: {reason}")
    if not res.occurrences:
        err.print(f"Warning: '{res.label}' does not occur in any stored run of {res.scope}; check the spelling "
                  "(the decision is kept for later terms)")
    err.print("Rebuild the reports to update the handouts: hingeword report --class … --term …")


@_command(app)
def restore(
    governor: str = GovernorArg,
    preposition: list[str] = SlotArg,
    class_name: Optional[str] = ScopeClass,
    all_classes: bool = AllClasses,
    workspace: Path = WorkspaceOpt,
):
    """Undo a dismissal."""
    from .review import restore as do_restore

    res = do_restore(workspace, governor.lower(), parse_slot(" ".join(preposition)),
                     class_name=_scope(class_name, all_classes))
    out.print(f"restored '{res.label}' for {res.scope}")
    err.print("Rebuild the reports to update the handouts: hingeword report --class … --term …")


@_command(app, "link-classes")
def link_classes(
    old: str = typer.Argument(..., help="Earlier class name."),
    new: str = typer.Argument(..., help="Class name that continues it."),
    workspace: Path = WorkspaceOpt,
):
    """Group two classes (the same students under a new class name) for trends and decisions."""
    from .review import link_classes as do_link

    do_link(workspace, old, new)
    out.print(f"linked {old} → {new}")


@_command(app)
def demo(
    workspace: Optional[Path] = typer.Option(None, "--workspace", "-w", help="Workspace folder (default: a fresh temporary one)."),
    out_dir: Path = typer.Option(Path("hingeword-demo"), "--out", help="Folder for the demo's reports."),
    quiet: bool = QuietOpt,
):
    """Run the invented demo: two classes, three terms each, end to end."""
    from .demo import run_demo

    for line in run_demo(workspace=workspace, out_dir=out_dir, log=None if quiet else err.print):
        out.print(line)


@_command(app)
@_with_threshold_options
def serve(
    workspace: Path = WorkspaceOpt,
    host: str = typer.Option("127.0.0.1", "--host", help="Address to listen on. Anything but a loopback address "
                             "(127.0.0.1, ::1, localhost) makes the page require a printed access token."),
    port: int = typer.Option(8765, "--port", min=0, max=65535, help="Port (0: any free port)."),
    model: Optional[str] = typer.Option(None, "--model", help="spaCy pipeline for scans (package name or path)."),
    reference: list[str] = typer.Option([], "--reference", help="Reference name or folder for scans (repeatable; default: brown)."),
    rules: list[Path] = typer.Option([], "--rules", help="Extra rules folder overlaying the bundled rules (repeatable)."),
    encoding: Optional[str] = typer.Option(None, "--encoding", help="Decode non-UTF-8 text files with this codec."),
    open_browser: bool = typer.Option(False, "--open", help="Also open the page in the default browser."),
    thresholds: Thresholds = None,
):
    """Start the local web page: classes, uploads, scans, handouts, review, downloads and erasing, in a browser."""
    from .web import serve as run_server

    options = {"model": model, "references": reference, "rules_dirs": rules, "encoding": encoding,
               "thresholds": thresholds}
    run_server(workspace, host=host, port=port, scan_options=options, say=out.print, open_browser=open_browser)


@_command(app)
def forget(
    class_name: str = typer.Option(..., "--class", help="The class to erase."),
    term: Optional[str] = typer.Option(None, "--term", help="Erase only this term (default: every term of the class)."),
    workspace: Path = WorkspaceOpt,
    yes: bool = typer.Option(False, "--yes", "-y", help="Do not ask for confirmation."),
):
    """Erase a class's (or one term's) essays and results from the workspace."""
    from .forget import forget as do_forget

    what = f"{class_name} / {term}" if term else f"every term of {class_name}"
    if not yes and not typer.confirm(f"Erase the essays and results of {what} from {workspace}?", err=True):
        _fail("nothing was erased")
    for line in do_forget(workspace, class_name, term).lines():
        out.print(line)


# ------------------------------------------------------------------ reference


@_command(reference_app, "build")
def reference_build(
    source: Path = typer.Argument(..., help="Folder of native .txt files (recursive), or of .conllu files."),
    name: str = typer.Option(..., "--name", help="Name of the new reference (letters, digits, . _ + -)."),
    fmt: RefFormat = typer.Option(RefFormat.text, "--format", help="Input format."),
    workspace: Path = WorkspaceOpt,
    output: Optional[Path] = typer.Option(None, "--output", "-o", help="Folder to write (default: WORKSPACE/references/NAME)."),
    model: Optional[str] = typer.Option(None, "--model", help="spaCy pipeline for text input."),
    processes: int = typer.Option(1, "--processes", min=1, help="Parser processes."),
    description: str = typer.Option("", "--description", help="What the texts are (stored in the manifest)."),
    licence: str = typer.Option("not stated", "--licence", help="Licence of the source texts."),
    limits: str = typer.Option("", "--limits", help="What the reference does not represent."),
    build_date: Optional[str] = typer.Option(None, "--build-date", help="Date to record (default: today)."),
    cluster: Optional[str] = typer.Option(
        None, "--cluster", help="Count on a Dask cluster: local:N (N local workers) or a scheduler address, "
        'tcp://HOST:8786. Needs pip install "hingeword[cluster]".'),
    quiet: bool = QuietOpt,
):
    """Build a reference from native writing (resumes after an interruption)."""
    from . import reference as ref

    ref.check_name(name)
    target = output or ref.references_dir(workspace) / name
    with _progress(quiet) as bar:
        task = bar.add_task(f"building {escape(name)}", total=None)

        def show(p: ref.BuildProgress) -> None:
            if p.shards_total:  # on a cluster: shards of this run
                bar.update(task, completed=p.shards_done, total=p.shards_total,
                           description=f"building {escape(name)}: shard {p.shards_done}/{p.shards_total}")
            else:
                bar.update(task, completed=p.files_done, total=p.files_total)

        path = ref.build(source, target, name=name, fmt=fmt.value, model=model, processes=processes,
                         description=description, licence=licence, limits=limits, build_date=build_date,
                         cluster=cluster, progress=show)
    manifest = ref.read_manifest(path)
    out.print(f"built {name} at {path}: {manifest['documents']} files, {manifest['words']:,} words, "
              f"{manifest['attachments']:,} attachments, parser {manifest['model']} {manifest['model_version']}")


@_command(reference_app, "list")
def reference_list(workspace: Path = WorkspaceOpt):
    """List the bundled references and those in the workspace."""
    from . import reference as ref

    for path, man in ref.list_references(workspace):
        if "error" in man:
            out.print(f"{man['name']:<16} {man['error']}")
        else:
            out.print(f"{man['name']:<16} {int(man.get('words', 0)):>11,} words  {man.get('source', '')}  [{path}]")


@_command(reference_app, "info")
def reference_info(name: str = typer.Argument(..., help="Reference name or folder."), workspace: Path = WorkspaceOpt):
    """Show a reference's manifest: source, licence, size, parser, limits."""
    from . import reference as ref

    for line in ref.describe(ref.resolve(name, workspace)):
        out.print(line)


def main() -> None:
    try:
        app()
    except HingewordError as exc:  # a library error raised outside a command (e.g. in a callback)
        err.print(f"Error: {exc}")
        sys.exit(1)

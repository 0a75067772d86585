"""The Starlette application behind ``hingeword serve``.

Every page calls the library and shows what it returns: classes and terms come from the
workspace (:class:`~hingeword.history.Workspace`) and the upload folders (:mod:`.store`);
a scan is :func:`hingeword.pipeline.scan` in a background thread (:mod:`.jobs`); the pages
to read and print are the report templates filled by :func:`hingeword.report.report_pages`
and :func:`~hingeword.report.trends_page_context`; dismiss, restore and link are
:mod:`hingeword.review`; downloads are :func:`hingeword.export.export_run`; erasing is
:func:`hingeword.forget.forget`. Templates are the report environment's
(:func:`hingeword.report.environment`, autoescaping) with this package's ``templates/web/``.
"""

from __future__ import annotations

import secrets
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.datastructures import UploadFile
from starlette.exceptions import HTTPException
from starlette.middleware import Middleware
from starlette.middleware.sessions import SessionMiddleware
from starlette.requests import Request
from starlette.responses import HTMLResponse, JSONResponse, RedirectResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from .. import __version__
from ..errors import HingewordError
from ..history import RunInfo, Workspace
from ..record import key_label
from ..report import environment, render, report_pages, slugify, trends_page_context
from . import store
from .jobs import Scanner, scan_work
from .security import CSRF_FIELD, Guard, Refused, checked_form, csrf_token

HERE = Path(__file__).parent

#: Largest request body (an upload of many files or one zip).
MAX_BODY = 64_000_000
#: Most files in one upload request.
MAX_FILES = 2_000

PAGES = {  # web page name → (report page, label)
    "handout": ("handout", "Class handout"),
    "teacher": ("handout_teacher", "Teacher copy"),
    "overview": ("overview", "Teacher overview"),
    "students": ("students", "Student sheets"),
}
FORMATS = {"csv": "text/csv; charset=utf-8", "json": "application/json",
           "xlsx": "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"}


@dataclass
class Settings:
    """What a server was started with."""

    workspace: Path
    scan_options: dict = field(default_factory=dict)  # passed to pipeline.scan (references, model, thresholds…)
    top: int = 5
    token: str | None = None


# ------------------------------------------------------------------ catalogue


@dataclass
class TermEntry:
    class_name: str
    term: str
    term_start: str
    run: RunInfo | None = None
    folder: store.TermFolder | None = None

    @property
    def url(self) -> str:
        return f"/c/{store.key(self.class_name)}/t/{store.key(self.term)}"


@dataclass
class ClassEntry:
    name: str
    terms: list[TermEntry] = field(default_factory=list)
    linked: list[str] = field(default_factory=list)

    @property
    def url(self) -> str:
        return f"/c/{store.key(self.name)}"

    @property
    def scanned(self) -> bool:
        return any(t.run for t in self.terms)


def catalogue(workspace: Path) -> list[ClassEntry]:
    """Every class with its terms in term order: those scanned and those created on the page."""
    with Workspace(workspace) as ws:
        runs = ws.runs()
        names = {r.class_name for r in runs}
        links = {n: sorted(ws.class_group(n) - {n}) for n in names}
    classes: dict[str, ClassEntry] = {}
    entries: dict[tuple[str, str], TermEntry] = {}
    for r in runs:
        entries[(r.class_name, r.term)] = TermEntry(r.class_name, r.term, r.term_start, run=r)
    for f in store.terms(workspace):
        e = entries.setdefault((f.class_name, f.term), TermEntry(f.class_name, f.term, f.term_start))
        e.folder = f
        if e.run is None:
            e.term_start = f.term_start
    for (c, _), e in entries.items():
        classes.setdefault(c, ClassEntry(c, linked=links.get(c, []))).terms.append(e)
    for c in classes.values():
        c.terms.sort(key=lambda t: (t.term_start, t.term))
    return sorted(classes.values(), key=lambda c: (c.name.casefold(), c.name))


def _find(request: Request) -> tuple[ClassEntry, TermEntry | None]:
    cat = catalogue(request.app.state.hw.workspace)
    ck, tk = request.path_params.get("ck"), request.path_params.get("tk")
    entry = next((c for c in cat if store.key(c.name) == ck), None)
    if entry is None:
        raise HTTPException(404, "There is no such class in this workspace (it may have been erased).")
    if tk is None:
        return entry, None
    term = next((t for t in entry.terms if store.key(t.term) == tk), None)
    if term is None:
        raise HTTPException(404, "There is no such term in this workspace (it may have been erased).")
    return entry, term


# ------------------------------------------------------------------ helpers


def _flash(request: Request, kind: str, text: str) -> None:
    request.session.setdefault("flash", []).append([kind, text])
    request.session["flash"] = request.session["flash"][-6:]


def _error(request: Request, exc: HingewordError) -> None:
    _flash(request, "error", f"Error: {exc}")


def _page(request: Request, template: str, status: int = 200, **context) -> HTMLResponse:
    hw = request.app.state.hw
    running = request.app.state.scanner.running()
    ctx = {"csrf": csrf_token(request), "csrf_field": CSRF_FIELD, "flash": request.session.pop("flash", []),
           "version": __version__, "workspace": str(hw.workspace), "running": running, "crumbs": [],
           **context}
    return HTMLResponse(render(template, ctx, env=request.app.state.env), status_code=status)


def _back(url: str, anchor: str = "") -> RedirectResponse:
    return RedirectResponse(url + (f"#{anchor}" if anchor else ""), status_code=303)


def _uploads(form, name: str) -> list[store.Upload]:
    return [store.Upload(f.filename or "", f.file) for f in form.getlist(name)
            if isinstance(f, UploadFile) and f.filename]


def _refresh_reports(hw: Settings, class_name: str) -> None:
    """Write the report files of every scanned term of a class again (after a decision)."""
    from ..report import make_reports, make_trends

    out = store.reports_dir(hw.workspace)
    with Workspace(hw.workspace, create=False) as ws:
        runs = ws.runs_in_order(class_name)
    for r in runs:
        make_reports(hw.workspace, r.class_name, r.term, out, top=hw.top)
    if runs:
        make_trends(hw.workspace, class_name, out_dir=out)


# ------------------------------------------------------------------ pages


async def home(request: Request) -> Response:
    cat = await run_in_threadpool(catalogue, request.app.state.hw.workspace)
    return _page(request, "web/home.html", title="Your classes", classes=cat)


async def create_term(request: Request) -> Response:
    form = await checked_form(request)
    hw = request.app.state.hw
    try:
        folder = await run_in_threadpool(store.save_term, hw.workspace, str(form.get("class_name", "")),
                                         str(form.get("term", "")), str(form.get("term_start", "")))
    except HingewordError as exc:
        _error(request, exc)
        return _back("/", "new")
    _flash(request, "ok", f"{folder.class_name} / {folder.term} is ready (term starts {folder.term_start}). "
                          "Upload the essays below.")
    return _back(TermEntry(folder.class_name, folder.term, folder.term_start).url, "essays")


async def class_page(request: Request) -> Response:
    entry, _ = _find(request)
    cat = await run_in_threadpool(catalogue, request.app.state.hw.workspace)
    others = [c.name for c in cat if c.name != entry.name]
    return _page(request, "web/class.html", title=entry.name, entry=entry, others=others,
                 crumbs=[(entry.name, None)])


async def link_classes(request: Request) -> Response:
    from ..review import link_classes as do_link

    form = await checked_form(request)
    hw = request.app.state.hw
    old, new = str(form.get("old", "")), str(form.get("new", ""))
    back = str(form.get("back", "/"))
    back = back if back.startswith("/c/") or back == "/" else "/"
    known = {c.name for c in await run_in_threadpool(catalogue, hw.workspace)}
    try:
        for name in (old, new):
            if name not in known:
                raise HingewordError(f"no class named '{name}' in this workspace")
        await run_in_threadpool(do_link, hw.workspace, old, new)
    except HingewordError as exc:
        _error(request, exc)
        return _back(back, "link")
    _flash(request, "ok", f"Linked {old} → {new}: trends and decisions now cover both classes.")
    return _back(back, "link")


def _preview(folder: store.TermFolder | None) -> dict:
    """What a scan would read from the uploaded essays (the scan's own reader, no parsing)."""
    from ..ingest import read_essays

    empty = {"essays": 0, "writers": 0, "words": 0, "skipped": [], "error": None, "duplicates": [], "near": []}
    if folder is None or not folder.files():
        return empty
    try:
        res = read_essays(folder.essays, manifest=folder.manifest)
    except HingewordError as exc:
        return {**empty, "error": f"Error: {exc}"}
    return {"essays": len(res.essays), "writers": len({e.writer for e in res.essays}), "words": res.word_count,
            "skipped": res.skipped, "error": None,
            "duplicates": [", ".join(g) for g in res.duplicates],
            "near": [f"{n.first} and {n.second} ({n.similarity:.0f}% similar)" for n in res.near_duplicates]}


def _review(hw: Settings, class_name: str, term: str) -> dict | None:
    from ..view import load_run_view

    with Workspace(hw.workspace, create=False) as ws:
        if ws.find_run(class_name, term) is None:
            return None
        view = load_run_view(ws, class_name, term, progress=False)
        scopes = ws.decision_scopes(class_name)
    flagged = [{"label": r.label, "governor": r.governor, "preposition": r.preposition, "count": r.learner_count,
                "writers": r.learner_writers,
                "suggestion": (r.advice.suggestion if r.advice else "") or ""} for r in view.teachable]
    dismissed = [{"label": r.label, "governor": r.governor, "preposition": r.preposition,
                  "reason": r.decision.reason, "on": r.decision.decided_on,
                  "scope": "all" if scopes.get((r.governor, r.preposition)) == "*" else "class"}
                 for r in view.records if r.decision is not None]
    return {"flagged": flagged, "dismissed": dismissed, "patterns": len(view.records),
            "writers": len({e.writer for e in view.essays})}


async def term_page(request: Request) -> Response:
    entry, term = _find(request)
    hw = request.app.state.hw
    preview = await run_in_threadpool(_preview, term.folder)
    review = await run_in_threadpool(_review, hw, entry.name, term.term) if term.run else None
    job = request.app.state.scanner.job(entry.name, term.term)
    return _page(request, "web/term.html", title=f"{entry.name} / {term.term}", entry=entry, term=term,
                 preview=preview, review=review, job=job.as_dict() if job else None, pages=PAGES,
                 crumbs=[(entry.name, entry.url), (term.term, None)],
                 files=term.folder.files() if term.folder else [],
                 manifest=term.folder.manifest is not None if term.folder else False,
                 last_upload=term.folder.last_upload() if term.folder else [])


async def upload(request: Request) -> Response:
    entry, term = _find(request)
    hw = request.app.state.hw
    form = await checked_form(request, max_files=MAX_FILES)
    try:
        folder = term.folder or await run_in_threadpool(store.save_term, hw.workspace, entry.name, term.term,
                                                        term.term_start)
        manifest = _uploads(form, "manifest")
        report = await run_in_threadpool(store.save_uploads, folder, _uploads(form, "essays"),
                                         folder_files=_uploads(form, "folder"),
                                         manifest=manifest[0] if manifest else None)
    except HingewordError as exc:
        _error(request, exc)
        return _back(term.url, "essays")
    finally:
        await form.close()
    if not report.stored and not report.manifest and not report.skipped:
        _flash(request, "error", "Error: no file was chosen; pick essay files, a folder or a zip first")
        return _back(term.url, "essays")
    parts = [f"Stored {len(report.stored)} file{'s' if len(report.stored) != 1 else ''}"]
    if report.manifest:
        parts.append(f"the manifest ({report.manifest})")
    text = " and ".join(parts) + "."
    if report.skipped:
        text += f" {len(report.skipped)} left out: see “Left out of the last upload” below."
    _flash(request, "error" if report.skipped and not report.stored else "ok", text)
    return _back(term.url, "essays")


async def clear_uploads(request: Request) -> Response:
    entry, term = _find(request)
    await checked_form(request)
    if term.folder is None:
        return _back(term.url, "essays")
    n = await run_in_threadpool(store.clear_files, term.folder)
    _flash(request, "ok", f"Removed {n} uploaded file{'s' if n != 1 else ''} of {entry.name} / {term.term}. "
                          "Stored scan results are kept until you erase them.")
    return _back(term.url, "essays")


async def start_scan(request: Request) -> Response:
    entry, term = _find(request)
    await checked_form(request)
    if term.folder is None or not term.folder.files():
        _flash(request, "error", f"Error: no essays are uploaded for {entry.name} / {term.term} yet; upload them first")
        return _back(term.url, "essays")
    try:
        request.app.state.scanner.start(entry.name, term.term)
    except HingewordError as exc:
        _error(request, exc)
    return _back(term.url, "scan")


async def progress(request: Request) -> Response:
    entry, term = _find(request)
    job = request.app.state.scanner.job(entry.name, term.term)
    return JSONResponse(job.as_dict() if job else {"state": "idle"})


async def view_page(request: Request) -> Response:
    from ..view import load_run_view

    entry, term = _find(request)
    hw = request.app.state.hw
    page = request.path_params["page"]
    if page not in PAGES or term.run is None:
        raise HTTPException(404, "That page does not exist for this term (scan the essays first).")
    names = "real" if request.query_params.get("names") == "real" else "pseudonyms"

    def build() -> str:
        with Workspace(hw.workspace, create=False) as ws:
            data = load_run_view(ws, entry.name, term.term)
        template, context = report_pages(data, top=hw.top, names=names)[PAGES[page][0]]
        nav = {"back": term.url, "back_label": f"{entry.name} / {term.term}", "pages": PAGES, "current": page,
               "base": term.url + "/view/", "names": names, "names_switch": page in ("overview", "students"),
               "trends": entry.url + "/trends", "review": term.url + "#review"}
        return render("web/report_page.html", {**context, "page_template": template, "web": nav},
                      env=request.app.state.env)

    return HTMLResponse(await run_in_threadpool(build))


async def trends_page(request: Request) -> Response:
    entry, _ = _find(request)
    hw = request.app.state.hw
    if not entry.scanned:
        raise HTTPException(404, "No term of this class has been scanned yet, so there are no trends.")

    def build() -> str:
        with Workspace(hw.workspace, create=False) as ws:
            context = trends_page_context(ws, entry.name)
        nav = {"back": entry.url, "back_label": entry.name, "pages": {}, "current": "trends", "base": "",
               "names": "pseudonyms", "names_switch": False, "trends": None, "review": None}
        return render("web/report_page.html", {**context, "page_template": "trends.html", "web": nav},
                      env=request.app.state.env)

    return HTMLResponse(await run_in_threadpool(build))


async def download(request: Request) -> Response:
    from ..export import export_run

    entry, term = _find(request)
    hw = request.app.state.hw
    what = request.query_params.get("what", "patterns")
    fmt = request.query_params.get("format", "csv")
    names = "real" if request.query_params.get("names") == "real" else "pseudonyms"
    if what == "run":  # the run record and column meanings that lie beside a CSV export
        fmt = "json"
    if what not in ("patterns", "concordance", "run") or fmt not in FORMATS or term.run is None:
        raise HTTPException(404, "There is no such download for this term.")

    def build() -> bytes:
        from ..export import side_file

        with tempfile.TemporaryDirectory(prefix="hingeword-export-") as tmp:
            patterns = Path(tmp) / f"patterns.{'csv' if what == 'run' else fmt}"
            conc = Path(tmp) / f"concordance.{fmt}" if what == "concordance" else None
            export_run(hw.workspace, entry.name, term.term, patterns, concordance=conc, names=names)
            return side_file(patterns).read_bytes() if what == "run" else (conc or patterns).read_bytes()

    data = await run_in_threadpool(build)
    filename = f"{slugify(entry.name)}-{slugify(term.term)}-{what}.{fmt}"
    return Response(data, media_type=FORMATS[fmt], headers={"content-disposition": f'attachment; filename="{filename}"'})


async def dismiss(request: Request) -> Response:
    return await _decide(request, "dismiss")


async def restore(request: Request) -> Response:
    return await _decide(request, "restore")


async def _decide(request: Request, action: str) -> Response:
    from ..record import parse_slot
    from ..review import dismiss, restore

    entry, term = _find(request)
    hw = request.app.state.hw
    form = await checked_form(request)
    governor = str(form.get("governor", "")).strip().lower()
    slot = parse_slot(str(form.get("preposition", "")).strip())
    scope = None if form.get("scope") == "all" else entry.name
    label = key_label(governor, slot)
    try:
        if action == "dismiss":
            res = await run_in_threadpool(lambda: dismiss(hw.workspace, governor, slot, class_name=scope,
                                                          reason=str(form.get("reason", "")).strip()))
            text = f"Dismissed “{label}” for {res.scope}. It has left the handouts and stays listed in the overview."
        else:
            res = await run_in_threadpool(lambda: restore(hw.workspace, governor, slot, class_name=scope))
            text = f"Restored “{label}” for {res.scope}: it is back on the handouts where it is flagged."
        await run_in_threadpool(_refresh_reports, hw, entry.name)
    except HingewordError as exc:
        _error(request, exc)
        return _back(term.url, "review")
    _flash(request, "ok", text)
    return _back(term.url, "review")


async def erase(request: Request) -> Response:
    from ..forget import forget

    entry, term = _find(request)
    hw = request.app.state.hw
    form = await checked_form(request)
    here = term.url if term else entry.url
    running = request.app.state.scanner.running()
    if running is not None and running.class_name == entry.name and (term is None or running.term == term.term):
        _flash(request, "error", "Error: a scan of this class is running; erase it when the scan has finished")
        return _back(here, "erase")
    if form.get("confirm") != "yes":
        _flash(request, "error", "Error: tick the box to confirm that you want to erase these essays and results")
        return _back(here, "erase")
    try:
        res = await run_in_threadpool(forget, hw.workspace, entry.name, term.term if term else None)
    except HingewordError as exc:
        _error(request, exc)
        return _back(here, "erase")
    request.app.state.scanner.forget(entry.name, term.term if term else None)
    for line in res.lines():
        _flash(request, "ok", line)
    cat = await run_in_threadpool(catalogue, hw.workspace)
    if term is not None and any(c.name == entry.name for c in cat):
        return _back(entry.url)
    return _back("/")


# ------------------------------------------------------------------ errors


async def _http_error(request: Request, exc: HTTPException) -> Response:
    message = exc.detail if exc.status_code in (400, 404, 413) else "That did not work."
    if exc.status_code == 400 and "Too many files" in str(exc.detail):
        message = f"That upload has more than {MAX_FILES:,} files. Upload the essays in smaller parts, or as a zip."
    return _page(request, "web/message.html", status=exc.status_code, title="hingeword", message=message)


async def _refused(request: Request, exc: Refused) -> Response:
    return _page(request, "web/message.html", status=exc.status, title="Refused", message=exc.message)


async def _hingeword_error(request: Request, exc: HingewordError) -> Response:
    return _page(request, "web/message.html", status=400, title="hingeword", message=f"Error: {exc}")


def create_app(settings: Settings, *, loopback_only: bool = True) -> Starlette:
    """The application for one workspace. ``loopback_only``: refuse requests whose Host is not
    loopback; ``settings.token``: require the access token (for a server bound elsewhere)."""
    settings.workspace = Path(settings.workspace).resolve()
    Workspace(settings.workspace).close()  # create or migrate it now, not in the middle of a request
    t = r"/c/{ck}/t/{tk}"
    routes = [
        Route("/", home),
        Route("/terms", create_term, methods=["POST"]),
        Route("/link", link_classes, methods=["POST"]),
        Route("/c/{ck}", class_page),
        Route("/c/{ck}/trends", trends_page),
        Route("/c/{ck}/erase", erase, methods=["POST"]),
        Route(t, term_page),
        Route(t + "/upload", upload, methods=["POST"]),
        Route(t + "/clear", clear_uploads, methods=["POST"]),
        Route(t + "/scan", start_scan, methods=["POST"]),
        Route(t + "/progress", progress),
        Route(t + "/view/{page}", view_page),
        Route(t + "/download", download),
        Route(t + "/dismiss", dismiss, methods=["POST"]),
        Route(t + "/restore", restore, methods=["POST"]),
        Route(t + "/erase", erase, methods=["POST"]),
        Mount("/static", app=StaticFiles(directory=HERE / "static"), name="static"),
    ]
    app = Starlette(
        routes=routes,
        middleware=[
            Middleware(Guard, token=settings.token, loopback_only=loopback_only and settings.token is None,
                       max_body=MAX_BODY),
            Middleware(SessionMiddleware, secret_key=secrets.token_hex(32), session_cookie="hingeword_session",
                       same_site="strict", https_only=False, max_age=None),
        ],
        exception_handlers={HTTPException: _http_error, Refused: _refused, HingewordError: _hingeword_error},
    )
    app.state.hw = settings
    app.state.env = environment(HERE / "templates")
    app.state.env.filters["key"] = store.key
    app.state.scanner = Scanner(scan_work(settings.workspace, scan_options=settings.scan_options,
                                          folder_of=lambda c, t: store.find_term(settings.workspace, c, t),
                                          top=settings.top))
    return app

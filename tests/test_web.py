"""The web page (``hingeword serve``) through Starlette's test client.

Classes, terms, uploads, a scan on the invented essays of ``conftest.py`` against the tiny
reference, review, downloads, erasing, and the guards: CSRF, same origin, loopback host,
access token, body limit. The end-to-end run in a real browser is ``test_web_browser.py``.
"""

from __future__ import annotations

import csv
import html
import importlib.util
import io
import re
import socket
import threading
import zipfile
from pathlib import Path

import pytest
from starlette.testclient import TestClient
from typer.testing import CliRunner

import conftest
from conftest import ESSAYS, db_counts, store_hand_run
from hingeword.cli import app as cli_app
from hingeword.errors import HingewordError
from hingeword.history import Workspace
from hingeword.web import _bind, check_dependencies, create_app, store
from hingeword.web.jobs import Scanner, ScanBusy

BASE = "http://127.0.0.1:8765"


def client_for(workspace: Path, **kw) -> TestClient:
    return TestClient(create_app(workspace, **kw), base_url=BASE, follow_redirects=False)


@pytest.fixture
def client(tmp_path):
    with client_for(tmp_path / "ws") as c:
        yield c


def token(c: TestClient, url: str = "/") -> str:
    r = c.get(url)
    assert r.status_code == 200, r.text
    return re.search(r'name="csrf_token" value="([^"]+)"', r.text).group(1)


def flashes(page: str) -> list[str]:
    """The messages at the top of a page (after a form was sent)."""
    box = re.search(r'<div class="flashes">(.*?)</div>', page, re.S)
    page = box.group(1) if box else ""
    return [html.unescape(re.sub(r"\s+", " ", re.sub("<[^>]+>", "", m)).strip())
            for m in re.findall(r'<p class="flash[^"]*"[^>]*>(.*?)</p>', page, re.S)]


def new_term(c: TestClient, class_name: str = "evening-b1", term: str = "2026-spring",
             start: str = "2026-01-10") -> str:
    r = c.post("/terms", data={"csrf_token": token(c), "class_name": class_name, "term": term, "term_start": start})
    assert r.status_code == 303
    return r.headers["location"].split("#")[0]


def upload(c: TestClient, url: str, files: list[tuple[str, tuple]], **data) -> str:
    r = c.post(url + "/upload", data={"csrf_token": token(c, url), **data}, files=files)
    assert r.status_code == 303
    return c.get(url).text


def text_of(page: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub("<[^>]+>", " ", page)))


# ------------------------------------------------------------------ classes and uploads


def test_web_create_class_and_term_then_pick_it(client):
    assert "No class yet" in client.get("/").text
    url = new_term(client, "evening <b>1</b>", "2026-spring", "2026-01-10")
    page = client.get(url).text
    assert "evening &lt;b&gt;1&lt;/b&gt; / 2026-spring is ready (term starts 2026-01-10)" in page
    assert "<b>1</b>" not in page
    home = client.get("/").text
    assert f'href="{url}"' in home and "no essays yet" in home
    # a second term of the same class, from the class page
    cls = url.split("/t/")[0]
    r = client.post("/terms", data={"csrf_token": token(client, cls), "class_name": "evening <b>1</b>",
                                    "term": "2026-summer", "term_start": "2026-04-20"})
    assert r.status_code == 303
    terms = re.findall(r"<li><a href=\"[^\"]+\">(2026-\w+)</a>", client.get(cls).text)
    assert terms == ["2026-spring", "2026-summer"]


def test_web_create_term_bad_input_gives_the_message(client):
    r = client.post("/terms", data={"csrf_token": token(client), "class_name": "c", "term": "t",
                                    "term_start": "12/01/2026"})
    assert r.status_code == 303 and r.headers["location"] == "/#new"
    assert flashes(client.get("/").text) == ["Error: the term start must be a date like 2026-09-07, not '12/01/2026'"]


def test_web_upload_files_and_zip_with_a_bad_member_shows_what_was_skipped(client, tmp_path):
    url = new_term(client)
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        zf.writestr("class/carla.txt", ESSAYS["carla.txt"])
        zf.writestr("class/../../../outside.txt", "not an essay")
        zf.writestr("class/notes.pdf", "%PDF-1.4")
    page = upload(client, url, [("essays", ("anna.txt", ESSAYS["anna.txt"].encode(), "text/plain")),
                                ("essays", ("ben.txt", ESSAYS["ben.txt"].encode(), "text/plain")),
                                ("essays", ("empty.txt", b"", "text/plain")),
                                ("essays", ("class.zip", buf.getvalue(), "application/zip"))])
    text = text_of(page)
    assert flashes(page)[0] == "Stored 5 files. 1 left out: see “Left out of the last upload” below."
    assert "A scan will read 3 essays by 3 writers" in text
    assert "empty.txt : empty file" in text  # the scan's own reasons, before scanning
    assert "notes.pdf : unsupported file type '.pdf' (use .txt, .docx, .odt or .csv)" in text
    assert "class.zip: class/../../../outside.txt : path leads out of its folder" in text
    assert not list(tmp_path.rglob("outside.txt"))
    stored = sorted(p.name for p in (tmp_path / "ws" / "uploads").rglob("*") if p.parent.name == "essays")
    assert stored == ["anna.txt", "ben.txt", "carla.txt", "empty.txt", "notes.pdf"]


def test_web_upload_folder_with_manifest(client):
    url = new_term(client)
    files = [("folder", ("spring/manifest.csv", b"file,writer,l1\nanna.txt,Anna Nowak,pl\n", "text/csv")),
             ("folder", ("spring/anna.txt", ESSAYS["anna.txt"].encode(), "text/plain")),
             ("folder", ("spring/ben/essay.txt", ESSAYS["ben.txt"].encode(), "text/plain"))]
    page = upload(client, url, files)
    assert flashes(page)[0] == "Stored 2 files and the manifest (spring/manifest.csv)."
    assert "2 files uploaded, with a manifest" in text_of(page)
    assert "ben/essay.txt" in page


def test_web_upload_bad_manifest_shows_the_scan_error(client):
    url = new_term(client)
    page = upload(client, url, [("essays", ("anna.txt", b"We discussed about it.", "text/plain")),
                                ("manifest", ("m.csv", b"name,who\nx,y\n", "text/csv"))])
    assert "lacks the column(s) file, writer" in text_of(page)


def test_web_upload_nothing_chosen(client):
    url = new_term(client)
    r = client.post(url + "/upload", data={"csrf_token": token(client, url)},
                    files=[("essays", ("", b"", "application/octet-stream"))])
    assert r.status_code == 303
    assert flashes(client.get(url).text) == ["Error: no file was chosen; pick essay files, a folder or a zip first"]


def test_web_clear_uploaded_files(client, tmp_path):
    url = new_term(client)
    upload(client, url, [("essays", ("anna.txt", b"We discussed about it.", "text/plain"))])
    client.post(url + "/clear", data={"csrf_token": token(client, url)})
    page = client.get(url).text
    assert "Removed 1 uploaded file of evening-b1 / 2026-spring." in flashes(page)[0]
    assert "No essays uploaded yet." in page
    assert not [p for p in (tmp_path / "ws" / "uploads").rglob("*.txt")]


def test_web_scan_without_essays_is_refused(client):
    url = new_term(client)
    client.post(url + "/scan", data={"csrf_token": token(client, url)})
    assert flashes(client.get(url).text) == ["Error: no essays are uploaded for evening-b1 / 2026-spring yet; "
                                             "upload them first"]


# ------------------------------------------------------------------ guards


def test_web_csrf_token_required(client, tmp_path):
    token(client)  # a session exists
    r = client.post("/terms", data={"class_name": "c", "term": "t", "term_start": "2026-01-10"})
    assert r.status_code == 403 and "This form has expired" in r.text
    r = client.post("/terms", data={"csrf_token": "forged", "class_name": "c", "term": "t", "term_start": "2026-01-10"})
    assert r.status_code == 403
    assert store.terms(tmp_path / "ws") == []
    fresh = client_for(tmp_path / "ws")  # no session at all: no token to match
    r = fresh.post("/terms", data={"csrf_token": "", "class_name": "c", "term": "t", "term_start": "2026-01-10"})
    assert r.status_code == 403


def test_web_cross_origin_post_refused_even_with_a_token(client, tmp_path):
    tok = token(client)
    data = {"csrf_token": tok, "class_name": "c", "term": "t", "term_start": "2026-01-10"}
    for headers in ({"origin": "http://evil.example"}, {"sec-fetch-site": "cross-site"},
                    {"referer": "http://evil.example/page"}, {"origin": "null"}):
        r = client.post("/terms", data=data, headers=headers)
        assert r.status_code == 403 and "sent from another site" in r.text, headers
    assert store.terms(tmp_path / "ws") == []
    r = client.post("/terms", data=data, headers={"origin": BASE, "sec-fetch-site": "same-origin"})
    assert r.status_code == 303


def test_web_loopback_server_refuses_other_host_names(client):
    assert client.get("/", headers={"host": "attacker.example:8765"}).status_code == 403
    assert client.get("/", headers={"host": "localhost:8765"}).status_code == 200
    assert client.get("/", headers={"host": "[::1]:8765"}).status_code == 200


def test_web_token_required_when_not_loopback(tmp_path):
    secret = "s3cret-token-value"
    with client_for(tmp_path / "ws", token=secret, loopback_only=False) as c:
        r = c.get("/", headers={"host": "192.0.2.10:8765"})
        assert r.status_code == 403 and "needs its access link" in r.text
        assert c.get("/?token=wrong").status_code == 403
        assert c.get("/static/web.css").status_code == 403
        r = c.get("/c/x?token=" + secret + "&a=1")
        assert r.status_code == 303 and r.headers["location"] == "/c/x?a=1"  # the token leaves the address bar
        assert "httponly" in r.headers["set-cookie"].lower() and "samesite=strict" in r.headers["set-cookie"].lower()
        assert c.get("/").status_code == 200  # the cookie carries it from now on
        r = c.get("/%2Fevil.example/x?token=" + secret)  # the path is "//evil.example/x"
        assert r.headers["location"] == "/evil.example/x"  # a path on this server, not another site
    with client_for(tmp_path / "ws", token=secret, loopback_only=False) as other:
        other.cookies.set("hingeword_access", "guess")
        assert other.get("/").status_code == 403


def test_web_security_headers(client):
    r = client.get("/")
    assert "default-src 'none'" in r.headers["content-security-policy"]
    assert "frame-ancestors 'none'" in r.headers["content-security-policy"]
    assert r.headers["x-frame-options"] == "DENY" and r.headers["cache-control"] == "no-store"
    assert "http://" not in r.text.replace(BASE, "") and "https://" not in r.text  # nothing from the network


def test_web_upload_too_large_refused(tmp_path, monkeypatch):
    from hingeword.web import app as web_app

    monkeypatch.setattr(web_app, "MAX_BODY", 5_000)
    with client_for(tmp_path / "ws") as c:
        url = new_term(c)
        r = c.post(url + "/upload", data={"csrf_token": token(c, url)},
                   files=[("essays", ("big.txt", b"word " * 2_000, "text/plain"))])
        assert r.status_code == 413 and "larger than" in r.text
    assert not list((tmp_path / "ws" / "uploads").rglob("big.txt"))


def test_web_unknown_class_is_404(client):
    r = client.get("/c/nope-0000000000/t/x-0000000000")
    assert r.status_code == 404 and "no such class" in r.text


def test_web_missing_dependencies_message(monkeypatch, tmp_path):
    monkeypatch.chdir(tmp_path)
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == "uvicorn" else real(name, *a))
    message = "the web page needs the 'web' extra (missing: uvicorn); install it with pip install \"hingeword[web]\""
    with pytest.raises(HingewordError) as exc:
        check_dependencies()
    assert str(exc.value) == message
    result = CliRunner().invoke(cli_app, ["serve", "-w", "ws"])
    assert result.exit_code == 1 and result.stderr == f"Error: {message}\n"


def test_web_serve_port_in_use():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        s.listen(1)
        port = s.getsockname()[1]
        with pytest.raises(HingewordError, match=f"port {port} is already in use; choose another with --port"):
            _bind("127.0.0.1", port)


# ------------------------------------------------------------------ scans


def test_web_scanner_refuses_a_second_scan_while_one_runs():
    release, started = threading.Event(), threading.Event()

    def work(class_name, term, update):
        update(stage="parse", done=1, total=4)
        started.set()
        release.wait(10)
        return ["done"]

    scanner = Scanner(work)
    scanner.start("evening-b1", "2026-spring")
    assert started.wait(10)
    with pytest.raises(ScanBusy, match=r"^a scan of evening-b1 / 2026-spring is running \(parsing the essays"):
        scanner.start("other", "t")
    job = scanner.job("evening-b1", "2026-spring").as_dict()
    assert (job["state"], job["stage"], job["done"], job["total"]) == ("running", "parse", 1, 4)
    release.set()
    assert scanner.wait(10)
    assert scanner.job("evening-b1", "2026-spring").state == "done"
    scanner.start("other", "t")  # free again
    assert scanner.wait(10)


def test_web_scan_failure_is_reported(client):
    url = new_term(client)
    upload(client, url, [("essays", ("notes.pdf", b"%PDF", "application/pdf"))])
    client.post(url + "/scan", data={"csrf_token": token(client, url)})
    assert client.app.state.scanner.wait(60)
    job = client.get(url + "/progress").json()
    assert job["state"] == "failed" and job["message"].startswith("no essay could be read from")
    assert "The scan stopped. Error: no essay could be read" in text_of(client.get(url).text)


def test_web_second_scan_through_the_page_is_refused(client):
    release = threading.Event()
    client.app.state.scanner._work = lambda c, t, update: (release.wait(10), [])[1]
    url = new_term(client)
    upload(client, url, [("essays", ("anna.txt", b"We discussed about it.", "text/plain"))])
    client.post(url + "/scan", data={"csrf_token": token(client, url)})
    page = client.get(url).text
    assert 'id="progress"' in page and "is running" in page
    client.post(url + "/scan", data={"csrf_token": token(client, url)})
    assert flashes(client.get(url).text) == ["Error: a scan of evening-b1 / 2026-spring is running (starting); "
                                             "start this one when it has finished"]
    release.set()
    assert client.app.state.scanner.wait(10)


@pytest.mark.slow
def test_pipeline_scan_reports_each_stage(tiny_essays, tiny_ref_path, tmp_path):
    from hingeword.pipeline import scan

    seen = []
    scan(tiny_essays(), class_name="c", term="t", workspace=tmp_path / "ws", references=[str(tiny_ref_path)],
         thresholds=conftest.tiny_thresholds(), processes=1, stage=seen.append)
    assert seen == ["read", "parse", "score", "store"]


@pytest.mark.slow
def test_web_scan_review_and_download(tmp_path, tiny_ref_path):
    """Upload the invented essays, scan, read the handout, dismiss, restore, download."""
    options = {"references": [str(tiny_ref_path)], "thresholds": conftest.tiny_thresholds()}
    with client_for(tmp_path / "ws", scan_options=options) as c:
        url = new_term(c)
        upload(c, url, [("essays", (name, (text + "\n").encode(), "text/plain")) for name, text in ESSAYS.items()])
        r = c.post(url + "/scan", data={"csrf_token": token(c, url)})
        assert r.headers["location"].endswith("#scan")
        assert c.app.state.scanner.wait(120)
        job = c.get(url + "/progress").json()
        assert job["state"] == "done", job
        assert "evening-b1 / 2026-spring: 4 essays read, 0 skipped" in job["lines"][1]
        page = text_of(c.get(url).text)
        assert re.search(r"The scan started at [\d:]+ has finished", page) and "4 essays" in page

        handout = c.get(url + "/view/handout").text
        assert "discuss about something" in handout and "Print this page" in handout
        assert "Answer:" not in handout and "Answer:" in c.get(url + "/view/teacher").text
        assert "anna" not in c.get(url + "/view/students").text
        assert "anna" in c.get(url + "/view/students?names=real").text
        assert c.get(url.split("/t/")[0] + "/trends").status_code == 200
        assert (tmp_path / "ws" / "reports" / "evening-b1" / "2026-spring" / "handout.html").is_file()

        r = c.post(url + "/dismiss", data={"csrf_token": token(c, url), "governor": "discuss", "preposition": "about",
                                           "reason": "", "scope": "class"})
        assert flashes(c.get(url).text) == ["Error: give a reason for dismissing (it is shown in the teacher overview)"]
        c.post(url + "/dismiss", data={"csrf_token": token(c, url), "governor": "discuss", "preposition": "about",
                                       "reason": "taught as correct in <unit 4>", "scope": "class"})
        page = c.get(url).text
        assert flashes(page)[0].startswith("Dismissed “discuss about” for evening-b1.")
        assert "taught as correct in &lt;unit 4&gt;" in page
        assert "discuss about" not in c.get(url + "/view/handout").text
        assert "discuss about" not in (tmp_path / "ws" / "reports" / "evening-b1" / "2026-spring"
                                       / "handout.html").read_text()
        overview = c.get(url + "/view/overview").text
        assert "taught as correct in &lt;unit 4&gt;" in overview
        assert f'<a href="{url}#review">Review the flags</a>' in overview and "hingeword dismiss" not in overview
        c.post(url + "/restore", data={"csrf_token": token(c, url), "governor": "discuss", "preposition": "about",
                                       "scope": "class"})
        assert "discuss about something" in c.get(url + "/view/handout").text

        r = c.get(url + "/download?what=patterns&format=csv")
        assert r.headers["content-disposition"] == 'attachment; filename="evening-b1-2026-spring-patterns.csv"'
        rows = list(csv.DictReader(io.StringIO(r.text)))
        assert any(row["governor"] == "discuss" and row["preposition"] == "about" and row["flagged"] == "true"
                   for row in rows)
        assert r.content[:2] != b"PK" and c.get(url + "/download?what=patterns&format=xlsx").content[:2] == b"PK"
        doc = c.get(url + "/download?what=patterns&format=json").json()  # the run record, the column meanings, the rows
        assert list(doc) == ["run", "columns", "rows"] and doc["run"]["class"] == "evening-b1" and doc["rows"]
        side = c.get(url + "/download?what=run").json()
        assert side["run"]["term"] == "2026-spring" and "governor" in side["columns"]
        kwic = list(csv.DictReader(io.StringIO(c.get(url + "/download?what=concordance&format=csv").text)))
        assert kwic and {row["writer"] for row in kwic} <= {"S01", "S02", "S03", "S04"}
        real = c.get(url + "/download?what=concordance&format=csv&names=real").text
        assert "anna" in real
        assert c.get(url + "/download?what=secrets&format=csv").status_code == 404


# ------------------------------------------------------------------ reading and erasing a stored run


@pytest.fixture
def hand_client(hand_run):
    with client_for(hand_run) as c:
        yield c


def test_web_report_pages_escape_essay_text(tmp_path, monkeypatch):
    monkeypatch.setattr(conftest, "HAND_TEXTS", {
        "zofia.txt": ("zofia", "We discussed about <script>alert(1)</script> the trip."),
        "marek.txt": ("<img src=x onerror=alert(2)>", "They discussed about money."),
        "lena.txt": ("lena", "I discussed about the rules with Tom."),
    })
    store_hand_run(tmp_path / "ws")
    with client_for(tmp_path / "ws") as c:
        url = "/c/" + store.key("morning-a2") + "/t/" + store.key("t1")
        for page in ("handout", "teacher", "overview?names=real", "students?names=real"):
            html = c.get(f"{url}/view/{page}").text
            assert "<script>alert" not in html and "<img src=x" not in html, page
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in c.get(url + "/view/handout").text
        assert "&lt;img src=x onerror=alert(2)&gt;" in c.get(url + "/view/students?names=real").text


def test_web_lists_runs_scanned_on_the_command_line(hand_client):
    home = hand_client.get("/").text
    assert "morning-a2" in home and "scanned: 3 essays" in home
    url = "/c/" + store.key("morning-a2") + "/t/" + store.key("t1")
    page = text_of(hand_client.get(url).text)
    assert "discuss about" in page and "No essays uploaded yet." in page


def test_web_erase_term_needs_confirmation_then_deletes(hand_client, hand_run):
    url = "/c/" + store.key("morning-a2") + "/t/" + store.key("t1")
    upload(hand_client, url, [("essays", ("zofia.txt", b"We discussed about the trip.", "text/plain"))])
    (hand_run / "reports" / "morning-a2" / "t1").mkdir(parents=True)
    (hand_run / "reports" / "morning-a2" / "t1" / "handout.html").write_text("x")
    r = hand_client.post(url + "/erase", data={"csrf_token": token(hand_client, url)})
    assert flashes(hand_client.get(r.headers["location"]).text)[0].startswith("Error: tick the box to confirm")
    assert db_counts(hand_run)["essays"] == 3
    r = hand_client.post(url + "/erase", data={"csrf_token": token(hand_client, url), "confirm": "yes"})
    assert r.headers["location"] == "/"
    msgs = flashes(hand_client.get("/").text)
    assert msgs[0] == ("Erased morning-a2 / t1: 1 stored scan with 3 essays, 0 cached parses, 1 uploaded file, "
                       "1 report file.")
    counts = db_counts(hand_run)
    assert counts["runs"] == counts["essays"] == counts["attachments"] == counts["pattern_stats"] == 0
    assert not (hand_run / "uploads").exists() or not list((hand_run / "uploads").rglob("*.txt"))
    assert not (hand_run / "reports" / "morning-a2" / "t1").exists()
    assert hand_client.get(url).status_code == 404
    assert b"We discussed about the trip" not in (hand_run / "hingeword.sqlite").read_bytes()


def test_web_erase_class(tmp_path):
    ws = tmp_path / "ws"
    store_hand_run(ws, term="t1")
    store_hand_run(ws, term="t2", term_start="2026-04-01")
    with Workspace(ws) as w:
        w.dismiss("discuss", "about", class_name="morning-a2", reason="fine")
        w.link_classes("morning-a2", "morning-b1")
    with client_for(ws) as c:
        url = "/c/" + store.key("morning-a2")
        c.post(url + "/erase", data={"csrf_token": token(c, url), "confirm": "yes"})
        assert flashes(c.get("/").text)[0].startswith("Erased class morning-a2 (every term): 2 stored scans with 6 essays")
    counts = db_counts(ws)
    assert counts["runs"] == counts["decisions"] == counts["class_links"] == counts["decision_log"] == 0


def test_web_link_classes(tmp_path):
    ws = tmp_path / "ws"
    store_hand_run(ws, class_name="morning-a2")
    store_hand_run(ws, class_name="morning-b1", term="t2", term_start="2026-04-01")
    with client_for(ws) as c:
        r = c.post("/link", data={"csrf_token": token(c), "old": "morning-a2", "new": "nope", "back": "/"})
        assert flashes(c.get(r.headers["location"]).text) == ["Error: no class named 'nope' in this workspace"]
        c.post("/link", data={"csrf_token": token(c), "old": "morning-a2", "new": "morning-b1", "back": "/"})
        assert "Linked with morning-b1" in c.get("/").text
    with Workspace(ws) as w:
        assert w.class_group("morning-a2") == {"morning-a2", "morning-b1"}


def test_web_progress_is_idle_before_any_scan(hand_client):
    url = "/c/" + store.key("morning-a2") + "/t/" + store.key("t1")
    assert hand_client.get(url + "/progress").json() == {"state": "idle"}

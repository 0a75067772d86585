"""The web page end to end in a real browser: Playwright for Python driving Debian's Chromium.

``hingeword serve --port 0`` runs in a subprocess on a free loopback port with a fresh
workspace; the browser uploads the invented demo's first term (``demo_essays/evening-b2/
2025-autumn`` as a folder, with its manifest), scans it (real spaCy parse, bundled
reference), reads the handout, dismisses "discuss about" with a reason, sees the handout
without it and downloads the CSV export. A second test uses the keyboard alone and checks
labels, focus and the layout at tablet and phone widths.

Screenshots of each page visited are saved under the test's temporary folder; on a failure
the folder's path is printed. Skipped when Chromium or Playwright is missing (``.ci/run``
installs both; no browser is downloaded: Playwright drives ``/usr/bin/chromium``).
"""

from __future__ import annotations

import contextlib
import csv
import os
import re
import shutil
import subprocess
import sys
import threading
from pathlib import Path

import pytest

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
DEMO = Path(__file__).resolve().parents[1] / "demo_essays" / "evening-b2" / "2025-autumn"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run"]

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs chromium (apt-get install chromium)"),
]
sync_api = pytest.importorskip("playwright.sync_api", reason="needs playwright (pip install playwright)")
expect = sync_api.expect


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    """``hingeword serve`` on a free loopback port; yields its address."""
    workspace = tmp_path_factory.mktemp("web") / "ws"
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    proc = subprocess.Popen([sys.executable, "-c", "from hingeword.cli import main; main()", "serve", "--port", "0",
                             "-w", str(workspace)], stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, env=env)
    lines: list[str] = []
    found = threading.Event()

    def read() -> None:
        for line in proc.stdout:
            lines.append(line.rstrip())
            if line.startswith("hingeword is running at "):
                found.set()

    threading.Thread(target=read, daemon=True).start()
    try:
        if not found.wait(60):
            pytest.fail("hingeword serve did not start:\n" + "\n".join(lines))
        url = next(line for line in lines if line.startswith("hingeword is running at ")).split(" at ", 1)[1]
        assert re.fullmatch(r"http://127\.0\.0\.1:\d+/", url), url
        yield url
    finally:
        proc.terminate()
        try:
            proc.wait(20)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(20)
        proc.stdout.close()


@pytest.fixture(scope="module")
def browser():
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            yield b
        finally:
            b.close()


class Shots:
    """Screenshots of the pages a test visits, kept in one folder."""

    def __init__(self, page, folder: Path):
        self.page, self.folder, self.n = page, folder, 0
        folder.mkdir(parents=True, exist_ok=True)

    def take(self, name: str) -> Path:
        self.n += 1
        path = self.folder / f"{self.n:02d}-{name}.png"
        self.page.screenshot(path=str(path), full_page=True)
        return path


@contextlib.contextmanager
def recorded(page, folder: Path):
    shots = Shots(page, folder)
    try:
        yield shots
    except BaseException:
        with contextlib.suppress(Exception):
            shots.take("failure")
        print(f"\nscreenshots of the pages visited: {folder}")
        raise


@pytest.mark.slow
def test_web_browser_upload_scan_dismiss_export(server, browser, tmp_path):
    context = browser.new_context(accept_downloads=True, viewport={"width": 1280, "height": 900})
    page = context.new_page()
    page.set_default_timeout(30_000)
    with recorded(page, tmp_path / "screenshots") as shots:
        page.goto(server)
        page.get_by_label("Class", exact=True).fill("evening-b2")
        page.get_by_label("Term", exact=True).fill("2025-autumn")
        page.get_by_label("First day of the term").fill("2025-09-15")
        shots.take("home")
        page.get_by_role("button", name="Create").click()
        page.wait_for_url(re.compile(r"/c/evening-b2-\w+/t/2025-autumn-\w+"))

        page.get_by_label("Or a whole folder").set_input_files(str(DEMO))
        page.get_by_role("button", name="Upload").click()
        expect(page.locator(".flashes")).to_contain_text("Stored 14 files and the manifest (2025-autumn/manifest.csv).")
        expect(page.locator("#main")).to_contain_text("A scan will read 14 essays by 14 writers")
        shots.take("uploaded")

        page.get_by_role("button", name="Scan the essays").click()
        expect(page.locator("#progress, .flash-ok").first).to_be_visible()
        shots.take("scanning")
        page.get_by_text(re.compile("The scan started at .* has finished")).wait_for(timeout=240_000)
        shots.take("scanned")
        term_url = page.url.split("#")[0]

        page.get_by_role("link", name="Class handout").click()
        expect(page.locator("h1")).to_contain_text("Small words that matter: evening-b2, 2025-autumn")
        expect(page.locator("main")).to_contain_text("discuss about")
        shots.take("handout")
        page.emulate_media(media="print")  # printed, the page is the report alone
        expect(page.locator(".hw-nav")).to_be_hidden()
        expect(page.locator(".write-line").first).to_be_visible()
        page.emulate_media(media="screen")

        page.goto(term_url + "#review")
        page.get_by_label("Reason for dismissing “discuss about”").fill("taught as correct in unit 4")
        page.get_by_role("button", name="Dismiss “discuss about”").click()
        expect(page.locator(".flashes")).to_contain_text("Dismissed “discuss about” for evening-b2.")
        expect(page.locator("ul.dismissed")).to_contain_text("discuss about — taught as correct in unit 4")
        shots.take("dismissed")

        page.get_by_role("link", name="Class handout").click()
        expect(page.locator("h1")).to_contain_text("Small words that matter")
        expect(page.locator("main")).to_contain_text("depend of")
        expect(page.locator("main")).not_to_contain_text("discuss about")
        shots.take("handout-after")

        page.goto(term_url + "#download")
        page.get_by_label("Every pattern with its figures").select_option("csv")
        with page.expect_download() as info:
            page.get_by_role("button", name="Download the patterns").click()
        download = info.value
        assert download.suggested_filename == "evening-b2-2025-autumn-patterns.csv"
        saved = tmp_path / download.suggested_filename
        download.save_as(saved)
        with saved.open(encoding="utf-8", newline="") as fh:
            rows = list(csv.DictReader(fh))
        discuss = [r for r in rows if (r["governor"], r["preposition"]) == ("discuss", "about")]
        assert discuss and discuss[0]["flagged"] == "true" and discuss[0]["dismissed"] == "true"
        assert discuss[0]["dismissed_reason"] == "taught as correct in unit 4"

        page.set_viewport_size({"width": 390, "height": 844})  # a phone: the results page does not scroll sideways
        page.goto(term_url)
        assert page.evaluate("document.documentElement.scrollWidth - window.innerWidth") <= 0
        shots.take("phone")
    context.close()


def test_web_browser_keyboard_labels_and_widths(server, browser, tmp_path):
    context = browser.new_context(viewport={"width": 1024, "height": 768}, locale="en-US")
    page = context.new_page()
    page.set_default_timeout(20_000)
    with recorded(page, tmp_path / "screenshots") as shots:
        page.goto(server)
        # keyboard alone: Tab to the class field, type, Tab on, press Enter
        for _ in range(20):
            page.keyboard.press("Tab")
            if page.evaluate("document.activeElement.id") == "class_name":
                break
        else:
            pytest.fail("the class field cannot be reached with Tab")
        outline = page.evaluate("getComputedStyle(document.activeElement).outlineStyle")
        assert outline not in ("none", ""), "the focused field shows no focus ring"
        page.keyboard.type("keyboard-class")
        page.keyboard.press("Tab")
        page.keyboard.type("2026-spring")
        page.keyboard.press("Tab")
        page.keyboard.type("01122026")  # a date field takes the digits (month, day, year in en-US)
        page.keyboard.press("Enter")
        page.wait_for_url(re.compile(r"/c/keyboard-class-\w+/t/2026-spring-\w+"))
        expect(page.locator(".flashes")).to_contain_text("keyboard-class / 2026-spring is ready (term starts 2026-01-12)")

        unlabelled = page.evaluate("""() => [...document.querySelectorAll('input, select, textarea, button')]
            .filter(e => e.type !== 'hidden')
            .filter(e => !(e.labels && e.labels.length) && !e.getAttribute('aria-label')
                         && !(e.tagName === 'BUTTON' && e.innerText.trim()))
            .map(e => e.outerHTML)""")
        assert unlabelled == []
        for width, height in ((768, 1024), (390, 844)):
            page.set_viewport_size({"width": width, "height": height})
            for url in (server, page.url):
                page.goto(url)
                overflow = page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
                assert overflow <= 0, f"{url} scrolls sideways at {width}px"
                shots.take(f"width-{width}")
    context.close()

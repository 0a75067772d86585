"""Take the README's screenshot of the web page from the invented demo.

Starts ``hingeword serve`` on a free loopback port with a fresh temporary workspace, and in
Debian's Chromium (driven by Playwright, no browser download) creates the class
evening-b2 / 2025-autumn, uploads ``demo_essays/evening-b2/2025-autumn`` as a folder (with
its manifest), scans it and saves the term page as a PNG.

    python scripts/web_screenshot.py            # writes docs/web-page.png
    python scripts/web_screenshot.py OUT.png

Needs ``pip install -e ".[test]"`` (Playwright) and ``apt-get install chromium``.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_essays" / "evening-b2" / "2025-autumn"
CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run"]


def main(out: Path) -> None:
    from playwright.sync_api import sync_playwright

    with tempfile.TemporaryDirectory(prefix="hingeword-shot-") as tmp:
        proc = subprocess.Popen([sys.executable, "-u", "-c", "from hingeword.cli import main; main()", "serve",
                                 "--port", "0", "-w", str(Path(tmp) / "ws")], stdout=subprocess.PIPE, text=True)
        try:
            url = ""
            for line in proc.stdout:
                if line.startswith("hingeword is running at "):
                    url = line.split(" at ", 1)[1].strip()
                    break
            if not url:
                sys.exit("hingeword serve did not start")
            with sync_playwright() as p:
                browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
                page = browser.new_page(viewport={"width": 1100, "height": 1480})
                page.set_default_timeout(240_000)
                page.goto(url)
                page.get_by_label("Class", exact=True).fill("evening-b2")
                page.get_by_label("Term", exact=True).fill("2025-autumn")
                page.get_by_label("First day of the term").fill("2025-09-15")
                page.get_by_role("button", name="Create").click()
                page.get_by_label("Or a whole folder").set_input_files(str(DEMO))
                page.get_by_role("button", name="Upload").click()
                page.get_by_role("button", name="Scan the essays").click()
                page.get_by_text("has finished").wait_for()
                page.goto(page.url.split("#")[0])
                page.get_by_role("link", name="Classes").focus()  # no focus ring on the picture's fields
                page.evaluate("document.activeElement.blur()")
                out.parent.mkdir(parents=True, exist_ok=True)
                page.screenshot(path=str(out))
                browser.close()
        finally:
            proc.terminate()
            proc.wait(20)
            proc.stdout.close()
    print(f"wrote {out}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "docs" / "web-page.png")

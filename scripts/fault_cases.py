#!/usr/bin/env python
"""Reproduce the full-disk and read-only cases of issue 15 on a real file system.

The tests simulate these faults (SQLite's ``max_page_count``, a patched write,
permissions); this script makes them happen for real. It mounts a small tmpfs, runs
``hingeword`` there as a teacher would, fills the disk to the last byte, then
remounts it read-only, and checks after every command that the output is one line,
that nothing half-written is left and that the stored run is intact::

    sudo python scripts/fault_cases.py            # needs root (mount); about a minute

Without root or without ``mount`` it says so and exits 0. Every essay below is
invented. Prints one line per case (``ok`` or ``FAILED``) and exits 1 if any failed.
"""

from __future__ import annotations

import os
import shutil
import sqlite3
import subprocess
import sys
import tempfile
from pathlib import Path

ESSAYS = {
    "ana.txt": "Last week we discussed about the new rules in our school. I listen music every evening.",
    "ben.txt": "In the lesson we discussed about climate change. My plans depend of the weather.",
    "cai.txt": "We discussed about our trip yesterday. Everything depends of money in this city.",
    "dee.txt": "Students must discuss about problems with the teacher. I am interested in history.",
}
MORE = {f"extra{i:02d}.txt": f"Essay {i}: we discussed about the plan for the garden, and it depends of the rain. "
        * 40 for i in range(30)}
CLASS, TERM = "fault-class", "fault-term"


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    cmd = [sys.executable, "-c", "from hingeword.cli import main; main()", *args]
    env = {**os.environ, "MPLCONFIGDIR": str(cwd / ".mpl")}
    return subprocess.run(cmd, cwd=cwd, capture_output=True, text=True, env=env, timeout=600)


def one_line_error(proc: subprocess.CompletedProcess, *phrases: str) -> tuple[bool, str]:
    text = (proc.stdout + proc.stderr).strip()
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("WARNING")]
    good = (proc.returncode == 1 and "Traceback" not in text and len(lines) == 1
            and lines[0].startswith("Error: ") and all(p in lines[0] for p in phrases))
    return good, lines[-1] if lines else text


def last(proc: subprocess.CompletedProcess) -> str:
    lines = (proc.stdout + proc.stderr).strip().splitlines()
    return lines[-1] if lines else ""


def essays_stored(db: Path) -> int:
    con = sqlite3.connect(f"file:{db}?mode=ro&immutable=1", uri=True)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        return con.execute("SELECT essays_read FROM runs WHERE class = ? AND term = ?", (CLASS, TERM)).fetchone()[0]
    finally:
        con.close()


def leftovers(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.name.endswith((".tmp", ".new")))


def fill(folder: Path) -> None:
    """Write zeros until the file system is full, in ever smaller pieces down to one byte."""
    fd = os.open(folder / "filler.bin", os.O_WRONLY | os.O_CREAT)
    try:
        for size in (65536, 4096, 512, 1):
            try:
                while True:
                    os.write(fd, b"\0" * size)
            except OSError:
                pass
    finally:
        os.close(fd)


def main() -> int:
    if os.name != "posix" or os.geteuid() != 0 or not shutil.which("mount"):
        print("fault_cases: skipped: needs root and 'mount' to make a small tmpfs (run with sudo)")
        return 0
    results: list[tuple[str, bool, str]] = []
    base = Path(tempfile.mkdtemp(prefix="hingeword-faults-"))
    disk = base / "disk"
    disk.mkdir()
    try:
        mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=8m", "tmpfs", str(disk)],
                                 capture_output=True, text=True)
        if mounted.returncode != 0:
            print(f"fault_cases: skipped: cannot mount a tmpfs here ({mounted.stderr.strip()})")
            return 0
        try:
            results += cases(base, disk)
        finally:
            subprocess.run(["umount", str(disk)], capture_output=True)
    finally:
        shutil.rmtree(base, ignore_errors=True)
    for name, good, line in results:
        print(f"{'ok     ' if good else 'FAILED '} {name}: {line}")
    return 0 if all(good for _, good, _ in results) else 1


def cases(base: Path, disk: Path) -> list[tuple[str, bool, str]]:
    out: list[tuple[str, bool, str]] = []
    essays, more = base / "essays", base / "more"
    for folder, texts in ((essays, ESSAYS), (more, {**ESSAYS, **MORE})):
        folder.mkdir()
        for name, text in texts.items():
            (folder / name).write_text(text + "\n", encoding="utf-8")
    ws, reports, db = disk / "ws", disk / "reports", disk / "ws" / "hingeword.sqlite"
    first = run("scan", str(essays), "--class", CLASS, "--term", TERM, "-w", str(ws), "-q", cwd=base)
    if first.returncode != 0:
        return [("first scan on the tmpfs", False, (first.stderr or first.stdout).strip()[-300:])]
    made = run("report", "--class", CLASS, "--term", TERM, "-w", str(ws), "--out", str(reports), cwd=base)
    out.append(("report on the tmpfs", made.returncode == 0, made.stdout.strip()))
    pages = {p: p.read_bytes() for p in reports.rglob("*.html")}

    # ---- full disk
    fill(disk)
    proc = run("scan", str(more), "--class", CLASS, "--term", TERM, "-w", str(ws), "-q", cwd=base)
    good, line = one_line_error(proc, str(db))
    good = good and essays_stored(db) == len(ESSAYS) and not leftovers(disk)
    out.append(("scan on a full disk keeps the stored run", good, line))
    proc = run("report", "--class", CLASS, "--term", TERM, "-w", str(ws), "--out", str(reports), cwd=base)
    good, line = one_line_error(proc, "No space left on device")
    good = good and all(p.read_bytes() == data for p, data in pages.items()) and not leftovers(disk)
    out.append(("report on a full disk leaves the earlier pages whole", good, line))
    proc = run("export", "--class", CLASS, "--term", TERM, "-w", str(ws), "-o", str(disk / "patterns.xlsx"), cwd=base)
    good, line = one_line_error(proc, "patterns.xlsx", "No space left on device")
    out.append(("export on a full disk", good and not (disk / "patterns.xlsx").exists() and not leftovers(disk), line))
    proc = run("dismiss", "discuss", "about", "--class", CLASS, "--reason", "checked", "-w", str(ws), cwd=base)
    text = (proc.stdout + proc.stderr).strip()
    out.append(("dismiss on a full disk: done or one line", (proc.returncode == 0 or one_line_error(proc)[0])
                and "Traceback" not in text, text.splitlines()[-1] if text else ""))
    proc = run("concordance", "discuss", "about", "--class", CLASS, "--term", TERM, "-w", str(ws), cwd=base)
    out.append(("concordance from a full disk", proc.returncode == 0, last(proc)))
    (disk / "filler.bin").unlink()

    # ---- read-only disk
    subprocess.run(["mount", "-o", "remount,ro", str(disk)], check=True)
    elsewhere = base / "out"
    elsewhere.mkdir()
    for name, args in {
        "report": ["report", "--out", str(elsewhere / "r")],
        "export": ["export", "-o", str(elsewhere / "p.csv")],
        "concordance": ["concordance", "discuss", "about"],
    }.items():
        proc = run(*args[:1], *args[1:], "--class", CLASS, "--term", TERM, "-w", str(ws), cwd=base)
        out.append((f"{name} from a read-only disk", proc.returncode == 0, last(proc)))
    proc = run("trends", "--class", CLASS, "-w", str(ws), "--out", str(elsewhere / "t"), cwd=base)
    out.append(("trends from a read-only disk", proc.returncode == 0, proc.stdout.strip().splitlines()[-1]))
    proc = run("scan", str(essays), "--class", CLASS, "--term", TERM, "-w", str(ws), "-q", cwd=base)
    good, line = one_line_error(proc, "read-only")
    out.append(("scan into a read-only disk", good, line))
    proc = run("dismiss", "discuss", "about", "--class", CLASS, "--reason", "x", "-w", str(ws), cwd=base)
    good, line = one_line_error(proc, "read-only")
    out.append(("dismiss on a read-only disk", good, line))
    proc = run("report", "--class", CLASS, "--term", TERM, "-w", str(ws), "--out", str(disk / "new"), cwd=base)
    good, line = one_line_error(proc, "Read-only file system")
    out.append(("report into a read-only disk", good, line))
    return out


if __name__ == "__main__":
    sys.exit(main())

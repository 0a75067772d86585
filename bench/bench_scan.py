"""Benchmark: raw ``nlp.pipe``, first scan, re-scan, report and export, side by side in one run.

    python bench/bench_scan.py [--essays 1000 4000] [--processes 1 2] [--invented] [--max-load 1.5]
    python bench/bench_scan.py --duplicates 10000 [--old-limit 900]

For each corpus size and parser process count, five steps run one after the other, each in
a fresh Python process (so that peak memory is measured per step):

* **raw**: the least a program can do to parse the folder with the same pipeline: import
  spaCy, load the pipeline as hingeword does (NER excluded), read the files, run
  ``nlp.pipe(texts, batch_size=16, n_process=P)`` and drop the ``Doc``\\ s;
* **scan**: ``hingeword scan FOLDER --processes P`` into a fresh workspace;
* **re-scan**: the same command again (every essay in the cache);
* **report**: ``hingeword report`` (handout, teacher copy, overview, student sheets);
* **export**: ``hingeword export -o patterns.xlsx --concordance kwic.csv``.

Times are wall times of the whole process (interpreter start, imports and pipeline loading
included, as a teacher waits for them); the raw process's ``nlp.pipe`` alone and CPU seconds
(process and its worker processes) are printed too. Peak memory is the largest resident set
of the step's processes (``ru_maxrss`` of ``os.wait4``). Throughput ratio = raw wall / scan
wall (words are the same). Nothing is asserted: this prints figures.

The corpus (``bench/corpus.py``): native text from ``../shared/data/native`` cut into essays of
about 210 words, or invented essays without it (``--invented``). ``--max-load L`` waits before
each group of steps until the 1-minute load average is under L (other work on the machine
distorts the ratios); the load at each step is printed.

``--duplicates N`` times near-duplicate detection alone on N short texts (sentences of the
corpus drawn at random into texts of 150-250 words, with one edited copy per hundred texts),
against the pairwise comparison it replaced (stopped after ``--old-limit`` seconds, with an
estimate of the whole from the pairs it compared per second).
"""

from __future__ import annotations

import argparse
import json
import os
import random
import shutil
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
import corpus  # noqa: E402

WORK = ROOT / "build" / "bench-scan"
CLASS, TERM = "bench", "2026-autumn"


# ------------------------------------------------------------------ steps (run in a child process)

def _step_raw(folder: str, processes: int) -> dict:
    t0 = time.perf_counter()
    from hingeword.parse import load_model

    nlp, info = load_model(None)
    texts = [p.read_text(encoding="utf-8").strip() for p in sorted(Path(folder).glob("*.txt"))]
    t1 = time.perf_counter()
    n = 0
    for _doc in nlp.pipe(texts, batch_size=16, n_process=processes):
        n += 1
    t2 = time.perf_counter()
    return {"setup": t1 - t0, "pipe": t2 - t1, "docs": n, "model": str(info)}


def _step_cli(args: list[str]) -> dict:
    import contextlib
    import io

    from hingeword.cli import app

    buf = io.StringIO()
    t0 = time.perf_counter()
    with contextlib.redirect_stdout(buf):
        try:
            app(args, standalone_mode=False)
        except SystemExit as exc:  # typer.Exit
            if exc.code:
                raise
    return {"command": time.perf_counter() - t0, "output": buf.getvalue()[-2000:]}


def child(argv: list[str]) -> None:
    kind, spec = argv[0], json.loads(argv[1])
    t0 = time.perf_counter()
    result = _step_raw(spec["folder"], spec["processes"]) if kind == "raw" else _step_cli(spec["args"])
    result["in_process"] = time.perf_counter() - t0
    print("RESULT " + json.dumps(result))


# ------------------------------------------------------------------ the parent

def run_step(kind: str, spec: dict) -> dict:
    """Run one step in a fresh process: its wall time, and its CPU time and peak memory (with its
    worker processes) from ``wait4``."""
    load = os.getloadavg()[0]
    t0 = time.perf_counter()
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: exec a fresh interpreter with stdout into the pipe
        os.close(r)
        os.dup2(w, 1)
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 2)
        os.environ["PYTHONHASHSEED"] = "0"
        os.execv(sys.executable, [sys.executable, __file__, "--child", kind, json.dumps(spec)])
    os.close(w)
    with os.fdopen(r, encoding="utf-8") as f:
        out = f.read()
    _, status, usage = os.wait4(pid, 0)
    wall = time.perf_counter() - t0
    if status != 0:
        raise SystemExit(f"step {kind} failed (status {status}); run it alone: "
                         f"{sys.executable} {__file__} --child {kind} '{json.dumps(spec)}'")
    line = next(x for x in reversed(out.splitlines()) if x.startswith("RESULT "))
    result = json.loads(line[len("RESULT "):])
    result.update(wall=wall, load=load, cpu=usage.ru_utime + usage.ru_stime, peak_mib=usage.ru_maxrss / 1024)
    return result


def wait_for_load(max_load: float | None, limit: float = 1800) -> None:
    if not max_load:
        return
    start = time.monotonic()
    while os.getloadavg()[0] >= max_load and time.monotonic() - start < limit:
        print(f"  (load average {os.getloadavg()[0]:.2f} ≥ {max_load}: waiting)", flush=True)
        time.sleep(30)


STEPS = ("raw", "scan", "rescan", "report", "export")


def bench_size(folder: Path, words: int, processes: list[int], max_load: float | None,
               steps: tuple[str, ...] = STEPS) -> list[dict]:
    rows = []
    for p in processes:
        wait_for_load(max_load)
        ws, out = WORK / f"ws-{folder.name}-p{p}", WORK / f"out-{folder.name}-p{p}"
        for d in (ws, out):
            shutil.rmtree(d, ignore_errors=True)
        scan_args = ["scan", str(folder), "--class", CLASS, "--term", TERM, "-w", str(ws), "--processes", str(p),
                     "--term-start", "2026-09-01", "-q"]
        row = {"essays": len(list(folder.glob("*.txt"))), "words": words, "processes": p}
        specs = {
            "raw": ("raw", {"folder": str(folder), "processes": p}),
            "scan": ("cli", {"args": scan_args}),
            "rescan": ("cli", {"args": scan_args}),
            "report": ("cli", {"args": ["report", "--class", CLASS, "--term", TERM, "-w", str(ws), "--out", str(out)]}),
            "export": ("cli", {"args": ["export", "--class", CLASS, "--term", TERM, "-w", str(ws), "-o",
                                        str(out / "patterns.xlsx"), "--concordance", str(out / "kwic.csv")]}),
        }
        for name, (kind, spec) in specs.items():
            if name in steps:
                row[name] = run_step(kind, spec)
        print_row(row)
        rows.append(row)
    return rows


def print_row(row: dict) -> None:
    w = row["words"]
    print(f"\n{row['essays']:,} essays, {w:,} words, --processes {row['processes']}")
    for name in [n for n in STEPS if n in row]:
        s = row[name]
        extra = f"  (nlp.pipe alone {s['pipe']:.1f} s, {w / s['pipe']:,.0f} words/s)" if name == "raw" else ""
        print(f"  {name:<7} wall {s['wall']:7.1f} s  {w / s['wall']:8,.0f} words/s  cpu {s['cpu']:7.1f} s  "
              f"peak {s['peak_mib']:6.0f} MiB  load {s['load']:.2f}{extra}")
    if not all(k in row for k in STEPS):
        return
    raw, scan, rescan = row["raw"], row["scan"], row["rescan"]
    print(f"  first scan throughput / raw nlp.pipe: {raw['wall'] / scan['wall']:.2f}x "
          f"(against nlp.pipe alone: {raw['pipe'] / scan['wall']:.2f}x)")
    print(f"  re-scan: {scan['wall'] / rescan['wall']:.1f}x faster than the first scan")
    print(f"  report {100 * row['report']['wall'] / scan['wall']:.1f} %, export "
          f"{100 * row['export']['wall'] / scan['wall']:.1f} % of the first scan")


def summary(rows: list[dict], source: str) -> None:
    print("\n## Summary")
    print(f"machine: {os.cpu_count()} cores; Python {sys.version.split()[0]}; corpus: {source}")
    print("| essays | words | processes | raw nlp.pipe | first scan | scan ÷ raw throughput | re-scan | "
          "first ÷ re-scan | report | export | peak RSS scan | peak RSS re-scan | load |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
    for r in rows:
        if not all(k in r for k in STEPS):
            continue
        s = r["scan"]
        loads = [r[k]["load"] for k in ("raw", "scan", "rescan", "report", "export")]
        print(f"| {r['essays']:,} | {r['words']:,} | {r['processes']} | {r['raw']['wall']:.1f} s | {s['wall']:.1f} s | "
              f"{r['raw']['wall'] / s['wall']:.2f}× | {r['rescan']['wall']:.2f} s | "
              f"{s['wall'] / r['rescan']['wall']:.1f}× | {r['report']['wall']:.1f} s "
              f"({100 * r['report']['wall'] / s['wall']:.1f} %) | {r['export']['wall']:.1f} s "
              f"({100 * r['export']['wall'] / s['wall']:.1f} %) | {s['peak_mib']:.0f} MiB | "
              f"{r['rescan']['peak_mib']:.0f} MiB | {min(loads):.2f}–{max(loads):.2f} |")
    by = {}
    for r in rows:
        by.setdefault(r["processes"], {})[r["essays"]] = r
    for p, sizes in sorted(by.items()):
        if len(sizes) > 1 and all("scan" in r and "rescan" in r for r in sizes.values()):
            small, big = min(sizes), max(sizes)
            print(f"peak RSS, first scan, --processes {p}: {big:,} essays {sizes[big]['scan']['peak_mib']:.0f} MiB / "
                  f"{small:,} essays {sizes[small]['scan']['peak_mib']:.0f} MiB = "
                  f"{sizes[big]['scan']['peak_mib'] / sizes[small]['scan']['peak_mib']:.2f}×; re-scan "
                  f"{sizes[big]['rescan']['peak_mib'] / sizes[small]['rescan']['peak_mib']:.2f}×")


# ------------------------------------------------------------------ near-duplicates alone

def old_near_duplicates(essays, threshold: float, limit: float):
    """The pairwise comparison this project used before issue 14 (length pre-filter, then
    ``fuzz.ratio`` on every remaining pair); stops after ``limit`` seconds.
    Returns (pairs found, pairs compared, pairs to compare, finished)."""
    from rapidfuzz import fuzz

    from hingeword.ingest.duplicates import _fuzzy_form

    forms = sorted(((len(t), i, t) for i, t in enumerate(_fuzzy_form(e.text) for e in essays)))
    lengths = [f[0] for f in forms]
    import bisect

    # pairs inside the length window, counted without comparing them
    total = sum(bisect.bisect_right(lengths, la * (200 - threshold) / threshold) - a - 1
                for a, la in enumerate(lengths))
    found, compared, start = [], 0, time.perf_counter()
    for a in range(len(forms)):
        la, i, ta = forms[a]
        if time.perf_counter() - start > limit:
            return found, compared, total, False
        for b in range(a + 1, len(forms)):
            lb, j, tb = forms[b]
            if 200 * la < threshold * (la + lb):
                break
            if essays[i].sha256 == essays[j].sha256:
                continue
            compared += 1
            score = fuzz.ratio(ta, tb, score_cutoff=threshold)
            if score >= threshold:
                found.append((min(i, j), max(i, j)))
    return found, compared, total, True


def bench_duplicates(n: int, old_limit: float, invented: bool) -> None:
    from hingeword.ingest.duplicates import _near_duplicates
    from hingeword.ingest.records import _essay, _Info

    pool = None if invented else corpus.native_essays()
    sentences = ([s for text in pool for s in corpus._SENT.split(text) if len(s.split()) >= 5] if pool else
                 [s + "." for text in corpus.invented_essays(400) for s in text.split(". ")])
    rnd = random.Random(10_000)
    texts = []
    while len(texts) < n:
        if texts and len(texts) % 100 == 99:  # an edited copy: a few words changed
            words = rnd.choice(texts).split()
            for _ in range(3):
                words[rnd.randrange(len(words))] = rnd.choice(["very", "really", "quite", "the", "a"])
            texts.append(" ".join(words))
            continue
        text, size = [], rnd.randint(150, 250)
        while sum(len(s.split()) for s in text) < size:
            text.append(rnd.choice(sentences))
        texts.append(" ".join(text))
    essays = [_essay(f"t{i:05d}.txt", t, f"t{i:05d}.txt", "utf-8", _Info(f"w{i}", None, None, None, {}))
              for i, t in enumerate(texts)]
    print(f"near-duplicates among {n:,} texts of 150-250 words ({sum(len(t.split()) for t in texts):,} words), "
          f"{os.cpu_count()} cores, load {os.getloadavg()[0]:.2f}")
    t0 = time.perf_counter()
    new = _near_duplicates(essays, 95.0)
    t_new = time.perf_counter() - t0
    print(f"  shingle hashing + check: {t_new:.1f} s, {len(new)} pairs")
    t0 = time.perf_counter()
    old, compared, total, finished = old_near_duplicates(essays, 95.0, old_limit)
    t_old = time.perf_counter() - t0
    if finished:
        same = {(p.first, p.second) for p in new} == {(essays[i].essay_id, essays[j].essay_id) for i, j in old}
        print(f"  pairwise (before):      {t_old:.1f} s, {len(old)} pairs, {compared:,} comparisons; "
              f"same pairs: {same}; {t_old / t_new:.0f}x slower")
    else:
        estimate = t_old * total / max(compared, 1)
        print(f"  pairwise (before): stopped after {t_old:.0f} s having compared {compared:,} of {total:,} pairs in the "
              f"length window; estimated whole: {estimate / 60:.0f} min ({estimate / t_new:.0f}x the new method)")


def main() -> None:
    if len(sys.argv) > 1 and sys.argv[1] == "--child":
        child(sys.argv[2:])
        return
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--essays", type=int, nargs="+", default=[1000, 4000])
    ap.add_argument("--processes", type=int, nargs="+", default=[1, 2])
    ap.add_argument("--invented", action="store_true", help="invented essays even when the shared data are there")
    ap.add_argument("--data-dir", type=Path, default=corpus.DATA_DIR)
    ap.add_argument("--max-load", type=float, default=None, help="wait until the 1-minute load average is below")
    ap.add_argument("--steps", nargs="+", choices=STEPS, default=list(STEPS), help="only these steps")
    ap.add_argument("--duplicates", type=int, default=0, help="only time near-duplicate detection on N texts")
    ap.add_argument("--old-limit", type=float, default=900, help="seconds the old pairwise method may run")
    args = ap.parse_args()
    if args.duplicates:
        bench_duplicates(args.duplicates, args.old_limit, args.invented)
        return
    WORK.mkdir(parents=True, exist_ok=True)
    print(f"bench_scan: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.2f}")
    rows, source = [], ""
    for n in sorted(args.essays):
        folder = WORK / f"corpus-{n}"
        source, words = corpus.write_corpus(folder, n, invented=args.invented, data_dir=args.data_dir)
        rows += bench_size(folder, words, args.processes, args.max_load, tuple(args.steps))
    summary(rows, source)


if __name__ == "__main__":
    main()

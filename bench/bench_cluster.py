"""Benchmark: a reference build on 1, 2 and 4 local Dask workers against the build without a cluster.

    python bench/bench_cluster.py [--words 300000] [--workers 1 2 4] [--data-dir DIR] [--scripts-dir DIR]

Input: the documents of the bundled ``contemporary`` reference (the native collections of
``shared/data/native/``, not held out, licence class ``bundled``), read by
``scripts/native_sources.py`` and written as a text folder by
``scripts/build_contemporary_reference.py``'s ``write_texts`` under the git-ignored
``build/bench-cluster/``. The whole selection is about 2.6 million words; ``--words``
takes a part of it (default 300,000), the same share of every source, each source's
documents in their fixed order, so a run is repeatable.

The same folder is built, one after the other in this run: without a cluster (one
parser process, then two), then on ``local:N`` for each ``--workers`` N. Times are wall
times of :func:`hingeword.reference.build`, including starting the workers and loading
the pipeline on each. Every build must give the same files, byte for byte, as the
first; the script says so or stops. Not a test: nothing is asserted about speed.

Without the shared data (or without ``scripts/native_sources.py``) it prints why and
exits 0.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import sys
import time
from collections import defaultdict
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ARTEFACTS = ("manifest.json", "patterns.tsv.gz", "lemmas.tsv.gz")
BUILD_DATE = "2026-01-05"  # fixed, so that the builds are comparable byte for byte


def skip(msg: str) -> int:
    print(f"bench_cluster skipped: {msg}")
    return 0


def sample(ns, words: int, data_dir) -> tuple[dict[str, list], int, int]:
    """The same share of every source's reference documents, in their fixed order, about ``words`` in all
    (whitespace tokens with a letter); returns (documents by source, words of the whole selection, words taken)."""
    by_source: dict[str, list] = defaultdict(list)
    for d in ns.documents(split="reference", licence_class=ns.BUNDLED, data_dir=data_dir):
        by_source[d.source].append(d)
    size = {s: sum(ns.rough_words(d.text) for d in docs) for s, docs in by_source.items()}
    whole = sum(size.values())
    share = min(1.0, words / whole)
    picked: dict[str, list] = {}
    for source, docs in sorted(by_source.items()):
        budget, taken, out = share * size[source], 0, []
        for d in docs:
            n = ns.rough_words(d.text)
            if taken + n / 2 > budget:  # the nearest whole document to the budget
                break
            out.append(d)
            taken += n
        picked[source] = out
    return picked, whole, sum(ns.rough_words(d.text) for docs in picked.values() for d in docs)


def artefacts(path: Path) -> dict[str, bytes]:
    return {name: (path / name).read_bytes() for name in ARTEFACTS}


def cpu_seconds() -> float:
    """CPU time (user + system) of this process and of its finished child processes: the
    parser processes of ``processes=2`` and the worker processes of a local cluster."""
    own, children = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + children.ru_utime + children.ru_stime


def run(label: str, source: Path, out: Path, **kw) -> tuple[float, float, Path]:
    """Build ``source`` afresh; return (wall seconds, CPU seconds, path)."""
    from hingeword import reference

    for p in (out, out.with_name(out.name + ".partial")):  # a fresh build, never a resumed one
        shutil.rmtree(p, ignore_errors=True)
    print(f"  {label} …", file=sys.stderr, flush=True)
    t, cpu = time.monotonic(), cpu_seconds()
    path = reference.build(source, out, name="bench", build_date=BUILD_DATE, **kw)
    return time.monotonic() - t, cpu_seconds() - cpu, path


def duration(seconds: float) -> str:
    minutes = round(seconds / 60)
    return f"{minutes // 60} h {minutes % 60:02d} min" if minutes >= 60 else f"{minutes} min"


def start_up(n: int) -> float:
    """Seconds to start ``local:n`` and load the pipeline on every worker, with nothing to count."""
    from hingeword.cluster import ClusterCounter

    t = time.monotonic()
    with ClusterCounter(f"local:{n}") as counter:
        counter.model_desc("text", None)
    return time.monotonic() - t


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--words", type=int, default=300_000, help="words to build from (default 300,000)")
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2, 4], help="local worker counts (default 1 2 4)")
    ap.add_argument("--data-dir", type=Path, default=None, help="shared data folder (default: native_sources' default)")
    ap.add_argument("--scripts-dir", type=Path, default=ROOT / "scripts",
                    help="folder holding native_sources.py and build_contemporary_reference.py (default scripts/)")
    ap.add_argument("--build-dir", type=Path, default=ROOT / "build" / "bench-cluster", help="working folder")
    args = ap.parse_args(argv)

    if not (args.scripts_dir / "native_sources.py").is_file():
        return skip(f"no native_sources.py in {args.scripts_dir} (the reader of the native collections)")
    sys.path.insert(0, str(args.scripts_dir))
    import build_contemporary_reference as bcr
    import native_sources as ns

    if not ns.available(args.data_dir):
        return skip(f"native data not found under {args.data_dir or ns.DATA_DIR}/native")
    try:
        import distributed  # noqa: F401
    except ImportError:
        return skip('Dask is not installed: pip install -e ".[cluster]"')

    picked, whole, rough = sample(ns, args.words, args.data_dir)
    text = args.build_dir / "text"
    for source, docs in picked.items():
        bcr.write_texts(docs, text / source)
    for stale in sorted(p for p in text.iterdir() if p.is_dir() and p.name not in picked):
        shutil.rmtree(stale)
    files = sum(len(d) for d in picked.values())
    print(f"input: {files:,} documents, about {rough:,} words of the {whole:,} of the contemporary selection "
          f"({', '.join(f'{s} {len(d)}' for s, d in picked.items())})")
    print(f"machine: {os.cpu_count()} cores; other work on it was not stopped")

    from hingeword import reference
    from hingeword.parse import load_model

    _, info = load_model(None)  # loaded before timing for the builds without a cluster
    out = args.build_dir / "out"
    rows: list[tuple[str, int | None, float, float]] = []  # label, workers, wall s, CPU s
    first = words = None
    configs = [("single-1", "no cluster, 1 process", None, {"processes": 1}),
               ("single-2", "no cluster, 2 processes", None, {"processes": 2})]
    configs += [(f"local-{n}", f"local:{n} ({n} worker{'s' if n > 1 else ''})", n, {"cluster": f"local:{n}"})
                for n in args.workers]
    load_before = os.getloadavg()[0]
    for slug, label, n, kw in configs:
        secs, cpu, path = run(label, text, out / slug, **kw)
        if first is None:
            first, words = artefacts(path), int(reference.read_manifest(path)["words"])
        elif artefacts(path) != first:
            print(f"ERROR: {label}: the files differ from the build without a cluster")
            return 1
        rows.append((label, n, secs, cpu))
    startup = {n: start_up(n) for n in args.workers}
    load_after = os.getloadavg()[0]

    print(f"\nreference build of {words:,} words (alphabetic tokens), parser {info}; "
          f"load average {load_before:.1f} before, {load_after:.1f} after")
    print(f"{'':26} {'wall s':>7} {'words/s':>8} {'vs local:1':>10} {'CPU s':>7} {'cores used':>10} "
          f"{'words/CPU s':>11} {'start-up':>9}")
    base = next((secs for _, n, secs, _ in rows if n == 1), None)
    for label, n, secs, cpu in rows:
        rel = f"{base / secs:.2f}x" if base else ""
        up = f"{startup[n]:.1f} s" if n else ""
        print(f"{label:26} {secs:7.1f} {words / secs:8.0f} {rel:>10} {cpu:7.1f} {cpu / secs:10.2f} "
              f"{words / cpu:11.0f} {up:>9}")
    print("Every build gave the same three files, byte for byte. Wall times include starting the workers and "
          "loading the pipeline on each (start-up, measured apart). CPU s is the CPU time of this process, its "
          "parser processes and its workers; cores used = CPU s / wall s (below the workers' number when other "
          "work holds the cores)")

    cores = os.cpu_count() or 1
    per_cpu = max(words / cpu for _, n, _, cpu in rows if n)
    per_wall = max(words / secs for _, n, secs, _ in rows if n) / cores
    print(f"\nestimate (not measured) for 100 million words on machines of {cores} cores, one worker per core:")
    print(f"{'':14} {'at ' + format(round(per_cpu), ',') + ' words/CPU s':>26} "
          f"{'at ' + format(round(per_wall), ',') + ' words/s per core here':>34}")
    for machines in (1, 4, 16):
        by_cpu = duration(100e6 / (per_cpu * cores * machines))
        by_wall = duration(100e6 / (per_wall * cores * machines))
        print(f"{machines:>3} machine{'s' if machines > 1 else ' '}   {by_cpu:>26} {by_wall:>34}")
    print("(the first column assumes each core to itself, the second the shared machine measured here; "
          "both assume linear scaling: the client only reads and sums, the network is not a limit)")
    return 0


if __name__ == "__main__":
    sys.exit(main())

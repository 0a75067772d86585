"""Benchmark: a re-scan from the parse cache vs a first scan, measured side by side.

    python bench/bench_parse_cache.py [ESSAY_FOLDER]

Defaults to one demo class-term. Prints wall time and peak memory (tracemalloc) of
both scans in one run and their ratio. Not a test: nothing is asserted.
"""

from __future__ import annotations

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

from hingeword.pipeline import scan

ROOT = Path(__file__).resolve().parents[1]


def measure(fn):
    tracemalloc.start()
    t = time.perf_counter()
    result = fn()
    seconds = time.perf_counter() - t
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return result, seconds, peak


def main() -> None:
    folder = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "demo_essays" / "evening-b2" / "2025-autumn"
    with tempfile.TemporaryDirectory() as ws:
        run = lambda: scan(folder, class_name="bench", term="t", workspace=ws, processes=1)
        first, t1, m1 = measure(run)
        again, t2, m2 = measure(run)
    words = first.ingest.word_count
    print(f"essays {len(first.ingest.essays)}, words {words:,}")
    print(f"first scan : {t1:6.2f} s  {words / t1:8.0f} words/s  peak {m1 / 2**20:6.1f} MiB  parsed {first.parse_stats.parsed}")
    print(f"cached scan: {t2:6.2f} s  {words / t2:8.0f} words/s  peak {m2 / 2**20:6.1f} MiB  parsed {again.parse_stats.parsed}")
    print(f"ratio first/cached: {t1 / t2:.2f}x time, {m1 / max(m2, 1):.2f}x memory")


if __name__ == "__main__":
    main()

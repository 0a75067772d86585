"""Benchmark: a re-scan from the parse cache vs a first scan, measured side by side.

    python bench/bench_parse_cache.py [ESSAY_FOLDER]

Defaults to one demo class-term. The model, rules and reference are loaded once
before timing, so the ratio compares parsing with reading the cache. Wall time is
measured without tracing; peak Python memory (tracemalloc, which slows the run) in a
second pair of scans. Not a test: nothing is asserted.
"""

from __future__ import annotations

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

from hingeword.pipeline import scan

ROOT = Path(__file__).resolve().parents[1]


def timed(fn):
    t = time.perf_counter()
    result = fn()
    return result, time.perf_counter() - t


def peak_memory(fn) -> int:
    tracemalloc.start()
    fn()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak


def main() -> None:
    folder = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "demo_essays" / "evening-b2" / "2025-autumn"
    from hingeword import reference
    from hingeword.parse import load_model
    from hingeword.rules import load_rules

    load_model(None)
    load_rules()
    reference.load_many([])
    with tempfile.TemporaryDirectory() as ws, tempfile.TemporaryDirectory() as ws2:
        first, t1 = timed(lambda: scan(folder, class_name="bench", term="t", workspace=ws, processes=1))
        again, t2 = timed(lambda: scan(folder, class_name="bench", term="t", workspace=ws, processes=1))
        m1 = peak_memory(lambda: scan(folder, class_name="bench", term="t", workspace=ws2, processes=1))
        m2 = peak_memory(lambda: scan(folder, class_name="bench", term="t", workspace=ws2, processes=1))
    words = first.ingest.word_count
    print(f"essays {len(first.ingest.essays)}, words {words:,}")
    print(f"first scan : {t1:6.2f} s  {words / t1:8.0f} words/s  peak {m1 / 2**20:6.1f} MiB  parsed {first.parse_stats.parsed}")
    print(f"cached scan: {t2:6.2f} s  {words / t2:8.0f} words/s  peak {m2 / 2**20:6.1f} MiB  parsed {again.parse_stats.parsed}")
    print(f"ratio first/cached: {t1 / t2:.2f}x time, {m1 / max(m2, 1):.2f}x memory")


if __name__ == "__main__":
    main()

"""Regenerate the committed demo reports under reports/ (run from the checkout).

    python scripts/build_demo_reports.py

tests/test_demo.py regenerates them in a temporary folder and compares (ignoring dates
and versions), so run this whenever the code changes what the reports say.
"""

from __future__ import annotations

import shutil
from pathlib import Path

from hingeword.demo import run_demo

ROOT = Path(__file__).resolve().parents[1]

if __name__ == "__main__":
    out = ROOT / "reports"
    if out.exists():
        shutil.rmtree(out)
    for line in run_demo(out_dir=out):
        print(line)

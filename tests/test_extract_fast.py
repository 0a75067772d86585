"""The fast extractor gives exactly the attachments of the plain token-by-token one
(``tests/extract_plain.py``, the code before issue 14) on every essay of the demo and on
the extraction gold sentences: same instances, same offsets, same sentences, same order.

The demo essays and gold sentences are invented (see ``demo_essays/`` and
``tests/data/gold_extraction.yaml``).
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from extract_plain import extract_doc as plain_extract
from hingeword.extract import extract_doc

ROOT = Path(__file__).resolve().parents[1]


def _texts() -> list[str]:
    from hingeword.ingest import read_essays

    folders = sorted({p.parent for p in (ROOT / "demo_essays").rglob("*.txt")})
    texts = [e.text for folder in folders for e in read_essays(folder).essays]
    gold = yaml.safe_load((Path(__file__).parent / "data" / "gold_extraction.yaml").read_text(encoding="utf-8"))
    texts += [item["text"] for item in gold]
    return texts


@pytest.mark.slow
def test_extract_fast_matches_plain_extractor_on_demo_and_gold(nlp_and_info):
    nlp, _ = nlp_and_info
    texts = _texts()
    assert len(texts) > 100
    total = 0
    for i, doc in enumerate(nlp.pipe(texts)):
        fast = extract_doc(doc, f"e{i}", "w")
        assert fast == plain_extract(doc, f"e{i}", "w"), texts[i][:80]
        assert extract_doc(doc, f"e{i}", "w", text=texts[i]) == fast
        total += len(fast)
    assert total > 1000


@pytest.mark.slow
def test_extract_fast_handles_empty_and_one_word_docs(nlp_and_info):
    nlp, _ = nlp_and_info
    for text in ("", " ", "Hello", "out of", "In front of"):
        doc = nlp(text)
        assert extract_doc(doc) == plain_extract(doc)

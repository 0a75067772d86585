#!/usr/bin/env python3
"""Write ``tests/data/ewt_sample.conllu``: 300 gold sentences from the held-out part of EWT.

    python scripts/make_ewt_sample.py [--data-dir DIR] [--size 300] [--out tests/data/ewt_sample.conllu]

How the sample is chosen (deterministic, no randomness):

1. the documents of UD_English-EWT that are held out by the rule of
   ``scripts/native_sources.py`` (``is_held_out("ewt", newdoc id)``), so the sample
   never overlaps the documents counted in the bundled ``contemporary`` reference;
2. their sentences with a non-empty ``# text``, ordered by
   ``sha256("ewt-sample:" + sent_id)``; the first ``--size`` are taken;
3. written in corpus order (document id, then position), each block copied
   verbatim from the treebank (multiword-token lines included) except the
   document and paragraph markers (``# newdoc``, ``# newpar``), which would be
   wrong for a sample; ``# doc_id`` records the document.

EWT is CC BY-SA 4.0 (Silveira et al. 2014, LREC; UD_English-EWT), which allows
sharing a sample with attribution under the same licence: the header of the file
and ``tests/data/ewt_sample.README.md`` give both.
"""

from __future__ import annotations

import argparse
import hashlib
import io
import sys
import tarfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "scripts"))

import native_sources as ns  # noqa: E402

HEADER = """\
# UD_English-EWT sample for hingeword's tests: {n} sentences from the held-out documents.
# Source: Universal Dependencies English Web Treebank (UD_English-EWT), Silveira et al. 2014,
#   "A Gold Standard Dependency Corpus for English" (LREC). Licence: CC BY-SA 4.0
#   (https://creativecommons.org/licenses/by-sa/4.0/); this sample is shared under the same licence.
# Chosen by scripts/make_ewt_sample.py (see tests/data/ewt_sample.README.md); blocks copied verbatim
#   except # newdoc / # newpar lines, with # doc_id added.
"""


def blocks(data: bytes) -> list[list[str]]:
    """Raw sentence blocks (lines, comments included) of one CoNLL-U file."""
    out: list[list[str]] = []
    cur: list[str] = []
    for line in io.StringIO(data.decode("utf-8")):
        line = line.rstrip("\n")
        if not line:
            if cur:
                out.append(cur)
            cur = []
        else:
            cur.append(line)
    if cur:
        out.append(cur)
    return out


def held_out_sentences(data_dir: Path | None) -> list[tuple[str, int, str, list[str]]]:
    """(doc_id, position, sent_id, block lines) of every held-out EWT sentence with text."""
    path = ns.archive_path("ewt", data_dir)
    out = []
    with tarfile.open(path, "r:gz") as tar:
        for m in tar.getmembers():
            if not (m.isfile() and m.name.endswith(".conllu")):
                continue
            doc_id = ""
            for pos, block in enumerate(blocks(tar.extractfile(m).read())):
                comments = {}
                for line in block:
                    if line.startswith("#"):
                        key, _, value = line[1:].strip().partition(" = ")
                        comments[key] = value
                doc_id = comments.get("newdoc id", doc_id)
                if not doc_id or not ns.is_held_out("ewt", doc_id) or not comments.get("text"):
                    continue
                kept = [ln for ln in block if not ln.startswith(("# newdoc", "# newpar"))]
                sid_at = next(i for i, ln in enumerate(kept) if ln.startswith("# sent_id"))
                kept.insert(sid_at + 1, f"# doc_id = {doc_id}")
                out.append((doc_id, pos, comments["sent_id"], kept))
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--data-dir", type=Path, default=None)
    ap.add_argument("--size", type=int, default=300)
    ap.add_argument("--out", type=Path, default=REPO / "tests" / "data" / "ewt_sample.conllu")
    args = ap.parse_args(argv)
    if not ns.archive_path("ewt", args.data_dir).is_file():
        print(f"EWT not found under {args.data_dir or ns.DATA_DIR}/native", file=sys.stderr)
        return 1
    sents = held_out_sentences(args.data_dir)
    ranked = sorted(sents, key=lambda s: hashlib.sha256(f"ewt-sample:{s[2]}".encode()).hexdigest())
    chosen = sorted(ranked[: args.size], key=lambda s: (s[0], s[1]))
    text = HEADER.format(n=len(chosen)) + "\n\n".join("\n".join(s[3]) for s in chosen) + "\n\n"
    args.out.write_text(text, encoding="utf-8", newline="\n")
    docs = len({s[0] for s in chosen})
    print(f"{len(chosen)} sentences from {docs} held-out documents ({len(sents)} held-out sentences) -> {args.out}",
          file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())

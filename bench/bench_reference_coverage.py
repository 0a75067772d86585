"""Benchmark: what the bundled references know, side by side (Brown, contemporary, both).

    python bench/bench_reference_coverage.py [REFERENCE ...]

Default references: ``brown``, ``contemporary`` and the two combined with
:func:`hingeword.reference.load_many`. For each: words, attachments, governors
with at least 20 attachments (the default ``min_reference``, below which a
pattern is "not enough reference evidence"), and the native share
(count / the governor's attachments) of patterns learners' essays often raise —
native patterns that a one-genre reference under-counts ("hear from", "work as")
and the learner forms ("discuss about"). Not a test: nothing is asserted.
"""

from __future__ import annotations

import sys

from hingeword import reference

PATTERNS = [
    ("hear", "VERB", "from"), ("problem", "NOUN", "with"), ("problem", "NOUN", "of"),
    ("discuss", "VERB", "-"), ("discuss", "VERB", "about"), ("depend", "VERB", "on"),
    ("interested", "ADJ", "in"), ("arrive", "VERB", "at"), ("arrive", "VERB", "in"),
    ("hang", "VERB", "out"), ("look", "VERB", "after"), ("work", "VERB", "as"),
    ("travel", "VERB", "by"), ("speak", "VERB", "about"),
]
MIN_REFERENCE = 20


def main(argv: list[str]) -> int:
    specs = [[n] for n in argv] or [["brown"], ["contemporary"], ["brown", "contemporary"]]
    refs = [("+".join(s), reference.load_many(s)) for s in specs]
    width = max(len(n) for n, _ in refs) + 2
    print(f"{'reference':{width}} {'words':>10} {'attachments':>12} {'governors':>10} {'>= ' + str(MIN_REFERENCE):>8}")
    for name, ref in refs:
        gov = ref.governor_totals()
        print(f"{name:{width}} {int(ref.manifest.get('words', 0)):>10,} {ref.total:>12,} {len(gov):>10,} "
              f"{sum(1 for n in gov.values() if n >= MIN_REFERENCE):>8,}")
    print("\nnative share = count / governor's attachments (count of n)")
    head = "".join(f"{name:>{max(22, len(name) + 2)}}" for name, _ in refs)
    print(f"{'pattern':24}{head}")
    for g, pos, prep in PATTERNS:
        cells = []
        for name, ref in refs:
            total = ref.governor_totals()[(g, pos)]
            n = ref.patterns[(g, pos, prep)]
            share = f"{n / total:.3f}" if total else "-"
            cells.append(f"{share + f' ({n} of {total})':>{max(22, len(name) + 2)}}")
        print(f"{g + ' + ' + prep + ' (' + pos + ')':24}{''.join(cells)}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

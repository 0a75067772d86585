"""Essay folders for the benchmarks: native text cut into essay-sized pieces, or invented text.

    python bench/corpus.py OUT_FOLDER --essays 1000 [--invented] [--data-dir DIR]

With the shared data (``../shared/data/native/``: the State of the Union addresses,
the written part of MASC and the film reviews, read straight from the tarballs) each
essay is a run of whole sentences of about 210 words (the mean length of the
intermediate essays the issue measured) from one document. The pieces of all
sources are put in one fixed pseudo-random order, so the first 1,000 essays of a
4,000-essay folder are the 1,000-essay folder and both have the same mix of sources.
Without the shared data (or with ``--invented``) the essays are invented from templates
(learner-like sentences with typical preposition slips); they say that they are invented.

Each essay is ``wNNNNN.txt``, one writer an essay. Nothing here goes into the repository.
"""

from __future__ import annotations

import argparse
import functools
import os
import random
import re
import tarfile
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DATA_DIR = Path(os.environ.get("HINGEWORD_SHARED_DATA", ROOT.parent / "shared" / "data"))
ESSAY_WORDS = 210
SEED = 14

_SENT = re.compile(r"(?<=[.!?])\s+(?=[A-Z\"'(])")


# ------------------------------------------------------------------ native text

def _detokenise(tokens: list[str]) -> str:
    """Space-separated tokens back to running text (the common English punctuation rules)."""
    out = ""
    quote_open = False
    for tok in tokens:
        if not out:
            out = tok
        elif tok in {".", ",", ":", ";", "!", "?", ")", "]", "%", "..."} or tok.startswith("'") and tok != "'" \
                or tok in {"n't", "'s", "'re", "'ve", "'ll", "'d", "'m"}:
            out += tok
        elif tok == '"':
            out += ('' if quote_open else ' ') + tok
            quote_open = not quote_open
            continue
        elif out.endswith(("(", "[", "$")) or out.endswith('"') and quote_open:
            out += tok
        else:
            out += " " + tok
    return out


def _truecase(line: str) -> str:
    """Capitalise the first letter of each sentence and the pronoun "i" (film reviews are lower case)."""
    line = re.sub(r"(^|[.!?]\s+)([a-z])", lambda m: m.group(1) + m.group(2).upper(), line)
    return re.sub(r"\bi\b", "I", line)


def _members(path: Path) -> Iterator[tuple[str, str]]:
    with tarfile.open(path) as tar:
        members = sorted((m for m in tar if m.isfile()), key=lambda m: m.name)
        for m in members:
            data = tar.extractfile(m).read().decode("utf-8", errors="replace")
            yield m.name, data


def _state_union(native: Path) -> Iterator[str]:
    for name, text in _members(native / "state-union.tar.gz"):
        if name.endswith(".txt"):
            paras = [p.strip() for p in text.split("\n") if len(p.split()) > 12]
            yield " ".join(paras)


def _masc(native: Path) -> Iterator[str]:
    for name, text in _members(native / "masc.tar.gz"):
        if "/written/" not in name or not name.endswith(".txt"):
            continue
        words = [t.rsplit("_", 1)[0] if "_" in t else t for t in text.split()]
        yield _detokenise([w for w in words if w])


def _reviews(native: Path) -> Iterator[str]:
    for name, text in _members(native / "movie-reviews.tar.gz"):
        if name.endswith(".txt"):
            yield " ".join(_truecase(_detokenise(line.split())) for line in text.splitlines() if line.strip())


def _pieces(doc: str, words: int = ESSAY_WORDS) -> Iterator[str]:
    """Runs of whole sentences of about ``words`` words; a short tail is dropped."""
    buf: list[str] = []
    n = 0
    for sent in _SENT.split(doc):
        buf.append(sent)
        n += len(sent.split())
        if n >= words:
            yield " ".join(buf)
            buf, n = [], 0
    if n >= words * 0.6:
        yield " ".join(buf)


@functools.lru_cache(maxsize=2)
def native_essays(data_dir: Path = DATA_DIR) -> list[str] | None:
    native = Path(data_dir) / "native"
    needed = ("state-union.tar.gz", "masc.tar.gz", "movie-reviews.tar.gz")
    if not all((native / f).is_file() for f in needed):
        return None
    essays = [p for reader in (_state_union, _masc, _reviews) for doc in reader(native) for p in _pieces(doc)]
    random.Random(SEED).shuffle(essays)
    return essays


# ------------------------------------------------------------------ invented text

_SUBJECTS = ["I", "We", "My friends", "Our teacher", "My brother", "The students", "People in my town", "My parents"]
_PATTERNS = [
    "{s} discussed about {o} {t}.", "{s} discussed {o} in class.", "{s} listen music when {s2} {v} {o}.",
    "{s} listen to the radio every evening.", "Everything depends of {o}.", "It depends on {o}.",
    "{s} am interested for {o}.", "{s} are interested in {o}.", "{s} went to {o} with my family.",
    "{s} arrived to {o} late.", "{s} arrived at {o} on time.", "{s} explained me {o}.",
    "{s} is good in {o} but bad at sport.", "{s} talked about {o} for a long time.",
    "{s} are responsible of {o}.", "{s} paid for {o} with my own money.", "{s} enter in {o} without a ticket.",
    "{s} married with a girl from {o}.", "{s} think about {o} every day.", "{s} waited for {o} at the station.",
]
_OBJECTS = ["the new rules", "climate change", "our school trip", "the football match", "the city centre",
            "my old computer", "the summer holidays", "the price of food", "the film", "the museum",
            "the library", "the test", "the weather", "the new park", "the meeting", "the project"]
_TIMES = ["yesterday", "last week", "after dinner", "in the morning", "with our teacher", "for an hour"]
_VERBS = ["do", "finish", "start", "check"]


def invented_essays(n: int) -> list[str]:
    """``n`` invented essays of about :data:`ESSAY_WORDS` words (invented text, not real learners')."""
    rnd = random.Random(SEED)
    out = []
    for _ in range(n):
        sents, words = [], 0
        while words < ESSAY_WORDS:
            s = rnd.choice(_PATTERNS).format(s=rnd.choice(_SUBJECTS), s2="I", v=rnd.choice(_VERBS),
                                             o=rnd.choice(_OBJECTS), t=rnd.choice(_TIMES))
            sents.append(s[0].upper() + s[1:])
            words += len(s.split())
        out.append(" ".join(sents))
    return out


def write_corpus(folder: Path, n: int, *, invented: bool = False, data_dir: Path = DATA_DIR) -> tuple[str, int]:
    """Write ``n`` essays to ``folder`` (created, must be new or hold exactly these files);
    return (description of the source, words)."""
    essays = None if invented else native_essays(data_dir)
    source = "native text (State of the Union, MASC written, film reviews) cut into ~210-word essays"
    if essays is None or len(essays) < n:
        essays, source = invented_essays(n), "invented essays (templates with learner-like slips)"
    folder.mkdir(parents=True, exist_ok=True)
    words = 0
    for i, text in enumerate(essays[:n]):
        path = folder / f"w{i:05d}.txt"
        if not path.is_file() or path.read_text(encoding="utf-8") != text + "\n":
            path.write_text(text + "\n", encoding="utf-8")
        words += len(text.split())
    return source, words


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("folder", type=Path)
    ap.add_argument("--essays", type=int, default=1000)
    ap.add_argument("--invented", action="store_true")
    ap.add_argument("--data-dir", type=Path, default=DATA_DIR)
    args = ap.parse_args()
    source, words = write_corpus(args.folder, args.essays, invented=args.invented, data_dir=args.data_dir)
    print(f"{args.essays} essays, {words:,} words: {source}")


if __name__ == "__main__":
    main()

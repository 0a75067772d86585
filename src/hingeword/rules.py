"""Load the cause categoriser's data files.

Three kinds of file live in a rules folder (the bundled one is the top-level
``rules/`` of the repository, shipped in the wheel as ``hingeword/rules``):

- ``wordnet/derived_nouns.tsv`` (word, pos, noun) and
  ``wordnet/related_words.tsv`` (word, pos, related, relation): lexical
  relations derived from WordNet by ``scripts/build_wordnet_rules.py``;
- ``wordnet/words.tsv`` (word): words that exist (WordNet's lemmas), which typo
  grouping never treats as misspellings; a teacher's own ``words.tsv`` adds to it;
- ``directional.tsv`` (directional, static, note): directional prepositions
  and the static one (or ``-``, none) native writing often uses instead;
- ``l1/<code>.yaml``: first-language notes written by teachers.

A teacher's own folder (``--rules DIR``) overlays the bundled one: its rows are
added, and an L1 note with the same governor, pos and learner preposition
replaces the earlier one. Malformed rows and files are collected as
:class:`RuleProblem` (file and line) while everything else still loads.
"""

from __future__ import annotations

import functools
import logging
from collections.abc import Sequence
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import yaml

from .errors import RulesError

logger = logging.getLogger("hingeword")

POS_TAGS = ("VERB", "ADJ", "NOUN")
RELATIONS = ("synonym", "similar", "antonym", "also_see")
TABLES = {
    "derived_nouns.tsv": ("word", "pos", "noun"),
    "related_words.tsv": ("word", "pos", "related", "relation"),
    "directional.tsv": ("directional", "static", "note"),
    "words.tsv": ("word",),
}
_L1_KEYS = ("language", "code", "source", "patterns")
_PATTERN_KEYS = ("governor", "pos", "learner", "native", "note")
_PATTERN_REQUIRED = ("governor", "learner", "native")


@dataclass(frozen=True)
class RuleProblem:
    """A malformed rule file or row: ``str()`` gives ``path:line: message`` (line 0 = whole file)."""

    path: str
    line: int
    message: str

    def __str__(self) -> str:
        return f"{self.path}:{self.line}: {self.message}"


@dataclass(frozen=True)
class L1Note:
    """One first-language pattern: the learner writes ``learner`` after ``governor``, natives ``native``."""

    code: str
    language: str
    governor: str
    pos: str | None
    learner: str
    native: str
    note: str
    source_file: str


@dataclass
class Rules:
    """Everything the cause categoriser looks up, merged from all rules folders."""

    derived_nouns: dict[tuple[str, str], tuple[str, ...]] = field(default_factory=dict)
    related: dict[tuple[str, str], tuple[tuple[str, str], ...]] = field(default_factory=dict)
    directional: dict[str, tuple[str, ...]] = field(default_factory=dict)
    l1_notes: dict[str, tuple[L1Note, ...]] = field(default_factory=dict)
    words: frozenset[str] = frozenset()  # real words: never grouped as misspellings
    problems: list[RuleProblem] = field(default_factory=list)
    sources: list[str] = field(default_factory=list)

    def l1_notes_for(self, code: str, governor: str, learner_prep: str, pos: str | None = None) -> list[L1Note]:
        """Notes for learners of ``code`` who write ``learner_prep`` after ``governor``.

        :param code: ISO 639-1 code; a regional code such as ``pt-BR`` also gets ``pt`` notes.
        :param governor: governor lemma.
        :param learner_prep: the preposition written, ``-`` for a direct object.
        :param pos: when given, notes for another part of speech are left out.
        """
        code = code.strip().lower().replace("_", "-")
        governor, learner_prep = governor.lower(), learner_prep.lower()
        notes = [n for c in dict.fromkeys([code, code.split("-")[0]]) for n in self.l1_notes.get(c, ())]
        wanted = (governor, learner_prep)
        return [n for n in notes if (n.governor, n.learner) == wanted and n.pos in (None, pos or n.pos)]


#: Tables of the bundled folder that extraction reads itself (never overlaid by a teacher's folder).
EXTRACTION_TABLES = frozenset({"noun_classes.tsv"})


def bundled_rules_dir() -> Path:
    """The rules folder shipped with hingeword (wheel) or the checkout's top-level ``rules/``."""
    installed = Path(str(resources.files("hingeword"))) / "rules"
    if installed.is_dir():
        return installed
    return Path(__file__).resolve().parents[2] / "rules"


def check_rule_dirs(extra_dirs: Sequence[Path]) -> None:
    """Raise :class:`RulesError` for a teacher's rules folder that does not exist (before any work)."""
    for folder in map(Path, extra_dirs):
        if not folder.is_dir():
            raise RulesError(f"rules folder not found: {folder}")


def load_rules(extra_dirs: Sequence[Path] = ()) -> Rules:
    """Load the bundled rules, then overlay each folder of ``extra_dirs`` in order.

    :param extra_dirs: teachers' rules folders (same layout as the bundled one;
        the two WordNet tables and L1 files may also sit at the folder's top).
    :raises RulesError: when a folder does not exist.
    :returns: merged :class:`Rules`; malformed content is listed in ``problems``.
    """
    acc = _Accumulator()
    for i, folder in enumerate([bundled_rules_dir(), *map(Path, extra_dirs)]):
        if not folder.is_dir():
            raise RulesError(f"rules folder not found: {folder}")
        files = _rule_files(folder)
        if not files and i > 0:
            acc.problem(folder, 0, "no rule files found (expected l1/*.yaml, directional.tsv, "
                        "derived_nouns.tsv, related_words.tsv or words.tsv)")
        stamp = tuple((str(f), f.stat().st_mtime_ns, f.stat().st_size) for f in files)
        acc.merge(_load_folder(stamp))
    for p in acc.rules.problems:
        logger.warning("rule problem: %s", p)
    return acc.finish()


def _rule_files(folder: Path) -> list[Path]:
    """Tables (top or ``wordnet/``), then L1 files (top or ``l1/``), each group sorted."""
    tables = [f for sub in (folder, folder / "wordnet") for f in sorted(sub.glob("*.tsv"))
              if f.name not in EXTRACTION_TABLES]
    l1 = [f for sub in (folder, folder / "l1") for f in sorted([*sub.glob("*.yaml"), *sub.glob("*.yml")])]
    return tables + l1


@functools.lru_cache(maxsize=8)
def _load_folder(stamp: tuple[tuple[str, int, int], ...]) -> _Accumulator:
    """Parse one folder's files (cached on their paths, times and sizes); never mutated."""
    acc = _Accumulator()
    for name, _mtime, _size in stamp:
        path = Path(name)
        if path.suffix == ".tsv" and path.name not in TABLES:
            acc.problem(path, 0, "unknown table name (expected one of: " + ", ".join(TABLES) + ")")
            continue
        acc.rules.sources.append(name)
        if path.suffix == ".tsv":
            acc._add_rows(path, _read_tsv(path, TABLES[path.name], acc))
        for note in _read_l1(path, acc) if path.suffix != ".tsv" else ():
            acc.notes.setdefault(note.code, {})[(note.governor, note.pos, note.learner)] = note
    return acc


class _Accumulator:
    def __init__(self) -> None:
        self.rules = Rules()
        self.derived: dict[tuple[str, str], dict[str, None]] = {}
        self.related: dict[tuple[str, str], dict[tuple[str, str], None]] = {}
        self.directional: dict[str, dict[str, None]] = {}
        self.notes: dict[str, dict[tuple[str, str | None, str], L1Note]] = {}
        self.words: set[str] = set()

    def problem(self, path: Path, line: int, message: str) -> None:
        self.rules.problems.append(RuleProblem(str(path), line, message))

    def merge(self, other: _Accumulator) -> None:
        """Add ``other``'s rows; its L1 notes replace notes with the same key."""
        for mine, theirs in ((self.derived, other.derived), (self.related, other.related),
                             (self.directional, other.directional), (self.notes, other.notes)):
            for key, values in theirs.items():
                mine.setdefault(key, {}).update(values)
        self.words |= other.words
        self.rules.problems += other.rules.problems
        self.rules.sources += other.rules.sources

    def _add_rows(self, path: Path, rows: list[tuple[int, list[str]]]) -> None:
        if path.name == "words.tsv":
            self.words.update(row[0] for _line, row in rows)
            return
        if path.name == "directional.tsv":
            for _line, (prep, static, _note) in rows:
                self.directional.setdefault(prep, {})[static] = None
            return
        derived = path.name == "derived_nouns.tsv"
        for line, row in rows:
            pos = row[1].upper()
            if pos not in POS_TAGS:
                self.problem(path, line, f"unknown pos {pos!r} (use {', '.join(POS_TAGS)})")
            elif derived:
                self.derived.setdefault((row[0], pos), {})[row[2]] = None
            elif row[3] not in RELATIONS:
                self.problem(path, line, f"unknown relation {row[3]!r} (use {', '.join(RELATIONS)})")
            else:
                self.related.setdefault((row[0], pos), {})[(row[2], row[3])] = None

    def finish(self) -> Rules:
        r = self.rules
        r.derived_nouns = {k: tuple(v) for k, v in self.derived.items()}
        r.related = {k: tuple(v) for k, v in self.related.items()}
        r.directional = {k: tuple(v) for k, v in self.directional.items()}
        r.l1_notes = {k: tuple(v.values()) for k, v in self.notes.items()}
        r.words = frozenset(self.words)
        return r


def _read_text(path: Path, acc: _Accumulator) -> str | None:
    data = path.read_bytes()
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        acc.problem(path, data[: exc.start].count(b"\n") + 1, "not UTF-8 text; save the file as UTF-8")
        return None


def _read_tsv(path: Path, columns: tuple[str, ...], acc: _Accumulator) -> list[tuple[int, list[str]]]:
    """Return (line number, cells) for each good data row; report bad ones to ``acc``.

    Cells are stripped and lower-cased, except a ``note`` column (last, may be empty).
    """
    text = _read_text(path, acc)
    has_note = columns[-1] == "note"
    width, required = len(columns), len(columns) - has_note
    rows: list[tuple[int, list[str]]] = []
    header_seen = False
    for number, raw in enumerate((text or "").splitlines(), start=1):
        line = raw.strip(" \r\n")
        if not line or line.startswith("#"):
            continue
        cells = line.split("\t")
        if " " in line:
            cells = [c.strip() for c in cells]
        if not header_seen:
            header_seen = True
            if [c.lower() for c in cells] != list(columns):
                acc.problem(path, number, "expected the header line " + "<TAB>".join(columns) + "; file skipped")
                return []
            continue
        if len(cells) != width:
            acc.problem(path, number, f"expected {width} tab-separated columns "
                        f"({', '.join(columns)}), found {len(cells)}")
        elif "" in cells[:required]:
            acc.problem(path, number, "empty column")
        elif has_note:
            rows.append((number, [c.lower() for c in cells[:-1]] + cells[-1:]))
        else:
            rows.append((number, line.lower().split("\t") if " " not in line else [c.lower() for c in cells]))
    return rows


def _entry(node: yaml.Node | None, key: str) -> tuple[yaml.Node | None, yaml.Node | None]:
    """(key node, value node) of ``key`` in a YAML mapping node, else (None, None)."""
    if isinstance(node, yaml.MappingNode):
        for k, v in node.value:
            if k.value == key:
                return k, v
    return None, None


def _line_of(node: yaml.Node | None, key: str | None = None) -> int:
    """1-based line of ``key`` in mapping ``node`` if present, else of ``node`` (0 if unknown)."""
    if key is not None:
        node = _entry(node, key)[0] or node
    return node.start_mark.line + 1 if node is not None else 0


def _read_l1(path: Path, acc: _Accumulator) -> list[L1Note]:
    """Parse one L1 file into notes, reporting problems with their lines."""
    text = _read_text(path, acc)
    if text is None:
        return []
    loader = yaml.SafeLoader(text)
    try:
        root = loader.get_single_node()
        data = loader.construct_document(root) if root is not None else None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
        detail = getattr(exc, "problem", None) or str(exc)
        acc.problem(path, mark.line + 1 if mark else 0, f"not valid YAML: {detail}")
        return []
    finally:
        loader.dispose()
    if not isinstance(data, dict):
        acc.problem(path, _line_of(root), "expected keys language, code, source and patterns")
        return []
    for key in data:
        if key not in _L1_KEYS:
            acc.problem(path, _line_of(root, str(key)), f"unknown key {key!r} (expected {', '.join(_L1_KEYS)})")
    code = data.get("code")
    if not isinstance(code, str) or not code.strip():
        code = path.stem.lower()
        acc.problem(path, _line_of(root, "code"), f"missing or empty 'code'; notes filed under {code!r}")
    code = code.strip().lower()
    language = data.get("language")
    if not isinstance(language, str) or not language.strip():
        acc.problem(path, _line_of(root, "language"), "missing or empty 'language'")
        language = code
    patterns, seq = data.get("patterns"), _entry(root, "patterns")[1]
    if not isinstance(patterns, list):
        acc.problem(path, _line_of(root, "patterns"), "'patterns' must be a list of patterns")
        return []
    aligned = isinstance(seq, yaml.SequenceNode) and len(seq.value) == len(patterns)
    nodes = seq.value if aligned else [root] * len(patterns)
    notes = [_pattern(item, node, path, acc, code, language.strip()) for item, node in zip(patterns, nodes)]
    return [n for n in notes if n is not None]


def _pattern(
    item: object, node: yaml.Node | None, path: Path, acc: _Accumulator, code: str, language: str
) -> L1Note | None:
    """One pattern of an L1 file as a note, or ``None`` after reporting what is wrong with it."""
    line = _line_of(node)
    if not isinstance(item, dict):
        acc.problem(path, line, "a pattern must be a mapping with governor, learner, native and note")
        return None
    for key in item:
        if key not in _PATTERN_KEYS:
            expected = ", ".join(_PATTERN_KEYS)
            acc.problem(path, _line_of(node, str(key)), f"unknown key {key!r} (expected {expected})")
    ok = True
    for key in ("governor", "pos", "learner", "native", "note"):
        value = item.get(key)
        if value is None and key not in _PATTERN_REQUIRED:
            continue
        if isinstance(value, bool):
            acc.problem(path, _line_of(node, key), f"{key} reads as {str(value).lower()}: put the word in quotes "
                        "(YAML takes a bare on/off/yes/no as true/false)")
            ok = False
        elif not isinstance(value, str) or not value.strip():
            what = "missing required key" if value is None else "empty or not text:"
            acc.problem(path, _line_of(node, key) if value is not None else line, f"{what} {key!r}")
            ok = False
    pos = item.get("pos")
    if isinstance(pos, str) and pos.strip().upper() not in POS_TAGS:
        acc.problem(path, _line_of(node, "pos"), f"unknown pos {pos!r} (use {', '.join(POS_TAGS)})")
        ok = False
    if not ok:
        return None
    words = [item[k].strip().lower() for k in ("governor", "learner", "native")]
    pos = pos.strip().upper() if isinstance(pos, str) else None
    return L1Note(code, language, words[0], pos, words[1], words[2], (item.get("note") or "").strip(), str(path))

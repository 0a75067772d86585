"""Reference stage: native counts of the same patterns, by the same parser and extractor.

A reference is a directory holding

* ``manifest.json`` — name, source, licence, words, sentences, documents,
  attachments, parser model and version, extractor version, build date, limits,
  and the sha256 of each data file;
* ``patterns.tsv.gz`` — ``governor, governor_pos, preposition, count``;
* ``lemmas.tsv.gz`` — ``lemma, pos, tokens``: every VERB/ADJ/NOUN token's lemma
  (the lexicon typo grouping checks against, and each governor's token count);
* ``objects.tsv.gz`` (format 2, optional) — ``governor, governor_pos, preposition,
  object_class, count``: the pattern counts split by the class of the object
  (:data:`hingeword.extract.OBJECT_CLASSES`), from which a suggestion follows what
  native writers do with a place, a building, an event … A reference without it
  (format 1, CoNLL-U builds) still loads; its suggestions then ignore the object.

The 2x2 totals of docs/methods.md §1 follow from the pattern counts: R1 = sum of a
governor's rows, C1 = sum of a preposition's rows, N = sum of all rows.
Gzip files are written with a zero timestamp so that building twice gives
byte-identical artefacts.
"""

from __future__ import annotations

import csv
import datetime as _dt
import gzip
import hashlib
import io
import json
import logging
import os
import re
import shutil
import tempfile
import time
from collections import Counter
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import ExitStack
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from . import EXTRACTOR_VERSION
from .errors import ReferenceDataError

log = logging.getLogger("hingeword")

#: 2: ``objects.tsv.gz`` added (a format-1 reference, without it, still loads).
FORMAT_VERSION = 2
#: The default reference: Brown (1961 edited prose) and the contemporary many-genre collection,
#: combined by adding counts. Either can be chosen alone with ``--reference``.
BUNDLED = ("brown", "contemporary")
_DATA_FILES = ("patterns.tsv.gz", "lemmas.tsv.gz", "objects.tsv.gz")
_CHUNK_CHARS = 20_000


@dataclass
class Reference:
    """Pattern and lemma counts of one (or several combined) native references."""

    manifest: dict
    patterns: Counter = field(default_factory=Counter)  # (gov, pos, prep) -> count
    lemmas: Counter = field(default_factory=Counter)  # (lemma, pos) -> tokens
    path: str = ""
    objects: Counter = field(default_factory=Counter)  # (gov, pos, prep, object class) -> count

    @property
    def name(self) -> str:
        return self.manifest.get("name", "?")

    @property
    def total(self) -> int:
        return sum(self.patterns.values())

    @property
    def parts(self) -> list[dict]:
        """The manifests of the references combined into this one (itself when not combined)."""
        return list(self.manifest.get("combined_from") or [self.manifest])

    def parsers(self) -> set[str]:
        """Names of the spaCy pipelines that parsed the parts (gold CoNLL-U parts have none)."""
        return {str(p.get("model")) for p in self.parts if p.get("format") != "conllu" and p.get("model")}

    def governor_totals(self) -> Counter:
        out: Counter = Counter()
        for (g, p, _), n in self.patterns.items():
            out[(g, p)] += n
        return out

    def preposition_totals(self) -> Counter:
        out: Counter = Counter()
        for (_, _, prep), n in self.patterns.items():
            out[prep] += n
        return out


# --------------------------------------------------------------------------- I/O


def _write_tsv_gz(path: Path, header: Sequence[str], rows: Iterable[Sequence]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, delimiter="\t", lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    raw = io.BytesIO()
    with gzip.GzipFile(filename="", mode="wb", fileobj=raw, mtime=0) as gz:
        gz.write(buf.getvalue().encode("utf-8"))
    data = raw.getvalue()
    path.write_bytes(data)
    return hashlib.sha256(data).hexdigest()


#: Largest unpacked size of one reference data file, in characters (the bundled Brown
#: files unpack to under 1 MB; a reference of a hundred million words to some tens of MB).
#: Reading stops there, so a small gzip that unpacks to gigabytes costs seconds, not memory.
MAX_UNPACKED_CHARS = 128_000_000
#: Largest count one row may carry (counts are non-negative integers).
MAX_COUNT = 10**12


def _read_tsv_gz(path: Path, expected_sha: str | None) -> Iterator[list[str]]:
    """Yield the data rows of a gzipped TSV (header skipped), checked on the way.

    The file must match the sha256 the manifest records (every reference hingeword
    writes records one; a missing one is refused like a wrong one); it is unpacked as a
    stream and refused past :data:`MAX_UNPACKED_CHARS`.
    """
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise ReferenceDataError(f"reference file {path} cannot be read: {exc.strerror}") from None
    if not expected_sha:
        raise ReferenceDataError(f"reference file {path} has no checksum in its manifest.json, so damage "
                                 "cannot be ruled out; rebuild it")
    if hashlib.sha256(data).hexdigest() != expected_sha:
        raise ReferenceDataError(f"reference file {path} is corrupt or truncated (checksum mismatch); rebuild it")

    def lines(stream) -> Iterator[str]:
        size = 0
        for line in stream:
            size += len(line)
            if size > MAX_UNPACKED_CHARS:
                raise ReferenceDataError(f"reference file {path} unpacks to more than {MAX_UNPACKED_CHARS:,} "
                                         "characters; it is not a reference hingeword wrote")
            yield line

    try:
        with gzip.GzipFile(fileobj=io.BytesIO(data)) as gz:
            reader = csv.reader(lines(io.TextIOWrapper(gz, encoding="utf-8", newline="")), delimiter="\t")
            next(reader, None)  # header
            yield from reader
    except (OSError, EOFError, UnicodeDecodeError, csv.Error) as exc:
        raise ReferenceDataError(f"reference file {path} is corrupt or truncated ({exc}); rebuild it") from None


def _read_counts(path: Path, expected_sha: str | None, width: int, into: Counter) -> None:
    """Add the rows of one data file (key columns, then a count) to ``into``; a row of another
    width, or a bad count, is a one-line error naming the file."""
    for row in _read_tsv_gz(path, expected_sha):
        if len(row) != width:
            raise ReferenceDataError(f"reference file {path} has a malformed row: {row!r}")
        into[tuple(row[:-1])] += _count(row[-1], path, row)


def _count(text: str, path: Path, row: list[str]) -> int:
    """A row's count: a non-negative integer up to :data:`MAX_COUNT`, else a one-line error."""
    try:
        n = int(text)
    except ValueError:
        raise ReferenceDataError(f"reference file {path} has a malformed row: {row!r}") from None
    if not 0 <= n <= MAX_COUNT:
        raise ReferenceDataError(f"reference file {path} has a count out of range (not 0 to {MAX_COUNT:,}) "
                                 f"in the row {row!r}; rebuild it")
    return n


def _is_reference_dir(path: Path) -> bool:
    """True for a folder hingeword wrote: a manifest with a ``files`` entry and nothing but its files."""
    try:
        manifest = json.loads((path / "manifest.json").read_text(encoding="utf-8"))
        names = {p.name for p in path.iterdir()}
    except (OSError, UnicodeDecodeError, ValueError):
        return False
    if not isinstance(manifest, dict) or not isinstance(manifest.get("files"), dict):
        return False
    return names <= {"manifest.json", *_DATA_FILES, "state.json"}


_NAME_OK = re.compile(r"[A-Za-z0-9][A-Za-z0-9._+-]{0,63}")


def check_name(name: str) -> None:
    """A reference name is a plain folder name: letters, digits, ``. _ + -``, no path parts."""
    if not _NAME_OK.fullmatch(name or "") or ".." in name:
        raise ReferenceDataError(
            f"reference name '{name}' is not allowed: use letters, digits and . _ + - "
            "(at most 64 characters, no '/', '\\' or '..')"
        )


def check_target(out: Path) -> None:
    """Refuse to write a reference over anything hingeword did not build.

    An existing target must be an empty folder or a reference folder (its manifest
    and data files only); anything else — a workspace, an essay folder, a home
    directory — is left untouched and the build stops with a one-line error.
    """
    if out.is_symlink():
        raise ReferenceDataError(f"reference output {out} is a symbolic link; choose a new folder")
    if out.exists() and not out.is_dir():
        raise ReferenceDataError(f"reference output {out} exists and is not a folder; choose a new folder")
    if out.is_dir() and any(out.iterdir()) and not _is_reference_dir(out):
        raise ReferenceDataError(
            f"reference output {out} exists and is not a reference built by hingeword; "
            "it is left untouched: choose a new or empty folder"
        )


def save(ref: Reference, out_dir: str | Path) -> Path:
    """Write ``ref`` to ``out_dir``: into a fresh temporary folder beside it, then renamed into place.

    An existing ``out_dir`` is replaced only when it is empty or a reference folder
    (:func:`check_target`); nothing else is ever deleted.
    """
    out = Path(out_dir)
    check_target(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.writing-", dir=out.parent))
    try:
        pat_rows = sorted(((g, p, prep, n) for (g, p, prep), n in ref.patterns.items()), key=lambda r: (r[0], r[1], r[2]))
        lem_rows = sorted(((lem, p, n) for (lem, p), n in ref.lemmas.items()), key=lambda r: (r[0], r[1]))
        files = {
            "patterns.tsv.gz": _write_tsv_gz(tmp / "patterns.tsv.gz", ("governor", "governor_pos", "preposition", "count"), pat_rows),
            "lemmas.tsv.gz": _write_tsv_gz(tmp / "lemmas.tsv.gz", ("lemma", "pos", "tokens"), lem_rows),
        }
        if ref.objects:
            obj_rows = sorted(((*k, n) for k, n in ref.objects.items()), key=lambda r: r[:4])
            files["objects.tsv.gz"] = _write_tsv_gz(
                tmp / "objects.tsv.gz", ("governor", "governor_pos", "preposition", "object_class", "count"), obj_rows)
        manifest = dict(ref.manifest)
        manifest["format_version"] = FORMAT_VERSION if ref.objects else 1
        manifest["attachments"] = sum(ref.patterns.values())
        manifest["patterns"] = len(ref.patterns)
        manifest["files"] = files
        (tmp / "manifest.json").write_text(json.dumps(manifest, indent=2, sort_keys=True, ensure_ascii=False) + "\n", encoding="utf-8")
        os.chmod(tmp, 0o755)
        old = None
        if out.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
            os.replace(out, old / "ref")
        os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if old is not None:
        _remove_reference_dir(old / "ref")
        old.rmdir()
    return out


def _remove_reference_dir(path: Path) -> None:
    """Delete a folder this module wrote, file by file (never a tree it did not write)."""
    for name in ("manifest.json", *_DATA_FILES, "state.json"):
        (path / name).unlink(missing_ok=True)
    path.rmdir()


def read_manifest(path: str | Path) -> dict:
    p = Path(path) / "manifest.json"
    try:
        manifest = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ReferenceDataError(f"no reference at {path} (missing {p.name})") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ReferenceDataError(f"reference manifest {p} is corrupt or truncated: {exc}") from None
    if not isinstance(manifest, dict) or "files" not in manifest:
        raise ReferenceDataError(f"reference manifest {p} is incomplete (no 'files' entry); rebuild it")
    return manifest


_CACHE: dict[tuple, Reference] = {}


def load(path: str | Path) -> Reference:
    """Load one reference directory; every damage gives a one-line error naming the file.

    Loaded references are kept for the process (keyed by path and file times), so
    scanning several terms reads the bundled reference once. Treat them as read-only.
    """
    path = Path(path)
    try:
        stamp = tuple((f.name, f.stat().st_mtime_ns, f.stat().st_size) for f in sorted(path.iterdir()))
    except OSError:
        stamp = ()
    key = (str(path.resolve()), stamp)
    if key in _CACHE:
        return _CACHE[key]
    ref = _load(path)
    _CACHE[key] = ref
    return ref


def _load(path: Path) -> Reference:
    manifest = read_manifest(path)
    files = manifest.get("files")
    if not isinstance(files, dict):
        raise ReferenceDataError(f"reference manifest {path / 'manifest.json'} has no list of files with checksums; "
                                 "rebuild it")
    ref = Reference(manifest=manifest, path=str(path))
    for name, width, into in (("patterns.tsv.gz", 4, ref.patterns), ("lemmas.tsv.gz", 3, ref.lemmas),
                              ("objects.tsv.gz", 5, ref.objects)):
        if name == "objects.tsv.gz" and name not in files:  # format 1: no counts by object class
            continue
        _read_counts(path / name, files.get(name), width, into)
    return ref


def bundled_dir() -> Path:
    return Path(str(resources.files("hingeword") / "data" / "reference"))


def references_dir(workspace: str | Path) -> Path:
    return Path(workspace) / "references"


def resolve(name_or_path: str, workspace: str | Path | None = None) -> Path:
    """A reference directory from a name (bundled or in the workspace) or a path."""
    p = Path(name_or_path)
    if p.is_dir() or os.sep in name_or_path or "/" in name_or_path:
        if not (p / "manifest.json").exists():
            raise ReferenceDataError(f"no reference at {name_or_path} (missing manifest.json)")
        return p
    candidates = []
    if workspace is not None:
        candidates.append(references_dir(workspace) / name_or_path)
    candidates.append(bundled_dir() / name_or_path)
    for c in candidates:
        if (c / "manifest.json").exists():
            return c
    known = ", ".join(sorted(m["name"] for _, m in list_references(workspace))) or "none"
    raise ReferenceDataError(f"unknown reference '{name_or_path}' (known: {known})")


def list_references(workspace: str | Path | None = None) -> list[tuple[Path, dict]]:
    out = []
    roots = [bundled_dir()] + ([references_dir(workspace)] if workspace is not None else [])
    for root in roots:
        if not root.is_dir():
            continue
        for d in sorted(root.iterdir()):
            if (d / "manifest.json").is_file():
                try:
                    out.append((d, read_manifest(d)))
                except ReferenceDataError as exc:
                    out.append((d, {"name": d.name, "error": str(exc)}))
    return out


_INFO_KEYS = ("name", "source", "licence", "limits", "words", "sentences", "documents", "attachments", "patterns",
              "model", "model_version", "extractor_version", "build_date")


def describe(path: str | Path) -> list[str]:
    """What ``reference info`` prints: the manifest's facts, one per line, and the path."""
    man = read_manifest(path)
    lines = []
    for key in _INFO_KEYS:
        if key in man:
            val = f"{man[key]:,}" if isinstance(man[key], int) else man[key]
            lines.append(f"{key:<18} {val}")
    lines.append(f"{'path':<18} {path}")
    if man.get("parts"):
        lines.append("composition:")
        for part in man["parts"]:
            genres = ", ".join(f"{g} {int(v.get('words', 0)):,}" for g, v in sorted(part.get("genres", {}).items()))
            lines.append(f"  {part.get('source', '?'):<16} {int(part.get('words', 0)):>10,} words  "
                         f"{part.get('licence', '')}")
            if genres:
                lines.append(f"  {'':<16} genres: {genres}")
            if part.get("citation"):
                lines.append(f"  {'':<16} cite: {part['citation']}")
    return lines


def resolve_many(names: Sequence[str], workspace: str | Path | None = None) -> list[Path]:
    """The reference directories of ``names`` (the bundled default when there are none), each
    with a readable manifest: a wrong name or manifest is said before any counts are read."""
    paths = _paths(names, workspace)
    for path in paths:
        read_manifest(path)
    return paths


def _paths(names: Sequence[str], workspace: str | Path | None) -> list[Path]:
    return [resolve(n, workspace) for n in (list(names) or list(BUNDLED))]


def load_many(names: Sequence[str], workspace: str | Path | None = None) -> Reference:
    """Load and combine references by adding counts; the manifest lists the parts."""
    refs = [load(path) for path in _paths(names, workspace)]
    if len(refs) == 1:
        return refs[0]
    combined = Reference(manifest={
        "name": "+".join(r.name for r in refs),
        "combined_from": [r.manifest for r in refs],
        "words": sum(int(r.manifest.get("words", 0)) for r in refs),
        "sentences": sum(int(r.manifest.get("sentences", 0)) for r in refs),
        "model": ", ".join(sorted({str(r.manifest.get("model", "?")) for r in refs})),
        "extractor_version": ", ".join(sorted({str(r.manifest.get("extractor_version", "?")) for r in refs})),
    })
    for r in refs:
        combined.patterns.update(r.patterns)
        combined.lemmas.update(r.lemmas)
        combined.objects.update(r.objects)
    combined.manifest["attachments"] = combined.total
    return combined


# ------------------------------------------------------------------------- build

#: What a build from gold CoNLL-U trees records as its parser.
GOLD_MODEL = {"model": "gold (CoNLL-U)", "model_version": "-"}


def _text_files(source: Path, suffixes: tuple[str, ...]) -> list[Path]:
    return sorted(p for p in source.rglob("*") if p.is_file() and p.suffix.lower() in suffixes and not p.name.startswith("."))


def read_source_file(path: Path, fmt: str) -> str:
    """One input file as text: plain text with undecodable bytes replaced, CoNLL-U strictly UTF-8."""
    if fmt == "text":
        return path.read_text(encoding="utf-8", errors="replace")
    return path.read_text(encoding="utf-8")


def _chunks(text: str) -> Iterator[str]:
    """Paragraph-sized pieces (blank-line separated, at most ~20,000 characters)."""
    buf: list[str] = []
    size = 0
    for para in text.split("\n\n"):
        if size + len(para) > _CHUNK_CHARS and buf:
            yield "\n\n".join(buf)
            buf, size = [], 0
        buf.append(para)
        size += len(para) + 2
    if buf and any(b.strip() for b in buf):
        yield "\n\n".join(buf)


def count_doc(doc, patterns: Counter, lemmas: Counter, objects: Counter | None = None) -> tuple[int, int]:
    """Add one parsed text's attachments (and by object class) and lemma tokens; return (words, sentences)."""
    from .extract import GOVERNOR_POS, extract_doc, repaired_pos

    for a in extract_doc(doc):
        patterns[a.key] += 1
        if objects is not None:
            objects[(*a.key, a.object_class)] += 1
    words = 0
    for t in doc:
        if t.is_alpha:
            words += 1
        pos = repaired_pos(t)
        if pos in GOVERNOR_POS:
            lemmas[(t.lemma_.lower(), pos)] += 1
    return words, sum(1 for _ in doc.sents)


@dataclass
class Counts:
    """What a build adds up: pattern and lemma counts, words, sentences, documents.

    Only integer sums, so counts added in any order give the same totals, and
    :func:`save` sorts the rows: the shards of a cluster build, summed as they
    arrive, give the same files as a single-process build.
    """

    patterns: Counter = field(default_factory=Counter)  # (gov, pos, prep) -> count
    lemmas: Counter = field(default_factory=Counter)  # (lemma, pos) -> tokens
    words: int = 0
    sentences: int = 0
    documents: int = 0
    objects: Counter = field(default_factory=Counter)  # (gov, pos, prep, object class) -> count

    def add(self, other: Counts) -> Counts:
        self.patterns.update(other.patterns)
        self.lemmas.update(other.lemmas)
        self.objects.update(other.objects)
        self.words += other.words
        self.sentences += other.sentences
        self.documents += other.documents
        return self

    def totals(self) -> dict[str, int]:
        return {"words": self.words, "sentences": self.sentences, "documents": self.documents}


def count_documents(docs: Iterable[tuple[str, str]], fmt: str = "text", nlp=None, *,
                    processes: int = 1) -> Iterator[tuple[str, Counts]]:
    """Count documents given as ``(name, text)``; yield ``(name, Counts)`` for each, in order.

    The counting of every build: the single-process build sums what this yields file by
    file, a cluster worker sums one shard (:func:`count_shard`). Plain text is cut into
    paragraph-sized pieces and parsed by ``nlp`` (``processes`` parser processes over the
    whole stream; ``docs`` is read lazily); CoNLL-U text is read as gold trees
    (:mod:`hingeword.conllu`) and ``name`` is named in its errors.
    """
    if fmt == "conllu":
        from .conllu import count_lines

        for name, text in docs:
            c = Counts(documents=1)
            c.words, c.sentences = count_lines(io.StringIO(text), name, c.patterns, c.lemmas)
            yield name, c
        return

    def stream() -> Iterator[tuple[str, tuple[str, bool]]]:
        for name, text in docs:
            pieces = list(_chunks(text)) or [""]
            for j, piece in enumerate(pieces):
                yield piece, (name, j == len(pieces) - 1)

    # One pipe over all documents keeps worker processes alive; order is preserved,
    # so a document is complete when its last piece comes back.
    current = Counts(documents=1)
    for doc, (name, last) in nlp.pipe(stream(), as_tuples=True, batch_size=8, n_process=max(1, processes)):
        w, s = count_doc(doc, current.patterns, current.lemmas, current.objects)
        current.words += w
        current.sentences += s
        if last:
            yield name, current
            current = Counts(documents=1)


def count_shard(docs: Iterable[tuple[str, str]], fmt: str = "text", nlp=None) -> Counts:
    """The counts of a group of documents (one shard of a cluster build), summed."""
    total = Counts()
    for _, c in count_documents(docs, fmt, nlp):
        total.add(c)
    return total


@dataclass
class BuildProgress:
    files_total: int
    files_done: int
    #: on a cluster: shards of this run (0 without a cluster)
    shards_total: int = 0
    shards_done: int = 0


def build(
    source: str | Path,
    out_dir: str | Path,
    *,
    name: str,
    fmt: str = "text",
    model: str | None = None,
    processes: int = 1,
    description: str = "",
    licence: str = "unknown (state it with --licence)",
    limits: str = "",
    checkpoint_every: int = 20,
    progress: Callable[[BuildProgress], None] | None = None,
    build_date: str | None = None,
    cluster: str | None = None,
    shard_bytes: int = 256_000,
    checkpoint_seconds: float = 60.0,
) -> Path:
    """Build a reference from a folder of plain text (``fmt="text"``) or CoNLL-U files.

    Streams file by file: memory grows with the vocabulary, not with the corpus.
    Every ``checkpoint_every`` files the counts so far are saved beside the output
    (``<out>.partial/``); a build started again with the same arguments resumes there.

    :param cluster: a Dask scheduler address (``tcp://HOST:8786``) or ``local:N`` for N
        local worker processes: files are counted in shards of about ``shard_bytes``
        on the workers and summed here (:mod:`hingeword.cluster`). The reference is
        the same, byte for byte, and the checkpoints are shared with the build without
        a cluster (either resumes the other). Shards come back fast from many workers,
        so there a checkpoint is also at most one every ``checkpoint_seconds``.
    """
    source = Path(source)
    if not source.is_dir():
        raise ReferenceDataError(f"reference source folder not found: {source}")
    if fmt not in ("text", "conllu"):
        raise ReferenceDataError(f"unknown format '{fmt}' (use text or conllu)")
    check_name(name)
    out = Path(out_dir)
    src_real, out_real = source.resolve(), out.resolve()
    if out_real == src_real or out_real in src_real.parents:
        raise ReferenceDataError(f"reference output {out} would replace its own source folder {source}; choose another folder")
    check_target(out)
    files = _text_files(source, (".txt",) if fmt == "text" else (".conllu", ".conll"))
    if not files:
        raise ReferenceDataError(f"no {'.txt' if fmt == 'text' else '.conllu'} files under {source}")
    partial = out.with_name(out.name + ".partial")
    check_target(partial)
    if cluster is not None and processes > 1:
        raise ReferenceDataError("on a cluster each worker runs one parser process: leave out processes")
    with ExitStack() as stack:
        nlp = counter = None
        if cluster is not None:
            from .cluster import ClusterCounter

            counter = stack.enter_context(ClusterCounter(cluster))
            model_desc = counter.model_desc(fmt, model)
        elif fmt == "text":
            from .parse import load_model

            nlp, info = load_model(model)
            model_desc = {"model": info.name, "model_version": info.version}
        else:
            model_desc = dict(GOLD_MODEL)

        state_path = partial / "state.json"
        key = {"source": str(source.resolve()), "format": fmt, **model_desc, "extractor_version": EXTRACTOR_VERSION}
        total = Counts()
        done: list[str] = []
        if state_path.is_file():
            try:
                state = json.loads(state_path.read_text(encoding="utf-8"))
                if state.get("key") == key:
                    saved = load(partial)
                    done = list(state["done"])
                    total = Counts(Counter(saved.patterns), Counter(saved.lemmas), **state["totals"],
                                   objects=Counter(saved.objects))
                    log.info("resuming reference build: %d of %d files already counted", len(done), len(files))
            except (ReferenceDataError, OSError, ValueError, KeyError, TypeError):
                done, total = [], Counts()
        done_set = set(done)
        todo = [f for f in files if str(f.relative_to(source)) not in done_set]
        unsaved, saved_at = 0, time.monotonic()

        def checkpoint() -> None:
            save(Reference(manifest={"name": name, "partial": True}, patterns=total.patterns, lemmas=total.lemmas,
                           objects=total.objects), partial)
            state_path.write_text(json.dumps({"key": key, "done": done, "totals": total.totals()}), encoding="utf-8")

        def finish(names: list[str], counts: Counts, shards: tuple[int, int] = (0, 0)) -> None:
            """Add counted files (one, or a cluster's shard) and checkpoint every ``checkpoint_every`` files."""
            nonlocal unsaved, saved_at
            total.add(counts)
            done.extend(names)
            unsaved += len(names)
            if progress:
                progress(BuildProgress(len(files), len(done), shards_total=shards[1], shards_done=shards[0]))
            due = counter is None or time.monotonic() - saved_at >= checkpoint_seconds
            if unsaved >= checkpoint_every and len(done) < len(files) and due:
                checkpoint()
                unsaved, saved_at = 0, time.monotonic()

        relative = {str(f): str(f.relative_to(source)) for f in todo}
        if counter is not None:
            for names, counts, shards in counter.count(todo, fmt, model, expected=model_desc, shard_bytes=shard_bytes):
                finish([relative[n] for n in names], counts, shards)
        else:
            docs = ((str(f), read_source_file(f, fmt)) for f in todo)
            for doc_name, counts in count_documents(docs, fmt, nlp, processes=processes):
                finish([relative[doc_name]], counts)
    manifest = {
        "name": name,
        "source": description or f"{fmt} files under {source.name}/",
        "licence": licence,
        "limits": limits,
        "format": fmt,
        **total.totals(),
        **model_desc,
        "extractor_version": EXTRACTOR_VERSION,
        "build_date": build_date or _dt.date.today().isoformat(),
    }
    path = save(Reference(manifest=manifest, patterns=total.patterns, lemmas=total.lemmas, objects=total.objects), out)
    if _is_reference_dir(partial):
        _remove_reference_dir(partial)
    return path

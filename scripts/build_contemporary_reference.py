#!/usr/bin/env python3
"""Rebuild the bundled ``contemporary`` reference from the native collections.

    python scripts/build_contemporary_reference.py [--processes 2] [--build-date YYYY-MM-DD]
    python scripts/build_contemporary_reference.py --noncommercial --out WORKSPACE/references/contemporary-nc

Steps (everything but the final counts stays in the git-ignored ``build/`` folder):

1. For each source of ``shared/data/native/`` (read by ``scripts/native_sources.py``),
   write its documents that are not held out and whose licence class is
   ``bundled`` (``noncommercial`` with ``--noncommercial``) as
   ``build/contemporary-text/<source>/<genre>/<doc>.txt`` (``contemporary-nc-text``);
   unchanged files are not rewritten, files of documents no longer selected are removed.
2. Build one reference per source with :func:`hingeword.reference.build` into
   ``build/contemporary-parts/<source>/`` (``contemporary-nc-parts``). ``build()``
   checkpoints to ``<part>.partial/`` and resumes there after an interruption; a part
   whose input files, model and counting code (extract.py, reference.py) are unchanged is
   not rebuilt at all
   (``<part>.stamp.json``), so re-running only re-combines.
3. Add the parts' counts into one artefact, written with
   :func:`hingeword.reference.save` to ``src/hingeword/data/reference/contemporary/``
   (or ``--out``). Its manifest lists every part (words, documents, sentences, words
   and documents per genre, licence, citation, held-out documents excluded). Nothing
   in it depends on the machine or the clock except ``--build-date``, so the same
   date gives byte-identical files.

Progress goes to stderr; wall times to ``build/contemporary-build-times.json``.
"""

from __future__ import annotations

import argparse
import datetime as dt
import hashlib
import json
import sys
import time
from collections import Counter, defaultdict
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "scripts"))

import native_sources as ns  # noqa: E402

from hingeword import EXTRACTOR_VERSION, reference  # noqa: E402

BUNDLED_OUT = REPO / "src" / "hingeword" / "data" / "reference" / "contemporary"

DESCRIPTION = {
    ns.BUNDLED: (
        "Contemporary native English of many genres: web text (UD English Web Treebank: weblogs, "
        "newsgroups, email, reviews, Yahoo! Answers), the commercially usable genres of GUM (Wikipedia "
        "biographies, Wikinews news and interviews, Wikivoyage travel guides, open textbooks, vlogs, "
        "speeches, conversation), MASC (blogs, email, essays, letters, journalism, fiction, spoken "
        "transcripts and more; spam left out), film reviews (Pang & Lee), customer product reviews and "
        "pros/cons (Hu & Liu; Ganapathibhotla & Liu) and State of the Union addresses 1945-2006; "
        "parsed by hingeword's pipeline from running text, one document in ten held out for benchmarks"
    ),
    ns.NONCOMMERCIAL: (
        "The GUM genres under non-commercial terms or without an established commercial-friendly "
        "licence (wikiHow how-to guides, fiction, academic articles, court transcripts, essays, letters, "
        "podcasts), parsed by hingeword's pipeline from running text, one document in ten held out"
    ),
}
LICENCE = {
    ns.BUNDLED: (
        "Counts only, no text. Sources: UD_English-EWT CC BY-SA 4.0; GUM genres whose sources are CC BY, "
        "CC BY-SA or public domain; MASC (may be used including commercial development); film reviews and "
        "product reviews CC BY 4.0 as distributed with NLTK; State of the Union addresses public domain. "
        "Attribution: see 'parts' and PROVENANCE-contemporary.md"
    ),
    ns.NONCOMMERCIAL: (
        "Counts only, no text, for non-commercial use: derived from GUM parts under CC BY-NC-SA 4.0 "
        "(Zeldes 2017); never bundled with hingeword"
    ),
}
LIMITS = {
    ns.BUNDLED: (
        "Mostly American English of the 1990s-2000s; nearly half of the words are film reviews, so review "
        "vocabulary weighs heavily when counts are pooled; film reviews and one product-review set were "
        "lower-cased by their compilers (only 'I' and sentence starts are restored), pros/cons are short "
        "fragments; little British English, no student writing, no text after about 2010 (no recent "
        "technology or social media usage); spoken transcripts are a small part"
    ),
    ns.NONCOMMERCIAL: (
        "Small: seven genres of GUM only (see 'parts'); use it beside a larger reference, not alone"
    ),
}
HELD_OUT_RULE = 'int(sha256(f"{source}:{doc_id}").hexdigest()[:8], 16) % 10 == 0 (scripts/native_sources.py)'


def log(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def write_texts(docs: list[ns.Document], folder: Path) -> tuple[int, int]:
    """Write ``docs`` under ``folder/<genre>/``; return (written, unchanged). Stale files are removed."""
    wanted: set[Path] = set()
    written = unchanged = 0
    for d in docs:
        path = folder / d.genre / f"{ns.safe_name(d.doc_id)}.txt"
        if path in wanted:
            raise RuntimeError(f"{d.source}: two documents map to {path}")
        wanted.add(path)
        data = d.text.encode("utf-8")
        if path.is_file() and path.read_bytes() == data:
            unchanged += 1
            continue
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(data)
        written += 1
    if folder.is_dir():
        for p in sorted(folder.rglob("*.txt")):
            if p not in wanted:
                p.unlink()
    return written, unchanged


def genre_words(docs: list[ns.Document], nlp) -> dict[str, Counter]:
    """Documents and words per genre, words counted as the reference counts them
    (alphabetic tokens of the pipeline's tokenizer, over the same pieces)."""
    out: dict[str, Counter] = defaultdict(Counter)
    for d in docs:
        words = 0
        for piece in reference._chunks(d.text) or [""]:
            words += sum(1 for t in nlp.tokenizer(piece) if t.is_alpha)
        out[d.genre]["documents"] += 1
        out[d.genre]["words"] += words
    return out


def _stamp(folder: Path, model_desc: dict) -> str:
    """What a part depends on: its input files, the model, and the counting code itself
    (extract.py, reference.py and the noun classes, not only EXTRACTOR_VERSION, which a change may forget to bump)."""
    import hingeword.extract

    h = hashlib.sha256()
    h.update(json.dumps({"extractor": EXTRACTOR_VERSION, **model_desc}, sort_keys=True).encode())
    for module in (hingeword.extract, reference):
        h.update(_sha(Path(module.__file__).read_bytes()).encode())
    h.update(_sha((REPO / "rules" / "wordnet" / "noun_classes.tsv").read_bytes()).encode())
    for p in sorted(folder.rglob("*.txt")):
        h.update(str(p.relative_to(folder)).encode() + b"\0" + _sha(p.read_bytes()).encode() + b"\n")
    return h.hexdigest()


class Progress:
    """Plain progress lines on stderr, about every 5 % of a part's files."""

    def __init__(self, label: str):
        self.label = label
        self.start = time.monotonic()
        self.last = -1

    def __call__(self, p: reference.BuildProgress) -> None:
        step = max(1, p.files_total // 20)
        if p.files_done // step != self.last or p.files_done == p.files_total:
            self.last = p.files_done // step
            secs = int(time.monotonic() - self.start)
            log(f"  {self.label}: {p.files_done}/{p.files_total} files ({100 * p.files_done // p.files_total}%), "
                f"{secs // 60}:{secs % 60:02d}")


def build_part(source: str, cls: str, args, nlp, model_desc: dict, text_root: Path, parts_root: Path) -> dict:
    """Write the texts, build (or reuse) the part; return its entry for the manifest."""
    src = ns.SOURCES[source]
    all_docs = list(ns.documents([source], data_dir=args.data_dir))
    selected = [d for d in all_docs if d.licence_class == cls and not d.held_out]
    held = [d for d in all_docs if d.licence_class == cls and d.held_out]
    other = Counter(d.licence_class for d in all_docs if d.licence_class != cls)
    entry_extra = {f"{k}_documents_excluded": n for k, n in sorted(other.items())}
    if not selected:
        return {}
    folder = text_root / source
    written, unchanged = write_texts(selected, folder)
    log(f"{source}: {len(selected)} documents ({written} written, {unchanged} unchanged), "
        f"{len(held)} held out, {dict(sorted(other.items())) or 'no other'} of other classes")
    part = parts_root / source
    stamp_file = part.with_name(part.name + ".stamp.json")
    stamp = _stamp(folder, model_desc)
    saved = json.loads(stamp_file.read_text(encoding="utf-8")) if stamp_file.is_file() else {}
    t0 = time.monotonic()
    if saved.get("stamp") == stamp and (part / "manifest.json").is_file():
        log(f"{source}: part up to date, not rebuilt")
        genres = {g: Counter(c) for g, c in saved["genres"].items()}
        seconds = None
    else:
        genres = genre_words(selected, nlp)
        reference.build(
            folder, part, name=f"contemporary-{source}", fmt="text", model=args.model, processes=args.processes,
            description=src.title, licence=src.licence_of(cls), build_date=args.build_date, progress=Progress(source),
        )
        seconds = round(time.monotonic() - t0, 1)
        stamp_file.write_text(json.dumps({"stamp": stamp, "genres": genres}, sort_keys=True, indent=1), encoding="utf-8")
        log(f"{source}: built in {seconds} s")
    m = reference.read_manifest(part)
    gsum = sum(c["words"] for c in genres.values())
    if gsum != m["words"]:
        log(f"warning: {source}: words per genre add up to {gsum}, the part counted {m['words']}")
    return {
        "entry": {
            "source": source,
            "title": src.title,
            "licence": src.licence_of(cls),
            "licence_class": cls,
            "citation": src.citation,
            "url": src.url,
            "words": int(m["words"]),
            "sentences": int(m["sentences"]),
            "documents": int(m["documents"]),
            "attachments": int(m["attachments"]),
            "genres": {g: {"documents": int(c["documents"]), "words": int(c["words"])} for g, c in sorted(genres.items())},
            "held_out_documents_excluded": len(held),
            **entry_extra,
        },
        "path": part,
        "seconds": seconds,
        "model": (m["model"], m["model_version"]),
    }


def combine(parts: list[dict], cls: str, out: Path, build_date: str, name: str) -> Path:
    """Add the parts' counts into one reference and save it."""
    patterns: Counter = Counter()
    lemmas: Counter = Counter()
    objects: Counter = Counter()
    for p in parts:
        ref = reference.load(p["path"])
        patterns.update(ref.patterns)
        lemmas.update(ref.lemmas)
        objects.update(ref.objects)
    models = {p["model"] for p in parts}
    if len(models) != 1:
        raise RuntimeError(f"the parts were parsed by different models: {sorted(models)}; rebuild them")
    (model, version), = models
    entries = sorted((p["entry"] for p in parts), key=lambda e: e["source"])
    manifest = {
        "name": name,
        "source": DESCRIPTION[cls],
        "licence": LICENCE[cls],
        "limits": LIMITS[cls],
        "format": "text",
        "words": sum(e["words"] for e in entries),
        "sentences": sum(e["sentences"] for e in entries),
        "documents": sum(e["documents"] for e in entries),
        "held_out_documents_excluded": sum(e["held_out_documents_excluded"] for e in entries),
        "held_out_rule": HELD_OUT_RULE,
        "model": model,
        "model_version": version,
        "extractor_version": EXTRACTOR_VERSION,
        "build_date": build_date,
        "parts": entries,
    }
    json.dumps(manifest)  # must serialise
    return reference.save(reference.Reference(manifest=manifest, patterns=patterns, lemmas=lemmas, objects=objects), out)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Rebuild the contemporary native reference from shared/data/native/.")
    ap.add_argument("--data-dir", type=Path, default=None, help=f"shared data folder (default {ns.DATA_DIR})")
    ap.add_argument("--processes", type=int, default=2, help="parser processes (default 2)")
    ap.add_argument("--build-date", default=dt.date.today().isoformat(), help="date recorded in the manifest (default today)")
    ap.add_argument("--model", default=None, help="spaCy pipeline (default: hingeword's default)")
    ap.add_argument("--build-dir", type=Path, default=REPO / "build", help="working folder (default build/)")
    ap.add_argument("--sources", nargs="*", default=None, help=f"only these sources ({', '.join(ns.SOURCE_NAMES)})")
    ap.add_argument("--noncommercial", action="store_true",
                    help="build contemporary-nc from the noncommercial parts instead (never bundled; needs --out)")
    ap.add_argument("--out", type=Path, default=None, help=f"output folder (default {BUNDLED_OUT.relative_to(REPO)})")
    args = ap.parse_args(argv)
    cls = ns.NONCOMMERCIAL if args.noncommercial else ns.BUNDLED
    if args.noncommercial and args.out is None:
        ap.error("--noncommercial needs --out (e.g. WORKSPACE/references/contemporary-nc): it is never bundled")
    if args.noncommercial and args.out.resolve().is_relative_to(BUNDLED_OUT.parent.resolve()):
        ap.error("the noncommercial reference must not be written into the bundled data folder")
    out = args.out or BUNDLED_OUT
    name = "contemporary-nc" if args.noncommercial else "contemporary"
    if not ns.available(args.data_dir):
        log(f"native data not found under {args.data_dir or ns.DATA_DIR}/native")
        return 1
    try:
        dt.date.fromisoformat(args.build_date)
    except ValueError:
        ap.error(f"--build-date must be YYYY-MM-DD, not {args.build_date!r}")
    tag = "contemporary-nc" if args.noncommercial else "contemporary"
    text_root = args.build_dir / f"{tag}-text"
    parts_root = args.build_dir / f"{tag}-parts"
    parts_root.mkdir(parents=True, exist_ok=True)

    from hingeword.parse import load_model

    nlp, info = load_model(args.model)
    model_desc = {"model": info.name, "model_version": info.version}
    started = time.monotonic()
    parts = []
    for source in sorted(args.sources or ns.SOURCE_NAMES):
        part = build_part(source, cls, args, nlp, model_desc, text_root, parts_root)
        if part:
            parts.append(part)
    if not parts:
        log("nothing to build")
        return 1
    path = combine(parts, cls, out, args.build_date, name)
    total = round(time.monotonic() - started, 1)
    m = reference.read_manifest(path)
    times_file = args.build_dir / f"{tag}-build-times.json"
    times = {"processes": args.processes, "total_seconds": total,
             "parts_seconds": {p["entry"]["source"]: p["seconds"] for p in parts},
             "finished": dt.datetime.now().isoformat(timespec="seconds")}
    times_file.write_text(json.dumps(times, indent=1, sort_keys=True) + "\n", encoding="utf-8")
    log(f"{name}: {m['words']:,} words, {m['documents']:,} documents, {m['attachments']:,} attachments, "
        f"{m['patterns']:,} patterns -> {path} ({total // 60:.0f} min {total % 60:.0f} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())

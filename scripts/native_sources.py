#!/usr/bin/env python3
"""Read the native collections in ``shared/data/native/`` as plain running text.

Importable (``sys.path.insert(0, str(repo / "scripts"))``; ``import native_sources``)
and a command line::

    python scripts/native_sources.py summary      # documents and words per source and genre
    python scripts/native_sources.py licences     # the licence table below
    python scripts/native_sources.py show SOURCE DOC_ID

Every document is a :class:`Document` (source, genre, doc_id, licence class, text),
read straight from the tarballs with :mod:`tarfile`, in a fixed order (source,
then doc_id). CoNLL-U documents also carry their gold sentences
(:class:`GoldSentence`: ``# sent_id``, ``# text`` and the word rows) for checks of
extraction against gold trees.

The text never goes into the repository: the reference builder writes it to the
git-ignored ``build/`` folder and commits counts only.

Held-out split (other code depends on exactly this rule): a document is held out
when ``int(sha256(f"{source}:{doc_id}")[:8], 16) % 10 == 0`` (:func:`is_held_out`).
Held-out documents never go into a bundled reference; they serve benchmarks.

Licence classes (:data:`SOURCES`): ``bundled`` — the licence allows shipping
counts derived from the text inside an MIT-licensed project, commercial use
included (CC BY, CC BY-SA, public domain, MASC's terms); ``noncommercial`` — only
for a user who accepts non-commercial terms (never bundled).

Standard library only, plus :mod:`hingeword.conllu` for reading CoNLL-U.
"""

from __future__ import annotations

import argparse
import hashlib
import html
import io
import os
import re
import sys
import tarfile
from collections import Counter, defaultdict
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
#: Default location of the shared data (``HINGEWORD_SHARED_DATA`` overrides it).
DATA_DIR = Path(os.environ.get("HINGEWORD_SHARED_DATA", REPO.parent / "shared" / "data"))

BUNDLED = "bundled"
NONCOMMERCIAL = "noncommercial"


# --------------------------------------------------------------------------- licences


@dataclass(frozen=True)
class Source:
    """One native collection: where it is, its licence and which genres may be bundled."""

    name: str
    archive: str  # file name under native/
    title: str
    licence: str
    citation: str
    url: str
    #: genre -> licence class; genres not listed take ``default_class``
    genre_classes: dict[str, str] = field(default_factory=dict)
    default_class: str = BUNDLED
    #: what the licence decision rests on (files read, README lines)
    licence_basis: str = ""
    #: licence of the documents of one class, where it differs from ``licence``
    class_licences: dict[str, str] = field(default_factory=dict)

    def licence_class(self, genre: str) -> str:
        return self.genre_classes.get(genre, self.default_class)

    def licence_of(self, cls: str) -> str:
        """The licence that covers this source's documents of class ``cls``."""
        return self.class_licences.get(cls, self.licence)


# Licence facts, read on 2026-12-03 from shared/data/README.md ("data README") and
# from every licence/README file inside the tarballs:
#
# * ud-english-ewt.tar.gz holds only EWT/*.conllu (no README or LICENSE file); the data
#   README gives CC BY-SA 4.0 for the whole treebank.
# * ud-english-gum.tar.gz holds only GUM/*.conllu (no README or LICENSE file); each
#   document's "# meta::sourceURL" names its origin. The data README: "whole treebank
#   CC BY-NC-SA 4.0; Wikinews/Wikivoyage (news, interview, bio, voyage), OpenStax
#   textbooks, vlogs, speeches and conversation are CC BY or public domain; wikiHow
#   (whow) and fiction are CC BY-NC-SA only". Nothing in the data README or the tarball
#   establishes a commercial-friendly licence for academic (journal articles of several
#   publishers), court (transcripts from several courts), essay (pressbooks/libretexts),
#   letter (archives of several libraries) and podcast (archive.org, freakonomics,
#   soundcloud): they go to the noncommercial class with whow and fiction. The
#   sourceURLs agree with the data README for the bundled genres: bio = en.wikipedia.org
#   (CC BY-SA), news/interview = en.wikinews.org (CC BY), voyage = en.wikivoyage.org
#   (CC BY-SA), textbook = openstax.org and two other open textbook sites; vlog =
#   youtube.com, speech = government and parliament sites, conversation = the Santa
#   Barbara corpus pages at ucsb.edu (their licences as the data README states them).
# * masc.tar.gz holds masc_tagged/categories.txt (file -> genre) and the tagged files;
#   no licence file. The data README quotes MASC's terms: "may be used for linguistic
#   education, research, and development, including commercial development".
# * movie-reviews.tar.gz: movie_reviews/README says "Distributed with NLTK with
#   permission from the authors" and gives the citation (Pang & Lee, ACL 2004); the
#   data README gives CC BY 4.0 as distributed with NLTK.
# * product-reviews.tar.gz: pros_cons/README.txt says '"Pros and cons dataset by Bing
#   Liu [http://www.cs.uic.edu/~liub] is licensed under CC BY 4.0 International"';
#   product_reviews_1/README.txt and product_reviews_2/README.txt name the annotators
#   and papers (Hu & Liu 2004; Ding, Liu & Yu 2008) but no licence; the data README
#   gives CC BY 4.0 as distributed with NLTK for the whole file.
# * state-union.tar.gz: state_union/README names the C-Span source and Kathleen Ahrens
#   as compiler; the addresses are works of US presidents in office (public domain, as
#   the data README says).
SOURCES: dict[str, Source] = {
    s.name: s
    for s in (
        Source(
            name="ewt",
            archive="ud-english-ewt.tar.gz",
            title="Universal Dependencies English Web Treebank (UD_English-EWT)",
            licence="CC BY-SA 4.0",
            citation='Silveira et al. 2014, "A Gold Standard Dependency Corpus for English" (LREC); UD_English-EWT',
            url="https://github.com/UniversalDependencies/UD_English-EWT",
            licence_basis="data README (no licence file in the tarball)",
        ),
        Source(
            name="gum",
            archive="ud-english-gum.tar.gz",
            title="Georgetown University Multilayer corpus (GUM), UD_English-GUM",
            licence="CC BY-NC-SA 4.0 as a whole; the bundled genres' sources are CC BY, CC BY-SA or public domain",
            citation='Zeldes 2017, "The GUM Corpus: Creating Multilayer Resources in the Classroom" (Language Resources and Evaluation 51)',
            url="https://github.com/UniversalDependencies/UD_English-GUM",
            genre_classes={
                "bio": BUNDLED, "conversation": BUNDLED, "interview": BUNDLED, "news": BUNDLED,
                "speech": BUNDLED, "textbook": BUNDLED, "vlog": BUNDLED, "voyage": BUNDLED,
                "whow": NONCOMMERCIAL, "fiction": NONCOMMERCIAL,
                # no commercial-friendly licence established (see the comment above)
                "academic": NONCOMMERCIAL, "court": NONCOMMERCIAL, "essay": NONCOMMERCIAL,
                "letter": NONCOMMERCIAL, "podcast": NONCOMMERCIAL,
            },
            default_class=NONCOMMERCIAL,
            licence_basis="data README; per-document # meta::sourceURL (no licence file in the tarball)",
            class_licences={
                BUNDLED: "CC BY, CC BY-SA or public domain by genre source (Wikipedia, Wikinews, Wikivoyage, "
                         "open textbooks, vlogs, speeches, conversation), as the data README states",
                NONCOMMERCIAL: "CC BY-NC-SA 4.0 (GUM as a whole; wikiHow and fiction are CC BY-NC-SA only, the "
                               "other genres have no commercial-friendly licence established)",
            },
        ),
        Source(
            name="masc",
            archive="masc.tar.gz",
            title="Manually Annotated Sub-Corpus (MASC) of the Open American National Corpus, tagged text",
            licence='MASC terms: "may be used for linguistic education, research, and development, including commercial development"',
            citation='Ide et al. 2010, "MASC: the Manually Annotated Sub-Corpus of American English" (LREC); American National Corpus',
            url="https://anc.org/data/masc/",
            genre_classes={"spam": "excluded"},
            licence_basis="data README (no licence file in the tarball); spam is not native writing and is skipped",
        ),
        Source(
            name="movie-reviews",
            archive="movie-reviews.tar.gz",
            title="Sentiment Polarity Dataset v2.0 (2,000 film reviews)",
            licence="CC BY 4.0 as distributed with NLTK",
            citation='Pang & Lee 2004, "A Sentimental Education: Sentiment Analysis Using Subjectivity Summarization Based on Minimum Cuts" (ACL)',
            url="http://www.cs.cornell.edu/people/pabo/movie-review-data/",
            licence_basis='data README; movie_reviews/README: "Distributed with NLTK with permission from the authors"',
        ),
        Source(
            name="product-reviews",
            archive="product-reviews.tar.gz",
            title="Customer review datasets (5 and 9 products) and the pros/cons dataset",
            licence="CC BY 4.0 as distributed with NLTK",
            citation='Hu & Liu 2004, "Mining and Summarizing Customer Reviews" (KDD); Ding, Liu & Yu 2008 (WSDM); '
                     'Ganapathibhotla & Liu 2008, "Mining Opinions in Comparative Sentences" (COLING)',
            url="http://www.cs.uic.edu/~liub/FBS/FBS.html",
            licence_basis="data README; pros_cons/README.txt states CC BY 4.0; the two review READMEs state no licence",
        ),
        Source(
            name="state-union",
            archive="state-union.tar.gz",
            title="C-Span State of the Union Address Corpus, 1945-2006",
            licence="public domain (addresses of US presidents in office)",
            citation="C-Span State of the Union Address Corpus, compiled by Kathleen Ahrens",
            url="http://www.c-span.org/executive/stateoftheunion.asp",
            licence_basis="data README; state_union/README",
        ),
    )
}
SOURCE_NAMES = tuple(sorted(SOURCES))


# ------------------------------------------------------------------------ records


@dataclass(frozen=True)
class GoldSentence:
    """One gold sentence of a CoNLL-U document."""

    sent_id: str
    text: str
    rows: tuple[tuple[str, ...], ...]  # 10-column word lines


@dataclass(frozen=True)
class Document:
    source: str
    genre: str
    doc_id: str
    text: str
    licence_class: str
    sentences: tuple[GoldSentence, ...] = ()

    @property
    def held_out(self) -> bool:
        return is_held_out(self.source, self.doc_id)


def is_held_out(source: str, doc_id: str) -> bool:
    """The held-out rule: one document in ten, by hash of ``source:doc_id``."""
    return int(hashlib.sha256(f"{source}:{doc_id}".encode()).hexdigest()[:8], 16) % 10 == 0


def archive_path(source: str, data_dir: str | Path | None = None) -> Path:
    return Path(data_dir or DATA_DIR) / "native" / SOURCES[source].archive


def available(data_dir: str | Path | None = None) -> bool:
    """True when every tarball is present."""
    return all(archive_path(s, data_dir).is_file() for s in SOURCES)


def _members(path: Path) -> Iterator[tuple[str, bytes]]:
    with tarfile.open(path, "r:gz") as tar:
        for m in tar.getmembers():
            if m.isfile():
                fh = tar.extractfile(m)
                if fh is not None:
                    yield m.name, fh.read()


# ------------------------------------------------------------------ detokenising

#: Tokens written without a space before them.
_ATTACH_LEFT = frozenset({",", ".", ";", ":", "?", "!", ")", "]", "}", "%", "...", "''", "'s", "'S"})
#: Tokens written without a space after them.
_ATTACH_RIGHT = frozenset({"(", "[", "{", "$", "#", "``"})
#: Clitics the tokenisers split off ("do n't", "i 'm", "ca n't").
_CLITICS = frozenset({"n't", "'s", "'m", "'re", "'ve", "'ll", "'d", "'em"})


def detokenise(tokens: list[str]) -> str:
    """Join the tokens of one line into running text.

    No space before closing punctuation or a clitic (``n't``, ``'s``, ``'m`` ...:
    "do n't" -> "don't", "i 'm" -> "i'm"), none after an opening bracket; a plain
    ``"`` alternates between opening and closing within the line (````` and
    ``''`` are written as ``"``). "gon na"/"wan na" are rejoined.
    """
    out: list[str] = []
    glue = True  # no space before the next token
    quote_open = False
    for i, tok in enumerate(tokens):
        low = tok.lower()
        if tok in ('"', "``", "''"):
            if tok == "``":
                closing = False
            elif tok == "''" and quote_open:
                closing = True
            else:
                closing = quote_open
            quote_open = not closing
            left, right = closing, not closing
            text = '"'
        else:
            left = tok in _ATTACH_LEFT or low in _CLITICS or (low == "na" and i and tokens[i - 1].lower() in ("gon", "wan"))
            right = tok in _ATTACH_RIGHT
            text = tok
        if out and not (glue or left):
            out.append(" ")
        out.append(text)
        glue = right
    return "".join(out)


_LONE_I = re.compile(r"(?<![\w'/-])i(?=[\s,.;:!?)]|'[a-z]|$)")


def truecase_line(line: str) -> str:
    """Undo lower-casing where it is certain: "i" (and "i'm") and the first letter."""
    line = _LONE_I.sub("I", line)
    for k, ch in enumerate(line):
        if ch.isalpha():
            return line[:k] + ch.upper() + line[k + 1 :]
        if not (ch.isspace() or ch in "\"'(["):
            break
    return line


# ------------------------------------------------------------------------ readers


def _conllu_documents(source: str, path: Path) -> Iterator[Document]:
    """EWT and GUM: one document per ``# newdoc``, text from ``# text``, a paragraph per ``# newpar``."""
    from hingeword.conllu import read_blocks

    src = SOURCES[source]
    for name, data in _members(path):
        if not name.endswith(".conllu"):
            continue
        lines = io.StringIO(data.decode("utf-8"))
        doc_id = genre = ""
        paragraphs: list[list[str]] = []
        sents: list[GoldSentence] = []

        def flush() -> Iterator[Document]:
            if doc_id and sents:
                text = "\n\n".join(" ".join(p) for p in paragraphs if p) + "\n"
                yield Document(source, genre, doc_id, text, src.licence_class(genre), tuple(sents))

        for comments, rows in read_blocks(lines, name):
            if "newdoc id" in comments:
                yield from flush()
                doc_id = comments["newdoc id"]
                genre = comments.get("meta::genre") or _ewt_genre(doc_id)
                paragraphs, sents = [], []
            if not doc_id:  # a file without # newdoc: the file is the document
                doc_id = Path(name).name.removesuffix(".conllu")
                genre = _ewt_genre(doc_id)
            if "newpar" in comments or "newpar id" in comments or not paragraphs:
                paragraphs.append([])
            text = comments.get("text", "")
            if text:
                paragraphs[-1].append(text)
            sents.append(GoldSentence(comments.get("sent_id", ""), text, tuple(tuple(r) for r in rows)))
        yield from flush()


def _ewt_genre(doc_id: str) -> str:
    """EWT's document ids start with the genre: answers-, email-, newsgroup-, reviews-, weblog-."""
    return doc_id.split("-", 1)[0].split("_", 1)[0].lower() or "unknown"


_MASC_TOKEN = re.compile(r"^(.+)_([A-Z$#:,.()`'\"\-/*;|]+)$")
#: MASC files that categories.txt does not list; genre read from the text itself
#: (an interview transcript; two short stories by one author).
_MASC_UNLISTED = {"interview_nathan_hole": "interview", "cable_spool_fort": "fiction", "easy_money": "fiction"}


def masc_word(token: str) -> str:
    """The word of a MASC ``word_TAG`` token (the tag follows the last ``_``)."""
    m = _MASC_TOKEN.match(token)
    return m.group(1) if m else token


_CURLY_CLITIC_TAILS = frozenset({"s", "t", "d", "ll", "re", "m", "ve", "S", "T"})


def _rejoin_curly_clitics(words: list[str]) -> list[str]:
    """Some MASC files split at a curly apostrophe ("don ’ t", "Nathan ’ s"): rejoin as "don't"."""
    out: list[str] = []
    i = 0
    while i < len(words):
        w = words[i]
        if w == "\u2019" and out and i + 1 < len(words) and words[i + 1] in _CURLY_CLITIC_TAILS:
            out[-1] = out[-1] + "'" + words[i + 1]
            i += 2
            continue
        out.append(w.replace("\u2019", "'") if len(w) > 1 else w)
        i += 1
    return out


def render_masc(raw: str) -> str:
    """Tagged MASC text -> running text: a line per source line, blank lines kept as paragraph breaks."""
    paragraphs: list[list[str]] = [[]]
    for line in raw.splitlines():
        tokens = line.split()
        if not tokens:
            if paragraphs[-1]:
                paragraphs.append([])
            continue
        words = _rejoin_curly_clitics([masc_word(t) for t in tokens])
        spoken_i = ["I" if w == "i" else w for w in words]  # transcripts write "i"
        paragraphs[-1].append(detokenise(spoken_i))
    return "\n\n".join("\n".join(p) for p in paragraphs if p) + "\n"


def _masc_documents(path: Path) -> Iterator[Document]:
    src = SOURCES["masc"]
    members = dict(_members(path))
    genres: dict[str, str] = {}
    for name, data in members.items():
        if name.endswith("categories.txt"):
            for line in data.decode("utf-8").splitlines():
                parts = line.split()
                if len(parts) == 2:
                    genres[Path(parts[0]).stem] = parts[1]
    for name, data in members.items():
        if not name.endswith(".txt") or name.endswith("categories.txt"):
            continue
        doc_id = Path(name).stem
        genre = genres.get(doc_id) or _MASC_UNLISTED.get(doc_id, "uncategorised")
        cls = src.licence_class(genre)
        if cls == "excluded":
            continue
        yield Document("masc", genre, doc_id, render_masc(data.decode("utf-8", errors="replace")), cls)


def render_movie_review(raw: str) -> str:
    """A Pang & Lee review: tokenised, lower-cased, a sentence a line -> running text, one paragraph."""
    lines = [truecase_line(detokenise(line.split())) for line in raw.splitlines() if line.strip()]
    return "\n".join(lines) + "\n"


def _movie_documents(path: Path) -> Iterator[Document]:
    src = SOURCES["movie-reviews"]
    for name, data in _members(path):
        parts = Path(name).parts
        if not name.endswith(".txt") or len(parts) < 3:
            continue
        doc_id = f"{parts[-2]}/{Path(name).stem}"  # neg/cv000_29416
        yield Document("movie-reviews", "film-review", doc_id, render_movie_review(data.decode("utf-8", errors="replace")),
                       src.licence_class("film-review"))


_HU_LIU_TITLE = re.compile(r"^\[t\]")


def hu_liu_reviews(raw: str, tokenised: bool) -> list[str]:
    """Split a Hu & Liu file into reviews (a ``[t]`` line starts one) of plain sentences.

    Each sentence line is ``features##sentence``; the feature annotations
    (``picture[+2]``, ``[u]``, ``[cs]`` ...) before ``##`` and the ``[t]`` titles
    are dropped, as are the ``*`` header lines. A file without ``[t]`` lines is one review.
    """
    reviews: list[list[str]] = [[]]
    for line in raw.splitlines():
        if line.startswith("*"):
            continue
        if _HU_LIU_TITLE.match(line):
            if reviews[-1]:
                reviews.append([])
            continue
        if "##" not in line:
            continue
        sentence = line.split("##", 1)[1].strip()
        if not sentence:
            continue
        if tokenised:
            sentence = truecase_line(detokenise(sentence.split()))
        reviews[-1].append(sentence)
    return ["\n".join(r) + "\n" for r in reviews if r]


_PROS_CONS = re.compile(r"<(Pros|Cons)>(.*?)(?:</\1>|$)", re.IGNORECASE)
_PROS_CONS_PER_DOC = 200


def pros_cons_entries(raw: str) -> list[str]:
    """The entries of a pros/cons file, markup stripped and entities decoded (twice: ``&amp;quot;``)."""
    out = []
    for line in raw.splitlines():
        m = _PROS_CONS.search(line)
        if not m:
            continue
        text = html.unescape(html.unescape(m.group(2))).strip()
        if text:
            out.append(text)
    return out


def _product_documents(path: Path) -> Iterator[Document]:
    src = SOURCES["product-reviews"]
    for name, data in _members(path):
        p = Path(name)
        if p.suffix != ".txt" or p.name.lower() == "readme.txt":
            continue
        raw = data.decode("utf-8", errors="replace")
        folder = p.parent.name
        if folder == "pros_cons":
            entries = pros_cons_entries(raw)
            # documents of 200 consecutive entries, so that the held-out split is not all or nothing
            for k in range(0, len(entries), _PROS_CONS_PER_DOC):
                doc_id = f"{folder}/{p.stem}/{k // _PROS_CONS_PER_DOC + 1:04d}"
                text = "\n\n".join(entries[k : k + _PROS_CONS_PER_DOC]) + "\n"
                yield Document("product-reviews", "pros-cons", doc_id, text, src.licence_class("pros-cons"))
        else:
            # product_reviews_1 is tokenised and lower-cased ("i 'm"), product_reviews_2 is not
            for k, text in enumerate(hu_liu_reviews(raw, tokenised=folder == "product_reviews_1"), 1):
                doc_id = f"{folder}/{p.stem.replace(' ', '_')}/{k:04d}"
                yield Document("product-reviews", "product-review", doc_id, text, src.licence_class("product-review"))


def _state_union_documents(path: Path) -> Iterator[Document]:
    src = SOURCES["state-union"]
    for name, data in _members(path):
        p = Path(name)
        if p.suffix != ".txt":
            continue
        text = data.decode("utf-8", errors="replace").replace("\r\n", "\n")
        yield Document("state-union", "speech", p.stem, text.strip() + "\n", src.licence_class("speech"))


_READERS = {
    "ewt": lambda path: _conllu_documents("ewt", path),
    "gum": lambda path: _conllu_documents("gum", path),
    "masc": _masc_documents,
    "movie-reviews": _movie_documents,
    "product-reviews": _product_documents,
    "state-union": _state_union_documents,
}


def documents(
    sources: Iterable[str] | None = None,
    *,
    data_dir: str | Path | None = None,
    split: str = "all",
    licence_class: str | None = None,
) -> Iterator[Document]:
    """Documents of ``sources`` (default: all), sorted by source, then doc_id.

    :param split: ``all``, ``reference`` (not held out) or ``held-out``.
    :param licence_class: ``bundled`` or ``noncommercial`` to keep only that class.
    """
    if split not in ("all", "reference", "held-out"):
        raise ValueError(f"unknown split {split!r} (all, reference, held-out)")
    for source in sorted(sources or SOURCE_NAMES):
        if source not in SOURCES:
            raise ValueError(f"unknown source {source!r} (known: {', '.join(SOURCE_NAMES)})")
        docs = sorted(_READERS[source](archive_path(source, data_dir)), key=lambda d: d.doc_id)
        seen: set[str] = set()
        for d in docs:
            if d.doc_id in seen:
                raise ValueError(f"{source}: duplicate document id {d.doc_id!r}")
            seen.add(d.doc_id)
            if licence_class is not None and d.licence_class != licence_class:
                continue
            if split == "reference" and d.held_out or split == "held-out" and not d.held_out:
                continue
            yield d


def held_out_documents(sources: Iterable[str] | None = None, *, data_dir: str | Path | None = None,
                       licence_class: str | None = None) -> Iterator[Document]:
    """The held-out documents (for benchmarks), sorted by source, then doc_id."""
    return documents(sources, data_dir=data_dir, split="held-out", licence_class=licence_class)


def safe_name(doc_id: str) -> str:
    """A file name for a document id (``neg/cv000_29416`` -> ``neg__cv000_29416``)."""
    return re.sub(r"[^A-Za-z0-9._-]+", "_", doc_id.replace("/", "__"))


_WORD = re.compile(r"[^\W\d_]", re.UNICODE)


def rough_words(text: str) -> int:
    """Whitespace tokens containing a letter (a quick size, not the reference's count)."""
    return sum(1 for t in text.split() if _WORD.search(t))


# ---------------------------------------------------------------------------- CLI


def _summary(args) -> int:
    rows: dict[tuple[str, str], Counter] = defaultdict(Counter)
    for d in documents(args.source or None, data_dir=args.data_dir):
        c = rows[(d.source, d.genre)]
        c["class:" + d.licence_class] += 1
        part = "held" if d.held_out else "ref"
        c[f"docs_{part}"] += 1
        c[f"words_{part}"] += rough_words(d.text)
    print(f"{'source':16} {'genre':16} {'class':14} {'docs':>6} {'held':>5} {'words':>9} {'held words':>10}")
    for (source, genre), c in sorted(rows.items()):
        cls = ",".join(sorted(k[6:] for k in c if k.startswith("class:")))
        print(f"{source:16} {genre:16} {cls:14} {c['docs_ref'] + c['docs_held']:>6} {c['docs_held']:>5} "
              f"{c['words_ref'] + c['words_held']:>9} {c['words_held']:>10}")
    print("(words: whitespace tokens with a letter)")
    return 0


def _licences(args) -> int:
    for s in SOURCES.values():
        print(f"{s.name}: {s.title}\n  licence: {s.licence}\n  citation: {s.citation}\n  url: {s.url}\n"
              f"  basis: {s.licence_basis}")
        if s.genre_classes:
            for g, c in sorted(s.genre_classes.items()):
                print(f"    {g:14} {c}")
        print(f"    {'(other)':14} {s.default_class}")
    return 0


def _show(args) -> int:
    for d in documents([args.source], data_dir=args.data_dir):
        if d.doc_id == args.doc_id:
            sys.stdout.write(d.text)
            return 0
    print(f"no document {args.doc_id!r} in {args.source}", file=sys.stderr)
    return 1


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Read the native collections of shared/data/native/.")
    ap.add_argument("--data-dir", type=Path, default=None, help=f"shared data folder (default {DATA_DIR})")
    sub = ap.add_subparsers(dest="cmd", required=True)
    s = sub.add_parser("summary", help="documents and words per source and genre")
    s.add_argument("source", nargs="*", help=f"sources (default all: {', '.join(SOURCE_NAMES)})")
    sub.add_parser("licences", help="the licence table")
    sh = sub.add_parser("show", help="print one document's text")
    sh.add_argument("source", choices=SOURCE_NAMES)
    sh.add_argument("doc_id")
    args = ap.parse_args(argv)
    if args.cmd != "licences" and not available(args.data_dir):
        print(f"native data not found under {args.data_dir or DATA_DIR}/native", file=sys.stderr)
        return 1
    return {"summary": _summary, "licences": _licences, "show": _show}[args.cmd](args)


if __name__ == "__main__":
    sys.exit(main())

"""Decoding essay files: byte-order marks, UTF-8, the least odd single-byte code page
(charset-normalizer plus a re-ranking), Unicode normalisation, and the text of
``.docx`` (python-docx) and ``.odt`` (odfpy) files.
"""

from __future__ import annotations

import codecs
import re
import unicodedata
from pathlib import Path

import charset_normalizer

_NON_ASCII = re.compile(r"[^\x00-\x7f]")
_NON_ASCII_WORD = re.compile(r"\w*[^\x00-\x7f]\w*")
_LETTERS = re.compile(r"[^\W\d_]+")
_THREE = re.compile(r"[^\x00-\x7f]{3}")
_SCRIPTS = {"LATIN", "CYRILLIC", "GREEK", "ARABIC", "HEBREW", "ARMENIAN", "GEORGIAN", "THAI"}
_CJK = {"CJK", "HIRAGANA", "KATAKANA", "HANGUL", "IDEOGRAPHIC"}
_WINDOWS = ("cp1250", "cp1251", "cp1253", "cp1254", "cp1257", "cp1255", "cp1256", "cp1258")
_BOMS = ((codecs.BOM_UTF32_LE, "utf-32"), (codecs.BOM_UTF32_BE, "utf-32"),
         (codecs.BOM_UTF16_LE, "utf-16"), (codecs.BOM_UTF16_BE, "utf-16"))


def _normalise(text: str) -> str:
    text = text.replace("\ufeff", "").replace("\r\n", "\n").replace("\r", "\n")
    return unicodedata.normalize("NFC", text).strip()


def _script(char: str) -> str | None:
    first = unicodedata.name(char, "?").split()[0]
    return "CJK" if first in _CJK else first if first in _SCRIPTS else None


def _oddity(text: str) -> int:
    """Count signs that the non-ASCII characters of ``text`` were decoded wrongly.

    Each counts one: a symbol, digit or control character stuck to a letter
    ("M³ller", "£ukasz"); a capital right after a small letter ("ItĹs"); a word
    mixing scripts ("cafй"); three non-ASCII Latin letters in a row ("Äìèòðèé").
    Real words in any script rarely show these.
    """
    score = 0
    for m in _NON_ASCII.finditer(text):
        i, char = m.start(), m.group()
        cat = unicodedata.category(char)
        before = text[i - 1] if i else ""
        after = text[i + 1] if i + 1 < len(text) else ""
        if cat[0] in "SNC" and (before.isalpha() or after.isalpha()):
            score += 1
        elif cat == "Lu" and before.islower():
            score += 1
    for m in _NON_ASCII_WORD.finditer(text):
        for word in _LETTERS.findall(m.group()):
            scripts = {_script(c) for c in word} - {None}
            if len(scripts) > 1 or (scripts == {"LATIN"} and _THREE.search(word)):
                score += 1
    return score


def _decode(data: bytes, forced: str | None = None) -> tuple[str, str] | None:
    """Decode bytes: a BOM, else strict UTF-8, else the least odd single-byte guess.

    ``forced`` (the user's ``--encoding``) replaces the guessing for bytes that are
    not UTF-8: they are decoded strictly with it, or not at all.

    If charset-normalizer finds no match the bytes are not text. Otherwise the
    guesses are cp1252, its best match, then the other Windows code pages; the one
    with the lowest :func:`_oddity` wins, the earlier on a tie.
    charset-normalizer alone is unreliable on English text with a few accented
    letters: with version 3.5.3 it reads cp1252 "naïve" as cp1250 "naďve" or cp775
    "na’ve", and often misses cp1251/cp1253 names among English words.

    :returns: ``(text, encoding)``, or None if nothing fits.
    """
    for bom, name in _BOMS:
        if data.startswith(bom):
            try:
                return data.decode(name), name
            except UnicodeDecodeError:
                return None
    try:
        return data.decode("utf-8-sig"), "utf-8"
    except UnicodeDecodeError:
        pass
    if forced:
        try:
            return data.decode(forced), codecs.lookup(forced).name
        except UnicodeDecodeError:
            return None
    best = charset_normalizer.from_bytes(data).best()
    if best is None:  # charset-normalizer finds no text encoding at all
        return None
    names = ["cp1252", best.encoding, *_WINDOWS]
    guesses = []
    for name in dict.fromkeys(codecs.lookup(n).name for n in names):
        try:
            text = data.decode(name)
        except UnicodeDecodeError:
            continue
        guesses.append((_oddity(text), len(guesses), text, name))
    if not guesses:
        return None
    _, _, text, name = min(guesses)
    return text, name


_CONTROL = re.compile(r"[\x00-\x08\x0b\x0e-\x1f]")


def _utf16_without_bom(data: bytes) -> tuple[str, str] | None:
    """Text saved as UTF-16 without a byte-order mark (NUL bytes, yet not binary).

    In UTF-16 the zero bytes of text fall on one side of each two-byte unit (the high
    byte of ASCII letters, spaces and digits: odd offsets little-endian, even ones
    big-endian) and almost never on the other; binary data has zeros on both. The
    first 8 KB decide the byte order; the whole file must then decode strictly, to
    text with no control characters but tab, newline, carriage return and form feed.
    """
    sample = data[:8192]
    half = len(sample) // 2
    if len(data) % 2 or half < 2:
        return None
    even, odd = sample[0::2].count(0), sample[1::2].count(0)
    for codec, zeros, others in (("utf-16-le", odd, even), ("utf-16-be", even, odd)):
        if zeros >= 0.05 * half and others <= 0.005 * half:
            try:
                text = data.decode(codec)
            except UnicodeDecodeError:
                continue
            if not _CONTROL.search(text) and not any(unicodedata.category(c) == "Cn" for c in text[:4096]):
                return text, codec
    return None


def _short(exc: Exception) -> str:
    text = str(exc.args[0]) if isinstance(exc, KeyError) and exc.args else str(exc)
    lines = text.strip().splitlines()
    msg = lines[0] if lines else type(exc).__name__
    return msg if len(msg) <= 100 else msg[:97] + "..."


def _size(n: int) -> str:
    for unit, factor in (("MB", 1_000_000), ("KB", 1_000)):
        if n >= factor:
            return f"{n / factor:.1f}".removesuffix(".0") + f" {unit}"
    return f"{n} bytes"


#: Longest essay read, in characters (about 35,000 words: far longer than an essay, well
#: under spaCy's default ``max_length`` of 1,000,000). Longer texts are skipped with a reason.
MAX_ESSAY_CHARS = 200_000
#: Largest unpacked part of a .docx/.odt (each), and of all parts together: a zip bomb
#: stops at the zip directory, before anything is unpacked.
MAX_PART_BYTES = 25_000_000
MAX_PACKAGE_BYTES = 100_000_000
#: Most paragraphs and XML elements in a document's text part. The libraries build one
#: object per node, so a "bomb" of many tiny nodes costs time and memory long before
#: its text is long; real essays stay far below (a 60-page document: ~3,000 paragraphs).
MAX_PARAGRAPHS = 20_000
MAX_ELEMENTS = 250_000

_MAIN_PART = {"docx": "word/document.xml", "odt": "content.xml"}
_PARAGRAPH = {"docx": {"{http://schemas.openxmlformats.org/wordprocessingml/2006/main}p"},
              "odt": {"{urn:oasis:names:tc:opendocument:xmlns:text:1.0}p",
                      "{urn:oasis:names:tc:opendocument:xmlns:text:1.0}h"}}


class TooLong(ValueError):
    """An essay over :data:`MAX_ESSAY_CHARS` characters (the reason says how long)."""


def too_long_reason(chars: int, limit: int = MAX_ESSAY_CHARS, *, at_least: bool = False) -> str:
    size = f"at least {chars:,}" if at_least else f"{chars:,}"
    return (f"longer than the {limit:,}-character limit for one essay ({size} characters); "
            "split it into one essay a file")


def _check_package(path: Path, kind: str, max_chars: int = MAX_ESSAY_CHARS) -> None:
    """Check a .docx/.odt before a library parses it, reading as little as needed.

    The zip directory must name the document's text part and promise no more than
    :data:`MAX_PART_BYTES` per part and :data:`MAX_PACKAGE_BYTES` in all (``zipfile``
    never unpacks more than a part's directory entry promises). Then the text part is
    streamed (lxml ``iterparse``; no DTD, entities or network) and the count stops at
    the first limit passed: text over ``max_chars`` raises :class:`TooLong`; too many
    paragraphs or elements, ``ValueError``.
    """
    import zipfile

    from lxml import etree

    main = _MAIN_PART[kind]
    with zipfile.ZipFile(path) as z:
        infos = z.infolist()
        names = {i.filename for i in infos}
        if main not in names:
            raise ValueError(f"not a .{kind} document: it has no {main} (damaged, or another format renamed)")
        big = max(infos, key=lambda i: i.file_size)
        if big.file_size > MAX_PART_BYTES:
            raise ValueError(f"a part unpacks to {_size(big.file_size)}, over the {_size(MAX_PART_BYTES)} limit "
                             "(a damaged file or a zip bomb)")
        total = sum(i.file_size for i in infos)
        if total > MAX_PACKAGE_BYTES:
            raise ValueError(f"it unpacks to {_size(total)}, over the {_size(MAX_PACKAGE_BYTES)} limit "
                             "(a damaged file or a zip bomb)")
        chars = paragraphs = elements = 0
        with z.open(main) as fh:
            for _event, el in etree.iterparse(fh, events=("end",), resolve_entities=False, no_network=True,
                                              load_dtd=False, huge_tree=False, remove_comments=True):
                elements += 1
                if el.tag in _PARAGRAPH[kind]:
                    paragraphs += 1
                chars += len(el.text or "") + len(el.tail or "")
                if chars > max_chars:
                    raise TooLong(too_long_reason(chars, max_chars, at_least=True))
                if paragraphs > MAX_PARAGRAPHS or elements > MAX_ELEMENTS:
                    what = (f"more than {MAX_PARAGRAPHS:,} paragraphs" if paragraphs > MAX_PARAGRAPHS
                            else f"more than {MAX_ELEMENTS:,} XML elements")
                    raise ValueError(f"{what} (far more than an essay: a damaged or crafted file)")
                el.clear(keep_tail=True)
                while el.getprevious() is not None:  # keep memory flat
                    del el.getparent()[0]


def _docx_text(path: Path, max_chars: int = MAX_ESSAY_CHARS) -> str:
    import docx

    _check_package(path, "docx", max_chars)
    return "\n".join(p.text for p in docx.Document(str(path)).paragraphs)


def _odt_text(path: Path, max_chars: int = MAX_ESSAY_CHARS) -> str:
    from odf import teletype
    from odf.namespaces import TEXTNS
    from odf.opendocument import load

    _check_package(path, "odt", max_chars)
    wanted = {(TEXTNS, "p"), (TEXTNS, "h")}
    parts: list[str] = []

    def visit(node) -> None:
        for child in node.childNodes:
            if getattr(child, "qname", None) in wanted:
                parts.append(teletype.extractText(child))
            else:
                visit(child)

    visit(load(str(path)).text)
    return "\n".join(parts)

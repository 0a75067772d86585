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


def _docx_text(path: Path) -> str:
    import docx

    return "\n".join(p.text for p in docx.Document(str(path)).paragraphs)


def _odt_text(path: Path) -> str:
    from odf import teletype
    from odf.namespaces import TEXTNS
    from odf.opendocument import load

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

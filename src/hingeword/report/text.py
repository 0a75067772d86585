"""Text helpers of the report stage: highlighted segments, sentence views, the answer
key and number formatting (pattern labels live in :mod:`hingeword.record`).

Essay text reaches templates only as plain strings or as lists of ``(text, is_key)``
segments (:data:`Segments`), which the environment autoescapes.
"""

from __future__ import annotations

import hashlib
import re
import unicodedata
from dataclasses import dataclass

from ..extract import Attachment
from ..record import NO_PREP

#: Longest sentence shown whole; longer ones are cut around the pattern with "…".
MAX_SENTENCE_CHARS = 160

Segments = tuple[tuple[str, bool], ...]
Span = tuple[int, int]


@dataclass(frozen=True)
class SentenceView:
    """A sentence ready to show: text (maybe cut) and the pattern's spans inside it."""

    writer: str
    essay_id: str
    text: str
    gov: Span | None
    prep: Span | None
    position: int  # essay offset of the sentence, for a stable order
    object_class: str = ""  # class of the pattern's object (the suggestion may depend on it)

    @property
    def segments(self) -> Segments:
        return segments(self.text, [s for s in (self.gov, self.prep) if s])


# ------------------------------------------------------------------ helpers


#: Longest readable part of a report folder name, in UTF-8 bytes (file systems allow 255).
MAX_SLUG_BYTES = 80
#: Names Windows reserves for devices, whatever the extension.
_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)), *(f"lpt{i}" for i in range(1, 10))}


def slugify(name: str) -> str:
    """The report folder name of a class or term: readable, safe, and one per name.

    Letters, digits and marks of every script are kept (``"日本語クラス"`` stays as it is),
    lower-cased; any other run of characters becomes ``-``; the readable part is at most
    :data:`MAX_SLUG_BYTES` bytes. When that changed the name in any way (case, spaces,
    punctuation, length, a device name such as ``con``), the first 8 hex digits of the
    SHA-256 of the exact name are added, so two names never share a folder, even on a
    case-insensitive file system: ``"10b"`` → ``10b``, ``"10B"`` → ``10b-…``,
    ``"Класс А"`` → ``класс-а-…``, ``"../.."`` → ``unnamed-…``.
    """
    text = unicodedata.normalize("NFC", str(name))
    chars = [ch if unicodedata.category(ch)[0] in "LNM" or ch == "_" else "-" for ch in text.lower()]
    readable = re.sub(r"-{2,}", "-", "".join(chars)).strip("-_")
    while len(readable.encode("utf-8")) > MAX_SLUG_BYTES:
        readable = readable[:-1]
    readable = readable.rstrip("-_")
    if readable and readable == str(name) and readable not in _RESERVED:
        return readable
    digest = hashlib.sha256(str(name).encode("utf-8", "surrogatepass")).hexdigest()[:8]
    return f"{readable or 'unnamed'}-{digest}"


def segments(text: str, spans: list[Span]) -> Segments:
    """Split ``text`` into ``(piece, is_key)`` runs; overlapping or touching spans merge."""
    merged: list[list[int]] = []
    for s, e in sorted(sp for sp in spans if 0 <= sp[0] < sp[1] <= len(text)):
        if merged and s <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], e)
        else:
            merged.append([s, e])
    out: list[tuple[str, bool]] = []
    pos = 0
    for s, e in merged:
        if s > pos:
            out.append((text[pos:s], False))
        out.append((text[s:e], True))
        pos = e
    if pos < len(text):
        out.append((text[pos:], False))
    return tuple(out)


def sentence_view(a: Attachment, max_chars: int = MAX_SENTENCE_CHARS) -> SentenceView:
    """The attachment's sentence with its spans in sentence coordinates.

    Each whitespace character becomes a space (offsets stay valid), the ends are
    trimmed, and a sentence longer than ``max_chars`` is cut at word boundaries
    around the pattern and marked with ``…``. Offsets that do not fit the sentence
    (a damaged row) give a view without spans rather than a wrong highlight.
    """
    gov = (a.gov_start - a.sentence_start, a.gov_end - a.sentence_start)
    prep = (a.prep_start - a.sentence_start, a.prep_end - a.sentence_start)
    text = re.sub(r"\s", " ", a.sentence)  # one character for one: offsets stay valid
    lo, hi = len(text) - len(text.lstrip()), len(text.rstrip())
    if not all(lo <= s < e <= hi for s, e in (gov, prep)):
        return SentenceView(a.writer, a.essay_id, text[lo:hi], None, None, a.sentence_start, a.object_class)
    cut_lo, cut_hi = lo, hi
    if hi - lo > max_chars:
        k_lo, k_hi = min(gov[0], prep[0]), max(gov[1], prep[1])
        cut_lo = max(lo, k_lo - max(0, max_chars - (k_hi - k_lo)) // 2)
        cut_hi = min(hi, max(k_hi, cut_lo + max_chars))
        cut_lo = max(lo, min(cut_lo, k_lo, cut_hi - max_chars))
        if cut_lo > lo and text[cut_lo - 1] != " ":  # do not start inside a word
            space = text.find(" ", cut_lo, k_lo)
            cut_lo = space + 1 if space != -1 else k_lo
        if cut_hi < hi and text[cut_hi] != " ":  # nor end inside one
            space = text.rfind(" ", k_hi, cut_hi)
            cut_hi = space if space != -1 else k_hi
        while text[cut_lo] == " ":
            cut_lo += 1
        while text[cut_hi - 1] == " ":
            cut_hi -= 1
    prefix = "… " if cut_lo > lo else ""
    suffix = " …" if cut_hi < hi else ""
    shift = len(prefix) - cut_lo
    return SentenceView(a.writer, a.essay_id, prefix + text[cut_lo:cut_hi] + suffix,
                        (gov[0] + shift, gov[1] + shift), (prep[0] + shift, prep[1] + shift), a.sentence_start,
                        a.object_class)


def answer_key(view: SentenceView, learner_prep: str, suggested: str | None) -> tuple[str, Segments] | None:
    """The sentence rewritten with the native pattern, and its highlight.

    Three slot cases: a preposition replaced by another ("depend of" → "depend on");
    a preposition removed with one space beside it ("discuss about the plan" →
    "discuss the plan"); a preposition ``P`` inserted before a direct object
    ("listen music" → "listen to music") — or after the governor when the object
    comes first ("the music that I listen" → "… listen to"). ``None`` when there is
    no suggestion, it equals what the class wrote, or the view has no spans.
    """
    if not suggested or suggested == learner_prep or view.gov is None or view.prep is None:
        return None
    text, (ps, pe) = view.text, view.prep
    key: Span | None
    if learner_prep != NO_PREP and suggested != NO_PREP:
        word = suggested[0].upper() + suggested[1:] if text[ps:pe][:1].isupper() else suggested
        start, end, repl, key = ps, pe, word, (ps, ps + len(word))
    elif learner_prep != NO_PREP:
        if pe < len(text) and text[pe] == " ":
            start, end = ps, pe + 1
        elif ps > 0 and text[ps - 1] == " ":
            start, end = ps - 1, pe
        else:
            start, end = ps, pe
        repl, key = "", None
    elif ps >= view.gov[1]:
        start = end = ps
        repl, key = suggested + " ", (ps, ps + len(suggested))
    else:  # object before its verb (relative clause, question): the preposition follows the verb
        start = end = view.gov[1]
        repl, key = " " + suggested, (start + 1, start + 1 + len(suggested))
    new = text[:start] + repl + text[end:]
    shift = len(repl) - (end - start)
    gs, ge = view.gov
    gov = (gs, ge) if ge <= start else (gs + shift, ge + shift)
    return new, segments(new, [gov] + ([key] if key else []))


def number(x) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return None if v != v else v


def fmt_int(x) -> str:
    v = number(x)
    return "–" if v is None else f"{int(round(v)):,}"


def fmt_dec(x, places: int = 1, sign: bool = False) -> str:
    v = number(x)
    if v is None:
        return "–"
    if v in (float("inf"), float("-inf")):
        return "∞" if v > 0 else "−∞"
    s = f"{v:+,.{places}f}" if sign and round(v, places) != 0 else f"{v:,.{places}f}"
    return s.replace("-", "−")


def fmt_ratio(x) -> str:
    """A ratio with sensible precision: 324, 41.5, 2.35, 0.047."""
    v = number(x)
    if v is None or v in (float("inf"), float("-inf")) or v == 0:
        return fmt_dec(v, 0) if v is not None else "–"
    a = abs(v)
    if a >= 100:
        return fmt_dec(v, 0)
    if a >= 10:
        return fmt_dec(v, 1)
    if a >= 1:
        return fmt_dec(v, 2)
    if a < 0.0001:
        return "< 0.0001"
    return fmt_dec(v, 1 - int(f"{a:e}".split("e")[1]))  # two significant digits


def fmt_share(x) -> str:
    """A share 0..1 as a percentage: whole numbers from 10 %, one decimal below."""
    v = number(x)
    if v is None:
        return "–"
    p = 100 * v
    return f"{p:.0f}%" if p >= 9.95 or p == 0 else f"{p:.1f}%"

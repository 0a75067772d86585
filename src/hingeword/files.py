"""Writing output files safely: whole or not at all, and text that cannot harm a reader.

* :func:`atomic_path` — write to a unique temporary name beside the target and rename it
  into place, so that a full disk, a crash or a second process never leaves half a file
  under the real name (the temporary file is removed on failure).
* :func:`clean_text` — C0 control characters (other than tab and newline) replaced by a
  space: they break XLSX files and can move the cursor or recolour a terminal.
* :func:`neutralise_cell` — a CSV cell that a spreadsheet would run as a formula (starts
  with ``=``, ``+``, ``-``, ``@``, tab or carriage return) gets a leading apostrophe, as the
  OWASP guidance on CSV injection recommends (OWASP, "CSV Injection", community page, read
  from memory). A lone ``-`` (hingeword's "direct object" slot) is left as it is: it is
  not a formula.
"""

from __future__ import annotations

import contextlib
import os
import re
import secrets
from collections.abc import Iterator
from pathlib import Path

from .errors import HingewordError

_C0 = re.compile(r"[\x00-\x08\x0b-\x1f\x7f]")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def clean_text(text: str) -> str:
    """``text`` with C0 control characters except tab and newline (and DEL) replaced by spaces."""
    return _C0.sub(" ", text) if isinstance(text, str) else text


def neutralise_cell(value):
    """A CSV text cell made safe to open in a spreadsheet (see the module docstring)."""
    if isinstance(value, str) and value.startswith(_FORMULA_START) and value != "-":
        return "'" + value
    return value


@contextlib.contextmanager
def atomic_path(path: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; on success it replaces ``path`` in one rename.

    On any error the temporary file is removed and an ``OSError`` becomes a one-line
    :class:`HingewordError` naming the file (a full disk, a read-only folder).
    """
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{secrets.token_hex(4)}.tmp")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        yield tmp
        os.replace(tmp, path)
    except OSError as exc:
        raise HingewordError(f"cannot write {path}: {exc.strerror or exc}") from exc
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()


def write_text(path: str | Path, text: str) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically (see :func:`atomic_path`)."""
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(path)

"""The local web page: ``hingeword serve`` (needs the ``web`` extra: ``pip install "hingeword[web]"``).

A teacher creates classes and terms, uploads essays (files, a folder or a zip, and a
manifest), starts a scan and watches it, reads and prints the handouts, overview, student
sheets and trends, dismisses and restores patterns, downloads the exports and erases a
class or term, all in a browser on their own computer. Every step calls the same library
function as the command line.

Modules: :mod:`.store` (uploaded files in the workspace; no web dependency, also used by
``hingeword forget``), :mod:`.jobs` (background scans), :mod:`.security` (host check,
access token, body limit, CSRF) and :mod:`.app` (the Starlette routes). Only
:func:`serve` and :func:`create_app` import the web framework.
"""

from __future__ import annotations

import importlib.util
import secrets
import socket
from collections.abc import Callable
from pathlib import Path

from ..errors import HingewordError

__all__ = ["DEFAULT_PORT", "check_dependencies", "create_app", "serve"]

DEFAULT_PORT = 8765
#: Modules the web page needs (the ``web`` extra) and the packages that provide them.
_NEEDS = {"starlette": ("starlette",), "uvicorn": ("uvicorn",), "python-multipart": ("python_multipart", "multipart"),
          "itsdangerous": ("itsdangerous",)}


def check_dependencies() -> None:
    """Raise a one-line :class:`HingewordError` when the ``web`` extra is not installed."""
    missing = [pkg for pkg, mods in _NEEDS.items() if all(importlib.util.find_spec(m) is None for m in mods)]
    if missing:
        raise HingewordError(f"the web page needs the 'web' extra (missing: {', '.join(missing)}); install it with "
                             "pip install \"hingeword[web]\"")


def create_app(workspace: str | Path, *, scan_options: dict | None = None, top: int = 5, token: str | None = None,
               loopback_only: bool = True):
    """The Starlette application for one workspace (see :mod:`.app`)."""
    check_dependencies()
    from .app import Settings, create_app as make

    return make(Settings(Path(workspace), dict(scan_options or {}), top, token), loopback_only=loopback_only)


def _bind(host: str, port: int) -> socket.socket:
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    sock = socket.socket(family, socket.SOCK_STREAM)
    sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    try:
        sock.bind((host, port))
    except OSError as exc:
        sock.close()
        if port and exc.errno in (98, 48, 10048):  # address in use (Linux, macOS, Windows)
            raise HingewordError(f"port {port} is already in use; choose another with --port (or --port 0 for any "
                                 "free port)") from None
        raise HingewordError(f"cannot listen on {host}:{port}: {exc.strerror or exc}") from None
    sock.listen(64)
    sock.set_inheritable(True)
    return sock


def serve(workspace: str | Path, *, host: str = "127.0.0.1", port: int = DEFAULT_PORT, scan_options: dict | None = None,
          top: int = 5, say: Callable[[str], None] = print, open_browser: bool = False) -> None:
    """Run the web page until interrupted (Ctrl+C).

    Bound to a loopback address it answers only requests addressed to loopback; bound
    anywhere else it makes an access token and answers only requests that carry it (the
    address printed through ``say`` includes it).

    :raises HingewordError: the ``web`` extra is missing, or the address cannot be used.
    """
    check_dependencies()
    import uvicorn

    from .security import is_loopback

    loopback = is_loopback(host)
    token = None if loopback else secrets.token_urlsafe(24)
    sock = _bind(host, port)
    bound = sock.getsockname()[1]
    shown = host if host not in ("0.0.0.0", "::") else socket.gethostname()
    shown = f"[{shown}]" if ":" in shown else shown
    url = f"http://{shown}:{bound}/" + (f"?token={token}" if token else "")
    app = create_app(workspace, scan_options=scan_options, top=top, token=token, loopback_only=loopback)
    say(f"hingeword is running at {url}")
    say(f"workspace: {Path(workspace).resolve()}")
    if token:
        say("Anyone who can reach this computer and has that address can read the essays: share it with care.")
    say("Press Ctrl+C to stop.")
    if open_browser:
        import webbrowser

        webbrowser.open(url)
    config = uvicorn.Config(app, log_level="warning", access_log=False, lifespan="off")
    try:
        uvicorn.Server(config).run(sockets=[sock])
    finally:
        sock.close()

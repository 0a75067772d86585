"""What keeps the local page to its teacher: host check, access token, body limit, CSRF.

* **Host check** (bound to loopback): a request whose ``Host`` is not a loopback address or
  ``localhost`` is refused, so a web site that points its own name at 127.0.0.1 (DNS
  rebinding) cannot read the page.
* **Access token** (bound elsewhere): every request needs the token that ``hingeword serve``
  printed, first in the URL (``?token=…``), then in a cookie that the first visit sets; the
  token is then dropped from the address bar by a redirect.
* **Body limit**: a request body larger than the limit is refused with 413, whether or not it
  announces its length.
* **CSRF**: every form carries a per-session token (:func:`csrf_token`) that :func:`checked_form`
  compares with the session's; a request from another origin (``Origin``, ``Sec-Fetch-Site``
  or ``Referer`` naming another site) is refused before its body is read.
* **Headers**: a Content Security Policy that lets the page load nothing from the network and
  run only its own script file, no framing, no MIME sniffing, no referrer to other sites,
  and no caching of pages that show essays.

The session cookie is signed by Starlette's ``SessionMiddleware`` (itsdangerous) with a key
made when the server starts; it is ``SameSite=Strict``.
"""

from __future__ import annotations

import html
import ipaddress
import secrets
from http.cookies import SimpleCookie
from urllib.parse import parse_qsl, urlencode, urlsplit

from starlette.datastructures import FormData, Headers
from starlette.requests import Request

ACCESS_COOKIE = "hingeword_access"
CSRF_FIELD = "csrf_token"

CSP = ("default-src 'none'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data:; "
       "connect-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
_HEADERS = [
    (b"content-security-policy", CSP.encode()),
    (b"x-content-type-options", b"nosniff"),
    (b"x-frame-options", b"DENY"),
    (b"referrer-policy", b"same-origin"),
    (b"cross-origin-opener-policy", b"same-origin"),
    (b"cache-control", b"no-store"),
]


class Refused(Exception):
    """A request refused with a status and a message for the teacher."""

    def __init__(self, status: int, message: str):
        super().__init__(message)
        self.status = status
        self.message = message


def is_loopback(host: str) -> bool:
    """``localhost`` or a loopback address (127.0.0.0/8, ::1)."""
    name = host.strip("[]").lower()
    if name == "localhost":
        return True
    try:
        return ipaddress.ip_address(name).is_loopback
    except ValueError:
        return False


def _host_name(host_header: str) -> str:
    try:
        return urlsplit("//" + host_header).hostname or ""
    except ValueError:
        return ""


class _TooLarge(Exception):
    pass


class Guard:
    """ASGI middleware: host check or access token, body limit, security headers."""

    def __init__(self, app, *, token: str | None, loopback_only: bool, max_body: int):
        self.app = app
        self.token = token
        self.loopback_only = loopback_only
        self.max_body = max_body

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        headers = Headers(scope=scope)
        started = False

        async def send_with_headers(message):
            nonlocal started
            if message["type"] == "http.response.start":
                started = True
                have = {k.lower() for k, _ in message.get("headers", [])}
                message = {**message, "headers": [*message.get("headers", []),
                                                  *((k, v) for k, v in _HEADERS if k not in have)]}
            await send(message)

        if self.loopback_only and not is_loopback(_host_name(headers.get("host", ""))):
            return await _plain(send_with_headers, 403, "This page answers only at 127.0.0.1 or localhost.")
        if self.token is not None:
            query = parse_qsl(scope.get("query_string", b"").decode("latin-1"), keep_blank_values=True)
            given = dict(query).get("token")
            if given is not None and secrets.compare_digest(given.encode(), self.token.encode()):
                rest = urlencode([(k, v) for k, v in query if k != "token"])
                target = "/" + scope.get("path", "/").lstrip("/") + (f"?{rest}" if rest else "")  # never '//host'
                cookie = SimpleCookie()
                cookie[ACCESS_COOKIE] = self.token
                cookie[ACCESS_COOKIE]["path"] = "/"
                cookie[ACCESS_COOKIE]["httponly"] = True
                cookie[ACCESS_COOKIE]["samesite"] = "Strict"
                return await _redirect(send_with_headers, target, cookie.output(header="").strip())
            cookies = SimpleCookie()
            try:
                cookies.load(headers.get("cookie", ""))
            except Exception:  # noqa: BLE001 - a malformed cookie header is just no cookie
                cookies = SimpleCookie()
            held = cookies.get(ACCESS_COOKIE)
            if held is None or not secrets.compare_digest(held.value.encode(), self.token.encode()):
                return await _plain(send_with_headers, 403,
                                    "This hingeword page needs its access link: open the address with "
                                    "'?token=…' that 'hingeword serve' printed when it started.")
        length = headers.get("content-length")
        if length is not None and (not length.isdigit() or int(length) > self.max_body):
            return await _plain(send_with_headers, 413, _too_large(self.max_body))
        seen = 0

        async def counted():
            nonlocal seen
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > self.max_body:
                    raise _TooLarge
            return message

        try:
            await self.app(scope, counted, send_with_headers)
        except _TooLarge:
            if not started:
                await _plain(send_with_headers, 413, _too_large(self.max_body))


def _too_large(limit: int) -> str:
    return (f"That upload is larger than {limit // 1_000_000} MB. Upload the essays in smaller parts "
            "(for example one zip per half of the class).")


async def _plain(send, status: int, message: str) -> None:
    body = (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>hingeword</title></head>"
            f"<body><main><h1>hingeword</h1><p>{html.escape(message)}</p></main></body></html>").encode()
    await send({"type": "http.response.start", "status": status,
                "headers": [(b"content-type", b"text/html; charset=utf-8"), (b"content-length", str(len(body)).encode())]})
    await send({"type": "http.response.body", "body": body})


async def _redirect(send, location: str, set_cookie: str) -> None:
    await send({"type": "http.response.start", "status": 303,
                "headers": [(b"location", location.encode("latin-1", "replace")), (b"set-cookie", set_cookie.encode()),
                            (b"content-length", b"0")]})
    await send({"type": "http.response.body", "body": b""})


def csrf_token(request: Request) -> str:
    """The session's form token (made on first use)."""
    token = request.session.get("csrf")
    if not token:
        token = secrets.token_urlsafe(32)
        request.session["csrf"] = token
    return token


def same_origin(request: Request) -> None:
    """Refuse a request that a browser says comes from another site."""
    site = request.headers.get("sec-fetch-site")
    if site is not None and site not in ("same-origin", "none"):
        raise Refused(403, "This form was sent from another site, so it was refused.")
    own = f"{request.url.scheme}://{request.headers.get('host', '')}"
    origin = request.headers.get("origin")
    if origin is not None:
        if origin != own:
            raise Refused(403, "This form was sent from another site, so it was refused.")
        return
    referer = request.headers.get("referer")
    if referer:
        parts = urlsplit(referer)
        if f"{parts.scheme}://{parts.netloc}" != own:
            raise Refused(403, "This form was sent from another site, so it was refused.")


async def checked_form(request: Request, *, max_files: int = 0) -> FormData:
    """The POSTed form after the same-origin and CSRF checks (:class:`Refused` otherwise)."""
    same_origin(request)
    form = await request.form(max_files=max_files, max_fields=100, max_part_size=64 * 1024)
    sent = form.get(CSRF_FIELD)
    expected = request.session.get("csrf")
    if not expected or not isinstance(sent, str) or not secrets.compare_digest(sent.encode(), expected.encode()):
        await form.close()
        raise Refused(403, "This form has expired or did not come from this page. Go back, reload the page "
                           "and try again.")
    return form

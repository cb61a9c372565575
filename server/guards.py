"""The app's edge guards, one pure ASGI middleware: safe headers, writes only from our own
pages or deliberate API clients, bounded request bodies, no Host-derived redirects.

- Every response carries a Content-Security-Policy (the app's own scripts only, no framing),
  X-Content-Type-Options: nosniff, Referrer-Policy: same-origin and X-Frame-Options: DENY.
- A state-changing request (POST, PUT, PATCH, DELETE) from another origin is refused (403):
  browsers send Origin and Sec-Fetch-Site with cross-site requests, so a page elsewhere on
  the intranet cannot plant scenarios; API clients (scripts, curl) send neither.
- Its body must be of the route's media type (415): JSON for the JSON API, JSON or
  multipart for an import, CSV or multipart for lab readings. text/plain, which a browser
  sends cross-site without asking, is never accepted.
- The body is read here in full before the route runs: over ``max_bytes`` (declared or
  chunked) is a 413, a client that stops sending mid-body is dropped after
  ``body_timeout`` seconds (and at most a quarter of it more, see BodyDeadlines) with a 408.
- A path with a trailing slash is redirected to the path without it by a relative Location
  (never built from the Host header).
"""

import asyncio
import json
import logging
import re
import weakref
from urllib.parse import urlsplit

log = logging.getLogger("presscycle")

UNSAFE_METHODS = {"POST", "PUT", "PATCH", "DELETE"}
#: Media types a write route accepts; any other write route takes JSON only.
BODY_TYPES = {
    "/api/v1/scenarios/import": ("application/json", "multipart/form-data"),
    "/api/v1/lab-readings": ("text/csv", "multipart/form-data"),
}
JSON_ONLY = ("application/json",)

CONTENT_SECURITY_POLICY = (
    "default-src 'self'; script-src 'self'; "
    # plotly.js sets its chart styles from script: inline styles, never inline scripts
    "style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; font-src 'self' data:; "
    "connect-src 'self'; object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'"
)
SECURITY_HEADERS = [
    (b"content-security-policy", CONTENT_SECURITY_POLICY.encode()),
    (b"x-content-type-options", b"nosniff"),
    (b"referrer-policy", b"same-origin"),
    (b"x-frame-options", b"DENY"),
]


class _TooLarge(Exception):
    pass


class BodyDeadlines:
    """The deadlines of the request bodies being read, watched by one periodic check per event
    loop: a body still arriving at its deadline has its task cancelled, and is answered 408.

    ``asyncio.timeout`` would arm and cancel a timer per request (about 7 µs of a request that
    has its body at once, as nearly all do; issue 12), and each cancelled timer stays in the
    loop's queue until its time. Here a request adds its task to a dict and takes it out; the
    check runs every quarter of the limit (at most every second) while any body is being read,
    so a late body is cut off at most that long after its deadline.
    """

    def __init__(self, seconds: float):
        self.seconds = seconds
        self.every = min(1.0, seconds / 4.0)
        self.reading: dict = {}  # task -> deadline (its loop's time)
        self.expired: set = set()  # tasks cancelled here, until their guard has seen it
        self.watched = weakref.WeakSet()  # loops with a check pending

    def start(self, task) -> None:
        loop = task.get_loop()
        self.reading[task] = loop.time() + self.seconds
        if loop not in self.watched:
            self.watched.add(loop)
            loop.call_later(self.every, self._check, loop)

    def stop(self, task) -> bool:
        """``task`` no longer reads; whether it was cancelled here, for reading past its deadline."""
        self.reading.pop(task, None)
        ran_out = task in self.expired
        self.expired.discard(task)
        return ran_out

    def _check(self, loop) -> None:
        now, pending = loop.time(), False
        for task, deadline in list(self.reading.items()):
            if task.get_loop() is not loop:
                continue
            if deadline <= now:
                del self.reading[task]
                self.expired.add(task)
                task.cancel()
            else:
                pending = True
        if pending:
            loop.call_later(self.every, self._check, loop)
        else:
            self.watched.discard(loop)


class EdgeGuard:
    """Pure ASGI middleware applying the guards above to every HTTP request."""

    def __init__(self, app, max_bytes: int, body_timeout: float = 30.0, on_error=None, allowed_hosts=(),
                 path_limits=None, direct=None):
        self.app = app
        #: (method, path) -> serve(scope, receive, send, body): a write route answered here once
        #: its body is read, past the framework's routing (JSONBodyRoute.served_at_the_edge)
        self.direct = dict(direct or {})
        #: paths that take larger bodies than max_bytes (a plant log): path -> bytes
        self.path_limits = dict(path_limits or {})
        #: host names this server answers to (empty: any); refuses DNS-rebinding pages
        self.allowed_hosts = {h.lower() for h in allowed_hosts}
        self.max_bytes = max_bytes
        self.body_timeout = body_timeout
        self.deadlines = BodyDeadlines(body_timeout)
        #: (path, accept) -> (status, headers, body) for an error nothing else handled
        self.on_error = on_error

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        started = False

        async def tracking_send(message):
            nonlocal started
            started = started or message["type"] == "http.response.start"
            await send(message)

        try:
            return await self._guarded(scope, receive, tracking_send)
        except Exception:
            if started or self.on_error is None:
                raise
            # answered here, the connection stays open for the client's next request
            log.exception("unhandled error on %s", scope["path"])
            headers = {k.decode("latin-1").lower(): v.decode("latin-1") for k, v in scope.get("headers") or []}
            status, extra, body = self.on_error(scope["path"], headers.get("accept", ""))
            await send({"type": "http.response.start", "status": status,
                        "headers": [(k.encode(), v.encode()) for k, v in extra]
                        + [(b"content-length", str(len(body)).encode())] + SECURITY_HEADERS})
            await send({"type": "http.response.body", "body": body})

    async def _guarded(self, scope, receive, send):
        async def send_with_headers(message):
            if message["type"] == "http.response.start":
                names = {k.lower() for k, _ in message.get("headers", [])}
                extra = [(k, v) for k, v in SECURITY_HEADERS if k not in names]
                message = {**message, "headers": [*message.get("headers", []), *extra]}
            await send(message)

        path, method = scope["path"], scope["method"]
        headers = {k.decode("latin-1").lower(): v.decode("latin-1") for k, v in scope.get("headers") or []}
        if self.allowed_hosts and _host_name(headers.get("host", "")) not in self.allowed_hosts:
            return await _answer(send_with_headers, 400, "this server is not known by that name (its allowed hosts "
                                 "are set by PRESSCYCLE_ALLOWED_HOSTS)")
        if path != "/" and path.endswith("/") and method in ("GET", "HEAD"):
            location = _slash_location(scope)
            if location is None:
                return await _answer(send_with_headers, 404, "not found")
            return await _answer(send_with_headers, 308, None, [(b"location", location)])
        if method == "HEAD":  # a GET without its body, for every page and API route
            return await self.app({**scope, "method": "GET"}, receive, _without_body(send_with_headers))
        if method not in UNSAFE_METHODS:
            return await self.app(scope, receive, send_with_headers)

        refusal = _cross_origin(headers)
        if refusal:
            return await _answer(send_with_headers, 403, refusal)
        length = headers.get("content-length", "")
        limit = self.path_limits.get(path, self.max_bytes)
        if length.isdigit() and int(length) > limit:
            return await _answer(send_with_headers, 413, self._too_large(limit))
        body_types = BODY_TYPES.get(path, JSON_ONLY)
        media_type = headers.get("content-type", "").split(";")[0].strip().lower()
        if (length not in ("", "0") or "transfer-encoding" in headers) and media_type not in body_types:
            return await _answer(send_with_headers, 415,
                                 f"send the body as {' or '.join(body_types)} (got {media_type or 'no content type'})")
        task = asyncio.current_task()  # ASGI runs each request in a task (asyncio.timeout needed one too)
        self.deadlines.start(task)
        try:
            try:
                body = await self._read(receive, limit)
            finally:
                ran_out = self.deadlines.stop(task)  # the deadline is the body's only, not the answer's
        except _TooLarge:
            return await _answer(send_with_headers, 413, self._too_large(limit))
        except asyncio.CancelledError:
            # ours alone (as asyncio.timeout decides): a cancellation from elsewhere too goes on up
            if not ran_out or task.uncancel() > 0:
                raise
            return await _answer(send_with_headers, 408,
                                 f"the request body did not arrive within {self.body_timeout:g} s")
        if body is None:  # the client went away
            return None
        serve = self.direct.get((method, path))
        if serve is not None:
            return await serve(scope, one_shot_receive(body, receive), send_with_headers, body)
        return await self.app(scope, one_shot_receive(body, receive), send_with_headers)

    async def _read(self, receive, limit: int) -> bytes | None:
        chunks, size = [], 0
        while True:
            message = await receive()
            if message["type"] == "http.disconnect":
                return None
            chunk = message.get("body", b"")
            size += len(chunk)
            if size > limit:
                raise _TooLarge
            chunks.append(chunk)
            if not message.get("more_body", False):
                return b"".join(chunks)

    def _too_large(self, limit: int) -> str:
        return f"the request body is larger than {limit // 1000:,} kB"


#: A path the slash redirect may point at: RFC 3986 path characters, percent-encoded as sent
_SAFE_PATH = re.compile(rb"^/[A-Za-z0-9._~!$&'()*+,;=:@%/-]*$")
_SAFE_QUERY = re.compile(rb"^[A-Za-z0-9._~!$&'()*+,;=:@%/?-]*$")


def _slash_location(scope) -> bytes | None:
    """Where a path with a trailing slash is sent: the same path without it, relative, built
    from the raw (still percent-encoded) path so that nothing in it can name another host."""
    raw = scope.get("raw_path") or scope["path"].encode("utf-8")
    target = b"/" + raw.strip(b"/")
    if not _SAFE_PATH.match(target) or target.startswith(b"//"):
        return None
    query = scope.get("query_string", b"")
    return target + (b"?" + query if query and _SAFE_QUERY.match(query) else b"")


def one_shot_receive(body: bytes, then):
    """An ASGI receive that hands over a body already read, then defers to ``then``."""
    delivered = False

    async def receive():
        nonlocal delivered
        if not delivered:
            delivered = True
            return {"type": "http.request", "body": body, "more_body": False}
        return await then()

    return receive


def _without_body(send):
    async def head_send(message):
        if message["type"] == "http.response.body":
            message = {**message, "body": b""}
        await send(message)
    return head_send


def _host_name(host: str) -> str:
    """The name in a Host header, without its port ("plant-a:8000" -> "plant-a", "[::1]:80" -> "[::1]")."""
    host = host.strip().lower()
    if host.startswith("["):
        return host.split("]")[0] + "]"
    return host.split(":")[0]


def _cross_origin(headers: dict) -> str | None:
    """Why a write from these request headers is refused, or None.

    The origin must be this server as the browser addressed it: the Host header, or the host
    a reverse proxy forwarded (X-Forwarded-Host; a browser cannot set that header on a
    cross-site request without asking first, which this app never allows)."""
    site = headers.get("sec-fetch-site")
    if site is not None and site not in ("same-origin", "none"):
        return "writes are accepted only from presscycle's own pages or from API clients"
    origin = headers.get("origin")
    if origin is not None:
        served_as = {headers.get("host", "").lower()}
        served_as |= {h.strip().lower() for h in headers.get("x-forwarded-host", "").split(",") if h.strip()}
        if urlsplit(origin).netloc.lower() not in served_as:
            return "writes are accepted only from presscycle's own pages or from API clients"
    return None


async def _answer(send, status: int, detail: str | None, headers=()):
    body = b"" if detail is None else json.dumps({"detail": detail}).encode()
    await send({"type": "http.response.start", "status": status,
                "headers": [(b"content-type", b"application/json"), (b"content-length", str(len(body)).encode()),
                            *headers]})
    await send({"type": "http.response.body", "body": body})

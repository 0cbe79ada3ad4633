"""What every page of the collection point shares: security headers, limits, the body and form reader.

Limits (the issue's "request size and rate limits"): a body of at most
:data:`BODY_LIMIT_BYTES`; token buckets (:class:`Buckets`) per link for
readings, per address for joins and for unknown links.
"""

from __future__ import annotations

import time
from urllib.parse import parse_qsl

from starlette.requests import Request
from starlette.responses import HTMLResponse, JSONResponse, Response

#: Largest request body accepted [bytes]; a reading is a few hundred.
BODY_LIMIT_BYTES = 16 * 1024

SECURITY_HEADERS = {
    "Content-Security-Policy": "default-src 'none'; style-src 'unsafe-inline'; form-action 'self'; "
                               "frame-ancestors 'none'; base-uri 'none'",
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "no-referrer",  # the token is in the address: never send it on
    "Cache-Control": "no-store",
    "X-Frame-Options": "DENY",
}

#: The content type every form is posted as.
FORM_TYPE = "application/x-www-form-urlencoded"


class Buckets:
    """Token buckets by key (rate limits): a burst, then one every ``refill_s`` seconds.

    >>> b = Buckets(2, 3600.0)
    >>> b.take("a"), b.take("a"), b.take("a"), b.take("b")
    (True, True, False, True)
    """

    def __init__(self, burst: int, refill_s: float) -> None:
        self.burst, self.refill_s = burst, refill_s
        self._state: dict[str, tuple[float, float]] = {}

    def _level(self, key: str, now: float) -> float:
        level, last = self._state.get(key, (float(self.burst), now))
        return min(float(self.burst), level + (now - last) / self.refill_s)

    def has(self, key: str) -> bool:
        """Whether a token is left for ``key`` (none is taken)."""
        return self._level(key, time.monotonic()) >= 1.0

    def take(self, key: str) -> bool:
        """Take a token for ``key``: False when none is left."""
        now = time.monotonic()
        level = self._level(key, now)
        if level < 1.0:
            self._state[key] = (level, now)
            return False
        self._state[key] = (level - 1.0, now)
        return True


def wants_json(request: Request) -> bool:
    return "application/json" in request.headers.get("accept", "")


def client_of(request: Request) -> str:
    return request.client.host if request.client else "?"


async def read_body(request: Request) -> bytes | None:
    """The body, or None when it is over the limit (declared or sent)."""
    declared = request.headers.get("content-length")
    if declared is not None and (not declared.isdigit() or int(declared) > BODY_LIMIT_BYTES):
        return None
    data = bytearray()
    async for chunk in request.stream():
        data.extend(chunk)
        if len(data) > BODY_LIMIT_BYTES:
            return None
    return bytes(data)


def answer(request, status: int, data: dict, html: str | None = None) -> Response:
    """JSON when asked for (or when there is no page), else the page; the security headers on both."""
    if html is None or wants_json(request):
        response: Response = JSONResponse(data, status_code=status)
    else:
        response = HTMLResponse(html, status_code=status)
    response.headers.update(SECURITY_HEADERS)
    return response


async def read_form(request: Request, max_fields: int = 60) -> tuple[list[tuple[str, str]] | None, Response | None]:
    """The posted form's (name, value) pairs, or the answer refusing it (415, 413 or 400; nothing stored)."""
    if not request.headers.get("content-type", "").startswith(FORM_TYPE):
        return None, answer(request, 415, {"stored": False, "field": None,
                                           "reason": f"send the form as {FORM_TYPE}"})
    body = await read_body(request)
    if body is None:
        return None, answer(request, 413, {"stored": False, "field": None,
                                           "reason": f"the request is larger than {BODY_LIMIT_BYTES} bytes"})
    try:
        pairs = parse_qsl(body.decode("utf-8"), keep_blank_values=True, strict_parsing=False,
                          max_num_fields=max_fields)
    except (UnicodeDecodeError, ValueError):
        return None, answer(request, 400, {"stored": False, "field": None, "reason": "not a form of UTF-8 text"})
    return pairs, None

"""Link tokens and the forms' anti-forgery tokens.

A link's token is 32 random bytes from :mod:`secrets` (URL-safe base64). A
presented token is found by its SHA-256 digest and then compared in constant
time (:func:`hmac.compare_digest`). Tokens never reach a log: the server's
access log is off and error messages never repeat a token.

Every form carries a random form id (so a form sent twice is stored once) and
an anti-forgery token: an HMAC-SHA256, under the store's key, of the link's
token, the form id and the time the form was made. A post without it, with
another form's, or older than :data:`FORM_LIFETIME_S`, is refused: a page on
another site cannot make one (OWASP's "synchronizer token" pattern, here
stateless and signed).
"""

from __future__ import annotations

import hashlib
import hmac
import secrets
import time
from dataclasses import dataclass

#: How long a form may wait before it is sent [s] (a day: a page opened in the morning works at noon).
FORM_LIFETIME_S = 24 * 3600


def _digest(token: str) -> bytes:
    return hashlib.sha256(token.encode("utf-8", "surrogatepass")).digest()


@dataclass(frozen=True)
class Holder:
    """Who a token belongs to: the coordinator or the join link (site None), or one site or school."""

    role: str
    site: str | None


class TokenBook:
    """The campaign's link tokens.

    >>> book = TokenBook("c" * 43, {"ridge": "r" * 43})
    >>> book.holder("r" * 43), book.holder("x" * 43)
    (Holder(role='site', site='ridge'), None)
    """

    def __init__(self, coordinator: str, sites: dict[str, str]) -> None:
        self._by_digest: dict[bytes, tuple[str, Holder]] = {_digest(coordinator): (coordinator, Holder("coordinator", None))}
        for site, token in sites.items():
            self._by_digest[_digest(token)] = (token, Holder("site", site))

    def add(self, token: str, holder: Holder) -> None:
        """Know one more token (a school that joined)."""
        self._by_digest[_digest(token)] = (token, holder)

    def holder(self, presented: str) -> Holder | None:
        """The holder of a presented token, or None."""
        found = self._by_digest.get(_digest(presented))
        if found is None:
            return None
        token, holder = found
        return holder if hmac.compare_digest(token.encode(), presented.encode("utf-8", "surrogatepass")) else None


def new_form_id() -> str:
    return secrets.token_urlsafe(16)


def form_token(key: bytes, link_token: str, form_id: str, now_s: float | None = None) -> str:
    """The anti-forgery token of one form of one link."""
    issued = int(time.time() if now_s is None else now_s)
    mac = hmac.new(key, f"{link_token}|{form_id}|{issued}".encode(), hashlib.sha256).hexdigest()
    return f"{issued}.{mac}"


def form_token_ok(key: bytes, link_token: str, form_id: str, presented: str, now_s: float | None = None) -> bool:
    """Whether a posted anti-forgery token is the one this link's form was given, and recent.

    >>> t = form_token(b"k", "tok", "f1", now_s=1000)
    >>> form_token_ok(b"k", "tok", "f1", t, now_s=1100), form_token_ok(b"k", "tok", "f2", t, now_s=1100)
    (True, False)
    >>> form_token_ok(b"k", "tok", "f1", t, now_s=1000 + FORM_LIFETIME_S + 1), form_token_ok(b"k", "tok", "f1", "", 1100)
    (False, False)
    """
    issued_text, _, mac = presented.partition(".")
    if not issued_text.isdigit() or not mac:
        return False
    issued = int(issued_text)
    now = time.time() if now_s is None else now_s
    if not (issued - 300 <= now <= issued + FORM_LIFETIME_S):
        return False
    expected = hmac.new(key, f"{link_token}|{form_id}|{issued}".encode(), hashlib.sha256).hexdigest()
    return hmac.compare_digest(expected.encode(), mac.encode("utf-8", "surrogatepass"))

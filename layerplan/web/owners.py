"""Who is asking: each browser's owner token, and the optional admin token.

A visitor without a token gets one (:func:`secrets.token_urlsafe`, 256 bits) in a cookie
that scripts on the page cannot read (HttpOnly) and that other sites' pages do not send
along with their forms (SameSite=Lax). A script or a command-line client sends the same
token in the :data:`HEADER` header instead; a client without one gets its new token back
in that header of every response, to keep for its next requests.

The database keeps only a hash of the token (:func:`layerplan.web.store.owner_key`). A
plan's owner may list, delete and make private its plans; anyone with the plan's link
(its id is 64 random bits) may view a plan that is not private. The admin token
(config ``ADMIN_TOKEN``, environment ``LAYERPLAN_ADMIN_TOKEN``), sent as the owner token,
sees and deletes every plan.

References
----------
RFC 6265bis (HTTP State Management Mechanism), "The SameSite Attribute";
OWASP Session Management Cheat Sheet (cookie attributes, token entropy).
"""

from __future__ import annotations

import hmac
import re
import secrets
from dataclasses import dataclass

from flask import current_app, g, request

from .store import PlanRecord, owner_key

#: the cookie that carries a browser's owner token
COOKIE = "layerplan_owner"
#: the request (and response) header that carries it for scripts
HEADER = "X-Layerplan-Owner"
#: a token we accept: URL-safe base64, long enough to be unguessable
TOKEN_PATTERN = re.compile(r"^[A-Za-z0-9_-]{32,200}$")
#: bytes of randomness in a new token (256 bits)
TOKEN_BYTES = 32
#: the cookie lasts about a school year and is renewed on each visit (browsers cap it at 400 days)
COOKIE_MAX_AGE_S = 400 * 24 * 3600
#: an admin token shorter than this is refused at start (it would be guessable)
MIN_ADMIN_TOKEN = 16


@dataclass(frozen=True)
class Visitor:
    """The owner behind one request."""

    token: str
    #: what plan records store as their owner
    key: str
    admin: bool
    #: the token was made for this request (to be sent back)
    new: bool


def check_admin_token(token: str | None) -> None:
    """Refuse an admin token that is too short to be safe.

    Raises
    ------
    RuntimeError
        When ``token`` is set but shorter than :data:`MIN_ADMIN_TOKEN` characters.
    """
    if token and len(str(token)) < MIN_ADMIN_TOKEN:
        raise RuntimeError(f"ADMIN_TOKEN must be at least {MIN_ADMIN_TOKEN} characters (it is "
                           f"{len(str(token))}); make one with: python -c \"import secrets; "
                           "print(secrets.token_urlsafe(32))\"")


def visitor() -> Visitor:
    """The owner of the current request (made once per request)."""
    found = g.get("layerplan_visitor")
    if found is not None:
        return found
    token = (request.headers.get(HEADER) or request.cookies.get(COOKIE) or "").strip()
    admin_token = current_app.config.get("ADMIN_TOKEN") or ""
    admin = bool(admin_token) and hmac.compare_digest(token.encode(), str(admin_token).encode())
    new = False
    if not admin and not TOKEN_PATTERN.match(token):
        token, new = secrets.token_urlsafe(TOKEN_BYTES), True
    found = Visitor(token=token, key=owner_key(token), admin=admin, new=new)
    g.layerplan_visitor = found
    return found


def owns(record: PlanRecord) -> bool:
    """True when the current visitor may delete ``record`` or change it: its owner, or the admin.

    A plan stored before plans had owners (``owner`` empty) is listed to no one but the admin,
    and whoever has its id may still delete it, as anyone could when it was made.
    """
    v = visitor()
    return v.admin or not record.owner or hmac.compare_digest(record.owner, v.key)


def can_see(record: PlanRecord) -> bool:
    """True when the current visitor may view ``record``: it is not private, or it is theirs."""
    return not record.private or owns(record)


def list_owner() -> str | None:
    """The owner whose plans the lists show (None: everyone's, for the admin)."""
    v = visitor()
    return None if v.admin else v.key


def remember(response):
    """Send a new visitor's token back (the cookie for browsers, the header for scripts); renew the cookie."""
    v = g.get("layerplan_visitor")
    if v is None or v.admin:
        return response
    if v.new or request.cookies.get(COOKIE) == v.token:
        secure = bool(current_app.config.get("OWNER_COOKIE_SECURE")) or request.is_secure
        response.set_cookie(COOKIE, v.token, max_age=COOKIE_MAX_AGE_S, httponly=True, samesite="Lax",
                            secure=secure, path="/")
    if v.new:
        response.headers[HEADER] = v.token
    return response

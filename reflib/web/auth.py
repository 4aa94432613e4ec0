"""Who is asking: a token (``Authorization: Bearer`` for the API, a login form and a session
cookie for the page) mapped to an operator name; on loopback without a token, the server's user.
"""

from __future__ import annotations

import hmac
import secrets

from reflib.library.history import operator_name
from reflib.web.config import ServerConfig

COOKIE = "reflib_session"


class Auth:
    """Token check and page sessions (kept in memory: a restart signs everyone out)."""

    def __init__(self, cfg: ServerConfig):
        self.cfg = cfg
        self.sessions: dict[str, str] = {}
        self.local_user = operator_name(None)

    def user_for_token(self, token: str | None) -> str | None:
        if not token:
            return None
        for known, name in self.cfg.users.items():
            if hmac.compare_digest(known.encode(), token.encode()):
                return name
        return None

    def user(self, request) -> str | None:
        """The operator of a request, or None when a token is needed and was not given."""
        if not self.cfg.needs_token:
            return self.local_user
        header = request.headers.get("authorization", "")
        if header.lower().startswith("bearer "):
            return self.user_for_token(header[7:].strip())
        sid = request.cookies.get(COOKIE)
        if sid:
            return self.sessions.get(sid)
        return None

    def new_session(self, name: str) -> str:
        sid = secrets.token_urlsafe(32)
        self.sessions[sid] = name
        return sid

    def end_session(self, request) -> None:
        self.sessions.pop(request.cookies.get(COOKIE, ""), None)

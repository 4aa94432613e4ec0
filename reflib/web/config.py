"""How a server is set up (``reflib serve`` options) and the checks made before it listens."""

from __future__ import annotations

import ipaddress
from dataclasses import dataclass, field
from pathlib import Path

from reflib.errors import ValidationError

#: Hosts that count as this machine only (no token needed).
LOOPBACK_NAMES = ("localhost",)


@dataclass
class ServerConfig:
    """Everything a server needs; :func:`check_config` refuses a setup that is not safe."""

    library: str
    host: str = "127.0.0.1"
    port: int = 8017
    token: str | None = None
    users_file: str | None = None
    read_only: bool = False
    max_upload_mb: float = 50.0
    #: token -> operator name (from ``users_file``; ``token`` maps to the server's login name)
    users: dict[str, str] = field(default_factory=dict)

    @property
    def max_upload_bytes(self) -> int:
        return int(self.max_upload_mb * 1024 * 1024)

    @property
    def needs_token(self) -> bool:
        return bool(self.users) or bool(self.token) or not is_loopback(self.host)


def is_loopback(host: str) -> bool:
    if host in LOOPBACK_NAMES:
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def load_users(path: str | Path) -> dict[str, str]:
    """A users file: one ``TOKEN NAME`` per line (name may hold spaces); ``#`` starts a comment.

    Tokens shorter than 16 characters are refused: they could be guessed.
    """
    p = Path(path)
    if not p.is_file():
        raise ValidationError(f"--users: no file {p}")
    out: dict[str, str] = {}
    for n, line in enumerate(p.read_text(encoding="utf-8").splitlines(), start=1):
        text = line.split("#", 1)[0].strip()
        if not text:
            continue
        parts = text.split(None, 1)
        if len(parts) != 2:
            raise ValidationError(f"--users {p.name} line {n}: expected 'TOKEN NAME'")
        token, name = parts
        if len(token) < 16:
            raise ValidationError(f"--users {p.name} line {n}: token shorter than 16 characters")
        out[token] = " ".join(name.split())
    if not out:
        raise ValidationError(f"--users {p.name} lists no tokens")
    return out


def check_config(cfg: ServerConfig) -> ServerConfig:
    """Refuse an unsafe or impossible setup with one clear line (the CLI exits 2)."""
    from reflib.library.history import operator_name

    if cfg.max_upload_mb <= 0:
        raise ValidationError(f"--max-upload-mb must be above 0, got {cfg.max_upload_mb}")
    if cfg.users_file:
        cfg.users = load_users(cfg.users_file)
    if cfg.token is not None:
        if len(cfg.token) < 16:
            raise ValidationError("--token (or REFLIB_TOKEN) must be at least 16 characters")
        cfg.users.setdefault(cfg.token, operator_name(None))
    if not is_loopback(cfg.host) and not cfg.users:
        raise ValidationError(
            f"listening on {cfg.host} needs a token: give --token, REFLIB_TOKEN or --users "
            "(or listen on 127.0.0.1)"
        )
    if not Path(cfg.library).is_file():
        raise ValidationError(
            f"no library at {cfg.library}; create one with 'reflib init' or give --library"
        )
    return cfg

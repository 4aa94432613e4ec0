"""The server: a short list of routes to plain functions (:mod:`reflib.web.api` for JSON,
:mod:`reflib.web.views` for the page), the token check, the read-only switch and the upload
limit in one gate, and the mapping of errors to statuses."""

from __future__ import annotations

import contextlib
from dataclasses import dataclass

from starlette.applications import Starlette
from starlette.requests import Request
from starlette.responses import HTMLResponse, RedirectResponse, Response
from starlette.routing import Route

from reflib.errors import NotFoundError, ReflibError
from reflib.web import api, pages, views
from reflib.web.auth import Auth
from reflib.web.config import ServerConfig, check_config
from reflib.web.jobs import Duplicate
from reflib.web.uploads import TooLarge
from reflib.web.worker import LibraryWorker

__all__ = ["ServerConfig", "check_config", "create_app", "run"]

#: Routes that change the library: refused (403) by a --read-only server.
WRITES = {("POST", "/api/compounds"), ("POST", "/add")}
#: Routes open without a token (the login form itself).
OPEN = {"/login"}

ROUTES = [
    Route("/api/search", api.search, methods=["POST"]),
    Route("/api/leftover", api.leftover, methods=["POST"]),
    Route("/api/groups", api.groups, methods=["POST"]),
    Route("/api/compounds", api.compounds, methods=["GET"]),
    Route("/api/compounds", api.add_compound, methods=["POST"]),
    Route("/api/compounds/{cid}", api.compound, methods=["GET"]),
    Route("/", views.index, methods=["GET"]),
    Route("/search", views.search, methods=["POST"]),
    Route("/library", views.library, methods=["GET"]),
    Route("/compound/{cid}", views.compound, methods=["GET"]),
    Route("/add", views.add_form, methods=["GET"]),
    Route("/add", views.add, methods=["POST"]),
    Route("/leftover", views.leftover_form, methods=["GET"]),
    Route("/leftover", views.leftover, methods=["POST"]),
    Route("/login", views.login_form, methods=["GET"]),
    Route("/login", views.login, methods=["POST"]),
    Route("/logout", views.logout, methods=["POST"]),
]


@dataclass
class Server:
    cfg: ServerConfig
    worker: LibraryWorker
    auth: Auth


def _is_api(request: Request) -> bool:
    return request.url.path.startswith("/api/")


def _fail(request: Request, status: int, text: str) -> Response:
    if _is_api(request):
        return api.error(status, text)
    body = pages.layout("Error", pages.message(text) + '<p><a href="/">Back</a></p>')
    return HTMLResponse(body, status_code=status)


class Gate:
    """ASGI middleware: token, read-only and upload-size checks before any route runs.

    The size limit holds also for uploads that do not announce their length: the body is
    counted as it arrives and the request is cut off with 413 when it passes the limit.
    """

    def __init__(self, app, server: Server):
        self.app = app
        self.server = server

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        request = Request(scope)
        cfg = self.server.cfg
        user = self.server.auth.user(request)
        if user is None and request.url.path not in OPEN:
            if _is_api(request):
                resp = api.error(401, "this server needs a token: Authorization: Bearer TOKEN")
            else:
                resp = RedirectResponse("/login", status_code=303)
            return await resp(scope, receive, send)
        scope.setdefault("state", {})["user"] = user
        if cfg.read_only and (request.method, request.url.path) in WRITES:
            resp = _fail(request, 403, "this server is read-only: the library cannot be changed")
            return await resp(scope, receive, send)
        limit = cfg.max_upload_bytes
        length = request.headers.get("content-length", "")
        if length.isdigit() and int(length) > limit:
            return await _fail(request, 413, _too_large(cfg))(scope, receive, send)
        seen = 0

        async def counted():
            nonlocal seen
            msg = await receive()
            if msg["type"] == "http.request":
                seen += len(msg.get("body", b""))
                if seen > limit:
                    raise TooLarge()
            return msg

        return await self.app(scope, counted, send)


def _too_large(cfg: ServerConfig) -> str:
    return f"upload is larger than this server's limit of {cfg.max_upload_mb:g} MB"


def _lifespan(server: Server):
    @contextlib.asynccontextmanager
    async def lifespan(app):
        yield
        server.worker.close()

    return lifespan


def create_app(cfg: ServerConfig, worker: LibraryWorker | None = None) -> Starlette:
    """The ASGI app for a checked :class:`ServerConfig` (the library opened once, here)."""
    server = Server(cfg, worker or LibraryWorker(cfg.library), Auth(cfg))

    async def on_reflib_error(request: Request, exc: Exception) -> Response:
        status = (
            404 if isinstance(exc, NotFoundError) else 409 if isinstance(exc, Duplicate) else 400
        )
        return _fail(request, status, str(exc))

    async def on_too_large(request: Request, exc: Exception) -> Response:
        return _fail(request, 413, _too_large(cfg))

    async def on_http(request: Request, exc: Exception) -> Response:
        status = getattr(exc, "status_code", 500)
        return _fail(request, status, str(getattr(exc, "detail", "")) or "request failed")

    from starlette.exceptions import HTTPException
    from starlette.middleware import Middleware

    app = Starlette(
        routes=ROUTES,
        middleware=[Middleware(Gate, server=server)],
        exception_handlers={
            ReflibError: on_reflib_error,
            TooLarge: on_too_large,
            HTTPException: on_http,
        },
        lifespan=_lifespan(server),
    )
    app.state.server = server
    return app


def run(cfg: ServerConfig) -> None:
    """Serve until interrupted (``reflib serve``)."""
    import uvicorn

    app = create_app(check_config(cfg))
    print(f"reflib: serving {cfg.library} on http://{cfg.host}:{cfg.port}/ (Ctrl-C stops)")
    uvicorn.run(app, host=cfg.host, port=cfg.port, log_level="warning")

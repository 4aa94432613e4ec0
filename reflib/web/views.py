"""The web page's routes: forms in, server-rendered HTML out (:mod:`reflib.web.pages`)."""

from __future__ import annotations

import threading

from starlette.concurrency import run_in_threadpool
from starlette.responses import HTMLResponse, RedirectResponse

from reflib.chem.prep import TOKENS
from reflib.errors import ReflibError
from reflib.web import jobs, pages, params
from reflib.web.auth import COOKIE
from reflib.web.uploads import need_file, read_form

#: matplotlib's pyplot keeps global state: one plot at a time.
PLOT_LOCK = threading.Lock()


def _server(request):
    return request.app.state.server


def page(request, title: str, body: str, *, here: str = "", status: int = 200) -> HTMLResponse:
    user = getattr(request.state, "user", None) if _server(request).cfg.needs_token else None
    return HTMLResponse(pages.layout(title, body, here=here, user=user), status_code=status)


def _svg_search(result, query, refs) -> str:
    from reflib.report.plots import plot_search

    with PLOT_LOCK:
        return str(plot_search(result, query, refs, None))


def _svg_leftover(result, sample, start, product, prep) -> str:
    from reflib.report.plots import plot_leftover

    with PLOT_LOCK:
        return str(plot_leftover(result, sample, start, product, None, prep=prep or ()))


async def index(request) -> HTMLResponse:
    body = "<h1>Which compound is this?</h1>" + pages.caution() + pages.search_form(TOKENS)
    return page(request, "Search", body, here="/")


async def search(request) -> HTMLResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    try:
        args = params.search_args(fields)
        query = await run_in_threadpool(need_file, upload)
        res, refs = await srv.worker.call(
            lambda lib: _with_refs(lib, jobs.search(lib, query, args))
        )
    except ReflibError as exc:
        body = pages.message(str(exc)) + pages.search_form(TOKENS, fields)
        return page(request, "Search", body, here="/", status=400)
    svg = await run_in_threadpool(_svg_search, res, query, refs) if res.hits else None
    plot = pages.svg_image(svg, "the unknown against its top hits") if svg else None
    body = pages.search_result(res.to_dict(), plot) + "<h2>Search another</h2>"
    body += pages.search_form(TOKENS, fields)
    return page(request, "Search result", body, here="/")


def _with_refs(lib, res):
    return res, jobs.search_refs(lib, res)


async def library(request) -> HTMLResponse:
    fields = dict(request.query_params)
    try:
        rows = await _server(request).worker.call(lambda lib: params.listing(lib, fields))
    except ReflibError as exc:
        body = pages.message(str(exc)) + pages.library_table([], fields)
        return page(request, "Library", body, here="/library", status=400)
    return page(request, "Library", pages.library_table(rows, fields), here="/library")


async def compound(request) -> HTMLResponse:
    cid = params.compound_ref(request.path_params["cid"])
    c = await _server(request).worker.call(lambda lib: jobs.show(lib, cid))
    return page(request, c["name"], pages.compound_page(c, c["history"]), here="/library")


async def add_form(request) -> HTMLResponse:
    return page(request, "Add compound", pages.add_form(TOKENS), here="/add")


async def add(request) -> HTMLResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    operator = request.state.user
    try:
        data = await run_in_threadpool(need_file, upload)
        out = await srv.worker.call(lambda lib: jobs.add(lib, data, fields, operator))
    except ReflibError as exc:
        status = 409 if isinstance(exc, jobs.Duplicate) else 400
        body = pages.message(str(exc)) + pages.add_form(TOKENS, fields)
        return page(request, "Add compound", body, here="/add", status=status)
    return page(request, "Added", pages.add_result(out), here="/add", status=201)


async def leftover_form(request) -> HTMLResponse:
    rows = await _server(request).worker.call(lambda lib: lib.compounds())
    return page(request, "Leftover check", pages.leftover_form(TOKENS, rows, {}), here="/leftover")


async def leftover(request) -> HTMLResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    prep = params.text(fields, "prep")
    try:
        sample = await run_in_threadpool(need_file, upload)
        start, product = params.text(fields, "start"), params.text(fields, "product")
        res, (s_ref, p_ref) = await srv.worker.call(
            lambda lib: _leftover_with_refs(lib, sample, start, product, prep)
        )
    except ReflibError as exc:
        rows = await srv.worker.call(lambda lib: lib.compounds())
        body = pages.message(str(exc)) + pages.leftover_form(TOKENS, rows, fields)
        return page(request, "Leftover check", body, here="/leftover", status=400)
    svg = await run_in_threadpool(_svg_leftover, res, sample, s_ref, p_ref, prep)
    body = pages.leftover_result(res.to_dict(), pages.svg_image(svg, "leftover check"))
    return page(request, "Leftover result", body, here="/leftover")


def _leftover_with_refs(lib, sample, start, product, prep):
    res = jobs.leftover(lib, sample, start, product, prep)
    return res, jobs.leftover_refs(lib, res)


async def login_form(request) -> HTMLResponse:
    return page(request, "Sign in", pages.login_form())


async def login(request):
    srv = _server(request)
    form = await request.form(max_files=0, max_fields=5)
    name = srv.auth.user_for_token(str(form.get("token") or "").strip())
    if name is None:
        return page(request, "Sign in", pages.login_form("That token is not valid."), status=401)
    resp = RedirectResponse("/", status_code=303)
    resp.set_cookie(COOKIE, srv.auth.new_session(name), httponly=True, samesite="strict")
    return resp


async def logout(request):
    _server(request).auth.end_session(request)
    resp = RedirectResponse("/login", status_code=303)
    resp.delete_cookie(COOKIE)
    return resp

"""The JSON API: each route a few lines over :mod:`reflib.web.jobs`.

Errors are ``{"error": TEXT}``: 400 bad input, 401 no or wrong token, 403 a write to a
read-only server, 404 unknown compound, 409 a file already in the library, 413 an upload over
the limit.
"""

from __future__ import annotations

from starlette.concurrency import run_in_threadpool
from starlette.responses import JSONResponse

from reflib.web import jobs, params
from reflib.web.uploads import need_file, read_form


def error(status: int, text: str) -> JSONResponse:
    return JSONResponse({"error": text}, status_code=status)


def _server(request):
    return request.app.state.server


async def search(request) -> JSONResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    args = params.search_args(fields)
    query = await run_in_threadpool(need_file, upload)
    res = await srv.worker.call(lambda lib: jobs.search(lib, query, args))
    return JSONResponse(res.to_dict())


async def leftover(request) -> JSONResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    sample = await run_in_threadpool(need_file, upload)
    start, product = params.text(fields, "start"), params.text(fields, "product")
    prep = params.text(fields, "prep")
    res = await srv.worker.call(lambda lib: jobs.leftover(lib, sample, start, product, prep))
    return JSONResponse(res.to_dict())


async def groups(request) -> JSONResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    data = await run_in_threadpool(need_file, upload)
    out = await run_in_threadpool(jobs.groups, data, params.text(fields, "prep"))
    return JSONResponse(out)


async def compounds(request) -> JSONResponse:
    fields = dict(request.query_params)
    rows = await _server(request).worker.call(lambda lib: params.listing(lib, fields))
    return JSONResponse(rows)


async def compound(request) -> JSONResponse:
    cid = params.compound_ref(request.path_params["cid"])
    return JSONResponse(await _server(request).worker.call(lambda lib: jobs.show(lib, cid)))


async def add_compound(request) -> JSONResponse:
    srv = _server(request)
    fields, upload = await read_form(request, srv.cfg.max_upload_bytes)
    data = await run_in_threadpool(need_file, upload)
    operator = request.state.user
    out = await srv.worker.call(lambda lib: jobs.add(lib, data, fields, operator))
    return JSONResponse(out, status_code=201)

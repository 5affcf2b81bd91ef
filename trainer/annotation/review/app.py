"""The review page's web server: a small Starlette app, served by uvicorn on 127.0.0.1 only.

Routes:

- ``GET /``: the page (``static/review.html``); ``/static/...`` its script and style.
  Everything is shipped with the package; nothing is fetched from elsewhere.
- ``GET /api/file``: :meth:`ReviewFile.snapshot` as JSON.
- ``POST /api/records/{id}``: one change, JSON ``{"version", "events", "action"[, "provenance"]}``;
  answers ``{"version", "record", "warnings", "reviewed", "total"}``, or
  ``{"error", "fix"}`` with status 409 (the page's copy is stale), 422 (the
  change is refused) or 400 (not a JSON object, or not sent as JSON).

Requests must name the host as ``127.0.0.1`` or ``localhost``, and changes
must be sent as ``application/json``: another web site open in the same
browser can then neither read the file nor post a change to it.
"""

from __future__ import annotations

import json
import socket
import threading
import webbrowser
from pathlib import Path
from typing import Callable, Sequence

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.middleware import Middleware
from starlette.middleware.trustedhost import TrustedHostMiddleware
from starlette.requests import Request
from starlette.responses import FileResponse, JSONResponse
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from trainer.annotation.review.session import ReviewFile
from trainer.corpus.records import DEFAULT_ROLES
from trainer.errors import ConfigError, CorpusError, ItinerantError, StaleCopyError

HOST = "127.0.0.1"
DEFAULT_PORT = 8471
STATIC = Path(__file__).resolve().parent / "static"
# error class -> HTTP status (the first that matches)
STATUS: tuple[tuple[type[ItinerantError], int], ...] = ((StaleCopyError, 409), (CorpusError, 422), (ItinerantError, 422))


def _error(exc: ItinerantError) -> JSONResponse:
    status = next(code for kind, code in STATUS if isinstance(exc, kind))
    return JSONResponse({"error": exc.cause, "fix": exc.fix}, status_code=status)


def review_app(path: Path | str, *, roles: Sequence[str] = DEFAULT_ROLES) -> Starlette:
    """The app for one file; the file is read once here so a bad file is refused before serving."""
    session = ReviewFile(path, roles=roles)
    session.read()

    async def page(request: Request) -> FileResponse:
        return FileResponse(STATIC / "review.html", headers={"Cache-Control": "no-store"})

    def snapshot(request: Request) -> JSONResponse:
        try:
            return JSONResponse(session.snapshot(), headers={"Cache-Control": "no-store"})
        except ItinerantError as exc:
            return _error(exc)

    async def change(request: Request) -> JSONResponse:
        if request.headers.get("content-type", "").split(";")[0].strip() != "application/json":
            return JSONResponse({"error": "changes must be sent as application/json", "fix": "use the review page"},
                                status_code=400)
        try:
            body = await request.json()
        except (json.JSONDecodeError, UnicodeDecodeError):
            return JSONResponse({"error": "the change is not valid JSON", "fix": "use the review page"}, status_code=400)
        if not isinstance(body, dict) or not isinstance(body.get("version"), str):
            return JSONResponse({"error": "a change is a JSON object with version, events and action",
                                 "fix": "use the review page"}, status_code=400)
        record_id = request.path_params["record_id"]
        try:
            result = await run_in_threadpool(session.save, record_id, version=body["version"], events=body.get("events"),
                                             action=str(body.get("action", "edit")), provenance=body.get("provenance"))
        except ItinerantError as exc:
            return _error(exc)
        return JSONResponse({"version": result.version, "record": result.record, "warnings": result.warnings,
                             "reviewed": result.reviewed, "total": result.total})

    routes = [
        Route("/", page),
        Route("/api/file", snapshot),
        Route("/api/records/{record_id:path}", change, methods=["POST"]),
        Mount("/static", StaticFiles(directory=STATIC), name="static"),
    ]
    middleware = [Middleware(TrustedHostMiddleware, allowed_hosts=[HOST, "localhost"])]
    return Starlette(routes=routes, middleware=middleware)


def bind(port: int) -> socket.socket:
    """A listening socket on 127.0.0.1 (``port`` 0: any free port); a port in use is a :class:`ConfigError`."""
    if not 0 <= port <= 65535:
        raise ConfigError(f"--port {port} is not a port number", "use a number from 1024 to 65535, or 0 for any free port")
    sock = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
    sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)  # a restarted server gets its port back at once
    try:
        sock.bind((HOST, port))
    except OSError as exc:
        sock.close()
        raise ConfigError(f"cannot listen on {HOST}:{port} ({exc.strerror})",
                          "another program uses that port: pick another with --port, or --port 0 for any free one") from None
    sock.listen(64)
    return sock


def serve(path: Path | str, *, port: int = DEFAULT_PORT, open_browser: bool = True, roles: Sequence[str] = DEFAULT_ROLES,
          on_ready: Callable[[str], None] | None = None) -> None:
    """Serve the review page for ``path`` on 127.0.0.1 until interrupted (Ctrl+C).

    ``on_ready`` is called with the page's address once the port is open;
    ``open_browser`` also opens it in the default browser.
    """
    import uvicorn

    app = review_app(path, roles=roles)
    sock = bind(port)
    url = f"http://{HOST}:{sock.getsockname()[1]}/"
    server = uvicorn.Server(uvicorn.Config(app, log_level="warning", access_log=False))
    if on_ready:
        on_ready(url)
    if open_browser:
        threading.Timer(0.5, webbrowser.open, args=(url,)).start()
    try:
        server.run(sockets=[sock])
    finally:
        sock.close()

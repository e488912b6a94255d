"""The live preview's web application (Starlette, served by uvicorn).

Routes: ``/`` the page; ``/page/...`` its script and style sheet; ``/api/scene`` what the
page needs first; ``/api/plan`` the floor plan with other lenses; ``/api/frame`` (POST) a
frame for an eye point; ``/api/frame/<n>/<view>.jpg`` one view of a finished frame;
``/api/save`` (POST) a saved view. Nothing else is served: no file outside the page's own
folder, nothing of the scene but its rendered views.

A bad request gets status 400 and ``{"error": "<one line naming the field, value and
rule>"}``; the page shows the line. A frame request that a newer one replaced before it
was finished gets ``{"superseded": true}``.
"""

from __future__ import annotations

import asyncio
import contextlib
import socket
import threading
import time
from pathlib import Path

import uvicorn
from cloakview.optics.errors import InputError
from cloakview.render.live.session import (
    FrameDesk,
    LiveSession,
    Superseded,
    parse_request,
)
from starlette.applications import Starlette
from starlette.requests import Request
from starlette.responses import FileResponse, JSONResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

PAGE_FOLDER = Path(__file__).with_name("page")
#: Headers of every answer: the page and its frames are for this session only.
NO_STORE = {"Cache-Control": "no-store"}


def _error(error: InputError, status: int = 400) -> JSONResponse:
    return JSONResponse({"error": str(error)}, status_code=status, headers=NO_STORE)


async def _json(request: Request):
    try:
        return await request.json()
    except (ValueError, UnicodeDecodeError):
        raise InputError("request", "(body)", "must be JSON") from None


def create_app(session: LiveSession) -> Starlette:
    """The web application for one live session (the frame thread starts with it)."""
    desk: FrameDesk | None = None

    async def page(_request):
        return FileResponse(PAGE_FOLDER / "index.html", headers=NO_STORE)

    async def scene(_request):
        return JSONResponse(session.describe(), headers=NO_STORE)

    async def plan(request: Request):
        try:
            choice = parse_request({"lateral_mm": 0, "distance_mm": 1, "height_mm": 0,
                                    "outer": request.query_params.get("outer", "scene"),
                                    "inner": request.query_params.get("inner", "scene")},
                                   session.items)
            geometry = await asyncio.to_thread(session.plan, choice.outer, choice.inner)
        except InputError as error:
            return _error(error)
        return JSONResponse(geometry, headers=NO_STORE)

    async def frame(request: Request):
        try:
            wanted = parse_request(await _json(request), session.items)
            session.viewer_for(wanted)  # a bad eye point is refused before it queues
        except InputError as error:
            return _error(error)
        try:
            done = await asyncio.wrap_future(desk.submit(wanted))
        except Superseded:
            return JSONResponse({"superseded": True}, headers=NO_STORE)
        except InputError as error:
            return _error(error)
        return JSONResponse(session.answer(done), headers=NO_STORE)

    async def picture(request: Request):
        view = request.path_params["view"]
        data = session.jpeg(request.path_params["number"], view)
        if data is None:
            return JSONResponse({"error": f"frame {request.path_params['number']} has no "
                                 f"view '{view}' (any more)"}, status_code=404)
        return Response(data, media_type="image/jpeg", headers=NO_STORE)

    async def save(request: Request):
        try:
            data = await _json(request)
            if not isinstance(data, dict):
                raise InputError("request", data, "must be a JSON object")
            name = data.pop("name", None)
            if name is not None and not isinstance(name, str):
                raise InputError("name", name, "must be text")
            wanted = parse_request(data, session.items)
            saved = await asyncio.to_thread(session.save, wanted, name or None)
        except InputError as error:
            return _error(error)
        return JSONResponse(saved, headers=NO_STORE)

    @contextlib.asynccontextmanager
    async def lifespan(_app):
        nonlocal desk
        desk = FrameDesk(session.render)
        yield
        await asyncio.to_thread(desk.close)

    routes = [
        Route("/", page),
        Route("/api/scene", scene),
        Route("/api/plan", plan),
        Route("/api/frame", frame, methods=["POST"]),
        Route("/api/frame/{number:int}/{view}.jpg", picture),
        Route("/api/save", save, methods=["POST"]),
        Mount("/page", app=StaticFiles(directory=PAGE_FOLDER), name="page"),
    ]
    return Starlette(routes=routes, lifespan=lifespan)


def bind(host: str, port: int) -> socket.socket:
    """A listening socket at ``host:port`` (port 0: any free one), or a one-line error."""
    if not 0 <= port <= 65535:
        raise InputError("port", port, "must be 0 (any free port) to 65535")
    try:
        family = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)[0][0]
        sock = socket.socket(family, socket.SOCK_STREAM)
        sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        # Accepted connections inherit this on Linux: without it, a small answer written
        # in two parts (headers, body) waits for the page's delayed acknowledgement of the
        # first, about 40 ms per request on a kept-alive connection (measured here).
        sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
        sock.bind((host, port))
    except OSError as error:
        raise InputError("host", f"{host}:{port}",
                         f"cannot listen there ({error.strerror or error})") from None
    sock.listen(64)
    return sock


def address(sock: socket.socket) -> str:
    """The page's address for a listening socket."""
    host, port = sock.getsockname()[:2]
    return f"http://{f'[{host}]' if ':' in host else host}:{port}/"


def _server(session: LiveSession) -> uvicorn.Server:
    return uvicorn.Server(uvicorn.Config(create_app(session), log_level="warning",
                                         lifespan="on"))


def serve(session: LiveSession, sock: socket.socket) -> None:
    """Serve the page on ``sock`` until interrupted (Ctrl+C)."""
    _server(session).run(sockets=[sock])


@contextlib.contextmanager
def in_background(session: LiveSession, host: str = "127.0.0.1", port: int = 0):
    """Serve the page from a background thread (for tests and scripts); yield its address.

    The server stops when the block ends.
    """
    sock = bind(host, port)
    server = _server(session)
    thread = threading.Thread(target=server.run, kwargs={"sockets": [sock]}, daemon=True)
    thread.start()
    deadline = time.monotonic() + 30
    while not server.started and thread.is_alive() and time.monotonic() < deadline:
        time.sleep(0.01)
    try:
        yield address(sock)
    finally:
        server.should_exit = True
        thread.join(timeout=30)
        sock.close()

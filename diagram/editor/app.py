"""The editor's web application: one page, its script and style, and a small JSON API.

Every request passes :class:`Guard` first: the Host header must name the address the editor
listens on (no DNS rebinding), an Origin header, when sent, must be that same address (no
cross-site request), and the session's random token must come with it, as the ``token`` query
parameter or the ``X-Limbchart-Token`` header (403 without). Request bodies are read up to
:data:`~diagram.editor.study_edit.MAX_BODY` (413 beyond) and validated by the study loader;
a study with problems gets them back as data (422), never as a server error.

Routes (all but the page and its two files answer JSON or a file)::

    GET  /                     the page
    GET  /static/editor.js     its script       GET /static/editor.css  its style
    GET  /api/study            the opened study as file data, the scan order, the graft sites,
                               the file name
    POST /api/assess           study in: the results document, or the problems
    POST /api/preview          study in: page 1 of the sheet as SVG with hooks, and the results;
                               or the problems, also with status 200 (the page's live round trip)
    POST /api/draw?format=F    study in: the sheet as svg, pdf, png, dcm or json (a download)
    POST /api/locate           {side, segment, x, y, map_box}: how far into the segment, cm
    POST /api/save             {study, name?, confirm?}: written atomically; 409 to confirm
"""

from __future__ import annotations

import hmac
import json
from collections.abc import Awaitable, Callable, MutableMapping
from importlib import resources
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import Response
from starlette.routing import Route

from diagram.editor import study_edit
from diagram.editor.study_edit import EXPORTS, MAX_BODY, EditedStudy, SaveConflict
from diagram.errors import DiagramError, Problem, StudyError

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]

TOKEN_HEADER = "x-limbchart-token"
SECURITY_HEADERS = {
    "cache-control": "no-store",
    "x-content-type-options": "nosniff",
    "referrer-policy": "no-referrer",  # the address carries the token
    "x-frame-options": "DENY",
    "content-security-policy": (
        # The map's SVG carries the shipped font as an inline @font-face with a data: URL, so
        # inline styles and data: fonts are allowed; scripts stay limited to the page's own file.
        "default-src 'none'; script-src 'self'; style-src 'self' 'unsafe-inline'; "
        "font-src data:; img-src 'self' data:; "
        "connect-src 'self'; form-action 'none'; frame-ancestors 'none'; base-uri 'none'"
    ),
}
STATIC = {"editor.js": "text/javascript", "editor.css": "text/css"}


class Guard:
    """Refuse a request without the token, or whose Host or Origin is not the editor's own."""

    def __init__(self, app: ASGIApp, token: str, hosts: frozenset[str]) -> None:
        self.app = app
        self.token = token.encode("ascii")
        self.hosts = hosts  # "127.0.0.1:8765", "localhost:8765"
        self.origins = frozenset(f"http://{h}" for h in hosts)

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] == "websocket":  # the editor has none: refused before any route
            await send({"type": "websocket.close", "code": 1008})
            return
        if scope["type"] != "http":
            await self.app(scope, receive, send)  # lifespan
            return
        headers = {k.decode("latin-1"): v.decode("latin-1") for k, v in scope["headers"]}
        why = self.refusal(headers, scope.get("query_string", b""))
        if why is not None:
            await _plain(403, why)(scope, receive, send)
            return
        await self.app(scope, receive, send)

    def refusal(self, headers: dict[str, str], query: bytes) -> str | None:
        """Return why a request is refused, or None to let it through."""
        if headers.get("host", "").lower() not in self.hosts:
            return "refused: the Host header does not name this editor."
        origin = headers.get("origin")
        if origin is not None and origin.lower() not in self.origins:
            return "refused: a request from another site."
        given = headers.get(TOKEN_HEADER)
        if given is None:
            values = parse_qs(query.decode("latin-1")).get("token", [])
            given = values[0] if len(values) == 1 else None
        if given is None or not hmac.compare_digest(given.encode("utf-8", "replace"), self.token):
            return "refused: this address needs the editor's token (open the address it printed)."
        return None


def _plain(status: int, text: str) -> Response:
    return Response(
        text + "\n", status_code=status, media_type="text/plain", headers=SECURITY_HEADERS
    )


def _json(data: Any, status: int = 200) -> Response:
    body = json.dumps(data, ensure_ascii=False, allow_nan=False).encode("utf-8")
    return Response(
        body, status_code=status, media_type="application/json", headers=SECURITY_HEADERS
    )


class TooLarge(Exception):
    """A request body over the size limit."""


async def _body(request: Request) -> bytes:
    """Return the request body; refuse it as soon as it passes the size limit."""
    declared = request.headers.get("content-length")
    if declared is not None and (not declared.isdigit() or int(declared) > MAX_BODY):
        raise TooLarge
    chunks: list[bytes] = []
    size = 0
    async for chunk in request.stream():
        size += len(chunk)
        if size > MAX_BODY:
            raise TooLarge
        chunks.append(chunk)
    return b"".join(chunks)


def _is_json(request: Request) -> bool:
    kind: str = request.headers.get("content-type", "")
    return kind.split(";")[0].strip().lower() == "application/json"


Handler = Callable[[Request, bytes], Response]


def api(handler: Handler) -> Callable[[Request], Awaitable[Response]]:
    """Wrap a synchronous API handler: body limits, JSON only, problems as data, in a thread."""

    async def endpoint(request: Request) -> Response:
        if not _is_json(request):
            return _problem("send the study as application/json.", 415)
        try:
            body = await _body(request)
        except TooLarge:
            return _problem(f"the request is over the size limit ({MAX_BODY} bytes).", 413)
        return await run_in_threadpool(handler, request, body)

    return endpoint


def make_app(edited: EditedStudy, token: str, hosts: frozenset[str]) -> ASGIApp:
    """Return the editor's ASGI application for one study, guarded by ``token`` and ``hosts``."""
    handlers = _Handlers(edited, token)
    routes = [
        Route("/", handlers.page, methods=["GET"]),
        Route("/static/{name}", handlers.static, methods=["GET"]),
        Route("/api/study", _threaded(handlers.opened), methods=["GET"]),
        Route("/api/assess", api(handlers.assess), methods=["POST"]),
        Route("/api/preview", api(handlers.preview), methods=["POST"]),
        Route("/api/draw", api(handlers.draw), methods=["POST"]),
        Route("/api/locate", api(handlers.locate), methods=["POST"]),
        Route("/api/save", api(handlers.save), methods=["POST"]),
    ]
    return Guard(Starlette(routes=routes), token, hosts)


def _problem(message: str, status: int, field: str = "") -> Response:
    return _json({"problems": [{"field": field, "message": message}]}, status)


class _Handlers:
    """The routes' work for one edited study (the API handlers run in worker threads)."""

    def __init__(self, edited: EditedStudy, token: str) -> None:
        self.edited = edited
        self.token = token

    def refuse(self, err: DiagramError, status: int = 422) -> Response:
        return _json({"problems": study_edit.problems_data(err, self.edited.name)}, status)

    def study_of(self, body: bytes) -> Any:
        return study_edit.check_body(body, self.edited.name)

    async def page(self, request: Request) -> Response:
        text = resources.files("diagram.editor").joinpath("static/editor.html").read_text("utf-8")
        text = text.replace("{{token}}", self.token)
        return Response(text, media_type="text/html", headers=SECURITY_HEADERS)

    async def static(self, request: Request) -> Response:
        name = request.path_params["name"]
        if name not in STATIC:  # a fixed list: no path from the request reaches the disk
            return _plain(404, "not found.")
        data = resources.files("diagram.editor").joinpath(f"static/{name}").read_bytes()
        return Response(data, media_type=STATIC[name], headers=SECURITY_HEADERS)

    def opened(self, request: Request) -> Response:
        return _json(_opened(self.edited))

    def assess(self, request: Request, body: bytes) -> Response:
        try:
            return _json(study_edit.results(self.study_of(body), self.edited))
        except StudyError as err:
            return self.refuse(err)

    def preview(self, request: Request, body: bytes) -> Response:
        # Problems are the normal outcome of typing, so the page's own round trip answers them
        # with 200 (a browser logs every 4xx answer as an error in its console).
        try:
            return _json(study_edit.preview(self.study_of(body), self.edited))
        except StudyError as err:
            return self.refuse(err, 200)

    def draw(self, request: Request, body: bytes) -> Response:
        fmt = request.query_params.get("format", "svg")
        if fmt not in EXPORTS:
            return _problem(f"format {fmt!r} is not one of {', '.join(EXPORTS)}.", 400, "format")
        try:
            data = study_edit.export_bytes(self.study_of(body), self.edited, fmt)
        except DiagramError as err:
            return self.refuse(err)
        media, suffix = EXPORTS[fmt]
        stem = Path(self.edited.name).stem
        disposition = f'attachment; filename="{_ascii_name(stem)}{suffix}"'
        headers = {**SECURITY_HEADERS, "content-disposition": disposition}
        return Response(data, media_type=media, headers=headers)

    def locate(self, request: Request, body: bytes) -> Response:
        try:
            where = _locate_request(body)
            cm = study_edit.locate(
                self.edited, where["side"], where["segment"], where["point"], where["map_box"]
            )
        except StudyError as err:
            return self.refuse(err, 400)
        return _json({"from_cm": cm})

    def save(self, request: Request, body: bytes) -> Response:
        try:
            envelope = json.loads(body)
        except (ValueError, RecursionError):
            return _problem("the request is not valid JSON.", 400)
        if not isinstance(envelope, dict) or not isinstance(envelope.get("study"), dict):
            return _problem('send {"study": {...}}.', 400)
        name, confirm = envelope.get("name"), envelope.get("confirm") is True
        if name is not None and not isinstance(name, str):
            return _problem("a file name is text.", 400, "name")
        edited = self.edited
        with edited.lock:
            try:
                target = study_edit.save_target(edited, name, confirm)
                study = self.study_of(json.dumps(envelope["study"], ensure_ascii=False).encode())
                written = study_edit.save(study, edited, target)
            except SaveConflict as err:
                problems = study_edit.problems_data(err, edited.name)
                return _json({"conflict": True, "problems": problems}, 409)
            except DiagramError as err:
                return self.refuse(err)
        return _json({"saved": written.name, "folder": str(written.parent)})


def _threaded(handler: Callable[[Request], Response]) -> Callable[[Request], Awaitable[Response]]:
    async def endpoint(request: Request) -> Response:
        return await run_in_threadpool(handler, request)

    return endpoint


def _opened(edited: EditedStudy) -> dict[str, Any]:
    from diagram.drawing.template.mapfile import load_template
    from diagram.reading.study import GRAFT_SITES

    return {
        "name": edited.name,
        "folder": str(edited.folder),
        "new": edited.path is None or not edited.path.exists(),
        "study": edited.data,
        "segments": study_edit.scan_order(load_template(edited.template)),
        "graft_sites": list(GRAFT_SITES),  # a graft's sampling sites, inflow to outflow
    }


def _ascii_name(stem: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in stem)[:80] or "study"


def _locate_request(body: bytes) -> dict[str, Any]:
    """Read a locate request; raise StudyError naming the first field that is wrong."""

    def bad(field: str, rule: str) -> StudyError:
        return StudyError([Problem("request", None, field, None, rule)])

    try:
        data = json.loads(body)
    except (ValueError, RecursionError):
        raise bad("", "is not valid JSON.") from None
    if not isinstance(data, dict):
        raise bad("", "is not an object.")
    side, segment = data.get("side"), data.get("segment")
    if side not in ("right", "left", study_edit.MIDLINE):
        raise bad("side", "is right or left.")
    if not isinstance(segment, str):
        raise bad("segment", "is a segment id such as SFA-M.")
    numbers = [data.get("x"), data.get("y"), *(data.get("map_box") or [None])]
    if len(numbers) != 6 or not all(_finite(v) for v in numbers) or numbers[4] <= 0:
        raise bad("x", "x, y and map_box (four numbers, a positive width) are needed.")
    return {
        "side": None if side == study_edit.MIDLINE else side,
        "segment": segment,
        "point": (float(numbers[0]), float(numbers[1])),
        "map_box": [float(v) for v in numbers[2:]],
    }


def _finite(value: object) -> bool:
    import math

    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)

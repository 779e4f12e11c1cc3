"""The local web server of `formfind explore` (Werkzeug: a well-kept WSGI toolkit with a threaded
development server and a test client, and nothing else to install).

Endpoints (JSON in and out, except the page, its two static files and the drawing):

    GET  /                 the page
    GET  /static/<name>    page.js, page.css (a fixed list; no path from the client reaches the disk)
    GET  /api/start        the case's starting settings, the controls' ranges, a study grid if one exists
    POST /api/answer       {"client": id, "seq": n, "settings": {...}}: the answer, or {"stale": true}
                           when a newer request of the same page has arrived meanwhile, or
                           {"ok": false, "error": "..."} (HTTP 422)
    POST /api/save         {"settings": {...}}: writes the case file into the output folder, says where
    POST /api/dxf          {"settings": {...}}: the DXF drawing of the found axis, as a download

Security: the server binds 127.0.0.1 unless told otherwise; it answers only requests whose Host is the
address it serves (no DNS rebinding) and refuses POSTs from another origin or not sent as JSON; bodies
over MAX_BODY_BYTES are refused (413); saves go only into the case's folder under the output folder,
under names the server chooses. Every setting passes the case file's own validation; a bad value is
answered with its one-line message and the server keeps serving.
"""

from __future__ import annotations

import json
import logging
import math
import threading
from importlib import resources
from pathlib import Path
from typing import Any

from werkzeug.exceptions import HTTPException
from werkzeug.wrappers import Request, Response

from formfind.errors import CaseError, FormfindError
from formfind.explore.answer import CAUTION, Explorer, error_answer
from formfind.explore.settings import PageSettings, parse_settings

MAX_BODY_BYTES = 16 * 1024  # the settings are a few hundred bytes
MAX_SAVED = 999
MAX_PAGES = 64  # open pages whose newest request number is remembered  # case files saved from the page into one folder
STATIC = {"page.js": "text/javascript; charset=utf-8", "page.css": "text/css; charset=utf-8"}
SECURITY_HEADERS = {
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "no-referrer",
    "Cache-Control": "no-store",
    "Content-Security-Policy": "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; "
                               "connect-src 'self'; frame-ancestors 'none'",
}

log = logging.getLogger(__name__)


def _static(name: str) -> bytes:
    return resources.files("formfind.explore").joinpath("static", name).read_bytes()


def _json(data: Any, status: int = 200) -> Response:
    return Response(json.dumps(data, allow_nan=False, separators=(",", ":")), status=status,
                    mimetype="application/json")


def _range(value: float, low: float, high: float) -> dict[str, float]:
    return {"min": low * value, "max": high * value, "value": value}


class ExploreApp:
    """The WSGI application: one `Explorer` (one case file) and one output folder."""

    def __init__(self, explorer: Explorer, out_folder: Path,
                 hosts: tuple[str, ...] | None = ("127.0.0.1", "localhost")):
        """``hosts``: the names the page may be reached by (None: any, for a server bound elsewhere on
        purpose)."""
        from formfind.output import files

        self.explorer = explorer
        self.folder = Path(out_folder) / files.safe_name(explorer.case.name)
        self.hosts = hosts
        self._latest: dict[str, int] = {}  # the newest request number of each open page
        self._seq_lock = threading.Lock()
        self._save_lock = threading.Lock()

    # --------------------------------------------------------------------------------- WSGI
    def __call__(self, environ, start_response):
        request = Request(environ)
        request.max_content_length = MAX_BODY_BYTES
        try:
            response = self.dispatch(request)
        except HTTPException as exc:
            response = _json({"ok": False, "error": exc.description or exc.name}, exc.code or 400)
        for key, value in SECURITY_HEADERS.items():
            response.headers.setdefault(key, value)
        return response(environ, start_response)

    def dispatch(self, request: Request) -> Response:
        host = (request.host or "").rsplit(":", 1)[0].strip("[]")
        if self.hosts is not None and host not in self.hosts:
            return _json({"ok": False, "error": f"unknown host {host[:60]!r}: open the address the server printed"}, 421)
        routes = {("GET", "/"): self.page, ("GET", "/api/start"): self.start, ("POST", "/api/answer"): self.answer,
                  ("POST", "/api/save"): self.save, ("POST", "/api/dxf"): self.dxf}
        if request.method == "GET" and request.path.startswith("/static/"):
            return self.static(request.path[len("/static/"):])
        handler = routes.get((request.method, request.path))
        if handler is None:
            if any(path == request.path for _, path in routes):
                return _json({"ok": False, "error": f"{request.method} is not allowed on {request.path}"}, 405)
            return _json({"ok": False, "error": f"no such page: {request.path[:80]}"}, 404)
        if request.method == "POST":
            refused = self._refuse_post(request)
            if refused is not None:
                return refused
        return handler(request)

    def _refuse_post(self, request: Request) -> Response | None:
        if request.mimetype != "application/json":
            return _json({"ok": False, "error": "expected a JSON body (Content-Type: application/json)"}, 415)
        origin = request.headers.get("Origin")
        if origin is not None:
            netloc = origin.split("://", 1)[-1]
            port = (request.host or "").rsplit(":", 1)[-1]
            allowed = {request.host} | {f"{h}:{port}" for h in self.hosts or ()}
            if netloc not in allowed:
                return _json({"ok": False, "error": "requests from another site are refused"}, 403)
        length = request.content_length
        if length is not None and length > MAX_BODY_BYTES:
            return _json({"ok": False, "error": f"request body over {MAX_BODY_BYTES} bytes"}, 413)
        return None

    def _body(self, request: Request) -> dict[str, Any]:
        raw = request.get_data(cache=False)  # raises 413 past max_content_length
        if len(raw) > MAX_BODY_BYTES:
            raise CaseError("page", "", f"request body over {MAX_BODY_BYTES} bytes")
        try:
            body = json.loads(raw.decode("utf-8"), parse_constant=lambda name: math.nan)
        except (UnicodeDecodeError, json.JSONDecodeError, RecursionError) as exc:
            raise CaseError("page", "", f"expected a JSON object, got unreadable JSON ({str(exc)[:80]})") from None
        if not isinstance(body, dict):
            raise CaseError("page", "", f"expected a JSON object, got {type(body).__name__}")
        return body

    def _settings(self, body: dict[str, Any]) -> PageSettings:
        return parse_settings(body.get("settings", {}), self.explorer.start)

    # ------------------------------------------------------------------------------- endpoints
    def page(self, request: Request) -> Response:
        return Response(_static("index.html"), mimetype="text/html")

    def static(self, name: str) -> Response:
        if name not in STATIC:
            return _json({"ok": False, "error": f"no such file: {name[:80]}"}, 404)
        return Response(_static(name), content_type=STATIC[name])

    def start(self, request: Request) -> Response:
        e = self.explorer
        s = e.start
        span = s.span_m
        return _json({
            "ok": True,
            "case": e.case.name,
            "title": e.case.title,
            "file": Path(e.file).name,
            "settings": s.as_dict(),
            "ranges": {"rise_m": _range(s.rise_m, 0.25, 2.5) | {"min": 0.05 * span, "max": 0.6 * span},
                       "span_m": _range(span, 0.5, 2.0), "depth_m": _range(s.depth_m, 0.25, 3.0)},
            "governing": e.governing,
            "out_folder": str(self.folder),
            "study": self._study(),
            "caution": CAUTION,
        })

    def _study(self) -> list[dict[str, Any]] | None:
        """The points of a study of this case in the output folder (study.json), if there is one."""
        path = self.folder / "study.json"
        try:
            if not path.is_file() or path.stat().st_size > 20_000_000:
                return None
            points = json.loads(path.read_text(encoding="utf-8")).get("points", [])
        except (OSError, ValueError, AttributeError):
            return None
        keep = ("point", "span_m", "rise_m", "rise_over_span", "depth_m", "status", "peak_M_all_kNm",
                "max_thrust_kN", "buckling_factor", "worst_utilisation", "verdict", "reason")
        def short(value):
            return value[:300] if isinstance(value, str) else value

        return [{k: short(p.get(k)) for k in keep} for p in points if isinstance(p, dict)] or None

    def answer(self, request: Request) -> Response:
        try:
            body = self._body(request)
            seq = body.get("seq", 0)
            if isinstance(seq, bool) or not isinstance(seq, int):
                raise CaseError("page", "seq", "expected an integer request number")
            client = body.get("client", "")
            if not isinstance(client, str) or len(client) > 64:
                raise CaseError("page", "client", "expected the page's id (a short string)")
            settings = self._settings(body)
        except CaseError as exc:
            return _json(error_answer(exc), 422)
        with self._seq_lock:  # each open page numbers its own requests
            self._latest[client] = max(self._latest.pop(client, seq), seq)
            while len(self._latest) > MAX_PAGES:
                self._latest.pop(next(iter(self._latest)))
        try:
            with self.explorer.busy:
                if seq < self._latest.get(client, seq):  # a newer request of this page arrived meanwhile: drop it
                    return _json({"ok": True, "stale": True, "seq": seq})
                data = self.explorer.answer(settings)
        except FormfindError as exc:
            return _json(error_answer(exc, settings.as_dict()) | {"seq": seq}, 422)
        return _json(data | {"seq": seq})

    def save(self, request: Request) -> Response:
        from formfind.output import files

        try:
            settings = self._settings(self._body(request))
            text = self.explorer.toml(settings)
        except FormfindError as exc:
            return _json(error_answer(exc), 422)
        with self._save_lock:
            try:
                self.folder.mkdir(parents=True, exist_ok=True)
                stem = files.safe_name(self.explorer.case.name)
                for number in range(1, MAX_SAVED + 1):
                    path = self.folder / f"{stem}-explored-{number:03d}.toml"
                    if not path.exists():
                        break
                else:
                    return _json({"ok": False, "error": f"{self.folder}: already holds {MAX_SAVED} saved cases"}, 507)
                files.write_text(path, text)
            except OSError as exc:
                return _json({"ok": False, "error": f"{self.folder}: could not be written ({exc.strerror})"}, 500)
        return _json({"ok": True, "path": str(path), "name": path.name})

    def dxf(self, request: Request) -> Response:
        try:
            settings = self._settings(self._body(request))
            with self.explorer.busy:
                data = self.explorer.dxf(settings)
        except FormfindError as exc:
            return _json(error_answer(exc), 422)
        name = f"{self.explorer.case.name}-axis.dxf"
        return Response(data, mimetype="application/dxf",
                        headers={"Content-Disposition": f'attachment; filename="{name}"'})


def serve(explorer: Explorer, out_folder: Path, host: str, port: int, open_browser: bool,
          ready=None) -> None:
    """Serve the page until interrupted (Ctrl-C ends it cleanly). ``ready`` (optional) is called with
    the address once the server listens.

    Raises:
        OSError: if the address cannot be bound (the caller says so in one line).
    """
    from werkzeug.serving import make_server

    logging.getLogger("werkzeug").setLevel(logging.WARNING)  # no line per request in the terminal
    hosts = ("127.0.0.1", "localhost") if host in ("127.0.0.1", "localhost") else None
    app = ExploreApp(explorer, out_folder, hosts)
    server = make_server(host, port, app, threaded=True)
    url = f"http://{host}:{server.server_port}/"
    if ready is not None:
        ready(url)
    if open_browser:
        import webbrowser

        threading.Timer(0.3, webbrowser.open, args=(url,)).start()
    try:
        server.serve_forever()
    finally:
        server.server_close()

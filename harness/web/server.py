"""The read-only web view: the standard library's threading HTTP server and jinja2 templates.

Why no web framework: the view is a handful of GET pages over one store, with no forms, no
sessions and no writes; ``http.server`` (with jinja2, already used for the report, escaping
every value) does that without a new dependency or a second way to start a server.

Safety of the view itself: it never writes (every method but GET and HEAD is refused); it
binds to 127.0.0.1 unless told otherwise, and then it requires an access token
(``--token`` or ``HARNESS_WEB_TOKEN``) on every request (``?token=`` once, kept as a cookie,
or ``Authorization: Bearer``); every value is escaped by the templates; pages carry a strict
content security policy.
"""

from __future__ import annotations

import hmac
import ipaddress
import json
import math
import os
import re
import threading
from http import HTTPStatus
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from typing import Any, Callable
from urllib.parse import parse_qs, quote, urlsplit

import jinja2

from harness.store.errors import StoreError, UnknownRunError
from harness.web import charts, designs

TOKEN_ENV = "HARNESS_WEB_TOKEN"
LIVE_ROWS = 2000  # samples per live update at most; the page asks again at once for the rest
_COOKIE = "harness_token"
# The step's effective limits, as the runner records them at each step's start (event data).
LIMIT_KEYS = ("voltage_V", "current_A", "power_W")
_POLICY = ("default-src 'none'; script-src 'self' 'unsafe-inline'; style-src 'unsafe-inline'; img-src data:; "
           "connect-src 'self'; frame-ancestors 'none'; base-uri 'none'; form-action 'self'")
_TEMPLATES = jinja2.Environment(loader=jinja2.PackageLoader("harness.web", "templates"),
                                autoescape=True, undefined=jinja2.StrictUndefined)
_FILTERS = ("station", "unit", "status", "sequence", "since", "until")
_DATE = re.compile(r"\d{4}-\d{2}-\d{2}(T\d{2}(:\d{2}(:\d{2})?)?)?")
_STATUSES = ("running", "incomplete", "passed", "failed", "tripped", "aborted", "unsafe")


def _number(value: Any, digits: int = 4) -> str:
    if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
        return f"{value:.{digits}g}"
    return "–"


_TEMPLATES.filters["num"] = _number


def is_loopback(host: str) -> bool:
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return host == "localhost"


class View:
    """What the pages show, read from the store; one per server, shared by its threads."""

    def __init__(self, store: Any):
        self.store = store

    def run_list(self, query: dict[str, str]) -> str:
        filters = {k: v for k, v in query.items() if k in _FILTERS and v}
        for key in ("since", "until"):
            if key in filters and not _DATE.fullmatch(filters[key]):
                raise ValueError(f"{key}: a UTC date like 2026-12-02 or 2026-12-02T14:30")
        if filters.get("status") and filters["status"] not in _STATUSES:
            raise ValueError(f"status: one of {', '.join(_STATUSES)}")
        return _render("runs.html.j2", runs=list(reversed(self.store.runs(**filters))), filters=filters,
                       statuses=_STATUSES)

    def run_page(self, run_id: str) -> str:
        run = self.store.run(run_id)
        report = self.store.run_folder(run["run_id"]) / "report.html"
        return _render("run.html.j2", run=run, results=run.get("results") or {}, has_report=report.is_file(),
                       design=designs.design_key(run.get("record")))

    def report(self, run_id: str) -> bytes | None:
        path = self.store.run_folder(self.store.resolve(run_id)) / "report.html"
        return path.read_bytes() if path.is_file() else None

    def live_page(self, run_id: str) -> str:
        return _render("live.html.j2", run=self.store.run(run_id))

    def live_data(self, run_id: str, after: int) -> dict[str, Any]:
        """The run's status and step, the samples after ``after`` (at most LIVE_ROWS)."""
        run_id = self.store.resolve(run_id)
        listed = self.store.runs()
        status = next((r["status"] for r in listed if r["run_id"] == run_id), "unknown")
        steps = self.store.steps(run_id)
        names = ("id", "t", "channel", "u_rms", "i_rms", "p", "step_index")
        page = next(iter(self.store.sample_pages(run_id, names, LIVE_ROWS, after=after)), [])
        rows = [[None if isinstance(v, float) and not math.isfinite(v) else v for v in row] for row in page]
        starts = [e for e in self.store.events(run_id) if e["kind"] == "step-start" and isinstance(e["data"], dict)]
        limits = starts[-1]["data"].get("limits") if starts else None
        return {"run_id": run_id, "status": status, "step": steps[-1] if steps else None,
                "limits": {k: limits.get(k) for k in LIMIT_KEYS} if isinstance(limits, dict) else None,
                "samples": rows, "last_id": rows[-1][0] if rows else after, "more": len(rows) == LIVE_ROWS}

    def design_list(self) -> str:
        gathered = designs.gather(self.store.results())
        return _render("designs.html.j2", designs=sorted(gathered.items()))

    def design_page(self, key: str) -> str | None:
        units = designs.gather(self.store.results()).get(key)
        if units is None:
            return None
        stats = designs.statistics_of(units)
        figures = []
        for name, label, unit, _ in designs.FIGURES:
            values = [u[name] for u in units]
            s = stats[name]
            figures.append({"name": name, "label": label, "unit": unit, **s,
                            "trend": charts.trend(values, s["mean"], s["lower"], s["upper"], unit),
                            "histogram": charts.histogram(values, unit)})
        return _render("design.html.j2", key=key, units=units, figures=figures, sigmas=designs.SIGMAS)


def _render(template: str, **values: Any) -> str:
    return _TEMPLATES.get_template(template).render(**values)


class _Handler(BaseHTTPRequestHandler):
    server: WebServer
    protocol_version = "HTTP/1.1"

    def do_GET(self) -> None:  # the standard library's name
        self._serve(body=True)

    def do_HEAD(self) -> None:
        self._serve(body=False)

    def _refuse(self) -> None:
        self._send(HTTPStatus.METHOD_NOT_ALLOWED, "read-only: only GET and HEAD", "text/plain", True,
                   extra={"Allow": "GET, HEAD"})

    do_POST = do_PUT = do_DELETE = do_PATCH = _refuse

    def log_message(self, format: str, *args: Any) -> None:  # the standard library's signature
        if self.server.verbose:
            super().log_message(format, *args)

    def _serve(self, body: bool) -> None:
        parts = urlsplit(self.path)
        query = {k: v[-1] for k, v in parse_qs(parts.query).items()}
        cookie = self._token_given(query)
        if self.server.token is not None and cookie is None:
            self._send(HTTPStatus.UNAUTHORIZED, "an access token is needed: open the address with ?token=...",
                       "text/plain", body)
            return
        extra = {"Set-Cookie": f"{_COOKIE}={quote(cookie)}; HttpOnly; SameSite=Strict; Path=/"} if cookie else {}
        try:
            status, content, kind = self._route(parts.path, query)
        except (UnknownRunError, ValueError) as exc:
            status, content, kind = HTTPStatus.NOT_FOUND if isinstance(exc, UnknownRunError) else \
                HTTPStatus.BAD_REQUEST, str(exc), "text/plain"
        except StoreError as exc:
            status, content, kind = HTTPStatus.SERVICE_UNAVAILABLE, f"the store: {exc}", "text/plain"
        self._send(status, content, kind, body, extra=extra)

    def _token_given(self, query: dict[str, str]) -> str | None:
        """The valid token of the request, or None (no token needed: '')."""
        expected = self.server.token
        if expected is None:
            return ""
        offered = [query.get("token", "")]
        auth = self.headers.get("Authorization", "")
        if auth.startswith("Bearer "):
            offered.append(auth[7:])
        for part in self.headers.get("Cookie", "").split(";"):
            name, _, value = part.strip().partition("=")
            if name == _COOKIE:
                offered.append(value)
        return expected if any(hmac.compare_digest(o.encode(), expected.encode()) for o in offered if o) else None

    def _route(self, path: str, query: dict[str, str]) -> tuple[HTTPStatus, str | bytes, str]:
        view = self.server.view
        html = "text/html; charset=utf-8"
        if path == "/":
            return HTTPStatus.OK, view.run_list(query), html
        if path == "/designs":
            return HTTPStatus.OK, view.design_list(), html
        match = re.fullmatch(r"/designs/([\w.\-]+)", path)
        if match:
            page = view.design_page(match.group(1))
            return (HTTPStatus.OK, page, html) if page is not None else \
                (HTTPStatus.NOT_FOUND, "no such design", "text/plain")
        match = re.fullmatch(r"/runs/([\w\-]+)(/live|/live\.json|/report)?", path)
        if match:
            run_id, part = match.groups()
            if part is None:
                return HTTPStatus.OK, view.run_page(run_id), html
            if part == "/live":
                return HTTPStatus.OK, view.live_page(run_id), html
            if part == "/report":
                report = view.report(run_id)
                if report is None:
                    return HTTPStatus.NOT_FOUND, "no report on this computer: `harness report RUN_ID`", "text/plain"
                return HTTPStatus.OK, report, html
            after = query.get("after", "-1")
            if not re.fullmatch(r"-1|\d{1,12}", after):
                raise ValueError("after: a sample id")
            data = view.live_data(run_id, int(after))
            return HTTPStatus.OK, json.dumps(data, allow_nan=False), "application/json"
        return HTTPStatus.NOT_FOUND, "no such page", "text/plain"

    def _send(self, status: HTTPStatus, content: str | bytes, kind: str, body: bool,
              extra: dict[str, str] | None = None) -> None:
        data = content.encode("utf-8") if isinstance(content, str) else content
        self.send_response(status)
        headers = {"Content-Type": kind, "Content-Length": str(len(data)), "Cache-Control": "no-store",
                   "X-Content-Type-Options": "nosniff", "Referrer-Policy": "no-referrer",
                   "Content-Security-Policy": _POLICY, **(extra or {})}
        for name, value in headers.items():
            self.send_header(name, value)
        self.end_headers()
        if body:
            self.wfile.write(data)


class WebServer(ThreadingHTTPServer):
    daemon_threads = True

    def __init__(self, store: Any, host: str = "127.0.0.1", port: int = 8750, token: str | None = None,
                 verbose: bool = False):
        token = token or os.environ.get(TOKEN_ENV, "").strip() or None
        if not is_loopback(host) and not token:
            raise StoreError(f"harness web on {host} (reachable from other computers) needs an access token: "
                             f"--token TEXT or {TOKEN_ENV}")
        if token is not None and len(token) < 16:
            raise StoreError("the access token must be at least 16 characters")
        self.view = View(store)
        self.token = token
        self.verbose = verbose
        super().__init__((host, port), _Handler)

    @property
    def address(self) -> str:
        host, port = self.server_address[:2]
        return f"http://{host}:{port}/"


def serve_in_thread(server: WebServer) -> Callable[[], None]:
    """Serve in a daemon thread; the function that stops it (for tests and embedding)."""
    thread = threading.Thread(target=server.serve_forever, name="harness-web", daemon=True)
    thread.start()

    def stop() -> None:
        server.shutdown()
        server.server_close()
        thread.join()
    return stop


TEMPLATE_FOLDER = Path(__file__).with_name("templates")

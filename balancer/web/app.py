"""The web app: a Starlette application over :mod:`balancer.api`.

Routes (every ``/api`` request but the first carries the tab's session id in the
``X-Balancer-Session`` header; no request names a file on disk):

    GET  /                                  the page
    POST /api/session                       a new session for this tab
    POST /api/schedule                      the schedule as the request body → the check
    POST /api/logger?basis=&rules=&tz=      a logger file for it as the body → the check with it
    DELETE /api/logger                      forget the logger file
    POST /api/check                         the check again with another basis or rule set
    POST /api/balance                       start a balance → a job id
    GET  /api/jobs/{job}                    its state, and when done the trade-off table
    POST /api/jobs/{job}/cancel             stop it (its process is terminated)
    GET  /api/jobs/{job}/rows/{row}         one arrangement ("recommended" or a table row)
    GET  /api/jobs/{job}/rows/{row}/{kind}  its workbook (xlsx), printout (pdf) or JSON
"""

from __future__ import annotations

import html
import json
import logging
import re
import secrets
import threading
from collections.abc import AsyncIterator, Awaitable, Callable, Sequence
from contextlib import asynccontextmanager
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any
from urllib.parse import quote, unquote

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.middleware import Middleware
from starlette.middleware.trustedhost import TrustedHostMiddleware
from starlette.requests import Request
from starlette.responses import FileResponse, HTMLResponse, JSONResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from balancer import api
from balancer.errors import BalancerError, Problem
from balancer.intervals.logger import MAX_FILE_BYTES as LOGGER_LIMIT_BYTES
from balancer.report.json import balance_json
from balancer.report.safety import CAUTION, CAUTIONS
from balancer.web import views
from balancer.web.choices import balance_choices, check_choices
from balancer.web.jobs import Job, SolveRequest, problems_of, read_panel
from balancer.web.sessions import Session, Sessions, safe_name

LOG = logging.getLogger("balancer.web")
UPLOAD_LIMIT_BYTES = 20 * 1024 * 1024
JSON_LIMIT_BYTES = 256 * 1024
SESSION_HEADER = "x-balancer-session"
LOOPBACK_HOSTS = ("127.0.0.1", "localhost", "[::1]", "::1")
KEPT_JOBS = 6  # finished jobs a session keeps for their rows and downloads
GENERIC_ERROR = "Something went wrong on the server; the details are in the server's log."
SECURITY_HEADERS = {
    "content-security-policy": (
        "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
        "connect-src 'self'; object-src 'none'; base-uri 'none'; form-action 'none'; "
        "frame-ancestors 'none'"
    ),
    "x-content-type-options": "nosniff",
    "referrer-policy": "no-referrer",
    "x-frame-options": "DENY",
    "cross-origin-opener-policy": "same-origin",
    "cross-origin-resource-policy": "same-origin",
}
KINDS = {
    "xlsx": "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
    "pdf": "application/pdf",
    "json": "application/json",
}


class Refusal(Exception):
    """A request the server will not carry out, with the status and what to tell the user."""

    def __init__(self, status: int, message: str) -> None:
        super().__init__(message)
        self.status = status
        self.message = message


class SecurityHeaders:
    """Adds :data:`SECURITY_HEADERS` to every response, and no-store to the API's."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        api_path = str(scope.get("path", "")).startswith("/api/")

        async def send_with_headers(message: Message) -> None:
            if message["type"] == "http.response.start":
                headers = list(message.get("headers", []))
                headers += [(k.encode(), v.encode()) for k, v in SECURITY_HEADERS.items()]
                if api_path:
                    headers.append((b"cache-control", b"no-store"))
                message["headers"] = headers
            await send(message)

        await self.app(scope, receive, send_with_headers)


async def read_bounded(request: Request, limit: int) -> bytes:
    """The request body, refused as soon as it passes ``limit`` bytes (whatever
    Content-Length said)."""
    too_large = Refusal(
        413, f"The file is larger than {limit // (1024 * 1024)} MB; balancer refuses it."
    )
    declared = request.headers.get("content-length", "")
    if declared.isdigit() and int(declared) > limit:
        raise too_large
    chunks, size = [], 0
    async for chunk in request.stream():
        size += len(chunk)
        if size > limit:
            raise too_large
        chunks.append(chunk)
    return b"".join(chunks)


def _error(status: int, message: str, problems: Sequence[Problem] = ()) -> JSONResponse:
    listed = [{"where": p.where, "what": p.what} for p in problems]
    return JSONResponse({"error": message, "problems": listed}, status_code=status)


Endpoint = Callable[[Request], Awaitable[Response]]


@dataclass
class WebApp:
    """The routes, over one :class:`Sessions`."""

    sessions: Sessions
    upload_limit: int = UPLOAD_LIMIT_BYTES
    logger_limit: int = LOGGER_LIMIT_BYTES  # the logger reader's own bound

    def __post_init__(self) -> None:
        self._write_lock = threading.Lock()  # matplotlib and the writers, one at a time
        page = resources.files("balancer.web") / "static" / "index.html"
        self._page = page.read_text(encoding="utf-8").replace("{{caution}}", html.escape(CAUTION))

    # ------------------------------------------------------------ plumbing

    def _scrub(self, text: str) -> str:
        """A message without the server's folders (a file is named as it was uploaded)."""
        root = self.sessions.root
        return re.sub(re.escape(str(root)) + r"[^\s:'\"]*/", "", text) if root else text

    def guarded(self, endpoint: Endpoint) -> Endpoint:
        """Located problems for a bad input; a generic message (logged in full here) for
        anything unexpected; never a stack trace to the browser."""

        async def run(request: Request) -> Response:
            try:
                return await endpoint(request)
            except Refusal as exc:
                return _error(exc.status, exc.message)
            except BalancerError as exc:
                return self._problems(exc, "The schedule or an option cannot be used as given.")
            except Exception:
                LOG.exception("request %s %s failed", request.method, request.url.path)
                return _error(500, GENERIC_ERROR)

        return run

    def _problems(self, exc: BalancerError, message: str) -> JSONResponse:
        problems = [Problem(self._scrub(p.where), self._scrub(p.what)) for p in problems_of(exc)]
        return _error(422, message, problems)

    def _session(self, request: Request) -> Session:
        session = self.sessions.get(request.headers.get(SESSION_HEADER, ""))
        if session is None:
            raise Refusal(401, "This page's session has ended (the server restarted?): reload it.")
        return session

    def _job(self, request: Request) -> tuple[Session, Job]:
        session = self._session(request)
        job = session.jobs.get(request.path_params["job"])
        if job is None:
            raise Refusal(404, "No such balance in this session.")
        return session, job

    async def _options(self, request: Request) -> Any:
        body = await read_bounded(request, JSON_LIMIT_BYTES)
        try:
            return json.loads(body or b"{}")
        except ValueError as exc:
            raise Refusal(400, "The options are not valid JSON.") from exc

    # ------------------------------------------------------------ routes

    async def page(self, request: Request) -> Response:
        return HTMLResponse(self._page)

    async def new_session(self, request: Request) -> Response:
        session = self.sessions.create()
        return JSONResponse(
            {
                "session": session.id,
                "upload_limit_bytes": self.upload_limit,
                "logger_limit_bytes": self.logger_limit,
                "caution": CAUTION,
                "cautions": list(CAUTIONS),
            }
        )

    def _check(self, session: Session, data: Any) -> dict[str, Any]:
        if session.schedule is None:
            raise Refusal(409, "Upload a schedule first.")
        chosen = check_choices(data)
        over_time = chosen.over_time.load_over_time(session.logger)
        panel = read_panel(session.schedule, session.name)
        report = api.check_panel(panel, chosen.basis, chosen.demand, over_time)
        return views.check_view(report, session.name)

    async def upload(self, request: Request) -> Response:
        session = self._session(request)
        name = safe_name(unquote(request.headers.get("x-filename", "")))
        if name is None:
            raise Refusal(415, "Give a panel schedule as an .xlsx workbook or a .csv file.")
        data = await read_bounded(request, self.upload_limit)
        if not data:
            raise Refusal(422, f"{name}: the file is empty.")
        with session.lock:
            session.store(name, data)
        return JSONResponse(await run_in_threadpool(self._check, session, {}))

    async def upload_logger(self, request: Request) -> Response:
        """A logger file for the schedule: kept only when it reads; its problems otherwise."""
        session = self._session(request)
        if session.schedule is None:
            raise Refusal(409, "Upload a schedule first.")
        name = safe_name(unquote(request.headers.get("x-filename", "")), (".csv",), "logger")
        if name is None:
            raise Refusal(415, "Give a logger file as a .csv file.")
        data = await read_bounded(request, self.logger_limit)
        if not data:
            raise Refusal(422, f"{name}: the file is empty.")
        options = {**request.query_params, "load": "logger"}
        check_choices(options)  # a wrong option is the option's problem, not the file's
        with session.lock:
            session.store_logger(name, data)
        try:
            return JSONResponse(await run_in_threadpool(self._check, session, options))
        except BalancerError as exc:
            with session.lock:
                session.drop_logger()
            return self._problems(exc, f"The logger file {name} cannot be used as given.")

    async def forget_logger(self, request: Request) -> Response:
        session = self._session(request)
        with session.lock:
            session.cancel_jobs()  # a running balance may be reading it
            session.drop_logger()
        return JSONResponse({"logger": None})

    async def check(self, request: Request) -> Response:
        session = self._session(request)
        data = await self._options(request)
        return JSONResponse(await run_in_threadpool(self._check, session, data))

    async def balance(self, request: Request) -> Response:
        session = self._session(request)
        chosen = balance_choices(await self._options(request))
        if session.schedule is None:
            raise Refusal(409, "Upload a schedule first.")
        with session.lock:
            session.cancel_jobs()  # one solve per tab: a new balance replaces a running one
            for old in list(session.jobs)[:-KEPT_JOBS]:
                del session.jobs[old]
            over_time = chosen.over_time.load_over_time(session.logger)
            job = Job(
                secrets.token_urlsafe(16),
                SolveRequest(session.schedule, session.name, chosen, over_time),
            )
            session.jobs[job.id] = job
            job.start()
        return JSONResponse({"job": job.id, "state": job.state})

    async def job_status(self, request: Request) -> Response:
        _, job = self._job(request)
        with job.lock:
            state, report, problems = job.state, job.report, list(job.problems)
        body: dict[str, Any] = {"job": job.id, "state": state, "elapsed_s": job.elapsed_s()}
        if state == "failed":
            body["problems"] = [
                {"where": self._scrub(p.where), "what": self._scrub(p.what)} for p in problems
            ]
        if state == "done" and report is not None:
            body["table"] = views.table_view(report, None)
        return JSONResponse(body)

    async def cancel(self, request: Request) -> Response:
        _, job = self._job(request)
        await run_in_threadpool(job.cancel)
        return JSONResponse({"job": job.id, "state": job.state})

    def _row(self, request: Request) -> tuple[Session, Job, int | None, api.BalanceReport]:
        session, job = self._job(request)
        if job.state != "done" or job.report is None:
            raise Refusal(409, f"This balance is {job.state}; there is no arrangement to show.")
        text = request.path_params["row"]
        if text == "recommended":
            row = None
        elif text.isdigit():
            row = int(text)
        else:
            raise Refusal(404, "No such row.")
        demand = job.request.choices.demand
        return session, job, row, api.balance_row(job.report, row, demand)

    async def arrangement(self, request: Request) -> Response:
        def build() -> dict[str, Any]:
            session, job, row, report = self._row(request)
            assert job.report is not None
            return views.arrangement_view(job.report, report, session.name, row)

        return JSONResponse(await run_in_threadpool(build))

    def _file(self, request: Request, kind: str) -> tuple[Path | bytes, str]:
        session, job, row, report = self._row(request)
        stem = Path(session.name).stem
        table = report.field.table
        moves = "" if row is None or table is None else f"-{table.rows[row].moves}-moves"
        filename = f"{stem}-balanced{moves}.{kind}"
        if kind == "json":
            data = balance_json(report)
            data["panel"]["source"] = session.name
            return json.dumps(data, indent=2, ensure_ascii=False).encode(), filename
        folder = session.folder / f"job-{job.id}" / ("recommended" if row is None else f"row-{row}")
        with self._write_lock:
            if not (folder / f"balanced.{kind}").exists():
                folder.mkdir(parents=True, exist_ok=True, mode=0o700)
                api.write_balance(
                    report,
                    folder / "balanced.xlsx",
                    folder / "balanced.pdf",
                    schedule=session.schedule,
                )
        return folder / f"balanced.{kind}", filename

    async def download(self, request: Request) -> Response:
        kind = request.path_params["kind"]
        if kind not in KINDS:
            raise Refusal(404, "Downloads are xlsx, pdf or json.")
        content, filename = await run_in_threadpool(self._file, request, kind)
        ascii_name = re.sub(r"[^A-Za-z0-9._()+-]", "_", filename)
        disposition = f"attachment; filename=\"{ascii_name}\"; filename*=UTF-8''{quote(filename)}"
        headers = {"content-disposition": disposition}
        if isinstance(content, bytes):
            return Response(content, media_type=KINDS[kind], headers=headers)
        return FileResponse(content, media_type=KINDS[kind], headers=headers)

    def routes(self) -> list[Route | Mount]:
        static = StaticFiles(directory=str(resources.files("balancer.web") / "static"))
        g = self.guarded
        return [
            Route("/", self.page),
            Route("/api/session", g(self.new_session), methods=["POST"]),
            Route("/api/schedule", g(self.upload), methods=["POST"]),
            Route("/api/logger", g(self.upload_logger), methods=["POST"]),
            Route("/api/logger", g(self.forget_logger), methods=["DELETE"]),
            Route("/api/check", g(self.check), methods=["POST"]),
            Route("/api/balance", g(self.balance), methods=["POST"]),
            Route("/api/jobs/{job}", g(self.job_status)),
            Route("/api/jobs/{job}/cancel", g(self.cancel), methods=["POST"]),
            Route("/api/jobs/{job}/rows/{row}", g(self.arrangement)),
            Route("/api/jobs/{job}/rows/{row}/{kind}", g(self.download)),
            Mount("/static", static, name="static"),
        ]


def create_app(
    allowed_hosts: Sequence[str] = LOOPBACK_HOSTS,
    upload_limit: int = UPLOAD_LIMIT_BYTES,
    logger_limit: int = LOGGER_LIMIT_BYTES,
) -> Starlette:
    """The app. Its private folder is made when it starts and deleted, with every upload and
    output and after every job is stopped, when it stops. Requests naming another host are
    refused (a page elsewhere cannot reach this one through a rebound name)."""
    sessions = Sessions()
    web = WebApp(sessions, upload_limit, logger_limit)

    @asynccontextmanager
    async def lifespan(app: Starlette) -> AsyncIterator[None]:
        sessions.open()
        try:
            yield
        finally:
            sessions.close()

    app = Starlette(
        routes=web.routes(),
        middleware=[
            Middleware(SecurityHeaders),
            Middleware(TrustedHostMiddleware, allowed_hosts=list(allowed_hosts)),
        ],
        lifespan=lifespan,
    )
    app.state.web = web
    return app

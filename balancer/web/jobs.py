"""Balancing in a worker process, one job per request, so a long solve can be cancelled: a
cancelled job's process is terminated and whatever it had found is discarded.

The worker reads the uploaded schedule, applies the page's locks and runs
:func:`balancer.api.balance_panel`; it sends back the report, or the located problems of a
:class:`~balancer.errors.BalancerError`, or (for anything else) a trace that is logged on the
server and never shown to the browser.
"""

from __future__ import annotations

import logging
import multiprocessing
import threading
import time
import traceback
from dataclasses import dataclass, field, replace
from multiprocessing.connection import Connection
from pathlib import Path
from typing import Any, Literal

from balancer import api
from balancer.errors import BalancerError, Problem, ScheduleError
from balancer.io.reader import read_schedule
from balancer.web.choices import BalanceChoices

LOG = logging.getLogger("balancer.web")
State = Literal["running", "done", "failed", "cancelled"]
GENERIC_FAILURE = "The balance failed on the server; the details are in the server's log."


@dataclass(frozen=True, slots=True)
class SolveRequest:
    schedule: Path
    name: str  # the file's name as uploaded, put in the panel's source
    choices: BalanceChoices


def problems_of(exc: BalancerError) -> list[Problem]:
    if isinstance(exc, ScheduleError):
        return exc.problems
    return [Problem("", str(exc))]


def read_panel(schedule: Path, name: str) -> Any:
    """The uploaded schedule, its source named as uploaded (no server path in any output)."""
    return replace(read_schedule(schedule), source=name)


def solve(request: SolveRequest) -> api.BalanceReport:
    """The balance the page asked for (run in the worker process)."""
    chosen = request.choices
    panel = api.lock_circuits(read_panel(request.schedule, request.name), chosen.locks)
    return api.balance_panel(panel, chosen.options, chosen.field, chosen.demand, chosen.supply)


def _work(conn: Connection, request: SolveRequest) -> None:
    try:
        conn.send(("done", solve(request)))
    except BalancerError as exc:
        conn.send(("error", problems_of(exc)))
    except Exception:
        conn.send(("crash", traceback.format_exc()))
    finally:
        conn.close()


@dataclass(slots=True)
class Job:
    """One balance in its own process; ``state`` moves from running to done, failed or
    cancelled once, under ``lock``."""

    id: str
    request: SolveRequest
    started: float = field(default_factory=time.monotonic)
    finished: float | None = None
    state: State = "running"
    report: api.BalanceReport | None = None
    problems: list[Problem] = field(default_factory=list)
    downloads: dict[tuple[str, str], Path] = field(default_factory=dict)
    lock: threading.Lock = field(default_factory=threading.Lock)
    _process: Any = None

    def start(self) -> None:
        context = multiprocessing.get_context("spawn")  # no fork of a threaded server
        receive, send = context.Pipe(duplex=False)
        self._process = context.Process(
            target=_work, args=(send, self.request), name=f"balance-{self.id[:8]}", daemon=True
        )
        self._process.start()
        send.close()
        threading.Thread(target=self._wait, args=(receive,), daemon=True).start()

    def _wait(self, receive: Connection) -> None:
        try:
            message = receive.recv()
        except (EOFError, OSError):
            message = None
        finally:
            receive.close()
        self._process.join()
        with self.lock:
            self.finished = time.monotonic()
            if self.state == "cancelled":
                return  # discarded
            if message is None:
                LOG.error("balance job %s: worker ended with %s", self.id, self._process.exitcode)
                self.state, self.problems = "failed", [Problem("", GENERIC_FAILURE)]
            elif message[0] == "done":
                self.state, self.report = "done", message[1]
            elif message[0] == "error":
                self.state, self.problems = "failed", list(message[1])
            else:
                LOG.error("balance job %s failed:\n%s", self.id, message[1])
                self.state, self.problems = "failed", [Problem("", GENERIC_FAILURE)]

    def cancel(self) -> None:
        """Stop the worker process; its result, if any arrives, is discarded."""
        with self.lock:
            if self.state != "running":
                return
            self.state = "cancelled"
            self.finished = time.monotonic()
        if self._process is not None and self._process.is_alive():
            self._process.terminate()
            self._process.join(5)
            if self._process.is_alive():
                self._process.kill()

    def elapsed_s(self) -> float:
        return (self.finished or time.monotonic()) - self.started

"""Balancing in a worker process, one job per request, so a long solve can be cancelled: a
cancelled job's process is terminated and whatever it had found is discarded.

The worker reads the uploaded schedule (and the logger file, with a load over time), applies
the page's locks and runs :func:`balancer.api.balance_panel`; it sends back the report, or the
located problems of a :class:`~balancer.errors.BalancerError`, or (for anything else) a trace
that is logged on the server and never shown to the browser.
"""

from __future__ import annotations

import logging
import pickle
import subprocess
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field, replace
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
    over_time: api.LoadOverTime | None = None  # the logger file is the session's upload


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
    return api.balance_panel(
        panel, chosen.options, chosen.field, chosen.demand, chosen.supply, request.over_time
    )


def work(request: SolveRequest) -> tuple[str, Any]:
    """What the worker process sends back: the report, the located problems, or a trace."""
    try:
        return "done", solve(request)
    except BalancerError as exc:
        return "error", problems_of(exc)
    except Exception:
        return "crash", traceback.format_exc()


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
    lock: threading.Lock = field(default_factory=threading.Lock)
    _process: Any = None

    def start(self) -> None:
        """Start the worker (``python -m balancer.web.worker``: a fresh interpreter, not a fork
        of the threaded server); the request goes in on its standard input, pickled, and the
        answer comes back on its standard output."""
        self._process = subprocess.Popen(
            [sys.executable, "-m", "balancer.web.worker"],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
        )
        threading.Thread(target=self._wait, daemon=True).start()

    def _wait(self) -> None:
        process = self._process
        message = None
        try:
            answer, _ = process.communicate(pickle.dumps(self.request))
            if process.returncode == 0 and answer:
                message = pickle.loads(answer)  # from our own worker process only
        except (OSError, ValueError, pickle.UnpicklingError, EOFError):
            message = None
        with self.lock:
            self.finished = time.monotonic()
            if self.state == "cancelled":
                return  # discarded
            if message is None:
                LOG.error("balance job %s: worker ended with %s", self.id, process.returncode)
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
        process = self._process
        if process is not None and process.poll() is None:
            process.terminate()
            try:
                process.wait(5)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait()

    def alive(self) -> bool:
        return self._process is not None and self._process.poll() is None

    def elapsed_s(self) -> float:
        return (self.finished or time.monotonic()) - self.started

"""A progress line on the terminal for a step that takes a while: ``balancing office… 4 s``.

Only on a terminal (never in a pipe, a log file or beside ``--json``), only once the step has
run for :data:`DELAY_S`, and cleared when the step ends, so the text that follows is the same
with or without it.
"""

from __future__ import annotations

import contextlib
import sys
import threading
import time
from collections.abc import Iterator
from typing import TextIO

from balancer.report.textbars import is_terminal

DELAY_S = 2.0  # a step quicker than this shows nothing
TICK_S = 0.5  # how often the seconds are redrawn


def wanted(stream: TextIO, json_output: bool = False) -> bool:
    """Whether a progress line belongs on ``stream``: a terminal, and no JSON being printed."""
    return not json_output and is_terminal(stream)


@contextlib.contextmanager
def progress(
    label: str,
    *,
    enabled: bool | None = None,
    stream: TextIO | None = None,
    delay_s: float | None = None,
    tick_s: float | None = None,
) -> Iterator[None]:
    """Show ``label… N s`` on ``stream`` (standard error) while the block runs.

    ``enabled`` None decides by :func:`wanted`; the line is drawn from a background thread and
    wiped before the block's own output continues.
    """
    out = stream or sys.stderr
    delay = DELAY_S if delay_s is None else delay_s
    tick = TICK_S if tick_s is None else tick_s
    if enabled is None:
        enabled = wanted(out)
    if not enabled:
        yield
        return
    done = threading.Event()
    shown = [0]  # width of the line drawn, to wipe it

    def draw() -> None:
        begin = time.monotonic()
        if done.wait(delay):
            return
        while not done.is_set():
            text = f"{label}… {time.monotonic() - begin:.0f} s"
            out.write("\r" + text.ljust(shown[0]))
            out.flush()
            shown[0] = max(shown[0], len(text))
            done.wait(tick)

    worker = threading.Thread(target=draw, name="progress", daemon=True)
    worker.start()
    try:
        yield
    finally:
        done.set()
        worker.join()
        if shown[0]:
            out.write("\r" + " " * shown[0] + "\r")
            out.flush()

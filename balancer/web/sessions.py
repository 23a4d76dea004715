"""Per-tab state: each session has an unguessable id, a private folder for its uploads (the
schedule and, optionally, a logger file read against it) and outputs, and its balance jobs.
There is no shared "current panel"; the least recently used sessions are dropped beyond a
bound, and every folder goes when the server stops."""

from __future__ import annotations

import re
import secrets
import shutil
import tempfile
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

from balancer.web.jobs import Job

MAX_SESSIONS = 32
ACCEPTED = (".xlsx", ".csv")


@dataclass(slots=True)
class Session:
    id: str
    folder: Path
    schedule: Path | None = None
    name: str = ""
    logger: Path | None = None  # a logger file for this schedule; it goes with the schedule
    jobs: dict[str, Job] = field(default_factory=dict)
    uploads: int = 0
    used: float = field(default_factory=time.monotonic)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def cancel_jobs(self) -> None:
        for job in list(self.jobs.values()):
            job.cancel()

    def store(self, name: str, data: bytes) -> Path:
        """Keep an upload under a name of the server's choosing; earlier uploads and their
        jobs are dropped."""
        self.cancel_jobs()
        self.jobs.clear()
        for old in self.folder.glob("upload-*"):
            shutil.rmtree(old, ignore_errors=True)
        self.uploads += 1
        folder = self.folder / f"upload-{self.uploads}"
        folder.mkdir(mode=0o700)
        path = folder / name
        path.write_bytes(data)
        self.schedule, self.name, self.logger = path, name, None
        return path

    def store_logger(self, name: str, data: bytes) -> Path:
        """Keep a logger file beside the schedule (in a folder of the server's choosing),
        replacing an earlier one. A running balance may be reading the old one: it is stopped;
        finished ones keep their figures."""
        if self.schedule is None:
            raise RuntimeError("a logger file needs its schedule first")
        self.cancel_jobs()
        self.drop_logger()
        folder = self.schedule.parent / "logger"
        folder.mkdir(mode=0o700)
        path = folder / name
        path.write_bytes(data)
        self.logger = path
        return path

    def drop_logger(self) -> None:
        if self.logger is not None:
            shutil.rmtree(self.logger.parent, ignore_errors=True)
            self.logger = None


def safe_name(
    given: str, accepted: tuple[str, ...] = ACCEPTED, default: str = "schedule"
) -> str | None:
    """The uploaded file's name without any folder, kept to plain characters; None when it
    does not end in one of ``accepted`` (.xlsx or .csv)."""
    base = re.split(r"[\\/]", given.strip())[-1]
    stem, dot, suffix = base.rpartition(".")
    if not dot or f".{suffix.lower()}" not in accepted:
        return None
    stem = re.sub(r"[^\w .()+-]", "_", stem).strip(" .")[:80] or default
    return f"{stem}.{suffix.lower()}"


class Sessions:
    """Every session of one server, in its own private temporary folder (mode 0700)."""

    def __init__(self) -> None:
        self.root: Path | None = None
        self._sessions: dict[str, Session] = {}
        self._lock = threading.Lock()

    def open(self) -> None:
        """Make the private folder (the server is starting)."""
        self.root = Path(tempfile.mkdtemp(prefix="balancer-serve-"))  # created 0700
        self.root.chmod(0o700)

    def create(self) -> Session:
        if self.root is None:
            raise RuntimeError("the sessions' folder is not open (the server has not started)")
        session_id = secrets.token_urlsafe(32)
        folder = self.root / secrets.token_hex(8)
        folder.mkdir(mode=0o700)
        session = Session(session_id, folder)
        with self._lock:
            self._sessions[session_id] = session
            while len(self._sessions) > MAX_SESSIONS:
                oldest = min(self._sessions.values(), key=lambda s: s.used)
                self._drop(oldest)
        return session

    def get(self, session_id: str) -> Session | None:
        with self._lock:
            session = self._sessions.get(session_id)
            if session is not None:
                session.used = time.monotonic()
            return session

    def _drop(self, session: Session) -> None:
        del self._sessions[session.id]
        session.cancel_jobs()
        shutil.rmtree(session.folder, ignore_errors=True)

    def close(self) -> None:
        """Stop every job and delete every file (the server is stopping)."""
        with self._lock:
            for session in list(self._sessions.values()):
                self._drop(session)
        if self.root is not None:
            shutil.rmtree(self.root, ignore_errors=True)
            self.root = None

"""Writing output files: atomically (a temporary file in the same folder, then ``os.replace``),
with the permissions the user's umask gives, never over an input, and every workbook through
one helper that stores schedule text as text, never as a live formula."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from openpyxl import Workbook

from balancer.errors import OutputError


def atomic_write_bytes(path: Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and os.replace."""
    return atomic(path, lambda tmp: tmp.write_bytes(data))


def save_workbook(book: Workbook, path: Path | str) -> Path:
    """Write ``book`` to ``path`` atomically; every workbook balancer writes goes through here.

    balancer writes no formulas of its own, so a cell openpyxl took for a formula holds text
    from a schedule (a description ``=HYPERLINK(...)``, a panel name ``=cmd|...``) that a
    spreadsheet program would run: it is written as a text cell instead.
    """
    for sheet in book.worksheets:
        for cell in sheet._cells.values():
            if cell.data_type == "f":
                cell.data_type = "s"
    return atomic(Path(path), book.save)


def _new_file_mode() -> int:
    """The mode a plain ``open(path, "w")`` would give: mkstemp's 0600 would hide the outputs
    from the user's group. The umask can only be read by setting it, so it is set back at once
    (balancer writes from one thread per process)."""
    umask = os.umask(0o022)
    os.umask(umask)
    return 0o666 & ~umask


def _cannot_write(path: Path, exc: OSError) -> OutputError:
    folder = path.parent
    reason = (
        f"the folder {folder} does not exist"
        if not folder.exists()
        else f"{folder} is not a folder"
        if not folder.is_dir()
        else (exc.strerror or str(exc)).lower()
    )
    return OutputError(f"{path}: cannot write the file: {reason}")


def check_writable(path: Path | str) -> None:
    """Raise OutputError now when ``path`` could not be written (a folder in the way, no such
    folder, no permission): called before the long work, so an output that cannot be written
    fails in a second, not after the solve. A temporary file is made in the folder and removed,
    which is what the write itself will need (and holds for root too, unlike a mode check)."""
    path = Path(path)
    if path.is_dir():
        raise OutputError(f"{path}: is a folder; give a file name for the output")
    try:
        fd, name = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=".check", dir=path.parent)
    except OSError as exc:
        raise _cannot_write(path, exc) from exc
    os.close(fd)
    Path(name).unlink(missing_ok=True)


def atomic(path: Path, write: Callable[[Path], object]) -> Path:
    path = Path(path)
    if path.is_dir():
        raise OutputError(f"{path}: is a folder; give a file name for the output")
    try:
        fd, name = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=path.suffix, dir=path.parent)
    except OSError as exc:
        raise _cannot_write(path, exc) from exc
    os.close(fd)
    tmp = Path(name)
    try:
        write(tmp)
        os.chmod(tmp, _new_file_mode())
        os.replace(tmp, path)
    except OSError as exc:  # disk full, quota, the folder went away: no temporary file stays
        tmp.unlink(missing_ok=True)
        raise _cannot_write(path, exc) from exc
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def same_file(first: Path, second: Path) -> bool:
    """Whether two paths name one file (also through a link); False when either cannot be
    looked at."""
    try:
        return first.resolve() == second.resolve() or (
            first.exists() and second.exists() and os.path.samefile(first, second)
        )
    except OSError:
        return False


def refuse_input_path(path: Path, *inputs: str | Path | None) -> None:
    """Raise when ``path`` is one of the input files: the input is never written."""
    for given in inputs:
        if given and same_file(Path(path), Path(given)):
            raise OutputError(
                f"{path}: this is the input schedule; balancer never overwrites its input. "
                "Choose another output name."
            )

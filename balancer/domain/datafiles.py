"""The TOML data files balancer ships (systems, harmonic profiles, demand rules) and users'
own files of the same layout, read with errors that name the file."""

from __future__ import annotations

import tomllib
from importlib import resources
from pathlib import Path
from typing import Any

from balancer.errors import Problem, ScheduleError


def parse_toml(text: str, where: str) -> dict[str, Any]:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScheduleError(Problem(where, f"not valid TOML: {exc}")) from exc


def read_toml(path: Path | None, bundled: str) -> tuple[dict[str, Any], str]:
    """(data, name for messages) of a user's file, or of the bundled ``bundled`` when None."""
    if path is None:
        text = resources.files("balancer").joinpath(bundled).read_text("utf-8")
        return parse_toml(text, bundled), bundled
    try:
        text = path.read_text("utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise ScheduleError(Problem(str(path), f"cannot be read: {exc}")) from exc
    return parse_toml(text, str(path)), str(path)


def array_of_tables(data: dict[str, Any], key: str, where: str) -> list[dict[str, Any]]:
    """The ``[[key]]`` tables of a file; an error when there are none."""
    tables = data.get(key, [])
    if not isinstance(tables, list) or not tables:
        raise ScheduleError(Problem(where, f"no [[{key}]] tables found"))
    return tables

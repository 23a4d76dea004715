"""Functions in balancer/ stay short enough to read at a sitting: one longer than MAX_LINES says
why, in a ``# long: <reason>`` comment right above its ``def`` (or its decorators) or on its
docstring's first line."""

from __future__ import annotations

import ast
import re
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "balancer"
MAX_LINES = 80
REASON = re.compile(r"#\s*long:\s*\S.{9,}")  # a reason of ten characters at least


def unexplained(source: str) -> list[tuple[str, int]]:
    """(name, length in lines) of every function in ``source`` over MAX_LINES without a
    reason."""
    lines = source.splitlines()
    found = []
    for node in ast.walk(ast.parse(source)):
        if not isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            continue
        length = (node.end_lineno or node.lineno) - node.lineno + 1
        if length <= MAX_LINES:
            continue
        top = min([node.lineno] + [d.lineno for d in node.decorator_list])
        marks = []
        above = top - 2  # the comment block right above, a reason may run over lines
        while above >= 0 and lines[above].lstrip().startswith("#"):
            marks.append(lines[above])
            above -= 1
        body = node.body[0] if node.body else None
        if (
            isinstance(body, ast.Expr)
            and isinstance(body.value, ast.Constant)
            and isinstance(body.value.value, str)
        ):
            marks.append(lines[body.lineno - 1])
        if not any(REASON.search(mark) for mark in marks):
            found.append((node.name, length))
    return found


def _package_unexplained() -> dict[tuple[str, str], int]:
    out = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        relative = path.relative_to(PACKAGE).as_posix()
        for name, length in unexplained(path.read_text(encoding="utf-8")):
            out[relative, name] = length
    return out


def _function(length: int, mark: str = "", in_docstring: str = "") -> str:
    body = "\n".join(f"    x{i} = {i}" for i in range(length - 2))
    return f'{mark}\ndef f() -> None:\n    """Do it.{in_docstring}"""\n{body}\n'


def test_the_check_finds_a_long_function_without_a_reason() -> None:
    assert unexplained(_function(MAX_LINES)) == []
    assert unexplained(_function(MAX_LINES + 1)) == [("f", MAX_LINES + 1)]
    assert unexplained(_function(MAX_LINES + 1, "# long:")) == [("f", MAX_LINES + 1)]
    assert unexplained(_function(MAX_LINES + 1, "# long: one table, row by row")) == []
    assert unexplained(_function(MAX_LINES + 1, "# long: one table,\n# row by row")) == []
    assert unexplained("# long: one table, row by row\n\n" + _function(MAX_LINES + 1)) != []
    assert (
        unexplained(_function(MAX_LINES + 1, in_docstring="  # long: one table, row by row")) == []
    )


def test_long_functions_say_why() -> None:
    found = _package_unexplained()
    listed = "; ".join(f"{path}: {name} ({n} lines)" for (path, name), n in sorted(found.items()))
    assert not found, f"over {MAX_LINES} lines with no '# long: <reason>' comment: {listed}"

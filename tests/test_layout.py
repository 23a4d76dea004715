"""The package's shape: every folder is a listed package, the samples ship with it, only the
command line parses arguments or prints, and there is one version number."""

from __future__ import annotations

import ast
import tomllib
from importlib import resources
from pathlib import Path

from conftest import ROOT

import balancer

PACKAGE = ROOT / "balancer"


def _pyproject() -> dict[str, object]:
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))


def test_every_package_folder_is_listed_for_installation() -> None:
    setuptools = _pyproject()["tool"]["setuptools"]  # type: ignore[index]
    listed = set(setuptools["packages"])
    folders = {".".join(p.parent.relative_to(ROOT).parts) for p in PACKAGE.rglob("__init__.py")}
    assert listed == folders | {"balancer.samples"}
    assert setuptools["package-dir"] == {"balancer.samples": "sample_schedules"}


def test_samples_ship_with_the_package() -> None:
    folder = resources.files("balancer.samples")
    names = {p.name for p in folder.iterdir()}
    for sample in (ROOT / "sample_schedules").glob("*.xlsx"):
        assert sample.name in names
    assert (ROOT / "sample_schedules" / "office-208y120.xlsx").read_bytes() == (
        folder / "office-208y120.xlsx"
    ).read_bytes()


def test_one_version_number() -> None:
    project = _pyproject()["project"]
    assert "version" not in project  # type: ignore[operator]
    assert project["dynamic"] == ["version"]  # type: ignore[index]
    assert balancer.__version__.count(".") == 2


def _offenders(tree: ast.AST) -> list[str]:
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import | ast.ImportFrom):
            names = [a.name for a in node.names]
            module = getattr(node, "module", None) or ""
            if "argparse" in names or module == "argparse":
                found.append(f"line {node.lineno}: imports argparse")
        if (
            isinstance(node, ast.Call)
            and isinstance(node.func, ast.Name)
            and node.func.id == "print"
        ):
            found.append(f"line {node.lineno}: print()")
    return found


def test_only_the_command_line_parses_arguments_or_prints() -> None:
    problems = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if "cli" in path.relative_to(PACKAGE).parts:
            continue
        for offence in _offenders(ast.parse(path.read_text(encoding="utf-8"))):
            problems.append(f"{path.relative_to(ROOT)} {offence}")
    assert problems == []


def test_the_check_finds_a_print() -> None:
    assert _offenders(ast.parse("import argparse\nprint('x')\n")) == [
        "line 1: imports argparse",
        "line 2: print()",
    ]


def test_no_import_cycle_between_the_workbook_writer_and_its_charts() -> None:
    def imports(path: Path) -> set[str]:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        return {n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) and n.module}

    charts = imports(PACKAGE / "io" / "charts.py")
    writer = imports(PACKAGE / "io" / "writer.py")
    assert not ("balancer.io.writer" in charts and "balancer.io.charts" in writer)

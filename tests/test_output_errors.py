"""An output that cannot be written gives one line naming the path and the reason, exit status 2,
and leaves no temporary file; written files get the permissions the umask gives."""

from __future__ import annotations

import errno
import os
import stat
from collections.abc import Iterator
from pathlib import Path

import pytest
from openpyxl import Workbook

from balancer import api
from balancer.cli.main import main
from balancer.io import files

SCHEDULE = "Circuit,Description,Poles,Load (VA)\n1,Lighting,1,1200\n3,Receptacles,1,900\n"


@pytest.fixture
def schedule(tmp_path: Path) -> Path:
    folder = tmp_path / "in"
    folder.mkdir()
    path = folder / "panel.csv"
    path.write_text(SCHEDULE, encoding="utf-8")
    return path


def _balance(schedule: Path, output: Path, capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    argv = ["balance", str(schedule), "-o", str(output), "--no-tradeoff", "--time-limit", "2"]
    status = main(argv)
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return status, err


def _files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def test_output_folder_missing_is_refused(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    output = tmp_path / "no-such-folder" / "out.xlsx"
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: cannot write the file: the folder {output.parent} does not exist" in err
    assert _files(schedule.parent) == ["panel.csv"]


def test_output_path_that_is_a_folder_is_refused(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    output = tmp_path / "taken.xlsx"
    output.mkdir()
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: is a folder" in err
    assert _files(output) == []
    assert _files(tmp_path) == ["in", "taken.xlsx"]


def test_output_folder_read_only_is_refused(
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # the suite may run as root, which writes into a read-only folder anyway: the refusal the
    # system gives is simulated where the temporary file is made
    def refuse(*args: object, **kwargs: object) -> tuple[int, str]:
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(files.tempfile, "mkstemp", refuse)
    output = tmp_path / "out.xlsx"
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: cannot write the file: permission denied" in err
    assert _files(tmp_path) == ["in"]


def test_disk_full_leaves_no_temporary_file(
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    def half_then_full(self: Workbook, filename: str) -> None:
        Path(filename).write_bytes(b"PK\x03\x04 half a workbook")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(Workbook, "save", half_then_full)
    out = tmp_path / "out"
    out.mkdir()
    output = out / "panel-balanced.xlsx"
    before = schedule.read_bytes()
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: cannot write the file: no space left on device" in err
    assert _files(out) == []
    assert schedule.read_bytes() == before


@pytest.fixture
def umask_027() -> Iterator[None]:
    old = os.umask(0o027)
    try:
        yield
    finally:
        os.umask(old)


def test_written_files_follow_the_umask(
    umask_027: None, schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    output = tmp_path / "out.xlsx"
    pdf = tmp_path / "out.pdf"
    argv = ["balance", str(schedule), "-o", str(output), "--pdf", str(pdf), "--no-tradeoff"]
    assert main(argv) == 0
    capsys.readouterr()
    assert stat.S_IMODE(output.stat().st_mode) == 0o640
    assert stat.S_IMODE(pdf.stat().st_mode) == 0o640
    raw = files.atomic_write_bytes(tmp_path / "raw.bin", b"x")
    assert stat.S_IMODE(raw.stat().st_mode) == 0o640


def _no_reading(monkeypatch: pytest.MonkeyPatch) -> None:
    """Reading the schedule (and so the solve after it) fails the test: an output that cannot
    be written must be refused first."""

    def must_not_read(*args: object, **kwargs: object) -> None:
        raise AssertionError("the schedule was read before the output was checked")

    monkeypatch.setattr(api, "read_schedule", must_not_read)
    monkeypatch.setattr(api, "read_building", must_not_read, raising=False)


@pytest.mark.parametrize("which", ["workbook", "pdf"])
def test_missing_output_folder_is_refused_before_reading(
    which: str,
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    _no_reading(monkeypatch)
    missing = tmp_path / "no-such-folder" / f"out.{'xlsx' if which == 'workbook' else 'pdf'}"
    argv = ["balance", str(schedule), "--no-tradeoff"]
    argv += ["-o", str(missing)] if which == "workbook" else ["--pdf", str(missing)]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert f"{missing}: cannot write the file: the folder {missing.parent} does not exist" in err
    assert _files(schedule.parent) == ["panel.csv"]


def test_output_under_a_file_is_refused_before_reading(
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    _no_reading(monkeypatch)
    output = schedule / "out.xlsx"  # the "folder" is the schedule file itself
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: cannot write the file: {schedule} is not a folder" in err


def test_unwritable_output_folder_is_refused_before_reading(
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # as root a read-only folder is writable anyway: the refusal is simulated where the check
    # makes its temporary file, as the write itself would
    _no_reading(monkeypatch)

    def refuse(*args: object, **kwargs: object) -> tuple[int, str]:
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(files.tempfile, "mkstemp", refuse)
    output = tmp_path / "out.xlsx"
    status, err = _balance(schedule, output, capsys)
    assert status == 2
    assert f"{output}: cannot write the file: permission denied" in err


def test_check_pdf_into_a_missing_folder_is_refused_before_reading(
    schedule: Path,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    _no_reading(monkeypatch)
    pdf = tmp_path / "gone" / "panel.pdf"
    assert main(["check", str(schedule), "--pdf", str(pdf)]) == 2
    assert "the folder" in capsys.readouterr().err


def test_the_output_check_leaves_nothing_behind(schedule: Path, tmp_path: Path) -> None:
    files.check_writable(tmp_path / "out.xlsx")
    assert _files(tmp_path) == ["in"]


def test_building_output_into_a_missing_folder_is_refused_before_reading(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    from balancer.building import files as building_files

    def must_not_read(*args: object, **kwargs: object) -> None:
        raise AssertionError("the building was read before the output was checked")

    monkeypatch.setattr(building_files, "read_building", must_not_read)
    index = tmp_path / "building.csv"
    index.write_text("Panel,Schedule\nP1,p1.csv\n", encoding="utf-8")
    output = tmp_path / "gone" / "b.xlsx"
    assert main(["building", str(index), "--balance", "-o", str(output)]) == 2
    assert f"{output}: cannot write the file: the folder" in capsys.readouterr().err


def test_batch_output_folder_that_cannot_be_made_is_refused(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    blocked = schedule / "revised"  # under a file: the folder cannot be made
    argv = ["balance", str(schedule.parent), "-o", str(blocked), "--no-tradeoff"]
    assert main([*argv, "--summary", str(tmp_path / "summary.xlsx")]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert f"{blocked}: cannot make the output folder" in err

"""``balancer serve`` on the command line: it listens on 127.0.0.1 unless told otherwise, warns
when told otherwise, and prints the address it listens on."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import tempfile
import urllib.request
from pathlib import Path

import pytest
from conftest import Cli

from balancer.cli import serve
from balancer.cli.main import build_parser


def test_the_default_address_is_this_machine_only() -> None:
    args = build_parser().parse_args(["serve"])
    assert args.host == "127.0.0.1"
    assert args.port == serve.DEFAULT_PORT
    assert args.open is False
    assert serve.is_loopback(args.host)


@pytest.mark.parametrize(
    ("host", "loopback"),
    [
        ("127.0.0.1", True),
        ("localhost", True),
        ("::1", True),
        ("0.0.0.0", False),
        ("10.1.2.3", False),
    ],
)
def test_loopback_or_not(host: str, loopback: bool) -> None:
    assert serve.is_loopback(host) is loopback


def test_another_address_is_warned_about(cli: Cli) -> None:
    # 192.0.2.1 is reserved for documentation: no machine has it, so nothing listens
    run = cli("serve", "--host", "192.0.2.1", "--port", "0")
    assert "WARNING" in run.err
    assert "network" in run.err
    assert "cannot listen on 192.0.2.1" in run.err
    assert run.code == 2


def _folders() -> set[Path]:
    return set(Path(tempfile.gettempdir()).glob("balancer-serve-*"))


def test_the_server_prints_its_loopback_address_and_answers_there() -> None:
    before = _folders()
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    command = [sys.executable, "-m", "balancer", "serve", "--port", "0"]
    with subprocess.Popen(
        command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env
    ) as server:
        try:
            assert server.stdout is not None
            line = server.stdout.readline()
            assert line.startswith("balancer serve: http://127.0.0.1:"), line
            url = line.split()[2]
            with urllib.request.urlopen(url, timeout=10) as page:
                assert page.status == 200
                assert page.headers["X-Content-Type-Options"] == "nosniff"
            assert len(_folders() - before) == 1  # its private folder
        finally:
            server.terminate()
            server.wait(20)
    assert server.returncode in (0, -signal.SIGTERM)  # uvicorn ends by the signal it caught
    assert _folders() - before == set()  # deleted on the way out

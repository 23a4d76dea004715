"""``balancer serve``: the page on this machine (see :mod:`balancer.web`)."""

from __future__ import annotations

import argparse
import ipaddress
import socket
import sys
import webbrowser

DEFAULT_HOST = "127.0.0.1"
DEFAULT_PORT = 8765


def add_command(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    serve = commands.add_parser(
        "serve",
        help="the whole job in a browser on this machine (nothing is sent anywhere)",
        description="Start a local web server for the check, the balance, the trade-off "
        "table, the work order and the downloads, in a browser on this machine. It listens "
        "on 127.0.0.1 only unless --host says otherwise. Uploads stay in a private temporary "
        "folder deleted when the server stops. A balance runs in a worker process; Cancel on "
        "the page terminates it and discards what it found. Stop the server with Ctrl+C.",
    )
    serve.add_argument(
        "--port",
        type=int,
        default=DEFAULT_PORT,
        help=f"port to listen on (default {DEFAULT_PORT}; 0 picks a free one)",
    )
    serve.add_argument("--open", action="store_true", help="open the page in the browser")
    serve.add_argument(
        "--host",
        default=DEFAULT_HOST,
        help="address to listen on (default 127.0.0.1: this machine only); another address "
        "lets other machines on the network reach the page",
    )


def is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        return False


def bind(host: str, port: int) -> socket.socket:
    """A listening socket on ``host``:``port``, bound before the server starts so the address
    printed is the one in use."""
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    sock = socket.socket(family, socket.SOCK_STREAM)
    sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    try:
        sock.bind((host.strip("[]"), port))
    except OSError:
        sock.close()
        raise
    sock.listen(64)
    return sock


def address(sock: socket.socket) -> str:
    host, port = sock.getsockname()[:2]
    shown = f"[{host}]" if ":" in host else host
    return f"http://{shown}:{port}/"


def run(args: argparse.Namespace) -> int:
    import uvicorn

    from balancer.web.app import LOOPBACK_HOSTS, create_app

    loopback = is_loopback(args.host)
    if not loopback:
        print(
            f"balancer: WARNING: listening on {args.host}, not this machine only: anyone who "
            "can reach this address on the network can use the page and see the schedules "
            "uploaded to it. Use the default (127.0.0.1) unless you mean it.",
            file=sys.stderr,
        )
    try:
        sock = bind(args.host, args.port)
    except OSError as exc:
        print(
            f"balancer: cannot listen on {args.host}:{args.port}: {exc.strerror}", file=sys.stderr
        )
        return 2
    url = address(sock)
    app = create_app(allowed_hosts=LOOPBACK_HOSTS if loopback else ["*"])
    print(f"balancer serve: {url}  (Ctrl+C stops it)", flush=True)
    if args.open:
        webbrowser.open(url)
    server = uvicorn.Server(uvicorn.Config(app, log_level="warning", access_log=False))
    try:
        server.run(sockets=[sock])
    finally:
        sock.close()
    return 0

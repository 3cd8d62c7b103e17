"""``turnback serve``: start the dashboard on the built-in demo lake."""

from __future__ import annotations

import argparse
import ipaddress
import socket
import sys
from pathlib import Path
from typing import Any


def add_parser(sub: Any) -> None:
    p = sub.add_parser("serve", help="start the dashboard in a browser", description="Start the Turnback dashboard.")
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1, this machine only)")
    p.add_argument("--port", type=int, default=8050, help="port (default 8050)")
    p.add_argument(
        "--data-dir",
        help="folder for saved lakes, fits and scenarios (default $TURNBACK_DATA_DIR, else ./turnback-data)",
    )
    p.add_argument("--debug", action="store_true", help="Dash debug mode (developers only)")
    p.set_defaults(run=run)


def resolve_host(host: str) -> tuple[str, bool]:
    """The address to listen on and whether it is loopback only; ValueError saying what to give otherwise."""
    try:
        infos = socket.getaddrinfo(host, None, type=socket.SOCK_STREAM)
    except (socket.gaierror, UnicodeError, ValueError):
        raise ValueError(
            f"--host {host!r} is not an address or name this machine can listen on; "
            "give 127.0.0.1 (this machine only) or an address of one of its network interfaces"
        ) from None
    addresses = {str(info[4][0]) for info in infos}
    loopback = all(ipaddress.ip_address(a.split("%")[0]).is_loopback for a in addresses)
    return host, loopback


def check_data_dir(data_dir: str | None) -> None:
    """Refuse a data folder that is a file (or cannot be one) before the server starts."""
    if data_dir is None:
        return
    path = Path(data_dir)
    if path.exists() and not path.is_dir():
        raise ValueError(f"--data-dir {data_dir!r} is a file, not a folder; give a folder for the saved lakes")


def run(args: argparse.Namespace) -> int:
    if not 0 < args.port < 65536:
        raise ValueError(f"--port must be between 1 and 65535; got {args.port}")
    host, loopback = resolve_host(args.host)
    check_data_dir(args.data_dir)
    from turnback.app.server import create_app

    if not loopback:
        print(
            f"turnback serve: warning: listening on {host}, which other machines can reach; anyone who can "
            "reach it can use the dashboard. Use 127.0.0.1 unless this is intended.",
            file=sys.stderr,
            flush=True,
        )
    app = create_app(data_dir=args.data_dir)
    print(f"Turnback dashboard on http://{host}:{args.port}/  (Ctrl+C to stop)", flush=True)
    try:
        app.run(host=host, port=args.port, debug=args.debug)
    except OSError as exc:
        raise ValueError(f"cannot listen on {host}:{args.port}: {exc.strerror or exc}; choose another --port") from None
    return 0

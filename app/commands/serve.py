"""``turnback serve``: start the dashboard on the built-in demo lake."""

from __future__ import annotations

import argparse
import ipaddress
import os
import socket
import sys
from pathlib import Path
from typing import Any
from urllib.parse import urlparse


def add_parser(sub: Any) -> None:
    p = sub.add_parser("serve", help="start the dashboard in a browser", description="Start the Turnback dashboard.")
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1, this machine only)")
    p.add_argument("--port", type=int, default=8050, help="port (default 8050)")
    p.add_argument(
        "--data-dir",
        help="folder for saved lakes, fits and scenarios (default $TURNBACK_DATA_DIR, else ./turnback-data)",
    )
    p.add_argument(
        "--workers",
        type=int,
        default=0,
        metavar="N",
        help="serve with gunicorn and N worker processes (default: the embedded single-process server)",
    )
    p.add_argument(
        "--redis-url",
        metavar="URL",
        help="run fits and plan runs on Celery workers through this Redis queue (start them with turnback worker)",
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


def check_redis_url(url: str | None) -> None:
    """Refuse a Redis URL that is not one, before anything starts."""
    if url is None:
        return
    parsed = urlparse(url)
    if parsed.scheme not in ("redis", "rediss", "unix") or not (parsed.hostname or parsed.path):
        raise ValueError(f"--redis-url {url!r} is not a Redis URL; give one such as redis://127.0.0.1:6379/0")


def run(args: argparse.Namespace) -> int:
    if not 0 < args.port < 65536:
        raise ValueError(f"--port must be between 1 and 65535; got {args.port}")
    if not 0 <= args.workers <= 64:
        raise ValueError(f"--workers must be between 1 and 64 (or 0 for the embedded server); got {args.workers}")
    host, loopback = resolve_host(args.host)
    check_data_dir(args.data_dir)
    check_redis_url(args.redis_url)
    from turnback.app.background import REDIS_URL_ENV
    from turnback.app.server import create_app

    if args.redis_url:
        os.environ[REDIS_URL_ENV] = args.redis_url

    if not loopback:
        print(
            f"turnback serve: warning: listening on {host}, which other machines can reach; anyone who can "
            "reach it can use the dashboard. Use 127.0.0.1 unless this is intended.",
            file=sys.stderr,
            flush=True,
        )
    if args.workers:
        from turnback.app.production import run_gunicorn

        print(
            f"Turnback dashboard on http://{host}:{args.port}/ with {args.workers} workers  (Ctrl+C to stop)",
            flush=True,
        )
        run_gunicorn(lambda: create_app(data_dir=args.data_dir).server, host, args.port, args.workers)
        return 0
    app = create_app(data_dir=args.data_dir)
    print(f"Turnback dashboard on http://{host}:{args.port}/  (Ctrl+C to stop)", flush=True)
    try:
        app.run(host=host, port=args.port, debug=args.debug)
    except OSError as exc:
        raise ValueError(f"cannot listen on {host}:{args.port}: {exc.strerror or exc}; choose another --port") from None
    return 0

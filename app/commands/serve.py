"""``turnback serve``: start the dashboard on the built-in demo lake."""

from __future__ import annotations

import argparse
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


def run(args: argparse.Namespace) -> int:
    if not 0 < args.port < 65536:
        raise ValueError(f"--port must be between 1 and 65535; got {args.port}")
    from turnback.app.server import create_app

    app = create_app(data_dir=args.data_dir)
    print(f"Turnback dashboard on http://{args.host}:{args.port}/  (Ctrl+C to stop)", flush=True)
    app.run(host=args.host, port=args.port, debug=args.debug)
    return 0

"""``turnback worker``: run the dashboard's background jobs (fits, plan runs) from a Redis queue."""

from __future__ import annotations

import argparse
import os
from typing import Any


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "worker",
        help="run background jobs for a dashboard served with --redis-url",
        description="Take the dashboard's fits and plan runs from a Redis queue and run them on this machine "
        "(start one or more beside `turnback serve --redis-url URL`).",
    )
    p.add_argument("--redis-url", required=True, metavar="URL", help="the queue, e.g. redis://127.0.0.1:6379/0")
    p.add_argument("--concurrency", type=int, default=os.cpu_count() or 1, help="jobs at once (default: cores)")
    p.add_argument("--data-dir", help="folder of saved lakes and plans (as given to serve)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from .serve import check_data_dir, check_redis_url

    check_redis_url(args.redis_url)
    check_data_dir(args.data_dir)
    if not 1 <= args.concurrency <= 256:
        raise ValueError(f"--concurrency must be between 1 and 256; got {args.concurrency}")
    from turnback.app.production import run_worker

    run_worker(args.redis_url, args.concurrency, args.data_dir)
    return 0

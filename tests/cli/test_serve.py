"""``turnback serve`` starts the dashboard on loopback, as the README says."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
import urllib.request


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_serve_starts_and_answers(tmp_path) -> None:
    port = free_port()
    env = dict(os.environ, TURNBACK_CACHE_DIR=str(tmp_path / "cache"))
    proc = subprocess.Popen(
        [sys.executable, "-m", "turnback", "serve", "--port", str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        env=env,
    )
    try:
        body = ""
        for _ in range(100):
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=2) as r:
                    body = r.read().decode()
                break
            except OSError:
                time.sleep(0.2)
        assert "<title>Turnback</title>" in body
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/_dash-layout", timeout=5) as r:
            layout = r.read().decode()
        assert "Lake Amberlin" in layout
    finally:
        proc.terminate()
        proc.wait(timeout=10)


def test_serve_rejects_a_bad_port() -> None:
    out = subprocess.run([sys.executable, "-m", "turnback", "serve", "--port", "70000"], capture_output=True, text=True)
    assert out.returncode == 2 and "--port" in out.stderr and "Traceback" not in out.stderr

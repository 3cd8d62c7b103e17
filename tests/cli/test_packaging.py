"""The one import package, ``turnback``, as a user installs it from a wheel."""

from __future__ import annotations

import json
import os
import shutil
import socket
import subprocess
import sys
import sysconfig
import time
import tomllib
import urllib.request
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_every_package_folder_is_listed_in_pyproject() -> None:
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {"turnback", "turnback.assets", "turnback.sample_data"}
    for top in ("model", "app"):
        for init in (ROOT / top).rglob("__init__.py"):
            found.add("turnback." + ".".join(init.parent.relative_to(ROOT).parts))
    assert listed == found


@pytest.mark.slow
def test_wheel_installs_alone_and_serves(tmp_path: Path) -> None:
    wheel_dir = tmp_path / "wheel"
    subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(wheel_dir), str(ROOT)],
        check=True,
        capture_output=True,
    )
    (wheel,) = wheel_dir.glob("turnback-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    tops = {n.split("/")[0] for n in names if not n.split("/")[0].endswith(".dist-info")}
    assert tops == {"turnback"}
    for needed in ("turnback/assets/turnback.css", "turnback/sample_data/amberlin_monitoring.csv",
                   "turnback/sample_data/region/LAKES.csv", "turnback/sample_data/region/RECORDS.csv",
                   "turnback/model/py.typed", "turnback/app/py.typed", "turnback/__main__.py"):
        assert needed in names

    # A fresh virtual environment outside the checkout.  It borrows the test
    # environment's third-party packages through a path file (an added path's
    # own .pth files are not run, so the checkout's editable install stays out).
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True)
    py = venv / "bin" / "python"
    site = subprocess.run([py, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                          check=True, capture_output=True, text=True).stdout.strip()
    Path(site, "borrowed.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    subprocess.run([sys.executable, "-m", "pip", "--python", str(py), "install", "-q", "--no-deps", str(wheel)],
                   check=True, capture_output=True)
    work = tmp_path / "elsewhere"
    work.mkdir()
    (work / "model.py").write_text("raise SystemExit('a user file named model.py was imported')\n")
    (work / "app.py").write_text("raise SystemExit('a user file named app.py was imported')\n")
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"} | {"TURNBACK_CACHE_DIR": str(tmp_path / "c")}
    where = subprocess.run([py, "-c", "import turnback.app, sys; print(turnback.app.__file__)"],
                           cwd=work, env=env, check=True, capture_output=True, text=True).stdout
    assert str(venv) in where and str(ROOT) not in where
    turnback = venv / "bin" / "turnback"
    out = subprocess.run([turnback, "analyze", "--demo", "--json"], cwd=work, env=env, capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout)["regime"] == "hysteretic"
    assert subprocess.run([py, "-m", "turnback", "analyze", "--demo"], cwd=work, env=env,
                          capture_output=True).returncode == 0
    region = Path(site, "turnback", "sample_data", "region")  # the demo region, on Dask workers from the wheel
    out = subprocess.run([turnback, "screen", str(region / "LAKES.csv"), "--records", str(region / "RECORDS.csv"),
                          "--replicates", "100", "--workers", "2", "--json"], cwd=work, env=env, capture_output=True,
                         text=True)
    assert out.returncode == 0, out.stderr
    assert len(json.loads(out.stdout)["lakes"]) == 39

    port = _free_port()
    proc = subprocess.Popen([turnback, "serve", "--port", str(port), "--data-dir", str(tmp_path / "data")],
                            cwd=work, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    try:
        base = f"http://127.0.0.1:{port}"
        for _ in range(150):
            try:
                urllib.request.urlopen(base + "/", timeout=2).read()
                break
            except OSError:
                time.sleep(0.2)
        with urllib.request.urlopen(base + "/assets/turnback.css", timeout=5) as r:
            assert r.status == 200 and len(r.read()) > 100
        with urllib.request.urlopen(base + "/", timeout=5) as r:
            assert "turnback.css" in r.read().decode()
        with urllib.request.urlopen(base + "/_dash-layout", timeout=5) as r:
            layout = r.read().decode()
        assert "amberlin_monitoring.csv" in layout  # the demo record is in the page's store
    finally:
        proc.terminate()
        proc.wait(timeout=10)


@pytest.mark.slow
def test_mypy_reports_a_planted_error_and_a_missing_module_of_our_own(tmp_path: Path) -> None:
    pkg = tmp_path / "turnback"
    pkg.mkdir()
    (pkg / "model").symlink_to(ROOT / "model")
    shutil.copytree(ROOT / "app", pkg / "app", ignore=shutil.ignore_patterns("__pycache__"))
    (pkg / "app" / "planted.py").write_text(
        "from turnback.model.params import LakeParameters\n"
        "from turnback.model import no_such_module\n\n"
        "def f() -> int:\n"
        "    return LakeParameters(loss_rate=0.5, recycling_max=1.0, recycling_half=1.0, recycling_exponent=2.0)\n"
    )
    out = subprocess.run(
        [sys.executable, "-m", "mypy", "--config-file", str(ROOT / "pyproject.toml"), "--no-incremental",
         "-p", "turnback.app.planted"],
        cwd=tmp_path, env=dict(os.environ, MYPYPATH=str(tmp_path)), capture_output=True, text=True,
    )
    assert out.returncode == 1
    assert "planted.py:2: error" in out.stdout and "no_such_module" in out.stdout
    assert "planted.py:5: error: Incompatible return value type" in out.stdout


@pytest.mark.slow
def test_ruff_and_mypy_are_clean() -> None:
    ruff = subprocess.run([sys.executable, "-m", "ruff", "check", "--no-cache", str(ROOT)], capture_output=True,
                          text=True, cwd=ROOT)
    assert ruff.returncode == 0, ruff.stdout[-3000:]
    mypy = subprocess.run(["bash", str(ROOT / ".ci" / "typecheck")], capture_output=True, text=True,
                          env=dict(os.environ, PYTHON=sys.executable))
    assert mypy.returncode == 0, mypy.stdout[-3000:]

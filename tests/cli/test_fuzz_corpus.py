"""Every command against the committed corpus of bad input (tests/cli/fuzz_corpus.json).

Bad input: exit status 2, one line on stderr that says what to fix, nothing
on stdout, no traceback.  Valid input: exit 0 with valid output (strict
JSON for --json).  One interpreter runs every case through the command's
entry function (what ``python -m turnback`` does), so the corpus stays fast.
"""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Any

from .driver import run_many

ROOT = Path(__file__).resolve().parents[2]
CORPUS = json.loads((Path(__file__).resolve().parent / "fuzz_corpus.json").read_text())["cases"]


def _materialise(folder: Path, files: dict[str, Any]) -> None:
    for name, spec in files.items():
        path = folder / name
        if isinstance(spec, str):
            path.write_text(spec, encoding="utf-8")
        elif spec.get("fifo"):
            os.mkfifo(path)
        elif spec.get("dir"):
            path.mkdir()
        elif "symlink" in spec:
            path.symlink_to(folder / spec["symlink"])
        elif "bytes_hex" in spec:
            path.write_bytes(bytes.fromhex(spec["bytes_hex"]))
        elif "repeat" in spec:
            path.write_text(spec["repeat"] * spec["times"])
        elif "deep_json" in spec:
            n = spec["deep_json"]
            path.write_text('{"a":' * n + "1" + "}" * n)
        elif "rows" in spec:
            rows = [f"{spec['first_year'] + i},300,25" for i in range(spec["rows"])]
            path.write_text("year,load_kg,tp_ug_l\n" + "\n".join(rows) + "\n")


def test_the_corpus_covers_every_command() -> None:
    from turnback.app.commands import COMMANDS

    assert len(CORPUS) >= 150
    names = {m.__name__.rsplit(".", 1)[-1] for m in COMMANDS}
    covered = {c["args"][0] for c in CORPUS}
    assert names <= covered, f"commands without bad-input cases: {sorted(names - covered)}"


def test_every_case_exits_as_expected_with_one_line(tmp_path: Path) -> None:
    argvs = []
    for i, c in enumerate(CORPUS):
        folder = tmp_path / f"case{i:03d}"
        folder.mkdir()
        _materialise(folder, c["files"])
        argvs.append([a.replace("{tmp}", str(folder)) for a in c["args"]])
    env = dict(os.environ, TURNBACK_CACHE_DIR=str(tmp_path / "cache"), TURNBACK_DATA_DIR=str(tmp_path / "data"))
    results = run_many(argvs, tmp_path, env)
    failures = []
    for c, res in zip(CORPUS, results, strict=True):
        stderr, stdout = str(res["stderr"]), str(res["stdout"])
        if c["expect"] == 2:
            ok = res["rc"] == 2 and stdout == "" and len(stderr.strip().splitlines()) == 1
        else:
            ok = res["rc"] == 0 and stderr.strip() == ""
            if ok and "--json" in c["args"]:
                try:
                    json.loads(stdout, parse_constant=lambda name: (_ for _ in ()).throw(ValueError(name)))
                except ValueError:
                    ok = False
        if not ok or "Traceback" in stderr:
            failures.append((c["name"], res["rc"], stderr[-300:], stdout[:200]))
    assert failures == [], "\n".join(map(str, failures))
    # a symbolic link at the report's target is never replaced
    link_case = next(i for i, c in enumerate(CORPUS) if c["name"] == "report -o: a symbolic link")
    folder = tmp_path / f"case{link_case:03d}"
    assert (folder / "link.html").is_symlink() and (folder / "target.html").read_text() == "keep me"

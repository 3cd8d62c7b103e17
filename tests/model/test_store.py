"""The SQLite store: round trips, restarts, concurrent writers, a killed writer, migrations."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import threading
from pathlib import Path

import pytest
import turnback.model.io.store as store_mod
from turnback.model.io.store import DATA_DIR_ENV, DB_NAME, SCHEMA_VERSION, Store, resolve_data_dir
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan, Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad, LinearCut, Removal

ROOT = Path(__file__).resolve().parents[2]
LAKE = ScenarioLake(LakeParameters(0.8, 30000.0, 25000.0, 6.0), 2.0e8, 120.0, "Lake Amberlin (fictional)")
SCEN = Scenario(
    "cut", 40, LinearCut(9000.0, 60.0, 10), variability_cv=0.3, members=200, seed=2, treatments=(Removal(3, 5000.0),)
)


def python(code: str, *args: str) -> subprocess.Popen[str]:
    return subprocess.Popen(
        [sys.executable, "-c", code, *args], cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )


def test_round_trip_and_restart(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        assert s.schema_version == SCHEMA_VERSION
        s.save_lake(LAKE.name, LAKE)
        s.save_scenario(LAKE.name, SCEN)
        s.save_fit(LAKE.name, "fit 2024", {"params": LAKE.params.to_dict(), "rmse": 3.5, "series": [1, 2, None]})
    with Store(tmp_path) as s:  # a restart: a new connection to the same file
        assert s.get_scenario(LAKE.name, "cut") == SCEN
        assert ScenarioLake.from_dict(s.get_lake(LAKE.name).data) == LAKE  # type: ignore[union-attr]
        assert s.get_fit(LAKE.name, "fit 2024").data["series"] == [1, 2, None]  # type: ignore[union-attr]
        assert s.load_plan(LAKE.name) == Plan(LAKE, (SCEN,))
        assert s.lake_names() == [LAKE.name]
        mode = sqlite3.connect(tmp_path / DB_NAME).execute("PRAGMA journal_mode").fetchone()[0]
        assert mode == "wal"


def test_revisions_keep_every_save(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 1})
        first = s.save_fit("L", "f", {"v": 1})
        second = s.save_fit("L", "f", {"v": 2})
        assert (first.revision, second.revision) == (1, 2)
        assert s.get_fit("L", "f").data == {"v": 2}  # type: ignore[union-attr]
        assert [i.data["v"] for i in s.history("fit", "L", "f")] == [1, 2]
        assert s.delete("fit", "L", "f") == 2 and s.get_fit("L", "f") is None


def test_bad_data_is_refused_and_nothing_is_lost(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 1})
        s.save_fit("L", "f", {"v": 1})
        with pytest.raises(ValueError, match="NaN"):
            s.save_fit("L", "f", {"v": float("nan")})
        with pytest.raises(ValueError, match="JSON object"):
            s.save_fit("L", "f", [1, 2])  # type: ignore[arg-type]
        with pytest.raises(ValueError, match="save the lake first"):
            s.save_fit("nowhere", "f", {"v": 1})
        with pytest.raises(ValueError, match="name must be non-empty"):
            s.save_lake("  ", {"v": 1})
        assert [i.data for i in s.history("fit", "L", "f")] == [{"v": 1}]


def test_a_plan_is_saved_all_or_nothing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    plan = Plan(LAKE, (SCEN, Scenario("hold", 10, ConstantLoad(9000.0))))
    with Store(tmp_path) as s:
        real = Store._insert
        calls = {"n": 0}

        def failing(self, conn, kind, lake, name, text):  # type: ignore[no-untyped-def]
            calls["n"] += 1
            if calls["n"] == 3:
                raise sqlite3.OperationalError("disk I/O error (simulated)")
            return real(self, conn, kind, lake, name, text)

        monkeypatch.setattr(Store, "_insert", failing)
        with pytest.raises(ValueError, match="nothing was changed"):
            s.save_plan(plan)
        monkeypatch.setattr(Store, "_insert", real)
        assert s.get_lake(LAKE.name) is None and s.scenarios(LAKE.name) == []
        s.save_plan(plan)
        assert [x.name for x in s.scenarios(LAKE.name)] == ["cut", "hold"]


def test_data_folder_from_argument_environment_or_working_directory(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv(DATA_DIR_ENV, raising=False)
    monkeypatch.chdir(tmp_path)
    assert resolve_data_dir() == Path("turnback-data")
    monkeypatch.setenv(DATA_DIR_ENV, str(tmp_path / "env"))
    assert resolve_data_dir() == tmp_path / "env"
    assert resolve_data_dir(tmp_path / "arg") == tmp_path / "arg"
    with Store() as s:
        assert s.path == tmp_path / "env" / DB_NAME and s.path.exists()


def test_two_threads_saving_at_once_lose_nothing(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 0})

    def writer(tag: str) -> None:
        with Store(tmp_path) as own:
            for i in range(60):
                own.save_fit("L", "shared", {"who": tag, "i": i})
                own.save_fit("L", f"{tag}-{i}", {"i": i})

    threads = [threading.Thread(target=writer, args=(t,)) for t in ("a", "b")]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    with Store(tmp_path) as s:
        shared = s.history("fit", "L", "shared")
        assert [i.revision for i in shared] == list(range(1, 121))
        assert sorted((i.data["who"], i.data["i"]) for i in shared) == sorted(
            (w, i) for w in ("a", "b") for i in range(60)
        )
        assert len(s.fits("L")) == 121


WRITER = """
import sys
from turnback.model.io.store import Store
s = Store(sys.argv[1], timeout=60)
tag = sys.argv[2]
for i in range(40):
    s.save_fit("L", "shared", {"who": tag, "i": i})
    s.save_fit("L", tag + "-" + str(i), {"i": i})
print("done", flush=True)
"""


def test_two_processes_saving_at_once_lose_nothing(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 0})
    procs = [python(WRITER, str(tmp_path), tag) for tag in ("p", "q")]
    for p in procs:
        _, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
    with Store(tmp_path) as s:
        shared = s.history("fit", "L", "shared")
        assert [i.revision for i in shared] == list(range(1, 81))
        assert {(i.data["who"], i.data["i"]) for i in shared} == {(w, i) for w in ("p", "q") for i in range(40)}
        assert len(s.fits("L")) == 81
        assert s.integrity_check() == "ok"


KILLED = """
import sys
from turnback.model.io.store import Store
s = Store(sys.argv[1], timeout=60)
s.save_lake("L", {"v": 0})
pad = "x" * 300_000
i = 0
while True:
    i += 1
    s.save_fit("L", "f", {"i": i, "check": 7 * i, "pad": pad})
    print(i, flush=True)
"""


@pytest.mark.parametrize("after", [5, 23])
def test_a_writer_killed_mid_save_leaves_the_last_committed_state(tmp_path: Path, after: int) -> None:
    proc = python(KILLED, str(tmp_path))
    assert proc.stdout is not None
    last = 0
    for line in proc.stdout:
        last = int(line)
        if last >= after:
            break
    os.kill(proc.pid, signal.SIGKILL)  # while it is in the middle of the next save
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    with Store(tmp_path) as s:
        assert s.integrity_check() == "ok"  # SQLite's own check of the file
        item = s.get_fit("L", "f")
        assert item is not None
        assert item.revision >= last  # every save reported as done is there
        assert item.data["i"] == item.revision and item.data["check"] == 7 * item.revision
        assert [i.revision for i in s.history("fit", "L", "f")] == list(range(1, item.revision + 1))


def test_migrations_upgrade_in_order_and_keep_data(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 1})
    extra = (*store_mod.MIGRATIONS, ("ALTER TABLE record ADD COLUMN note TEXT",))
    monkeypatch.setattr(store_mod, "MIGRATIONS", extra)
    with Store(tmp_path) as s:
        assert s.schema_version == len(extra)
        assert s.get_lake("L").data == {"v": 1}  # type: ignore[union-attr]
    columns = [r[1] for r in sqlite3.connect(tmp_path / DB_NAME).execute("PRAGMA table_info(record)")]
    assert "note" in columns


def test_a_newer_or_foreign_file_is_refused_and_left_alone(tmp_path: Path) -> None:
    with Store(tmp_path) as s:
        s.save_lake("L", {"v": 1})
    conn = sqlite3.connect(tmp_path / DB_NAME)
    conn.execute("PRAGMA user_version = 99")
    conn.commit()
    conn.close()
    with pytest.raises(ValueError, match="newer than this Turnback reads"):
        Store(tmp_path)
    assert sqlite3.connect(tmp_path / DB_NAME).execute("PRAGMA user_version").fetchone()[0] == 99
    other = tmp_path / "other"
    other.mkdir()
    (other / DB_NAME).write_bytes(b"not a database, but somebody's notes\n" * 100)
    before = (other / DB_NAME).read_bytes()
    with pytest.raises(ValueError, match="not a usable Turnback database"):
        Store(other)
    assert (other / DB_NAME).read_bytes() == before
    (tmp_path / "file").write_text("x")
    with pytest.raises(ValueError, match="data folder"):
        Store(tmp_path / "file")


def test_two_sessions_opening_a_new_database_at_once(tmp_path) -> None:
    # Found in the dashboard: switching a brand-new file to WAL ignores the busy timeout (common practice, no source).
    import threading

    from turnback.model.io.store import Store

    for trial in range(20):
        folder = tmp_path / f"t{trial}"
        errors: list[BaseException] = []
        barrier = threading.Barrier(2)

        def open_one(folder=folder, errors=errors, barrier=barrier) -> None:
            barrier.wait()
            try:
                Store(folder).close()
            except BaseException as exc:
                errors.append(exc)

        threads = [threading.Thread(target=open_one) for _ in range(2)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        assert errors == []

"""The record view with sample files, and plans after a fit: the fit's draws by default, said in plain words."""

from __future__ import annotations

import base64
from pathlib import Path
from typing import Any

from turnback.app.store_checks import StoreError, check_record
from turnback.app.stores import lake_to_store, new_history, series_from_store
from turnback.app.views.plans.callbacks import on_lake_note, run_plan
from turnback.app.views.plans.readout import plan_lake
from turnback.app.views.record.callbacks import on_fit_shown, on_record, on_upload, run_fit
from turnback.model.demo import DEMO_PARAMETERS as P
from turnback.model.demo import DEMO_PROFILE as PROF
from turnback.model.io.sample_csv import read_record
from turnback.model.plan import Scenario
from turnback.model.schedules import ConstantLoad

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data" / "amberlin_samples.csv"
LOADS = ROOT / "sample_data" / "amberlin_loads.csv"


def sample_upload_with_load_column() -> str:
    """The demo sample file with each year's load in a load_kg column (what the record view takes)."""
    loads = dict(line.split(",") for line in LOADS.read_text().splitlines()[1:])
    lines = SAMPLES.read_text().splitlines()
    text = "\n".join([lines[0] + ",load_kg"] + [f"{x},{loads[x[:4]]}" for x in lines[1:]]) + "\n"
    return "data:text/csv;base64," + base64.b64encode(text.encode()).decode()


class Progress:
    def __init__(self) -> None:
        self.seen: list[tuple[str, ...]] = []

    def __call__(self, values: Any) -> None:
        self.seen.append(tuple(values))


def test_record_view_takes_a_sample_file_and_fits_it_with_observation_error(tmp_path: Path) -> None:
    lake = lake_to_store(P, PROF)
    record, msg = on_upload(sample_upload_with_load_column(), "amberlin_samples.csv")
    assert msg == "" and record["tp_se_ug_l"] and record["few_samples"].count(True) == 2
    check_record(record)  # passes the trust boundary
    same = read_record(SAMPLES, LOADS)
    assert series_from_store(record).tp_ug_l.tolist() == same.tp_ug_l.tolist()
    shown = on_record(record, lake, None)
    assert "standard errors as error bars" in shown["summary"] and "1983, 1996" in shown["summary"]
    tp = shown["record"].data[0]
    assert tp.error_y.array is not None and len(tp.error_y.array) == len(record["year"])
    assert any(t.name == "few samples (flagged)" for t in shown["record"].data)
    bad = dict(record) | {"tp_se_ug_l": record["tp_se_ug_l"][:-1]}
    try:
        check_record(bad)
    except StoreError:
        pass
    else:
        raise AssertionError("a record with too few standard errors must be refused")
    # no load column: the message says how to give the loads
    plain = "data:text/csv;base64," + base64.b64encode(SAMPLES.read_bytes()).decode()
    _, why = on_upload(plain, "samples.csv")
    assert "load_kg column" in why

    progress = Progress()
    fit, err = run_fit(progress, 1, record, "2.79e7", 200, lake)
    assert err == "" and fit["method"] == "state_space_laplace"
    summary, _ = on_fit_shown(fit, None, lake)  # the fit is proposed; its lake is put in use by the user
    assert "posterior draws" in str(summary)
    new_lake = fit["proposal"]
    assert any("posterior draws" in str(v) for v in progress.seen)  # the dashboard's progress text

    # plans after the fit: the fit's draws by default, and the note says so
    note = on_lake_note("plans", new_lake, None, fit)[0]
    assert "lakes the last fit found possible" in str(note)
    slake = plan_lake(new_lake, None, fit=fit)
    assert slake.parameter_draws is not None and slake.parameter_draws.n == len(fit["cloud"])
    assert plan_lake(new_lake, None).parameter_draws is None
    other = dict(new_lake) | {"params": P.to_dict()}  # the lake was changed after the fit: no draws
    assert plan_lake(other, None, fit=fit).parameter_draws is None
    scenario = Scenario("hold", 10, ConstantLoad(420.0), variability_cv=0.2, members=400, seed=1)
    data, msg = run_plan(
        Progress(), {"token": "e" * 32}, {"scenarios": [scenario.to_dict()]}, new_lake, new_history(new_lake),
        folder=tmp_path, fit=fit,
    )  # fmt: skip
    assert msg == "Ran 2 scenarios." and len(data["lake"]["parameter_draws"]) == len(fit["cloud"])  # with the baseline

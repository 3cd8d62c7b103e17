"""What the region view keeps of a screen: the store's rows, the lake each row opens, and the exported CSV.

The screen itself is :func:`turnback.model.screening.screen_many` (the same
per-lake screen as ``turnback screen``); this module only turns its outcomes
into the JSON of ``REGION_STORE`` (:class:`turnback.app.stores.RegionStore`)
and back into :class:`~turnback.model.screening.ScreenResult` objects, so the
CSV export is written by the command's own writer with the same columns as
``turnback screen -o``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from typing import Any

from turnback.model import units
from turnback.model.io.region_csv import Region
from turnback.model.params import LakeParameters, LakeProfile
from turnback.model.screening import RegionLake, ScreenFailure, ScreenResult

from ...commands.screen import csv_text
from ...store_checks import MAX_REGION_LAKES
from ...stores import LakeStore, RegionRow, RegionStore, lake_to_store

#: the seed of every fitted lake, as ``turnback screen`` (its default ``--seed``), so the two agree lake for lake
SEED = 1
#: most lakes the dashboard screens at once (``turnback screen`` takes any number, on a Dask cluster too)
MAX_LAKES = MAX_REGION_LAKES


def row_of(result: ScreenResult, lake: RegionLake) -> RegionRow:
    """One screened lake as a store row: the ``--json`` keys, its parameters, profile and last observed year."""
    row: RegionRow = {
        **result.to_dict(),  # type: ignore[typeddict-item]
        "name": lake.name,
        "fitted": result.fitted,
        "load_kg_yr": result.load_kg_per_yr,
        "params": result.params.to_dict(),
        "volume_m3": lake.volume_m3,
        "area_km2": lake.area_km2,
    }
    rec = lake.record
    if rec is not None and rec.n_years > 0:
        p_last = float(units.p_kg(float(rec.tp_ug_l[-1]), lake.volume_m3))
        row["start"] = {"year": int(rec.years[-1]), "p": p_last}
    return row


def region_to_store(
    region: Region,
    outcomes: Sequence[ScreenResult | ScreenFailure],
    *,
    source: str,
    replicates: int,
    seed: int = SEED,
    when: datetime | None = None,
) -> RegionStore:
    """The screen of ``region`` (``outcomes``: one per ``region.lakes``, in order) as the store's JSON.

    Lakes the reader already refused (``region.entries`` that are failures)
    and lakes the screen could not do both go to ``failed``, in the lake
    table's order.
    """
    screened = iter(zip(region.lakes, outcomes, strict=True))
    rows: list[RegionRow] = []
    failed: list[dict[str, str]] = []
    for entry in region.entries:
        if isinstance(entry, ScreenFailure):
            failed.append(entry.to_dict())
            continue
        lake, out = next(screened)
        if isinstance(out, ScreenFailure):
            failed.append(out.to_dict())
        else:
            rows.append(row_of(out, lake))
    return {
        "source": source,
        "replicates": int(replicates),
        "seed": int(seed),
        "run_at": (when or datetime.now(UTC)).strftime("%Y-%m-%d %H:%M UTC"),
        "lakes": rows,
        "failed": failed,
        "notes": list(region.notes),
    }


def result_of(row: Mapping[str, Any]) -> ScreenResult:
    """A store row back as the :class:`ScreenResult` it came from (what the CSV writer takes)."""
    return ScreenResult(
        lake_id=str(row["lake_id"]),
        regime=row["regime"],
        tipping_load=row.get("tipping_load"),
        recovery_load=row.get("recovery_load"),
        margin_kg_yr=row.get("margin_kg_yr"),
        state=row.get("state"),
        p_irreversible=row.get("p_irreversible"),
        p_hysteretic=row.get("p_hysteretic"),
        warnings=tuple(row.get("warnings") or ()),
        params=LakeParameters.from_dict(row["params"]),
        load_kg_per_yr=float(row["load_kg_yr"]),
        fitted=bool(row.get("fitted")),
    )


def _float(v: Any) -> Any:
    """Numbers as floats: the browser writes 2.0 as 2, and the CSV writes floats with repr."""
    return float(v) if isinstance(v, int | float) and not isinstance(v, bool) else v


def region_csv(store: Mapping[str, Any]) -> str:
    """The screened lakes as CSV, in the lake table's order: the columns of ``turnback screen -o``."""
    keys = ("tipping_load", "recovery_load", "margin_kg_yr", "p_irreversible", "p_hysteretic")
    rows = [{**r, **{k: _float(r.get(k)) for k in keys}} for r in store.get("lakes", [])]
    return csv_text([result_of(r) for r in rows])


def rank_key(row: Mapping[str, Any]) -> tuple[int, float]:
    """Smallest margin first (already past the tipping load: negative); lakes without a tipping load last."""
    m = row.get("margin_kg_yr")
    return (1, 0.0) if m is None or not math.isfinite(float(m)) else (0, float(m))


def ranked(rows: Sequence[Mapping[str, Any]]) -> list[Mapping[str, Any]]:
    """The rows ranked by margin (a stable sort: ties keep the lake table's order)."""
    return sorted(rows, key=rank_key)


def find_row(store: Mapping[str, Any] | None, lake_id: Any) -> Mapping[str, Any] | None:
    """The screened lake ``lake_id``, or None."""
    for row in (store or {}).get("lakes", []) or []:
        if row.get("lake_id") == lake_id:
            return row  # type: ignore[no-any-return]
    return None


def lake_to_open(row: Mapping[str, Any]) -> tuple[LakeStore | None, str]:
    """The lake store that opens ``row`` in "The lake now", or None and what to fix.

    Its parameters (given or fitted), today's load, volume and area; a lake
    with a record starts in its last observed year with the lake P measured
    then (``P = TP V / 10⁶`` [kg]), as a fitted lake from the record view does.
    """
    name = row.get("name") or row["lake_id"]
    if row.get("area_km2") is None:
        return None, (
            f"Lake {row['lake_id']} has no area_km2 in the lake table, and 'The lake now' needs one; "
            "add its area [km²] to LAKES.csv and screen again."
        )
    try:
        params = LakeParameters.from_dict(row["params"])
        profile = LakeProfile(
            name=str(name)[:120],
            area_km2=float(row["area_km2"]),
            volume_m3=float(row["volume_m3"]),
            load_kg_per_yr=float(row["load_kg_yr"]),
        )
    except (ValueError, KeyError, TypeError) as exc:
        return None, f"Lake {row.get('lake_id')} cannot be opened: {exc}."
    lake = lake_to_store(params, profile)
    start = row.get("start")
    if start:
        lake["start"] = {"year": int(start["year"]), "p": float(start["p"])}
    return lake, ""

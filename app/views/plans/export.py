"""Exports of the last completed run: the standalone HTML report and CSV files."""

from __future__ import annotations

import csv
import io
import re
import tempfile
from collections.abc import Mapping
from typing import Any

from dash import no_update
from turnback.model.outcomes import Comparison

from ... import ids
from ...report import build_report_html, write_csv
from ...stores import comparison_from_store
from .figures import TABLE_COLUMNS, outcome_table


def _slug(name: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower()
    return s[:60] or "plan"


def trajectories_csv(comp: Comparison) -> str:
    """The yearly series of every scenario, in the CSV form of ``turnback report``."""
    with tempfile.TemporaryDirectory() as d:
        paths = write_csv(comp, d)
        return paths[0].read_text(encoding="utf-8")


def table_csv(comp: Comparison) -> str:
    """The outcome table as CSV (raw numbers, empty where undefined)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    keys = list(TABLE_COLUMNS)
    w.writerow(keys)
    for row in outcome_table(comp.results):
        w.writerow(["" if row[k] is None else row[k] for k in keys])
    return buf.getvalue()


def export(
    trigger: str | None, data: Mapping[str, Any] | None, precaution: Mapping[str, Any] | None
) -> tuple[Any, str]:
    """The download for one export button: the HTML report, or a CSV."""
    if not data or not data.get("results"):
        return no_update, "Run the plan first: the exports are made from the last completed run."
    try:
        comp = comparison_from_store(data, precaution)
    except (ValueError, KeyError, TypeError):
        return no_update, "The stored results could not be read; run the plan again."
    stem = f"turnback-{_slug(comp.plan.lake.name)}"
    if trigger == ids.PLAN_EXPORT_REPORT:
        text = build_report_html(comp, source="the dashboard")
        return {"content": text, "filename": f"{stem}-report.html", "type": "text/html"}, ""
    if trigger == ids.PLAN_EXPORT_TRAJECTORIES:
        return {"content": trajectories_csv(comp), "filename": f"{stem}-trajectories.csv", "type": "text/csv"}, ""
    if trigger == ids.PLAN_EXPORT_TABLE:
        return {"content": table_csv(comp), "filename": f"{stem}-outcomes.csv", "type": "text/csv"}, ""
    return no_update, ""

"""Exports of the last screen: the CSV of ``turnback screen -o`` and a standalone HTML summary.

The summary opens without a network: plotly.js is written into the page
(no CDN, no MathJax), the table sorts with the report's own script, and the
cautions come first.  Words are the meeting register's, so the page can be
handed round; the figures behind each word are in the CSV.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping
from typing import Any

from dash import no_update

from ... import ids
from ...report import CAUTIONS, REPORT_CSS, SORT_TABLE_JS
from ...vocabulary import REGIME_NAMES, REGION_COLUMNS, REGION_STATE, region_word
from .figures import MEETING_COLUMNS, plane_figure, regime_counts
from .results import ranked, region_csv

#: cautions of a screen, besides the report's first two (health authorities; permits for in-lake treatments)
SCREEN_CAUTIONS: tuple[str, ...] = (
    "A screen is a first look across many lakes, not an assessment of any one of them: a lake's numbers are only "
    "as good as its parameters or its record. Fitted lakes carry the uncertainty of a short record; look at each "
    "one in the monitoring record view before deciding anything about it.",
)


def cautions() -> tuple[str, ...]:
    """The summary's cautions, in the order shown."""
    return (*CAUTIONS[:2], *SCREEN_CAUTIONS)


def _slug(text: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower()
    return s[:60] or "region"


def _num(v: Any, fmt: str) -> str:
    return "–" if v is None else format(float(v), fmt)


def _cell(key: str, row: Mapping[str, Any]) -> tuple[str, str]:
    """``(sort key, shown text)`` of one cell of the summary table."""
    v = row.get(key)
    if key == "name":
        name = str(row.get("name") or row["lake_id"])
        return name, html.escape(name)
    if key == "regime":
        return str(row["regime"]), html.escape(region_word(REGIME_NAMES, row["regime"], True))
    if key == "state":
        return str(v or ""), html.escape(region_word(REGION_STATE, v, True))
    if key == "p_irreversible":
        return ("" if v is None else repr(float(v))), ("not fitted" if v is None else f"{float(v):.0%}")
    fmt = "+,.0f" if key == "margin_kg_yr" else ",.0f"
    return ("" if v is None else repr(float(v))), _num(v, fmt)


def _table(store: Mapping[str, Any]) -> str:
    out = ['<table id="outcomes" class="sortable"><thead><tr>']
    for i, key in enumerate(MEETING_COLUMNS):
        kind = "text" if key in ("name", "regime", "state") else "num"
        out.append(
            f'<th data-col="{i}" data-kind="{kind}" tabindex="0" title="click to sort">'
            f'{html.escape(REGION_COLUMNS[key][1])}<span class="arrow"> ⇅</span></th>'
        )
    out.append("</tr></thead><tbody>")
    for row in ranked(store.get("lakes", [])):
        cells = [_cell(k, row) for k in MEETING_COLUMNS]
        out.append(
            f'<tr class="regime-{html.escape(str(row["regime"]))}">'
            + "".join(f'<td data-sort="{html.escape(k)}">{t}</td>' for k, t in cells)
            + "</tr>"
        )
    out.append("</tbody></table>")
    return "".join(out)


_EXTRA_CSS = """
tr.regime-reversible td { background: #e4eef7; } tr.regime-hysteretic td { background: #fbf0d3; }
tr.regime-irreversible td { background: #f6dfd8; }
ul.failed li, ul.warnings li { margin: 0.2rem 0; }
"""


def summary_html(store: Mapping[str, Any]) -> str:
    """The standalone HTML summary of a screen (offline: plotly.js inline)."""
    rows = list(store.get("lakes", []))
    counts = regime_counts(rows)
    fig = plane_figure(rows, None, meeting=True)
    fig.update_layout(height=560)
    figure = fig.to_html(
        full_html=False,
        include_plotlyjs=True,
        include_mathjax=False,
        config={"displaylogo": False, "responsive": True, "showSendToCloud": False},
        div_id="fig-plane",
    )
    kinds = ", ".join(f"{counts[k]} {REGIME_NAMES[k][1]}" for k in counts)
    source = str(store.get("source", ""))
    failed = store.get("failed") or []
    warned = [r for r in rows if r.get("warnings")]
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>Region screen — {html.escape(source)}</title>",
        f"<style>{REPORT_CSS}{_EXTRA_CSS}</style></head><body>",
        f"<h1>Region screen — {html.escape(source)}</h1>",
        f'<p class="meta">Screened {html.escape(str(store.get("run_at", "")))} by Turnback: {len(rows)} lakes '
        f"({html.escape(kinds)}); {len(failed)} could not be screened.</p>",
        '<div class="caution"><b>Cautions</b>' + "".join(f"<p>{html.escape(c)}</p>" for c in cautions()) + "</div>",
        "<h2>Lakes, least room before tipping first</h2>",
        "<p>Click a column heading to sort. Room before tipping: the tipping point less the inflow now; below "
        "zero, the inflow is already past the tipping point.</p>",
        _table(store),
        "<h2>The lakes side by side</h2>",
        "<p>Each dot is a lake, coloured by its kind; the shaded bands show where lakes have no tipping point, "
        "a tipping point, or no way back.</p>",
        f'<div class="figure">{figure}</div>',
    ]
    if warned:
        parts.append('<h2>Notes on single lakes</h2><ul class="warnings">')
        parts += [
            f"<li><b>{html.escape(str(r['lake_id']))}</b>: {html.escape(' '.join(r['warnings']))}</li>" for r in warned
        ]
        parts.append("</ul>")
    if failed:
        parts.append('<h2>Lakes not screened, and what to fix</h2><ul class="failed">')
        parts += [f"<li><b>{html.escape(f['lake_id'])}</b>: {html.escape(f['message'])}</li>" for f in failed]
        parts.append("</ul>")
    parts += [
        f"<h2>How</h2><p>{len(rows)} lakes screened with the one-box lake model of Carpenter, Ludwig &amp; Brock "
        f"(1999, Ecological Applications 9:751–771); lakes without parameters were fitted to their records with "
        f"{int(store.get('replicates', 0))} repeat fits each (random start {int(store.get('seed', 0))}).</p>",
        f"<script>{SORT_TABLE_JS}</script>",
        "</body></html>",
    ]
    return "\n".join(parts)


def export(trigger: str | None, store: Mapping[str, Any] | None) -> tuple[Any, str]:
    """The download of one export button: the CSV of the table, or the HTML summary."""
    if not store or not store.get("lakes"):
        return no_update, "Screen a region first: the exports are made from the last completed screen."
    stem = f"turnback-region-{_slug(str(store.get('source', 'region')))}"
    try:
        if trigger == ids.REGION_EXPORT_CSV:
            return {"content": region_csv(store), "filename": f"{stem}.csv", "type": "text/csv"}, ""
        if trigger == ids.REGION_EXPORT_HTML:
            return {"content": summary_html(store), "filename": f"{stem}.html", "type": "text/html"}, ""
    except (ValueError, KeyError, TypeError):
        return no_update, "The stored results could not be read; screen the region again."
    return no_update, ""

"""Figures, outcome table and a standalone HTML report of a scenario comparison.

The figures are the plans view's (:mod:`app.views.plans.figures`: results in,
:class:`plotly.graph_objects.Figure` out).  The HTML report embeds plotly.js
inline (no internet needed to open it, no MathJax), states the assumptions
and cautions, the date and the parameters, and carries a sortable outcome
table.

The model is the annual P map of Carpenter, Ludwig & Brock (1999),
Ecological Applications 9:751–771; see :mod:`turnback.model.plan` for the
definitions of every outcome.
"""

from __future__ import annotations

import csv
import html
import io
import math
import os
import tempfile
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import plotly.graph_objects as go
from turnback.model.outcomes import Comparison
from turnback.model.two_pool import TwoPoolParameters

from .views.plans.figures import clear_probability_figure, load_figure, recovery_figure, trajectory_figure

__all__ = [
    "CAUTIONS",
    "REPORT_CSS",
    "SORT_TABLE_JS",
    "build_report_html",
    "outcome_rows",
    "report_figures",
    "write_csv",
    "write_pngs",
    "write_text_atomic",
]

CAUTIONS: tuple[str, ...] = (
    "These are scenario estimates from a simplified one-box model of lake phosphorus (Carpenter, Ludwig & "
    "Brock 1999). They are not a water-safety or health assessment. For bathing, drinking or any other use "
    "of the water, follow local health authorities and their advisories.",
    "In-lake treatments (P removal, sediment P inactivation with chemicals) need permits and licensed "
    "practice; plan them with your regulator and qualified practitioners.",
    "Probabilities come from a finite ensemble and carry Monte-Carlo error; the lake's parameters carry "
    "further uncertainty that these numbers do not include.",
)


#: the two-pool lake's own cautions (its sediment parameters are rarely known; dredging is an in-lake treatment)
TWO_POOL_CAUTIONS: tuple[str, ...] = (
    "This lake is the two-pool model (water and mobile sediment P, after Carpenter 2005): its burial and "
    "recycling rates, and the sediment P itself, are rarely known, and the recovery years depend on them.",
    "Dredging and sediment P inactivation are in-lake treatments that need permits and licensed practice.",
)


def cautions_for(comparison: Comparison) -> tuple[str, ...]:
    """The report's cautions; a two-pool lake's name its model and add its own."""
    if not isinstance(comparison.plan.lake.params, TwoPoolParameters):
        return CAUTIONS
    first = CAUTIONS[0].replace(
        "a simplified one-box model of lake phosphorus (Carpenter, Ludwig & Brock 1999)",
        "a simplified two-pool model of lake phosphorus (Carpenter 2005)",
    )
    return (first, *CAUTIONS[1:], *TWO_POOL_CAUTIONS)


def report_figures(comparison: Comparison) -> dict[str, go.Figure]:
    """The report's figures by file stem, in report order."""
    res = comparison.results
    return {
        "tp_trajectories": trajectory_figure(res),
        "clear_probability": clear_probability_figure(res),
        "recovery_time": recovery_figure(res),
        "load_schedule": load_figure(res),
    }


# --------------------------------------------------------------------------
# outcome table
# --------------------------------------------------------------------------
def outcome_rows(comparison: Comparison) -> list[dict[str, Any]]:
    """One row of outcomes per scenario, in input order (raw numbers; None where undefined)."""
    rows = []
    for r in comparison.results:
        d = r.details()
        pr = r.precaution
        rows.append(
            {
                "scenario": r.name,
                "members": r.scenario.members,
                "years": r.scenario.years,
                "p_clear_final": d["p_clear_final"],
                "p_clear_final_se": d["p_clear_final_se"],
                "p_flip": d["p_flip"],
                "p_recovered": d["p_recovered"],
                "recovery_years_median": d["recovery_years_median"],
                "recovery_years_p05": d["recovery_years_p05"],
                "recovery_years_p95": d["recovery_years_p95"],
                "p_relapse": d["p_relapse"],
                "final_tp_median_ug_l": d["final_tp_median_ug_l"],
                "final_tp_p05_ug_l": d["final_tp_p05_ug_l"],
                "final_tp_p95_ug_l": d["final_tp_p95_ug_l"],
                "end_state": d["end_state"],
                "load_cut_kg": d["load_cut_kg"],
                "in_lake_removal_kg": d["in_lake_removal_kg"],
                "total_removed_kg": d["total_removed_kg"],
                "precautionary_load_kg_per_yr": None if pr is None else pr.load_kg_per_yr,
                "precautionary_load_se_kg_per_yr": None if pr is None else pr.standard_error_kg_per_yr,
            }
        )
    return rows


def _pct(x: float | None) -> str:
    return "–" if x is None else f"{100.0 * x:.1f}%"


def _kg(x: float | None) -> str:
    return "–" if x is None else f"{x:,.0f}"


def _sort_key(x: object) -> str:
    if x is None:
        return ""
    if isinstance(x, float) and not math.isfinite(x):
        return ""
    return str(x)


def _table_html(comparison: Comparison) -> str:
    rows = outcome_rows(comparison)
    any_prec = any(r["precautionary_load_kg_per_yr"] is not None for r in rows)
    heads = [
        ("Scenario", "text"),
        ("Clear in final year", "num"),
        ("Flip to turbid (members starting clear)", "num"),
        ("Recovered within horizon", "num"),
        ("Median recovery year", "num"),
        ("Final TP median (5–95%) [µg/L]", "num"),
        ("End state", "text"),
        ("External load cut vs baseline [kg]", "num"),
        ("In-lake removal [kg]", "num"),
    ]
    if any_prec:
        heads.append(("Precautionary load [kg/yr]", "num"))
    out = ['<table id="outcomes" class="sortable"><thead><tr>']
    for i, (h, kind) in enumerate(heads):
        out.append(
            f'<th data-col="{i}" data-kind="{kind}" tabindex="0" title="click to sort">{html.escape(h)}'
            '<span class="arrow"> ⇅</span></th>'
        )
    out.append("</tr></thead><tbody>")
    for r, res in zip(rows, comparison.results, strict=True):
        rec = r["recovery_years_median"]
        clear0 = bool(res.p_clear.size and res.p_clear[0] >= 0.5)
        na = "not applicable (starts clear)"
        cells: list[tuple[object, str]] = [
            (r["scenario"], html.escape(r["scenario"])),
            (r["p_clear_final"], f"{_pct(r['p_clear_final'])} ± {100 * r['p_clear_final_se']:.1f}"),
            (r["p_flip"], _pct(r["p_flip"]) if r["p_flip"] is not None else "not applicable (starts turbid)"),
            (None if clear0 else r["p_recovered"], na if clear0 else _pct(r["p_recovered"])),
            (
                None if clear0 else rec,
                na if clear0 else (f"{rec:g}" if rec is not None else "– (fewer than half recover)"),
            ),
            (
                r["final_tp_median_ug_l"],
                f"{r['final_tp_median_ug_l']:.1f} ({r['final_tp_p05_ug_l']:.1f}–{r['final_tp_p95_ug_l']:.1f})",
            ),
            (r["end_state"], r["end_state"]),
            (r["load_cut_kg"], _kg(r["load_cut_kg"])),
            (r["in_lake_removal_kg"], _kg(r["in_lake_removal_kg"])),
        ]
        if any_prec:
            v, se = r["precautionary_load_kg_per_yr"], r["precautionary_load_se_kg_per_yr"]
            cells.append((v, "–" if v is None else _kg(v) + ("" if not se else f" ± {se:,.0f}")))
        out.append("<tr>" + "".join(f'<td data-sort="{html.escape(_sort_key(k))}">{t}</td>' for k, t in cells))
        out.append("</tr>")
    out.append("</tbody></table>")
    return "".join(out)


_SORT_JS = """
(function () {
  var table = document.getElementById('outcomes');
  if (!table) { return; }
  var heads = table.querySelectorAll('th');
  function sortBy(th) {
    var col = +th.dataset.col, num = th.dataset.kind === 'num';
    var dir = th.dataset.dir === 'asc' ? 'desc' : 'asc';
    heads.forEach(function (h) { h.dataset.dir = ''; h.querySelector('.arrow').textContent = ' \\u21c5'; });
    th.dataset.dir = dir;
    th.querySelector('.arrow').textContent = dir === 'asc' ? ' \\u25b2' : ' \\u25bc';
    var body = table.tBodies[0], rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (a, b) {
      var x = a.cells[col].dataset.sort, y = b.cells[col].dataset.sort;
      if (x === '' && y !== '') { return 1; }
      if (y === '' && x !== '') { return -1; }
      var c = num ? (parseFloat(x) - parseFloat(y)) : x.localeCompare(y);
      return dir === 'asc' ? c : -c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  }
  heads.forEach(function (th) {
    th.addEventListener('click', function () { sortBy(th); });
    th.addEventListener('keydown', function (e) { if (e.key === 'Enter') { sortBy(th); } });
  });
})();
"""

_CSS = """
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 2rem auto; max-width: 1100px;
       color: #1d2a33; line-height: 1.45; padding: 0 1rem; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; } h2 { font-size: 1.2rem; margin-top: 2rem; }
.meta { color: #5a6b77; font-size: 0.9rem; }
.caution { border-left: 5px solid #c2410c; background: #fff7ed; padding: 0.6rem 1rem; margin: 1rem 0; }
.caution p { margin: 0.4rem 0; }
table { border-collapse: collapse; width: 100%; font-size: 0.9rem; }
th, td { border-bottom: 1px solid #d8e0e6; padding: 0.35rem 0.5rem; text-align: right; vertical-align: top; }
th:first-child, td:first-child { text-align: left; }
th { background: #eef3f6; cursor: pointer; user-select: none; }
th:hover { background: #dde8ee; } .arrow { color: #7a8b96; font-size: 0.8em; }
dl.params { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; }
dl.params dt { font-weight: 600; } dl.params dd { margin: 0; }
.figure { margin: 1rem 0; }
"""


def _parameters_html(comparison: Comparison) -> str:
    lake = comparison.plan.lake
    p = lake.params
    items: list[tuple[str, str]] = [("Lake", html.escape(lake.name))]
    if isinstance(p, TwoPoolParameters):
        m0 = lake.initial_sediment_p_kg
        if m0 is None:
            m0 = float(p.sediment_balance(lake.initial_p_kg))
        items += [
            ("Lake model", "two-pool: water P and mobile sediment P (after Carpenter 2005)"),
            ("Sedimentation s", f"{p.s:g} yr⁻¹"),
            ("Outflow h", f"{p.h:g} yr⁻¹"),
            ("Burial b", f"{p.b:g} yr⁻¹"),
            ("Recycling rate r", f"{p.r:g} yr⁻¹ (largest yearly fraction of sediment P recycled)"),
            ("Recycling half-saturation m", f"{p.m:,.6g} kg ({float(lake.tp(p.m)):.1f} µg/L)"),
            ("Recycling exponent q", f"{p.q:g}"),
            ("Starting sediment P (year 0)", f"{m0:,.0f} kg"),
        ]
    else:
        items += [
            ("Loss rate s", f"{p.s:g} yr⁻¹ (burial plus outflow)"),
            ("Maximum recycling r", f"{p.r:,.6g} kg yr⁻¹"),
            ("Recycling half-saturation m", f"{p.m:,.6g} kg ({float(lake.tp(p.m)):.1f} µg/L)"),
            ("Recycling exponent q", f"{p.q:g}"),
            ("Dimensionless b = s m / r", f"{p.to_dimensionless().b:.4g}"),
        ]
    items += [
        ("Volume", f"{lake.volume_m3:.4g} m³"),
        ("Starting TP (year 0)", f"{lake.initial_tp_ug_l:g} µg/L ({lake.initial_p_kg:,.0f} kg)"),
        ("Regime", comparison.regime),
    ]
    if comparison.tipping_load_kg_per_yr is not None:
        items.append(("Tipping load", f"{comparison.tipping_load_kg_per_yr:,.0f} kg yr⁻¹"))
    if comparison.recovery_load_kg_per_yr is not None:
        items.append(("Recovery load", f"{comparison.recovery_load_kg_per_yr:,.0f} kg yr⁻¹"))
    out = ['<dl class="params">']
    for k, v in items:
        out.append(f"<dt>{html.escape(k)}</dt><dd>{v}</dd>")
    out.append("</dl><h3>Scenarios</h3><ul>")
    for r in comparison.results:
        s = r.scenario
        rule = s.clear_threshold if isinstance(s.clear_threshold, str) else f"fixed TP {s.clear_threshold:g} µg/L"
        extra = f"; clear rule: {rule}; recovered after {s.recovery_stay_years} consecutive clear years"
        if s.precaution is not None:
            extra += (
                f"; precaution: at most {s.precaution.max_percent:g}% chance of flipping within "
                f"{s.precaution.within_years} years"
            )
        desc = f" — {html.escape(s.description)}" if s.description else ""
        out.append(f"<li><b>{html.escape(s.name)}</b>: {html.escape(s.describe() + extra)}{desc}</li>")
    out.append("</ul>")
    return "".join(out)


_ASSUMPTIONS = (
    "Model: the annual map P[t+1] = P[t] + L[t] − s P[t] + c[t] r P[t]^q/(m^q + P[t]^q) − R[t] of lake P "
    "(Carpenter, Ludwig & Brock 1999), one well-mixed box; TP = 10⁶ P / V.",
    "Years: year 0 is the starting state; year t is the t-th simulated year, whose load and treatments act "
    "during it, and the state shown for year t is at its end. An in-lake removal is taken at the start of its "
    "year (at most what the lake holds); inactivation multiplies recycling by (1 − percent/100) in its years.",
    "Load variability: each year's load is the scheduled load times exp(σε − σ²/2) with σ² = ln(1 + CV²) "
    "(mean-preserving lognormal, independent years). Process noise, when set, is an additive Gaussian "
    "disturbance on lake P (sd in kg) at the end of each year.",
    "Clear state: by default P below the unstable separatrix at that year's scheduled load, held at the fold's P "
    "beyond the folds (so below the recovery load every state counts as clear: bound for clear water, though "
    "TP may still be falling); or the TP of the tipping fold; or a fixed TP. Thresholds are those of the "
    "untreated lake.",
    "Recovery: the first year the lake is clear and stays clear for the stated number of consecutive years, "
    "within the horizon. Median recovery counts members that never recover as never; it is blank when fewer "
    "than half recover. Flip: a member that starts clear is turbid in at least one later year.",
    "Do-nothing baseline: the load held at its starting value; the load cut is the sum over the years of "
    "baseline minus scheduled load.",
    "Precautionary load: the largest sustained load whose chance of flipping within N years, starting at its "
    "clear equilibrium, is at most the limit; bisection on one ensemble with common random numbers. Its "
    "± error is the binomial standard error at the limit divided by the local slope of the probability.",
)

#: the report's stylesheet and sortable-table script, shared by the region view's summary (table id "outcomes")
REPORT_CSS = _CSS
SORT_TABLE_JS = _SORT_JS


def build_report_html(
    comparison: Comparison,
    *,
    generated: datetime | None = None,
    source: str | None = None,
    figures: Mapping[str, go.Figure] | None = None,
) -> str:
    """The standalone HTML report of a comparison.

    Parameters
    ----------
    comparison : Comparison
    generated : datetime, optional
        Time stamp shown in the report (default now, UTC).
    source : str, optional
        Name of the plan file, shown as given (pass a bare file name).
    figures : mapping, optional
        Figures to embed (default :func:`report_figures`).
    """
    when = (generated or datetime.now(UTC)).strftime("%Y-%m-%d %H:%M %Z").strip()
    figs = dict(report_figures(comparison) if figures is None else figures)
    lake = comparison.plan.lake
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>Scenario comparison — {html.escape(lake.name)}</title>",
        f"<style>{_CSS}</style></head><body>",
        f"<h1>Scenario comparison — {html.escape(lake.name)}</h1>",
        f'<p class="meta">Generated {html.escape(when)} by Turnback'
        + (f" from {html.escape(source)}" if source else "")
        + f". {len(comparison.results)} scenario(s).</p>",
        '<div class="caution"><b>Cautions</b>'
        + "".join(f"<p>{html.escape(c)}</p>" for c in cautions_for(comparison))
        + "</div>",
        "<h2>Outcomes</h2>",
        "<p>Click a column heading to sort.</p>",
        _table_html(comparison),
        "<h2>Figures</h2>",
    ]
    config = {"displaylogo": False, "responsive": True, "showSendToCloud": False}
    for i, (stem, fig) in enumerate(figs.items()):
        div = fig.to_html(
            full_html=False,
            include_plotlyjs=(i == 0),
            include_mathjax=False,
            config=config,
            div_id=f"fig-{stem}",
        )
        parts.append(f'<div class="figure">{div}</div>')
    parts += [
        "<h2>Lake and parameters</h2>",
        _parameters_html(comparison),
        "<h2>Assumptions and definitions</h2><ul>",
        *(f"<li>{html.escape(a)}</li>" for a in _ASSUMPTIONS),
        "</ul>",
        "<h2>Reference</h2><p>Carpenter, S. R., Ludwig, D. &amp; Brock, W. A. (1999). Management of "
        "eutrophication for lakes subject to potentially irreversible change. <i>Ecological Applications</i> "
        "9(3), 751–771.</p>",
        f"<script>{_SORT_JS}</script>",
        "</body></html>",
    ]
    return "\n".join(parts)


# --------------------------------------------------------------------------
# files
# --------------------------------------------------------------------------
def _file_mode(target: Path) -> int:
    """The mode a new file would get (0666 less the umask), or the existing file's mode."""
    try:
        return target.stat().st_mode & 0o777
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def write_text_atomic(path: str | os.PathLike[str], text: str) -> Path:
    """Write ``text`` to ``path`` through a temporary file and a rename, so a failure never leaves half a file."""
    target = Path(path)
    if target.is_dir():
        raise ValueError(f"{str(path)!r} is a folder; give a file name")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise ValueError(f"folder {str(folder)!r} does not exist; create it or choose another output path")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.chmod(tmp, _file_mode(target))
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return target


def _csv_text(header: Sequence[str], rows: Sequence[Sequence[object]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for row in rows:
        w.writerow(["" if v is None else v for v in row])
    return buf.getvalue()


def _output_dir(directory: str | os.PathLike[str]) -> Path:
    d = Path(directory)
    if d.exists() and not d.is_dir():
        raise ValueError(f"{str(directory)!r} is a file, not a folder")
    try:
        d.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ValueError(f"cannot create folder {str(directory)!r}: {exc.strerror or exc}") from None
    return d


def write_csv(comparison: Comparison, directory: str | os.PathLike[str]) -> list[Path]:
    """Write ``trajectories.csv`` (one row per scenario and year) and ``outcomes.csv`` (one row per scenario)."""
    d = _output_dir(directory)
    traj_rows: list[list[object]] = []
    for r in comparison.results:
        for t in r.years.tolist():
            traj_rows.append(
                [
                    r.name,
                    t,
                    None if t == 0 else float(r.load_kg_per_yr[t - 1]),
                    float(r.tp_median_ug_l[t]),
                    float(r.tp_p05_ug_l[t]),
                    float(r.tp_p95_ug_l[t]),
                    float(r.p_clear[t]),
                    float(r.threshold_tp_ug_l[t]),
                ]
            )
    header = [
        "scenario",
        "year",
        "load_kg_per_yr",
        "tp_median_ug_l",
        "tp_p05_ug_l",
        "tp_p95_ug_l",
        "p_clear",
        "clear_threshold_tp_ug_l",
    ]
    a = write_text_atomic(d / "trajectories.csv", _csv_text(header, traj_rows))
    rows = outcome_rows(comparison)
    keys = list(rows[0]) if rows else []
    b = write_text_atomic(d / "outcomes.csv", _csv_text(keys, [[r[k] for k in keys] for r in rows]))
    return [a, b]


def write_pngs(
    figures: Mapping[str, go.Figure],
    directory: str | os.PathLike[str],
    *,
    width: int = 1000,
    height: int = 520,
    scale: float = 2.0,
) -> list[Path]:
    """Write each figure as ``<stem>.png`` with kaleido, starting the browser once for all of them.

    Raises
    ------
    ValueError
        When the export fails (kaleido needs Chrome or Chromium on this machine).
    """
    d = _output_dir(directory)
    import plotly.io as pio

    paths = [d / f"{stem}.png" for stem in figures]
    figs = [go.Figure(f).update_layout(width=width, height=height) for f in figures.values()]
    try:
        pio.write_images(figs, paths, format="png", scale=scale)
        for fig, path in zip(figs, paths, strict=True):
            if not path.is_file():  # the batch can drop an image on a busy machine: one more try, alone
                pio.write_image(fig, path, format="png", scale=scale)
        missing = [p.name for p in paths if not p.is_file()]
        if missing:
            raise RuntimeError(f"no image was written for {', '.join(missing)}")
    except Exception as exc:
        raise ValueError(
            f"PNG export failed ({type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''}); it needs "
            "Chrome or Chromium (e.g. apt-get install chromium); the other outputs were written"
        ) from None
    return paths

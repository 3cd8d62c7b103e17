"""The one-page handout for a meeting: the lake's story on a printed page, in plain words.

Built from the same numbers and the same words as the dashboard: the
equilibrium engine (:func:`turnback.model.equilibrium.analyze`), the
management quantities (:mod:`turnback.model.management`), the expected
clarity (:mod:`turnback.model.clarity`), the meeting register of
:mod:`turnback.app.vocabulary` and the lake view's own figure builder.  It
is standalone HTML (plotly inline, opens offline) with print CSS for one A4
or Letter page; :func:`print_pdf` prints it with the system's Chromium.
"""

from __future__ import annotations

import datetime as _dt
import html
import os
import shutil
import subprocess
import tempfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import plotly.io as pio
from turnback.model import units
from turnback.model.clarity import clarity
from turnback.model.equilibrium import LakeAnalysis, analyze
from turnback.model.management import removal_needed
from turnback.model.params import LakeParameters, LakeProfile

from .stores import starting_state
from .views.lake.figures import equilibrium_figure
from .views.lake.layout import slider_config
from .vocabulary import regime_sentence, term, trophic_headline

__all__ = ["Handout", "build_handout", "handout_html", "print_pdf"]

Units = Literal["metric", "us"]

CAUTIONS = (
    "These numbers are scenario estimates from a simplified model of the lake's phosphorus. They are not a "
    "water-safety or health assessment: follow your local health authority and its advisories before swimming.",
    "Taking phosphorus out of the lake, or locking it into the mud with chemicals, needs permits and licensed "
    "practice.",
)


@dataclass(frozen=True)
class Handout:
    """What the handout says: the three numbers [kg yr⁻¹], the regime, the clarity and the sources."""

    name: str
    date: str
    today_kg_per_yr: float
    tipping_kg_per_yr: float | None
    recovery_kg_per_yr: float | None
    regime: str
    tp_now_ug_l: float
    removal_kg: float | None
    source: str
    analysis: LakeAnalysis
    params: LakeParameters
    profile: LakeProfile
    p_now_kg: float
    path: Mapping[str, Sequence[float]] | None


def build_handout(
    params: LakeParameters,
    profile: LakeProfile,
    *,
    record: Mapping[str, Sequence[float]] | None = None,
    fit_words: str | None = None,
    today: _dt.date | None = None,
) -> Handout:
    """The handout's content for a lake: the numbers are :func:`analyze`'s for the same parameters.

    ``record`` (``{"year", "load", "tp"}``) is the lake's observed path; the
    lake's state now is its last observed TP, else the clear state at today's
    load.  ``fit_words`` says where the numbers come from when they are a fit.
    """
    load = profile.load_kg_per_yr
    res = analyze(params, load=load, n_points=600)
    if record and record.get("tp"):
        p_now = float(profile.mass(float(record["tp"][-1])))
    else:
        p_now = starting_state(params, load)
    need = removal_needed(params, load, p_now=p_now, profile=profile)
    source = fit_words or (
        "The numbers come from the lake model with the parameters given for this lake (Carpenter, Ludwig & Brock "
        "1999); they are as good as those parameters."
    )
    return Handout(
        name=profile.name,
        date=(today or _dt.date.today()).isoformat(),
        today_kg_per_yr=load,
        tipping_kg_per_yr=res.tipping_load,
        recovery_kg_per_yr=res.recovery_load,
        regime=res.regime,
        tp_now_ug_l=float(profile.concentration(p_now)),
        removal_kg=need.kg if need.status == "needed" else None,
        source=source,
        analysis=res,
        params=params,
        profile=profile,
        p_now_kg=p_now,
        path=record,
    )


def _load_text(kg_per_yr: float, system: Units) -> str:
    if system == "us":
        return f"{kg_per_yr / units.KG_PER_LB:,.0f} lb per year"
    return f"{kg_per_yr:,.0f} kg per year"


def _mass_text(kg: float, system: Units) -> str:
    return f"{kg / units.KG_PER_LB:,.0f} lb" if system == "us" else f"{kg:,.0f} kg"


def _depth_text(m: float, system: Units) -> str:
    return f"{m / units.M_PER_FT:.1f} ft" if system == "us" else f"{m:.1f} m"


def _numbers(h: Handout, system: Units) -> list[tuple[str, str]]:
    way_back = term("Recovery", True)
    rows = [
        (f"Today's {term('inflow_lower', True)}", _load_text(h.today_kg_per_yr, system)),
        (
            term("Tipping", True),
            _load_text(h.tipping_kg_per_yr, system) if h.tipping_kg_per_yr is not None else "none: no sudden flip",
        ),
    ]
    if h.regime == "irreversible":
        back = "Cutting the inflow alone cannot bring this lake back"
        if h.removal_kg is not None:
            back += f"; taking about {_mass_text(h.removal_kg, system)} of phosphorus out of the lake would"
        rows.append((way_back, back + "."))
    elif h.recovery_kg_per_yr is not None:
        rows.append((f"{way_back}: the inflow the lake needs to come back", _load_text(h.recovery_kg_per_yr, system)))
    else:
        rows.append((way_back, "the lake follows the inflow both ways: no separate way-back point"))
    return rows


def _in_pounds(h: Handout) -> tuple[LakeAnalysis, LakeProfile, float, Mapping[str, Sequence[float]] | None]:
    """The same lake with its masses in pounds: the model is linear in the unit of mass, so r, m, the loads and
    lake P scale by 1/lb and the volume by the same factor keeps every concentration [µg L⁻¹] unchanged."""
    k = units.KG_PER_LB
    p = h.params
    params = LakeParameters(p.loss_rate, p.recycling_max / k, p.recycling_half / k, p.recycling_exponent)
    prof = LakeProfile(h.profile.name, h.profile.area_km2, h.profile.volume_m3 / k, h.profile.load_kg_per_yr / k)
    path = None
    if h.path:
        path = {"year": list(h.path["year"]), "load": [v / k for v in h.path["load"]], "tp": list(h.path["tp"])}
    return analyze(params, load=prof.load_kg_per_yr, n_points=600), prof, h.p_now_kg / k, path


def _figure_html(h: Handout, system: Units) -> str:
    analysis, profile, p_now, path = (
        (h.analysis, h.profile, h.p_now_kg, h.path) if system == "metric" else (_in_pounds(h))
    )
    history = {"lake_key": "", "year": [0], "load": [profile.load_kg_per_yr], "p": [p_now], "event": ["start"]}
    fit = {"observed": dict(path)} if path else None
    top = slider_config(analysis, profile, meeting=True)["max"]
    fig = equilibrium_figure(
        analysis, profile, history, present_load=profile.load_kg_per_yr, load_max=top, meeting=True, fit=fit
    )
    if system == "us":
        fig.update_xaxes(title_text=str(fig.layout.xaxis.title.text).replace("kg", "lb"))
    fig.update_layout(width=720, height=380, autosize=False, margin={"l": 60, "r": 130, "t": 30, "b": 50})
    return pio.to_html(fig, include_plotlyjs="inline", full_html=False, config={"staticPlot": True})


def handout_html(h: Handout, *, system: Units = "metric", paper: Literal["A4", "Letter"] = "A4") -> str:
    """The handout as one standalone HTML page (plotly inline; print CSS for one ``paper`` page)."""
    est = clarity(h.tp_now_ug_l)
    verdict = trophic_headline(est.oecd_class, True)
    clear_words = (
        f"At today's inflow the lake holds about {h.tp_now_ug_l:,.0f} µg/L of phosphorus (parts per billion): "
        f"a typical summer see-through depth of about {_depth_text(est.secchi_m, system)}; the water is {verdict}."
    )
    numbers = "".join(f"<tr><th>{html.escape(k)}</th><td>{html.escape(v)}</td></tr>" for k, v in _numbers(h, system))
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{html.escape(h.name)}: the lake on one page</title>
<style>
@page {{ size: {paper}; margin: 12mm; }}
body {{ font-family: system-ui, sans-serif; color: #1d1d1d; margin: 0 auto; max-width: 190mm; font-size: 11pt; }}
h1 {{ font-size: 17pt; margin: 0 0 2mm; }}
.date {{ color: #555; margin: 0 0 3mm; }}
table.numbers {{ border-collapse: collapse; width: 100%; margin: 2mm 0; }}
table.numbers th {{ text-align: left; font-weight: 600; padding: 1.5mm 3mm 1.5mm 0; width: 55%; }}
table.numbers td {{ font-size: 13pt; font-weight: 700; padding: 1.5mm 0; }}
table.numbers tr {{ border-bottom: 1px solid #ddd; }}
.regime {{ font-size: 12pt; margin: 2mm 0; }}
.figure {{ margin: 1mm 0; }}
.cautions {{ font-size: 9pt; color: #333; border-top: 1px solid #bbb; margin-top: 2mm; padding-top: 1mm; }}
.cautions ul {{ margin: 1mm 0 0 4mm; padding: 0; }}
.source {{ font-size: 9pt; color: #444; }}
@media print {{ body {{ max-width: none; }} .modebar {{ display: none !important; }} }}
</style></head>
<body>
<h1>{html.escape(h.name)}</h1>
<p class="date">The lake on one page, {html.escape(h.date)}</p>
<table class="numbers">{numbers}</table>
<p class="regime">{html.escape(regime_sentence(h.regime, True))}</p>
<p>{html.escape(clear_words)}</p>
<div class="figure">{_figure_html(h, system)}</div>
<p class="source">{html.escape(h.source)}</p>
<div class="cautions"><b>Please note</b><ul>{cautions}</ul></div>
</body></html>
"""


def chromium() -> str | None:
    """The system's Chromium, or None."""
    for candidate in ("/usr/lib/chromium/chromium", shutil.which("chromium"), shutil.which("chromium-browser")):
        if candidate and os.path.exists(candidate):
            return candidate
    return None


def print_pdf(html_path: Path, pdf_path: Path, timeout: float = 120.0) -> None:
    """Print the handout to PDF with Chromium's own print (headless); ValueError when it cannot."""
    exe = chromium()
    if exe is None:
        raise ValueError(
            "--pdf needs Chromium (the system's chromium package); it is not installed. "
            "Open the HTML handout in a browser and print it instead"
        )
    with tempfile.TemporaryDirectory(prefix="turnback-print-") as profile:
        args = [
            exe,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-dev-shm-usage",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--disable-extensions",
            "--no-first-run",
            f"--user-data-dir={profile}",
            "--no-pdf-header-footer",
            "--virtual-time-budget=10000",
            f"--print-to-pdf={pdf_path}",
            html_path.resolve().as_uri(),
        ]
        try:
            proc = subprocess.run(args, capture_output=True, text=True, timeout=timeout)
        except subprocess.TimeoutExpired:
            raise ValueError("Chromium did not finish printing the handout; try again") from None
    if proc.returncode != 0 or not pdf_path.exists() or pdf_path.stat().st_size == 0:
        raise ValueError("Chromium could not print the handout to PDF; open the HTML and print it from a browser")


def record_path(years: Iterable[Any], loads: Iterable[Any], tp: Iterable[Any]) -> dict[str, list[Any]]:
    """A monitoring record as the figure's observed path."""
    return {"year": [int(y) for y in years], "load": [float(v) for v in loads], "tp": [float(v) for v in tp]}

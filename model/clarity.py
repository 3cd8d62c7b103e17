r"""Water clarity and trophic state from total phosphorus, in a meeting's terms.

Route: TSI equivalence
    A total phosphorus concentration TP [µg L⁻¹] is turned into its Carlson
    trophic state index, and the chlorophyll-a and Secchi depth with **the
    same index value** are reported as the values expected for that TP.
    This is the trophic-state-index equivalence of Carlson (1977), whose
    three indices are scaled so that they agree in a lake where phosphorus
    limits the algae and the algae control the light::

        TSI(SD)  = 60 − 14.41 ln SD        (SD, Secchi depth [m])
        TSI(Chl) = 9.81 ln Chl + 30.6      (Chl, chlorophyll-a [µg L⁻¹])
        TSI(TP)  = 14.42 ln TP + 4.15      (TP, total phosphorus [µg L⁻¹])

    so that, from ``T = TSI(TP)``::

        Chl = exp((T − 30.6) / 9.81)        SD = exp((60 − T) / 14.41)

    Carlson built the index on summer (growing-season) values, so the
    results are expected *summer* values.  They are what a typical
    phosphorus-limited lake with that TP looks like, not a forecast for a
    given lake: colour, suspended clay, grazing and nitrogen limitation all
    move real lakes off these lines (see :func:`turnback.model.clarity_observed.compare_observed`).

Carlson trophic-state bands (TSI)
    ``TSI < 40`` oligotrophic, ``40 <= TSI < 50`` mesotrophic,
    ``50 <= TSI < 70`` eutrophic, ``TSI >= 70`` hypertrophic.  These are the
    bands of Carlson & Simpson (1996), who call the top band
    "hypereutrophy"; we use the word "hypertrophic" so that one vocabulary
    serves both this scale and the OECD table.  The 40/50/70 cut points
    were checked against secondary sources that cite Carlson & Simpson
    (1996), not against the book itself.  An exact band edge goes to the
    higher band.

OECD (1982) fixed-boundary classes (annual mean values)
    The fixed boundary system of OECD (1982), *Eutrophication of waters:
    monitoring, assessment and control* (Vollenweider & Kerekes):

    ==================  ===============  ================  ===============
    class               mean TP [µg/L]   mean Chl [µg/L]   mean SD [m]
    ==================  ===============  ================  ===============
    ultra-oligotrophic  TP <= 4          Chl <= 1          SD >= 12
    oligotrophic        4 < TP <= 10     1 < Chl <= 2.5    6 <= SD < 12
    mesotrophic         10 < TP <= 35    2.5 < Chl <= 8    3 <= SD < 6
    eutrophic           35 < TP < 100    8 < Chl < 25      1.5 < SD < 3
    hypertrophic        TP >= 100        Chl >= 25         SD <= 1.5
    ==================  ===============  ================  ===============

    The table writes "≤ 4", "≤ 10" and "≥ 100" (and likewise for Chl and SD),
    which fixes those edges.  At the middle edge (TP 35, Chl 8, SD 3) it
    prints two overlapping ranges ("10 – 35", "35 – 100"); we give the value
    to the *less* enriched class, following the table's "≤" at the lower
    edges.  The numbers were checked against a secondary reproduction of the
    table (Soil & Water Conservation Society of Metro Halifax, citing
    Vollenweider & Kerekes 1982), not against the OECD report itself.  The
    OECD classes are for annual means; Carlson's index for summer values.

Recreational caution
    World Health Organization (2003), *Guidelines for safe recreational
    water environments*, Vol. 1, ch. 8: with cyanobacteria dominant,
    chlorophyll-a of 10 µg L⁻¹ marks a relatively low probability of
    adverse health effects and 50 µg L⁻¹ a moderate probability (scums a
    high probability).  Levels checked against the US EPA summary of that
    table.  Nothing here ever says that water is safe to swim in.

References
----------
Carlson, R. E. (1977). A trophic state index for lakes. Limnology and
Oceanography 22(2), 361–369.

Carlson, R. E. & Simpson, J. (1996). A coordinator's guide to volunteer lake
monitoring methods. North American Lake Management Society.

OECD (1982). Eutrophication of waters: monitoring, assessment and control.
Organisation for Economic Co-operation and Development, Paris.

World Health Organization (2003). Guidelines for safe recreational water
environments. Volume 1: Coastal and fresh waters, chapter 8.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .trophic_coefficients import CARLSON_1977, CARLSON_SIMPSON_1996, OECD_1982, WHO_2003

__all__ = [
    "OECD_CLASSES",
    "TSI_CLASSES",
    "ClarityEstimate",
    "ClaritySeries",
    "WhoCaution",
    "chl_from_tsi",
    "clarity",
    "clarity_sentence",
    "clarity_series",
    "expected_chl",
    "expected_secchi",
    "oecd_class_chl",
    "oecd_class_secchi",
    "oecd_class_tp",
    "secchi_from_tsi",
    "tsi_chl",
    "tsi_class",
    "tsi_secchi",
    "tsi_tp",
    "who_caution",
]

OecdClass = Literal["ultra-oligotrophic", "oligotrophic", "mesotrophic", "eutrophic", "hypertrophic"]
TsiClass = Literal["oligotrophic", "mesotrophic", "eutrophic", "hypertrophic"]
WhoLevel = Literal["below_guidance", "low_probability", "moderate_probability"]

#: OECD (1982) classes, least to most enriched.
OECD_CLASSES: tuple[OecdClass, ...] = (
    "ultra-oligotrophic",
    "oligotrophic",
    "mesotrophic",
    "eutrophic",
    "hypertrophic",
)
#: Carlson & Simpson (1996) bands as used here, least to most enriched.
TSI_CLASSES: tuple[TsiClass, ...] = ("oligotrophic", "mesotrophic", "eutrophic", "hypertrophic")

# The published coefficient sets (sources in trophic_coefficients.py)
_SD_A, _SD_B = CARLSON_1977.secchi_a, CARLSON_1977.secchi_b
_CHL_A, _CHL_B = CARLSON_1977.chl_a, CARLSON_1977.chl_b
_TP_A, _TP_B = CARLSON_1977.tp_a, CARLSON_1977.tp_b
_TSI_EDGES = CARLSON_SIMPSON_1996.edges
_OECD_TP = OECD_1982.tp_ug_l
_OECD_CHL = OECD_1982.chl_ug_l
_OECD_SD = OECD_1982.secchi_m
WHO_LOW_UG_L = WHO_2003.low_probability_ug_l
WHO_MODERATE_UG_L = WHO_2003.moderate_probability_ug_l

# range accepted by clarity() [µg/L]: far beyond any lake on both sides
TP_MIN_UG_L = 1.0e-3
TP_MAX_UG_L = 1.0e6


# --------------------------------------------------------------------------
# input checking
# --------------------------------------------------------------------------
def as_positive(name: str, value: Any, unit: str, allow_missing: bool = False) -> NDArray[np.float64]:
    """``value`` as a float array of finite numbers > 0, or ValueError naming ``name``.

    With ``allow_missing`` NaN entries are kept (missing observations).
    """
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number greater than 0 {unit}; got {value!r}") from None
    bad = ~(np.isfinite(arr) & (arr > 0.0))
    if allow_missing:
        bad &= ~np.isnan(arr)
    if np.any(bad):
        if arr.ndim == 0:
            raise ValueError(f"{name} must be a finite number greater than 0 {unit}; got {float(arr)!r}")
        idx = int(np.flatnonzero(bad.ravel())[0])
        raise ValueError(
            f"{name} must hold finite numbers greater than 0 {unit}; entry {idx} is {float(arr.ravel()[idx])!r}"
        )
    return arr


def _out(arr: NDArray[Any]) -> Any:
    """A 0-d result as a Python scalar, anything else unchanged."""
    if arr.ndim == 0:
        return arr.item()
    return arr


# --------------------------------------------------------------------------
# Carlson (1977) indices and their inverses
# --------------------------------------------------------------------------
def tsi_tp(tp_ug_l: ArrayLike) -> Any:
    """Carlson (1977) trophic state index from total phosphorus [µg L⁻¹].

    ``TSI(TP) = 14.42 ln TP + 4.15``.  Scalars give a float, arrays an array.
    """
    tp = as_positive("tp_ug_l", tp_ug_l, "[µg L⁻¹]")
    return _out(_TP_B * np.log(tp) + _TP_A)


def tsi_chl(chl_ug_l: ArrayLike) -> Any:
    """Carlson (1977) index from chlorophyll-a [µg L⁻¹]: ``9.81 ln Chl + 30.6``."""
    chl = as_positive("chl_ug_l", chl_ug_l, "[µg L⁻¹]")
    return _out(_CHL_B * np.log(chl) + _CHL_A)


def tsi_secchi(secchi_m: ArrayLike) -> Any:
    """Carlson (1977) index from Secchi depth [m]: ``60 − 14.41 ln SD``."""
    sd = as_positive("secchi_m", secchi_m, "[m]")
    return _out(_SD_A - _SD_B * np.log(sd))


def _finite(name: str, value: ArrayLike) -> NDArray[np.float64]:
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a finite number; got {value!r}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite; got {value!r}")
    return arr


def chl_from_tsi(tsi: ArrayLike) -> Any:
    """Chlorophyll-a [µg L⁻¹] with Carlson index ``tsi``: ``exp((TSI − 30.6)/9.81)``."""
    return _out(np.exp((_finite("tsi", tsi) - _CHL_A) / _CHL_B))


def secchi_from_tsi(tsi: ArrayLike) -> Any:
    """Secchi depth [m] with Carlson index ``tsi``: ``exp((60 − TSI)/14.41)``."""
    return _out(np.exp((_SD_A - _finite("tsi", tsi)) / _SD_B))


def expected_chl(tp_ug_l: ArrayLike) -> Any:
    """Summer chlorophyll-a [µg L⁻¹] expected from TP [µg L⁻¹] by TSI equivalence (Carlson 1977)."""
    return chl_from_tsi(tsi_tp(tp_ug_l))


def expected_secchi(tp_ug_l: ArrayLike) -> Any:
    """Summer Secchi depth [m] expected from TP [µg L⁻¹] by TSI equivalence (Carlson 1977)."""
    return secchi_from_tsi(tsi_tp(tp_ug_l))


# --------------------------------------------------------------------------
# classes
# --------------------------------------------------------------------------
def tsi_class(tsi: ArrayLike) -> Any:
    """Carlson & Simpson (1996) band of a TSI value: str for a scalar, array of str otherwise.

    ``< 40`` oligotrophic, ``[40, 50)`` mesotrophic, ``[50, 70)`` eutrophic,
    ``>= 70`` hypertrophic.
    """
    t = _finite("tsi", tsi)
    return _pick(TSI_CLASSES, np.searchsorted(np.asarray(_TSI_EDGES), t, side="right"))


def _oecd_rising(values: NDArray[np.float64], edges: tuple[float, ...]) -> NDArray[np.intp]:
    """Class index for a variable that rises with enrichment (TP, Chl).

    ``v <= e0`` → 0, ``e0 < v <= e1`` → 1, ``e1 < v <= e2`` → 2,
    ``e2 < v < e3`` → 3, ``v >= e3`` → 4.
    """
    idx = np.searchsorted(np.asarray(edges[:3]), values, side="left")
    return np.where(values >= edges[3], 4, idx)


def _oecd_falling(values: NDArray[np.float64], edges: tuple[float, ...]) -> NDArray[np.intp]:
    """Class index for Secchi depth (falls with enrichment).

    ``v >= e0`` → 0, ``e1 <= v < e0`` → 1, ``e2 <= v < e1`` → 2,
    ``e3 < v < e2`` → 3, ``v <= e3`` → 4.
    """
    neg_edges = -np.asarray(edges[:3])
    idx = np.searchsorted(neg_edges, -values, side="left")
    return np.where(values <= edges[3], 4, idx)


def _pick(names: tuple[str, ...], idx: NDArray[np.intp]) -> Any:
    """``names[idx]``: a str for a 0-d index, an array of str otherwise."""
    out = np.asarray(names)[np.asarray(idx)]
    if np.ndim(idx) == 0:
        return str(out)
    return out


def _names(idx: NDArray[np.intp]) -> Any:
    return _pick(OECD_CLASSES, idx)


def oecd_class_tp(tp_ug_l: ArrayLike) -> Any:
    """OECD (1982) fixed-boundary class from mean total phosphorus [µg L⁻¹].

    ``<= 4`` ultra-oligotrophic, ``(4, 10]`` oligotrophic, ``(10, 35]``
    mesotrophic, ``(35, 100)`` eutrophic, ``>= 100`` hypertrophic.
    """
    return _names(_oecd_rising(as_positive("tp_ug_l", tp_ug_l, "[µg L⁻¹]"), _OECD_TP))


def oecd_class_chl(chl_ug_l: ArrayLike) -> Any:
    """OECD (1982) class from mean chlorophyll-a [µg L⁻¹].

    ``<= 1``, ``(1, 2.5]``, ``(2.5, 8]``, ``(8, 25)``, ``>= 25``.
    """
    return _names(_oecd_rising(as_positive("chl_ug_l", chl_ug_l, "[µg L⁻¹]"), _OECD_CHL))


def oecd_class_secchi(secchi_m: ArrayLike) -> Any:
    """OECD (1982) class from mean Secchi depth [m].

    ``>= 12``, ``[6, 12)``, ``[3, 6)``, ``(1.5, 3)``, ``<= 1.5``.
    """
    return _names(_oecd_falling(as_positive("secchi_m", secchi_m, "[m]"), _OECD_SD))


# --------------------------------------------------------------------------
# WHO recreational caution
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class WhoCaution:
    """Recreational caution level for a chlorophyll-a value, after WHO (2003).

    Attributes
    ----------
    level : {"below_guidance", "low_probability", "moderate_probability"}
        ``chl < 10``, ``10 <= chl < 50``, ``chl >= 50`` [µg L⁻¹].
    guidance_ug_l : float or None
        The guidance level reached (10 or 50), ``None`` below 10.
    text : str
        One or two sentences for a reader; always points to local health
        advisories and never says the water is safe.
    """

    level: WhoLevel
    guidance_ug_l: float | None
    text: str


def _about(value: float) -> str:
    """A value rounded for speech: two significant figures, no trailing zeros."""
    if not math.isfinite(value):
        return str(value)
    if value >= 10.0:
        return f"{value:,.0f}"
    if value >= 1.0:
        return f"{value:.1f}"
    return f"{value:.2g}"


def who_caution(chl_ug_l: float, expected: bool = True) -> WhoCaution:
    """Caution level for recreational contact at chlorophyll-a ``chl_ug_l`` [µg L⁻¹].

    Guidance levels of WHO (2003), *Guidelines for safe recreational water
    environments*, Vol. 1, ch. 8, which apply where cyanobacteria dominate:
    10 µg L⁻¹, relatively low probability of adverse health effects; 50
    µg L⁻¹, moderate probability.  A value exactly at a level counts as
    reaching it.  Below 10 µg L⁻¹ the text says that nothing about safety is
    implied.  ``expected=True`` words the text for a value estimated from TP
    rather than measured.
    """
    chl = float(as_positive("chl_ug_l", chl_ug_l, "[µg L⁻¹]"))
    what = "Expected chlorophyll-a" if expected else "Chlorophyll-a"
    advice = "Follow local health advisories."
    if chl < WHO_LOW_UG_L:
        return WhoCaution(
            "below_guidance",
            None,
            f"{what} (about {_about(chl)} µg/L) is below the WHO (2003) guidance level of 10 µg/L for "
            f"recreational water; this implies nothing about whether the water is fit for swimming. {advice}",
        )
    if chl < WHO_MODERATE_UG_L:
        return WhoCaution(
            "low_probability",
            WHO_LOW_UG_L,
            f"{what} (about {_about(chl)} µg/L) reaches the WHO (2003) guidance level of 10 µg/L: where "
            "cyanobacteria dominate, a relatively low probability of adverse health effects from recreational "
            f"contact, such as skin irritation or stomach upset. {advice}",
        )
    return WhoCaution(
        "moderate_probability",
        WHO_MODERATE_UG_L,
        f"{what} (about {_about(chl)} µg/L) reaches the WHO (2003) guidance level of 50 µg/L: where "
        "cyanobacteria dominate, a moderate probability of adverse health effects from recreational contact, "
        f"and a high probability where scums form. {advice}",
    )


# --------------------------------------------------------------------------
# estimates
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class ClarityEstimate:
    """What a total phosphorus concentration means for clarity and trophic state.

    Attributes
    ----------
    tp_ug_l : float
        Total phosphorus [µg L⁻¹].
    tsi_tp : float
        Carlson (1977) index of that TP [–].
    chl_ug_l : float
        Expected summer chlorophyll-a [µg L⁻¹] (same TSI as the TP).
    secchi_m : float
        Expected summer Secchi depth [m] (same TSI as the TP).
    oecd_class : str
        OECD (1982) fixed-boundary class of the TP, as an annual mean.
    tsi_class : str
        Carlson & Simpson (1996) band of ``tsi_tp``.
    who : WhoCaution
        WHO (2003) recreational caution for the expected chlorophyll-a.
    notes : tuple of str
        Caveats, e.g. when the TSI lies outside Carlson's 0–100 scale.
    """

    tp_ug_l: float
    tsi_tp: float
    chl_ug_l: float
    secchi_m: float
    oecd_class: OecdClass
    tsi_class: TsiClass
    who: WhoCaution
    notes: tuple[str, ...] = ()

    @property
    def sentence(self) -> str:
        """Plain-language summary; see :func:`clarity_sentence`."""
        return clarity_sentence(self)

    def to_dict(self) -> dict[str, Any]:
        """The five headline values (the ``turnback clarity --json`` object)."""
        return {
            "tsi_tp": self.tsi_tp,
            "chl_ug_l": self.chl_ug_l,
            "secchi_m": self.secchi_m,
            "oecd_class": self.oecd_class,
            "tsi_class": self.tsi_class,
        }


def clarity(tp_ug_l: float) -> ClarityEstimate:
    """Expected summer clarity and trophic state at total phosphorus ``tp_ug_l`` [µg L⁻¹].

    By TSI equivalence (Carlson 1977): ``TSI(TP)`` first, then the
    chlorophyll-a and Secchi depth with the same index.  Trophic classes
    after Carlson & Simpson (1996) and OECD (1982); recreational caution
    after WHO (2003).

    Raises
    ------
    ValueError
        When ``tp_ug_l`` is not a finite number, or lies outside
        [0.001, 1 000 000] µg L⁻¹ (no lake is outside it).
    """
    tp = as_positive("tp_ug_l", tp_ug_l, "[µg L⁻¹]")
    if tp.ndim != 0:
        raise ValueError("clarity() takes one TP value; use clarity_series() for a series")
    tp_f = float(tp)
    if not TP_MIN_UG_L <= tp_f <= TP_MAX_UG_L:
        raise ValueError(
            f"tp_ug_l must be between {TP_MIN_UG_L:g} and {TP_MAX_UG_L:,.0f} µg/L (beyond that it describes "
            f"no lake); got {tp_f:g}"
        )
    t = float(tsi_tp(tp_f))
    chl = float(chl_from_tsi(t))
    notes: tuple[str, ...] = ()
    if not 0.0 <= t <= 100.0:
        notes = (
            f"TSI {t:.0f} lies outside Carlson's 0-100 scale (TP of about 0.75 to 770 µg/L): the expected "
            "values are extrapolations.",
        )
    return ClarityEstimate(
        tp_ug_l=tp_f,
        tsi_tp=t,
        chl_ug_l=chl,
        secchi_m=float(secchi_from_tsi(t)),
        oecd_class=oecd_class_tp(tp_f),
        tsi_class=tsi_class(t),
        who=who_caution(chl),
        notes=notes,
    )


def clarity_sentence(est: ClarityEstimate, chlorophyll: bool = True) -> str:
    """A sentence for a meeting, e.g. "Expected summer Secchi depth about 1.4 m, eutrophic ...".

    Names the route (Carlson TSI equivalence) so nobody mistakes it for a
    measurement.
    """
    chl = f" and chlorophyll-a about {_about(est.chl_ug_l)} µg/L" if chlorophyll else ""
    return (
        f"Expected summer Secchi depth about {_about(est.secchi_m)} m{chl}, {est.tsi_class} "
        f"(Carlson TSI {est.tsi_tp:.0f} from TP {_about(est.tp_ug_l)} µg/L; OECD class {est.oecd_class})."
    )


@dataclass(frozen=True)
class ClaritySeries:
    """:func:`clarity` over an array of TP values, e.g. a scenario trajectory.

    Every attribute has the shape of the input; the class attributes are
    arrays of str and ``who_level`` the WHO caution level names.
    """

    tp_ug_l: NDArray[np.float64]
    tsi_tp: NDArray[np.float64]
    chl_ug_l: NDArray[np.float64]
    secchi_m: NDArray[np.float64]
    oecd_class: NDArray[np.str_]
    tsi_class: NDArray[np.str_]
    who_level: NDArray[np.str_]


def clarity_series(tp_ug_l: ArrayLike) -> ClaritySeries:
    """Expected clarity and classes for every TP value [µg L⁻¹] in an array (TSI equivalence, Carlson 1977).

    Raises
    ------
    ValueError
        Naming the first entry that is not a finite number greater than zero.
    """
    tp = np.atleast_1d(as_positive("tp_ug_l", tp_ug_l, "[µg L⁻¹]")).astype(float)
    t = _TP_B * np.log(tp) + _TP_A
    chl = np.exp((t - _CHL_A) / _CHL_B)
    sd = np.exp((_SD_A - t) / _SD_B)
    who = np.where(
        chl >= WHO_MODERATE_UG_L,
        "moderate_probability",
        np.where(chl >= WHO_LOW_UG_L, "low_probability", "below_guidance"),
    )
    oecd = np.asarray(OECD_CLASSES)[_oecd_rising(tp, _OECD_TP)]
    tsic = np.asarray(TSI_CLASSES)[np.searchsorted(np.asarray(_TSI_EDGES), t, side="right")]
    return ClaritySeries(
        tp_ug_l=tp, tsi_tp=t, chl_ug_l=chl, secchi_m=sd, oecd_class=oecd, tsi_class=tsic, who_level=who
    )

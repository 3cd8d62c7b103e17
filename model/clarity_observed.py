"""Observed Secchi depth and chlorophyll-a against what the observed TP leads one to expect.

The expectation is Carlson's (1977) trophic-state-index equivalence
(:mod:`turnback.model.clarity`): in a lake where phosphorus limits the
algae and the algae control the light, the three indices agree.  How far the
observed indices depart from the TP index tells whether something else
limits the algae (nitrogen, grazing) or the light (colour, clay).

References
----------
Carlson, R. E. (1977). A trophic state index for lakes. Limnology and
Oceanography 22(2), 361–369.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .clarity import as_positive
from .trophic_coefficients import CARLSON_1977

__all__ = ["AGREEMENT_TSI", "ObservedComparison", "compare_observed"]

_SD_A, _SD_B = CARLSON_1977.secchi_a, CARLSON_1977.secchi_b
_CHL_A, _CHL_B = CARLSON_1977.chl_a, CARLSON_1977.chl_b
_TP_A, _TP_B = CARLSON_1977.tp_a, CARLSON_1977.tp_b

#: TSI units within which two indices are read as agreeing (common practice, no source).
AGREEMENT_TSI = 5.0


@dataclass(frozen=True)
class ObservedComparison:
    """Observed Secchi depth and chlorophyll-a against what the observed TP leads one to expect.

    Arrays have the broadcast shape of the inputs (0-d for scalars); an
    observation not given, or NaN (missing), gives NaN.

    Attributes
    ----------
    tsi_tp, tsi_secchi, tsi_chl : ndarray
        Carlson (1977) indices of the observations.
    expected_secchi_m, expected_chl_ug_l : ndarray
        From the observed TP by TSI equivalence.
    secchi_ratio, chl_ratio : ndarray
        Observed / expected [–]; ``ln(ratio)`` is the log residual.
    chl_minus_tp, secchi_minus_tp, chl_minus_secchi : ndarray
        TSI deviations [TSI units], e.g. ``TSI(Chl) − TSI(TP)``.
    notes : tuple of str
        Plain-language reading of the median deviations (Carlson's
        deviation analysis, as summarised in Carlson & Simpson 1996; from
        memory, checked against a state agency's summary): deviations within
        ±5 TSI units count as agreement.
    """

    tsi_tp: NDArray[np.float64]
    tsi_secchi: NDArray[np.float64]
    tsi_chl: NDArray[np.float64]
    expected_secchi_m: NDArray[np.float64]
    expected_chl_ug_l: NDArray[np.float64]
    secchi_ratio: NDArray[np.float64]
    chl_ratio: NDArray[np.float64]
    chl_minus_tp: NDArray[np.float64]
    secchi_minus_tp: NDArray[np.float64]
    chl_minus_secchi: NDArray[np.float64]
    notes: tuple[str, ...]


def _median(a: NDArray[np.float64]) -> float:
    finite = a[np.isfinite(a)]
    return float(np.median(finite)) if finite.size else math.nan


def compare_observed(
    tp_ug_l: ArrayLike,
    secchi_m: ArrayLike | None = None,
    chl_ug_l: ArrayLike | None = None,
) -> ObservedComparison:
    """Compare monitoring data with the TSI-equivalence expectation from the same samples' TP.

    Parameters
    ----------
    tp_ug_l : array_like
        Observed total phosphorus [µg L⁻¹]; NaN marks a missing sample.
    secchi_m : array_like, optional
        Observed Secchi depth [m], same shape (or broadcastable); NaN = missing.
    chl_ug_l : array_like, optional
        Observed chlorophyll-a [µg L⁻¹]; NaN = missing.

    Returns
    -------
    ObservedComparison
        Residuals as observed/expected ratios and TSI deviations, with notes.
        Use summer samples: Carlson's index is built on summer values.

    Raises
    ------
    ValueError
        For zero, negative or infinite values (missing values must be NaN).
    """
    tp = as_positive("tp_ug_l", tp_ug_l, "[µg L⁻¹]", allow_missing=True)
    nan = np.full(tp.shape, np.nan)
    sd = as_positive("secchi_m", secchi_m, "[m]", allow_missing=True) if secchi_m is not None else nan
    chl = as_positive("chl_ug_l", chl_ug_l, "[µg L⁻¹]", allow_missing=True) if chl_ug_l is not None else nan
    try:
        tp, sd, chl = np.broadcast_arrays(tp, sd, chl)
    except ValueError:
        raise ValueError("tp_ug_l, secchi_m and chl_ug_l must have the same length") from None
    t_tp = _TP_B * np.log(tp) + _TP_A
    t_sd = _SD_A - _SD_B * np.log(sd)
    t_chl = _CHL_B * np.log(chl) + _CHL_A
    exp_sd = np.exp((_SD_A - t_tp) / _SD_B)
    exp_chl = np.exp((t_tp - _CHL_A) / _CHL_B)
    d_chl_tp = t_chl - t_tp
    d_sd_tp = t_sd - t_tp
    d_chl_sd = t_chl - t_sd

    notes: list[str] = []
    m_chl_tp = _median(d_chl_tp)
    m_chl_sd = _median(d_chl_sd)
    m_sd_tp = _median(d_sd_tp)
    if math.isfinite(m_chl_tp):
        if m_chl_tp < -AGREEMENT_TSI:
            notes.append(
                f"Less algae than the phosphorus would support (TSI(Chl) − TSI(TP) = {m_chl_tp:+.0f}): "
                "something other than phosphorus, such as nitrogen, light or zooplankton grazing, may be "
                "limiting the algae."
            )
        elif m_chl_tp > AGREEMENT_TSI:
            notes.append(
                f"More algae than expected from phosphorus (TSI(Chl) − TSI(TP) = {m_chl_tp:+.0f}): the algae "
                "appear limited by phosphorus and use it fully."
            )
        else:
            notes.append(f"Chlorophyll-a is about what the phosphorus leads one to expect ({m_chl_tp:+.0f} TSI).")
    if math.isfinite(m_chl_sd):
        if m_chl_sd < -AGREEMENT_TSI:
            notes.append(
                f"Water murkier than its algae explain (TSI(Chl) − TSI(SD) = {m_chl_sd:+.0f}): non-algal "
                "particles or colour, such as clay, silt or humic stain, reduce clarity."
            )
        elif m_chl_sd > AGREEMENT_TSI:
            notes.append(
                f"Water clearer than its algae suggest (TSI(Chl) − TSI(SD) = {m_chl_sd:+.0f}): large algal "
                "colonies or filaments may be scattering less light."
            )
    elif math.isfinite(m_sd_tp):
        if m_sd_tp > AGREEMENT_TSI:
            notes.append(f"Secchi depth shallower than expected from phosphorus (TSI(SD) − TSI(TP) = {m_sd_tp:+.0f}).")
        elif m_sd_tp < -AGREEMENT_TSI:
            notes.append(f"Secchi depth deeper than expected from phosphorus (TSI(SD) − TSI(TP) = {m_sd_tp:+.0f}).")
        else:
            notes.append(f"Secchi depth is about what the phosphorus leads one to expect ({m_sd_tp:+.0f} TSI).")

    return ObservedComparison(
        tsi_tp=t_tp,
        tsi_secchi=t_sd,
        tsi_chl=t_chl,
        expected_secchi_m=exp_sd,
        expected_chl_ug_l=exp_chl,
        secchi_ratio=sd / exp_sd,
        chl_ratio=chl / exp_chl,
        chl_minus_tp=d_chl_tp,
        secchi_minus_tp=d_sd_tp,
        chl_minus_secchi=d_chl_sd,
        notes=tuple(notes),
    )

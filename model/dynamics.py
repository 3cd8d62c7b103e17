r"""The annual phosphorus map, the one dynamic model of the product.

.. math:: P_{t+1} = P_t + L_t - s P_t + c_t\, r \frac{P_t^q}{m^q + P_t^q} - R_t + \varepsilon_t

with lake P ``P`` [kg], load ``L_t`` [kg yr⁻¹] in year ``t``, an optional
recycling multiplier ``c_t`` in [0, 1] (sediment P inactivation), an in-lake
removal ``R_t`` [kg] taken out at the start of year ``t`` and optional
process noise ``ε_t`` [kg].  Lake P is kept at or above zero.

This is the discrete-time form used in the stochastic analyses of the model
(Carpenter, Ludwig & Brock 1999, Ecological Applications 9:751–771).  Its
equilibria are those of the differential equation ``dP/dt = f(P, L)``, and
for ``s < 2`` yr⁻¹ so is their stability (``∂f/∂P >= -s`` everywhere).

Every function works on whole ensembles at once: arrays broadcast over
leading axes, time runs along the last.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import expit

from .params import LakeParameters, recycling_fraction

__all__ = ["Trajectory", "annual_step", "simulate"]

MAX_LOSS_RATE = 2.0


def annual_step(
    params: LakeParameters,
    p: ArrayLike,
    load: ArrayLike,
    recycling_scale: ArrayLike = 1.0,
) -> NDArray[np.float64]:
    """One year of the map: ``P + L - s P + c r h(P)``, kept >= 0 [kg]."""
    p_arr = np.asarray(p, dtype=float)
    nxt = p_arr + np.asarray(load, dtype=float) - params.s * p_arr
    nxt = nxt + np.asarray(recycling_scale, dtype=float) * params.r * recycling_fraction(p_arr, params.m, params.q)
    return np.maximum(nxt, 0.0)


@dataclass(frozen=True)
class Trajectory:
    """Lake P over time.

    ``p`` has one more entry along the last axis than ``load``: ``p[..., 0]``
    is the starting state and ``p[..., t+1]`` the state after year ``t``.
    """

    p: NDArray[np.float64]
    load: NDArray[np.float64]

    @property
    def final(self) -> NDArray[np.float64]:
        return self.p[..., -1]


def simulate(
    params: LakeParameters,
    p0: ArrayLike,
    loads: ArrayLike,
    *,
    recycling_scale: ArrayLike | None = None,
    removal: ArrayLike | None = None,
    process_noise: ArrayLike | None = None,
) -> Trajectory:
    """Run the annual map over the years in ``loads``.

    Parameters
    ----------
    params : LakeParameters
        ``loss_rate`` must be below 2 yr⁻¹ for the annual step to keep the
        stability of the differential equation.
    p0 : array_like
        Starting lake P [kg]; broadcasts against ``loads[..., 0]``.
    loads : array_like, shape (..., T)
        External load in each year [kg yr⁻¹].
    recycling_scale : array_like, shape (..., T), optional
        Multiplier on recycling per year (1 = untreated).
    removal : array_like, shape (..., T), optional
        In-lake P removed at the start of each year [kg].
    process_noise : array_like, shape (..., T), optional
        Additive disturbance at the end of each year [kg].

    Returns
    -------
    Trajectory
    """
    if params.s >= MAX_LOSS_RATE:
        raise ValueError(f"loss_rate must be below {MAX_LOSS_RATE:g} yr⁻¹ for the annual model; got {params.s:g}")
    load_arr = np.asarray(loads, dtype=float)
    if load_arr.ndim == 0:
        raise ValueError("loads must have a time axis (one value a year)")
    n_years = load_arr.shape[-1]
    p_start = np.broadcast_to(np.asarray(p0, dtype=float), load_arr.shape[:-1]).copy()
    shape = load_arr.shape
    scale = np.broadcast_to(np.asarray(1.0 if recycling_scale is None else recycling_scale, dtype=float), shape)
    rem = np.broadcast_to(np.asarray(0.0 if removal is None else removal, dtype=float), shape)
    noise = np.broadcast_to(np.asarray(0.0 if process_noise is None else process_noise, dtype=float), shape)
    out = np.empty((*shape[:-1], n_years + 1))
    out[..., 0] = p_start
    p = p_start
    s, r, m, q = params.s, params.r, params.m, params.q
    log_m = np.log(m)
    for t in range(n_years):
        p = np.maximum(p - rem[..., t], 0.0)
        with np.errstate(divide="ignore"):
            z = q * (np.log(p) - log_m)
        h = np.where(p > 0.0, expit(z), 0.0)
        p = np.maximum(p + load_arr[..., t] - s * p + scale[..., t] * r * h + noise[..., t], 0.0)
        out[..., t + 1] = p
    return Trajectory(p=out, load=load_arr)

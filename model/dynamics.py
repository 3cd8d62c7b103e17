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

The two-pool lake (:mod:`turnback.model.two_pool`, Carpenter 2005) runs
through the same function with water P ``P`` and sediment P ``M`` [kg]:

.. math::

    P_{t+1} = P_t + L_t - (s + h) P_t + c_t\, r M_t g(P_t) + \varepsilon_t, \qquad
    M_{t+1} = M_t + s P_t - b M_t - c_t\, r M_t g(P_t)

after the removals at the start of year ``t`` (from the water by default,
from the sediment for dredging); both pools are kept at or above zero.
Inactivation scales the recycling term ``r M g(P)``.  The yearly fractions
must fit in a year: ``s + h <= 1`` and ``b + r <= 1``
(:func:`turnback.model.two_pool.map_limits_message`).

Every function works on whole ensembles at once: arrays broadcast over
leading axes, time runs along the last.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .parameter_draws import ParameterDraws
from .params import LakeParameters, recycling_fraction
from .two_pool import TwoPoolParameters, map_limits_message

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
    ``m`` is the sediment P [kg] of a two-pool lake, on the same axes
    (None for the one-box lake).
    """

    p: NDArray[np.float64]
    load: NDArray[np.float64]
    m: NDArray[np.float64] | None = None

    @property
    def final(self) -> NDArray[np.float64]:
        return self.p[..., -1]


def simulate(
    params: LakeParameters | TwoPoolParameters | ParameterDraws,
    p0: ArrayLike,
    loads: ArrayLike,
    *,
    recycling_scale: ArrayLike | None = None,
    removal: ArrayLike | None = None,
    process_noise: ArrayLike | None = None,
    m0: ArrayLike | None = None,
    sediment_removal: ArrayLike | None = None,
) -> Trajectory:
    """Run the annual map over the years in ``loads``.

    Parameters
    ----------
    params : LakeParameters or TwoPoolParameters or ParameterDraws
        One-box: ``loss_rate`` must be below 2 yr⁻¹ for the annual step to
        keep the stability of the differential equation.  Two-pool:
        ``s + h <= 1`` and ``b + r <= 1`` [yr⁻¹].  A
        :class:`~turnback.model.parameter_draws.ParameterDraws` gives each
        path of a one-dimensional batch its own one-box lake (one set per
        path: ``loads`` of shape (n, T) for ``n`` sets).
    p0 : array_like
        Starting lake (water) P [kg]; broadcasts against ``loads[..., 0]``.
    loads : array_like, shape (..., T)
        External load in each year [kg yr⁻¹].
    recycling_scale : array_like, shape (..., T), optional
        Multiplier on recycling per year (1 = untreated).
    removal : array_like, shape (..., T), optional
        In-lake P removed at the start of each year [kg].
    process_noise : array_like, shape (..., T), optional
        Additive disturbance at the end of each year [kg].
    m0 : array_like, optional
        Two-pool lake only: starting sediment P [kg]; by default the balance
        ``M*(P0) = s P0 / (b + r g(P0))``.
    sediment_removal : array_like, shape (..., T), optional
        Two-pool lake only: sediment P dredged at the start of each year [kg].

    Returns
    -------
    Trajectory
    """
    if isinstance(params, TwoPoolParameters):
        return _simulate_two_pool(params, p0, loads, recycling_scale, removal, process_noise, m0, sediment_removal)
    if m0 is not None or sediment_removal is not None:
        raise ValueError("m0 and sediment_removal belong to the two-pool lake; this lake is one-box")
    if isinstance(params, ParameterDraws):
        return _simulate_draws(params, p0, loads, recycling_scale, removal, process_noise)
    if params.s >= MAX_LOSS_RATE:
        raise ValueError(f"loss_rate must be below {MAX_LOSS_RATE:g} yr⁻¹ for the annual model; got {params.s:g}")
    load_arr = np.asarray(loads, dtype=float)
    if load_arr.ndim == 0:
        raise ValueError("loads must have a time axis (one value a year)")
    n_years = load_arr.shape[-1]
    shape = load_arr.shape
    batch = shape[:-1]

    def per_year(a: ArrayLike | None) -> NDArray[np.float64] | None:
        if a is None:
            return None
        return np.broadcast_to(np.asarray(a, dtype=float), shape)

    scale, rem, noise = per_year(recycling_scale), per_year(removal), per_year(process_noise)
    # year-major storage: each year's slice of every array is contiguous
    out_t = np.empty((n_years + 1, *batch))
    out = np.moveaxis(out_t, 0, -1)
    out_t[0] = np.broadcast_to(np.asarray(p0, dtype=float), batch)
    loads_t = np.ascontiguousarray(np.moveaxis(load_arr, -1, 0))
    scale_t = None if scale is None else np.moveaxis(scale, -1, 0)
    rem_t = None if rem is None else np.moveaxis(rem, -1, 0)
    noise_t = None if noise is None else np.moveaxis(noise, -1, 0)
    s, r, m, q = params.s, params.r, params.m, params.q
    hill = _hill_function(m, q)
    p = np.array(out_t[0], dtype=float)
    keep = 1.0 - s
    for t in range(n_years):
        if rem_t is not None:
            np.maximum(p - rem_t[t], 0.0, out=p)
        h = hill(p)
        if scale_t is not None:
            h *= scale_t[t]
        nxt = p * keep
        nxt += loads_t[t]
        nxt += r * h
        if noise_t is not None:
            nxt += noise_t[t]
        np.maximum(nxt, 0.0, out=p)
        out_t[t + 1] = p
    return Trajectory(p=out, load=load_arr)


def _simulate_draws(
    draws: ParameterDraws,
    p0: ArrayLike,
    loads: ArrayLike,
    recycling_scale: ArrayLike | None,
    removal: ArrayLike | None,
    process_noise: ArrayLike | None,
) -> Trajectory:
    """The one-box map with one parameter set per path (loads (n, T)); same storage and rules as :func:`simulate`."""
    load_arr = np.asarray(loads, dtype=float)
    if load_arr.ndim != 2 or load_arr.shape[0] != draws.n:
        raise ValueError(f"with {draws.n} parameter sets the loads must have shape ({draws.n}, years)")
    n, n_years = load_arr.shape

    def per_year(a: ArrayLike | None) -> NDArray[np.float64] | None:
        if a is None:
            return None
        return np.moveaxis(np.broadcast_to(np.asarray(a, dtype=float), (n, n_years)), -1, 0)

    scale_t, rem_t, noise_t = per_year(recycling_scale), per_year(removal), per_year(process_noise)
    out_t = np.empty((n_years + 1, n))
    p = np.array(np.broadcast_to(np.asarray(p0, dtype=float), (n,)), dtype=float)
    out_t[0] = p
    loads_t = np.ascontiguousarray(load_arr.T)
    keep, r, m, q = 1.0 - draws.s, draws.r, draws.m, draws.q
    cap = 10.0 ** (300.0 / q)
    for t in range(n_years):
        if rem_t is not None:
            np.maximum(p - rem_t[t], 0.0, out=p)
        y = np.power(np.minimum(p / m, cap), q)
        h = y / (1.0 + y)
        if scale_t is not None:
            h *= scale_t[t]
        nxt = p * keep + loads_t[t] + r * h
        if noise_t is not None:
            nxt += noise_t[t]
        np.maximum(nxt, 0.0, out=p)
        out_t[t + 1] = p
    return Trajectory(p=out_t.T, load=load_arr)


def _simulate_two_pool(
    params: TwoPoolParameters,
    p0: ArrayLike,
    loads: ArrayLike,
    recycling_scale: ArrayLike | None,
    removal: ArrayLike | None,
    process_noise: ArrayLike | None,
    m0: ArrayLike | None,
    sediment_removal: ArrayLike | None,
) -> Trajectory:
    """The two-pool branch of :func:`simulate` (module docstring); same storage and broadcasting."""
    msg = map_limits_message(params)
    if msg is not None:
        raise ValueError(msg)
    load_arr = np.asarray(loads, dtype=float)
    if load_arr.ndim == 0:
        raise ValueError("loads must have a time axis (one value a year)")
    n_years = load_arr.shape[-1]
    shape = load_arr.shape
    batch = shape[:-1]

    def per_year(a: ArrayLike | None) -> NDArray[np.float64] | None:
        if a is None:
            return None
        return np.moveaxis(np.broadcast_to(np.asarray(a, dtype=float), shape), -1, 0)

    scale_t, rem_t, noise_t, dredge_t = (
        per_year(recycling_scale),
        per_year(removal),
        per_year(process_noise),
        per_year(sediment_removal),
    )
    p_out_t = np.empty((n_years + 1, *batch))
    m_out_t = np.empty((n_years + 1, *batch))
    p = np.array(np.broadcast_to(np.asarray(p0, dtype=float), batch), dtype=float)
    if m0 is None:
        msed = np.array(np.broadcast_to(params.sediment_balance(p), batch), dtype=float)
    else:
        msed = np.array(np.broadcast_to(np.asarray(m0, dtype=float), batch), dtype=float)
    np.maximum(p, 0.0, out=p)
    np.maximum(msed, 0.0, out=msed)
    p_out_t[0] = p
    m_out_t[0] = msed
    loads_t = np.ascontiguousarray(np.moveaxis(load_arr, -1, 0))
    s, r, b = params.s, params.r, params.b
    hill = _hill_function(params.m, params.q)
    keep_p, keep_m = 1.0 - s - params.h, 1.0 - b
    for t in range(n_years):
        if rem_t is not None:
            np.maximum(p - rem_t[t], 0.0, out=p)
        if dredge_t is not None:
            np.maximum(msed - dredge_t[t], 0.0, out=msed)
        flux = hill(p)
        if scale_t is not None:
            flux *= scale_t[t]
        flux *= msed
        flux *= r
        nxt_m = msed * keep_m
        nxt_m += s * p
        nxt_m -= flux
        nxt_p = p * keep_p
        nxt_p += loads_t[t]
        nxt_p += flux
        if noise_t is not None:
            nxt_p += noise_t[t]
        np.maximum(nxt_p, 0.0, out=p)
        np.maximum(nxt_m, 0.0, out=msed)
        p_out_t[t + 1] = p
        m_out_t[t + 1] = msed
    return Trajectory(p=np.moveaxis(p_out_t, 0, -1), load=load_arr, m=np.moveaxis(m_out_t, 0, -1))


def _hill_function(m: float, q: float) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
    """``P^q/(m^q + P^q)`` as ``y/(1 + y)`` with ``y = (P/m)^q``, accurate in both tails.

    ``P/m`` is capped so that ``y`` stays finite (``h`` is 1 to machine
    precision there); whole-number ``q`` up to 16 uses repeated squaring.
    """
    cap = 10.0 ** (300.0 / q)
    whole = float(q).is_integer() and 1 <= q <= 16
    n = int(q)

    def hill(p: NDArray[np.float64]) -> NDArray[np.float64]:
        x = np.minimum(p / m, cap)
        if whole:
            y = np.ones_like(x)
            base = x.copy()
            k = n
            while k:
                if k & 1:
                    y *= base
                k >>= 1
                if k:
                    base *= base
        else:
            y = np.power(x, q)
        return y / (1.0 + y)

    return hill

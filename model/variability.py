r"""Year-to-year load variability and process noise of an ensemble.

Load variability
    Year-to-year lognormal variability with coefficient of variation ``cv``,
    mean-preserving: ``μ_t = exp(σ ε_t − σ²/2)`` with ``σ² = ln(1 + cv²)``
    and ``ε_t`` independent standard normal, so ``E[μ_t] = 1`` and
    ``sd[μ_t] = cv``; the load of year ``t`` is ``L_t μ_t``.

Process noise
    Optional additive Gaussian disturbance on lake P at the end of each year,
    ``σ_P η_t`` with ``η_t`` standard normal and ``σ_P`` =
    ``process_noise_sd_kg`` [kg]; lake P is then kept at or above zero by the
    annual map.

Each member draws its standard normals as an array of shape (sources, T):
the load's first, then the noise's, so results do not depend on how an
ensemble is chunked, and the precautionary-load search can reuse one set of
draws for every trial load (common random numbers).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

__all__ = ["lognormal_sigma", "n_sources", "varied"]


def lognormal_sigma(cv: float) -> float:
    """Log-scale sd ``σ = sqrt(ln(1 + cv²))`` of a lognormal with coefficient of variation ``cv`` [–]."""
    return math.sqrt(math.log1p(cv * cv))


def n_sources(cv: float, sd: float) -> int:
    """How many random sources a member needs: load variability and/or process noise."""
    return int(cv > 0.0) + int(sd > 0.0)


def varied(
    loads: NDArray[np.float64], z: NDArray[np.float64], cv: float, sd: float
) -> tuple[NDArray[np.float64], NDArray[np.float64] | None]:
    """Loads [kg yr⁻¹] and process noise [kg] for standard normals ``z`` of shape (members, sources, T).

    ``L_t μ_t`` with ``μ_t = exp(σ ε_t − σ²/2)``, ``σ² = ln(1 + cv²)``; noise ``sd η_t``.
    """
    if cv > 0.0:
        sigma = lognormal_sigma(cv)
        out = loads * np.exp(sigma * z[:, 0, :] - 0.5 * sigma * sigma)
    else:
        out = np.broadcast_to(loads, (z.shape[0], loads.shape[-1]))
    noise = sd * z[:, -1, :] if sd > 0.0 else None
    return out, noise

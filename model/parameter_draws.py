r"""Parameter sets of a one-box lake that the record leaves possible: plans under parameter uncertainty.

A fit does not pin the lake down; its bootstrap refits or posterior draws
(``turnback fit --json``, ``parameter_draws``) are the lakes the record
leaves possible.  A plan's lake may carry them: member ``i`` of every
scenario then runs lake ``i mod n``, so the ensemble integrates over the
year-to-year variability and over what the record leaves unknown
(Carpenter, Ludwig & Brock 1999 weigh policies under such uncertainty).

Each member is judged by its own lake: its clear state is below its own
lake's unstable separatrix (or tipping fold), and it starts from its own
clear equilibrium in the precautionary-load search.  A drawn lake without
folds has no separatrix; its members are judged by the plan's lake (the
nominal parameters) instead.

The per-draw quantities are computed for all draws at once: the folds by
:func:`turnback.model.equilibrium.folds`, the separatrix and the clear
equilibrium by bisection on the brackets the folds give (the middle
branch lies between the two folds' lake P and rises there; the clear branch
lies below the tipping fold's lake P and falls there).

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import expit

from .equilibrium import folds
from .params import LakeParameters
from .validation import FieldError, known_keys, mapping, within

__all__ = ["DRAW_KEYS", "MAX_DRAWS", "DrawFolds", "ParameterDraws"]

#: Most parameter sets a plan's lake may carry.
MAX_DRAWS = 10_000
DRAW_KEYS = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
_MAX_LOSS_RATE = 2.0  # the annual map's limit (model.dynamics.MAX_LOSS_RATE)
_BISECT = 80


@dataclass(frozen=True, eq=False)
class DrawFolds:
    """Folds of each draw: loads [kg yr⁻¹] and lake P [kg]; ``nan`` where a draw has none."""

    tipping: NDArray[np.float64]
    recovery: NDArray[np.float64]
    tipping_p: NDArray[np.float64]
    recovery_p: NDArray[np.float64]

    @property
    def has(self) -> NDArray[np.bool_]:
        out: NDArray[np.bool_] = np.isfinite(self.tipping)
        return out


@dataclass(frozen=True, eq=False)
class ParameterDraws:
    """``n`` one-box parameter sets, as arrays (each entry a valid :class:`LakeParameters` with ``s < 2``).

    Attributes
    ----------
    s, r, m, q : ndarray, shape (n,)
        Loss rate [yr⁻¹], maximum recycling [kg yr⁻¹], half-saturation [kg], exponent [–].
    """

    s: NDArray[np.float64]
    r: NDArray[np.float64]
    m: NDArray[np.float64]
    q: NDArray[np.float64]

    def __post_init__(self) -> None:
        arrs = [np.asarray(getattr(self, k), dtype=float) for k in ("s", "r", "m", "q")]
        n = arrs[0].size
        if n == 0 or any(a.shape != (n,) for a in arrs):
            raise FieldError(("parameter_draws",), "must be a non-empty list of parameter sets")
        if n > MAX_DRAWS:
            raise FieldError(("parameter_draws",), f"must hold at most {MAX_DRAWS:,} parameter sets; got {n:,}")
        if not all(np.all(np.isfinite(a) & (a > 0.0)) for a in arrs):
            raise FieldError(("parameter_draws",), "must hold finite numbers greater than 0")
        if np.any(arrs[0] >= _MAX_LOSS_RATE):
            i = int(np.argmax(arrs[0] >= _MAX_LOSS_RATE))
            raise FieldError(("parameter_draws", i, "loss_rate"), f"must be below {_MAX_LOSS_RATE:g} [yr⁻¹]")
        for k, a in zip(("s", "r", "m", "q"), arrs, strict=True):
            a = a.copy()
            a.setflags(write=False)
            object.__setattr__(self, k, a)

    @property
    def n(self) -> int:
        return int(self.s.size)

    @classmethod
    def from_params(cls, params: Sequence[LakeParameters]) -> ParameterDraws:
        return cls(
            np.array([p.s for p in params]),
            np.array([p.r for p in params]),
            np.array([p.m for p in params]),
            np.array([p.q for p in params]),
        )

    @classmethod
    def from_rows(cls, rows: ArrayLike) -> ParameterDraws:
        """From an array of rows ``(s, r, m, q)``."""
        a = np.asarray(rows, dtype=float)
        if a.ndim != 2 or a.shape[1] != 4:
            raise FieldError(("parameter_draws",), "must be rows of loss_rate, recycling_max, recycling_half, exponent")
        return cls(a[:, 0], a[:, 1], a[:, 2], a[:, 3])

    def row(self, i: int) -> LakeParameters:
        return LakeParameters(
            loss_rate=float(self.s[i]),
            recycling_max=float(self.r[i]),
            recycling_half=float(self.m[i]),
            recycling_exponent=float(self.q[i]),
        )

    def member_draw(self, start: int, stop: int) -> NDArray[np.int64]:
        """The draw of members ``start … stop-1``: ``i mod n``."""
        out: NDArray[np.int64] = np.arange(start, stop, dtype=np.int64) % self.n
        return out

    def take(self, index: ArrayLike) -> ParameterDraws:
        """The draws at ``index`` (repeats allowed): per-member parameters for a simulation."""
        i = np.asarray(index, dtype=np.int64)
        return ParameterDraws(self.s[i], self.r[i], self.m[i], self.q[i])

    def to_list(self) -> list[dict[str, float]]:
        return [
            dict(zip(DRAW_KEYS, (float(a), float(b), float(c), float(d)), strict=True))
            for a, b, c, d in zip(self.s, self.r, self.m, self.q, strict=True)
        ]

    @classmethod
    def from_list(cls, data: object) -> ParameterDraws:
        """From ``[{"loss_rate", "recycling_max", "recycling_half", "recycling_exponent"}, ...]``.

        Every entry is checked as :class:`LakeParameters` and named in a
        message (``parameter_draws[3].recycling_half must be …``).
        """
        if not isinstance(data, list) or not data:
            raise FieldError(
                ("parameter_draws",),
                "must be a non-empty list of objects with loss_rate, recycling_max, recycling_half, "
                "recycling_exponent (for example the parameter_draws of turnback fit --json)",
            )
        if len(data) > MAX_DRAWS:
            raise FieldError(("parameter_draws",), f"must hold at most {MAX_DRAWS:,} parameter sets; got {len(data):,}")
        rows = []
        for i, d in enumerate(data):
            with within("parameter_draws", i):
                m = mapping(d, (), "a parameter set with loss_rate, recycling_max, recycling_half, recycling_exponent")
                known_keys(m, (), DRAW_KEYS)
                p = LakeParameters(**{k: m[k] for k in DRAW_KEYS})
                if p.s >= _MAX_LOSS_RATE:
                    raise FieldError(("loss_rate",), f"must be below {_MAX_LOSS_RATE:g} [yr⁻¹]; got {p.s:g}")
                rows.append((p.s, p.r, p.m, p.q))
        return cls.from_rows(rows)

    # lake states of every draw ------------------------------------------
    def folds(self) -> DrawFolds:
        """The folds of every draw (:func:`turnback.model.equilibrium.folds`)."""
        n = self.n
        tip, rec, tip_p, rec_p = (np.full(n, np.nan) for _ in range(4))
        for i in range(n):
            fs = folds(self.row(i))
            if fs:
                tip[i], rec[i], tip_p[i], rec_p[i] = fs[0].load, fs[1].load, fs[0].p, fs[1].p
        return DrawFolds(tip, rec, tip_p, rec_p)

    def _f(self, p: NDArray[np.float64], load: NDArray[np.float64]) -> NDArray[np.float64]:
        """``f = L - s P + r P^q/(m^q + P^q)`` [kg yr⁻¹] for P of shape (n, k) and loads (k,)."""
        with np.errstate(divide="ignore"):
            h = np.where(
                p > 0.0, expit(self.q[:, None] * (np.log(np.maximum(p, 1e-300)) - np.log(self.m[:, None]))), 0.0
            )
        out: NDArray[np.float64] = load - self.s[:, None] * p + self.r[:, None] * h
        return out

    def _bisect(
        self, lo: NDArray[np.float64], hi: NDArray[np.float64], load: NDArray[np.float64], rising: bool
    ) -> NDArray[np.float64]:
        """The root of ``f`` in each bracket [lo, hi] (n, k), where ``f`` rises (or falls) through zero."""
        lo, hi = lo.copy(), hi.copy()
        for _ in range(_BISECT):
            mid = 0.5 * (lo + hi)
            above = self._f(mid, load) > 0.0
            go_down = above if rising else ~above
            hi = np.where(go_down, mid, hi)
            lo = np.where(go_down, lo, mid)
        out: NDArray[np.float64] = 0.5 * (lo + hi)
        return out

    def separatrix_kg(self, loads: ArrayLike, fd: DrawFolds | None = None) -> NDArray[np.float64]:
        """Unstable separatrix [kg] of each draw at each load, held at the fold P beyond the folds; (n, k).

        ``nan`` for a draw without folds (the caller decides its threshold).
        """
        fd = fd or self.folds()
        lv = np.atleast_1d(np.asarray(loads, dtype=float))
        shape = (self.n, lv.size)
        tip_p = np.broadcast_to(fd.tipping_p[:, None], shape)
        rec_p = np.broadcast_to(fd.recovery_p[:, None], shape)
        has = fd.has[:, None]
        lo = np.where(has, tip_p, 1.0)
        hi = np.where(has, rec_p, 2.0)
        root = self._bisect(lo, hi, lv, rising=True)
        out = np.where(lv >= fd.tipping[:, None], tip_p, np.where(lv <= fd.recovery[:, None], rec_p, root))
        result: NDArray[np.float64] = np.where(has, out, np.nan)
        return result

    def clear_equilibrium_kg(self, loads: ArrayLike, fd: DrawFolds | None = None) -> NDArray[np.float64]:
        """The clear (lowest stable) equilibrium [kg] of each draw at each load; (n, k).

        ``nan`` where the load is at or above the draw's tipping load (no clear state).
        """
        fd = fd or self.folds()
        lv = np.atleast_1d(np.asarray(loads, dtype=float))
        shape = (self.n, lv.size)
        has = fd.has[:, None]
        top = np.where(has, np.broadcast_to(fd.tipping_p[:, None], shape), (lv + self.r[:, None]) / self.s[:, None])
        top = np.maximum(top, 1e-300)
        root = self._bisect(np.zeros(shape), top, lv, rising=False)
        gone = has & (lv >= fd.tipping[:, None])
        result: NDArray[np.float64] = np.where(gone, np.nan, np.where(lv <= 0.0, 0.0, root))
        return result

    def to_json_ready(self) -> list[dict[str, Any]]:
        return self.to_list()

r"""Screening a region's lakes: one lake in, one small result out.

Each lake of a region is screened on its own, with the engine the rest of
the product uses:

* a lake **with parameters** ``(s, r, m, q)`` is analysed only: its folds
  (:func:`turnback.model.equilibrium.folds`), solved to machine precision
  from ``a'(x) = 0`` in the dimensionless form of Carpenter, Ludwig & Brock
  (1999), give the tipping load (end of the clear-water branch) and the
  recovery load (end of the turbid branch) [kg yr⁻¹], and the regime rule
  (:func:`turnback.model.equilibrium.regime_from_folds`) gives reversible,
  hysteretic or irreversible;
* a lake **without parameters** is fitted to its annual monitoring record
  (:func:`turnback.model.fit.fit_monitoring`: conditional least squares of
  the annual map on ``ln P`` under lognormal process error, with a residual
  bootstrap), exactly as ``turnback fit`` fits one lake with the same seed
  and number of replicates.  The bootstrap shares give ``p_irreversible``
  and ``p_hysteretic``; a threshold the record does not constrain is
  ``None``, with the fit's warning.

The margin is ``L_tip - L`` [kg yr⁻¹], the tipping load less today's load
(negative: today's load is already past the tipping load).  The state is
read from the last observed year of the record: lake P ``P = TP · V / 10⁶``
[kg] is placed in the basin of attraction it lies in at today's load
(:func:`turnback.model.equilibrium.read_state`): ``clear`` below the
unstable separatrix, ``turbid`` above it, ``single`` where the lake has one
stable state at that load.

Everything here is pure: lakes come in as :class:`RegionLake` objects (read
from files by :mod:`turnback.model.io.region_csv`); running many lakes on a
Dask cluster is :mod:`turnback.model.distributed`, which this module never
imports.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from . import units
from .bootstrap import DEFAULT_REPLICATES, Scheme
from .equilibrium import Regime, folds, regime_from_folds
from .fit import fit_monitoring
from .management import read_state
from .params import LakeParameters
from .progress import Cancel, Progress, check_cancel, report
from .record import MonitoringSeries
from .validation import FieldError, number, text

__all__ = [
    "ANALYSIS_SECONDS",
    "FITTED_CHUNK",
    "MAX_ANALYSIS_CHUNK",
    "MIN_ANALYSIS_CHUNK",
    "REPLICATE_SECONDS",
    "RESULT_KEYS",
    "RegionLake",
    "ScreenFailure",
    "ScreenResult",
    "State",
    "estimated_seconds",
    "plan_chunks",
    "screen_chunk",
    "screen_lake",
    "screen_many",
]

State = Literal["clear", "turbid", "single"]

#: The keys of one screened lake in ``turnback screen --json`` (and the columns of its CSV), in order.
RESULT_KEYS = (
    "lake_id",
    "regime",
    "tipping_load",
    "recovery_load",
    "margin_kg_yr",
    "state",
    "p_irreversible",
    "p_hysteretic",
    "warnings",
)

#: Fewest analysis-only lakes in one task: about 60 µs each, so a task takes over 10 ms, ten times
#: the scheduler's cost per task (about 1 ms).
MIN_ANALYSIS_CHUNK = 200
#: Most analysis-only lakes in one task.
MAX_ANALYSIS_CHUNK = 1000
#: Fitted lakes in one task (each is a fit and a bootstrap, 0.1 s or more).
FITTED_CHUNK = 1
#: Tasks per worker aimed at for analysis-only lakes, so the workers finish together.
_TASKS_PER_WORKER = 4
#: Rough single-core cost of one analysis-only lake [s] (folds and the state: tens of µs).
ANALYSIS_SECONDS = 1e-4
#: Rough single-core cost of one bootstrap replicate of a fitted lake [s] (a 1000-replicate fit takes about 0.7 s).
REPLICATE_SECONDS = 1e-3


@dataclass(frozen=True, eq=False)
class RegionLake:
    """One lake of a region, as read from a region's lake table.

    Parameters
    ----------
    lake_id : str
        Unique identifier (printable text, at most 120 characters).
    volume_m3 : float
        Lake volume [m³], > 0.
    load_kg_per_yr : float
        Today's external total phosphorus load [kg yr⁻¹], >= 0 (the file
        key is ``load_kg_yr``).
    name : str, optional
        Display name.
    area_km2 : float, optional
        Surface area [km²], > 0.
    params : LakeParameters, optional
        Model parameters; without them the lake is fitted to ``record``.
    record : MonitoringSeries, optional
        The lake's annual monitoring record: fitted when there are no
        parameters, and its last year gives the state.
    notes : tuple of str
        Things the reader wants said about this lake (passed on as warnings).

    Raises
    ------
    FieldError
        For an empty or over-long id, a volume that is not > 0, a negative
        load or an area that is not > 0; the path names the file key.
    """

    lake_id: str
    volume_m3: float
    load_kg_per_yr: float
    name: str | None = None
    area_km2: float | None = None
    params: LakeParameters | None = None
    record: MonitoringSeries | None = None
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        object.__setattr__(self, "lake_id", text(self.lake_id, ("lake_id",)))
        object.__setattr__(self, "volume_m3", number(self.volume_m3, ("volume_m3",), lo=0.0, lo_open=True, unit="[m³]"))
        object.__setattr__(
            self, "load_kg_per_yr", number(self.load_kg_per_yr, ("load_kg_yr",), lo=0.0, unit="[kg yr⁻¹]")
        )
        if self.name is not None:
            object.__setattr__(self, "name", text(self.name, ("name",), allow_empty=True) or None)
        if self.area_km2 is not None:
            object.__setattr__(
                self, "area_km2", number(self.area_km2, ("area_km2",), lo=0.0, lo_open=True, unit="[km²]")
            )
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def fitted(self) -> bool:
        """True when the lake has no parameters and is fitted to its record."""
        return self.params is None


@dataclass(frozen=True)
class ScreenResult:
    """What screening says about one lake.

    Attributes
    ----------
    lake_id : str
    regime : {"reversible", "hysteretic", "irreversible"}
        From the folds of the given parameters, or of the point fit.
    tipping_load, recovery_load : float or None
        Fold loads [kg yr⁻¹]; ``None`` for a lake without folds, and for a
        fitted lake whose record does not constrain the threshold.
    margin_kg_yr : float or None
        ``tipping_load - load`` [kg yr⁻¹]; ``None`` when the tipping load is.
    state : {"clear", "turbid", "single"} or None
        Basin of the last observed year at today's load; ``None`` without a
        record.
    p_irreversible, p_hysteretic : float or None
        Bootstrap shares of the fitted lake's regimes [–]; ``None`` for a lake
        given with parameters.
    warnings : tuple of str
        Plain-words caveats.
    params : LakeParameters
        The parameters used (given or fitted), for the regime plane
        ``b = s m / r`` against ``L / r``.
    load_kg_per_yr : float
        Today's load [kg yr⁻¹].
    fitted : bool
        Whether the parameters were fitted.
    status : {"ok", "warning"}
    message : str
        One-line summary.
    """

    lake_id: str
    regime: Regime
    tipping_load: float | None
    recovery_load: float | None
    margin_kg_yr: float | None
    state: State | None
    p_irreversible: float | None
    p_hysteretic: float | None
    warnings: tuple[str, ...]
    params: LakeParameters
    load_kg_per_yr: float
    fitted: bool
    status: Literal["ok", "warning"] = "ok"
    message: str = ""

    def to_dict(self) -> dict[str, Any]:
        """One lake of ``turnback screen --json``: the keys of :data:`RESULT_KEYS`."""
        return {
            "lake_id": self.lake_id,
            "regime": self.regime,
            "tipping_load": self.tipping_load,
            "recovery_load": self.recovery_load,
            "margin_kg_yr": self.margin_kg_yr,
            "state": self.state,
            "p_irreversible": self.p_irreversible,
            "p_hysteretic": self.p_hysteretic,
            "warnings": list(self.warnings),
        }


@dataclass(frozen=True)
class ScreenFailure:
    """A lake that could not be screened, and what to fix."""

    lake_id: str
    message: str
    status: Literal["failed"] = "failed"

    def to_dict(self) -> dict[str, str]:
        """One entry of ``failed`` in ``turnback screen --json``."""
        return {"lake_id": self.lake_id, "message": self.message}


def _state(params: LakeParameters, lake: RegionLake) -> State | None:
    """Basin of the last observed year's lake P at today's load, or None without a record."""
    if lake.record is None or lake.record.n_years == 0:
        return None
    p_last = float(units.p_kg(float(lake.record.tp_ug_l[-1]), lake.volume_m3))
    return read_state(params, lake.load_kg_per_yr, p_last).label


def _past_tipping(tipping: float | None, load: float) -> tuple[str, ...]:
    if tipping is not None and load > tipping:
        return (
            f"Today's load ({load:,.0f} kg/yr) is above the tipping load ({tipping:,.0f} kg/yr): "
            "no clear-water state exists at this load.",
        )
    return ()


def screen_lake(
    lake: RegionLake,
    *,
    replicates: int = DEFAULT_REPLICATES,
    rng: int | None = 1,
    scheme: Scheme = "recursive",
    level: float = 0.9,
) -> ScreenResult:
    """Screen one lake: regime, thresholds, margin, state and (when fitted) regime shares.

    Parameters
    ----------
    lake : RegionLake
    replicates : int
        Bootstrap replicates of a fitted lake (at least 100).
    rng : int or None
        Seed of a fitted lake's fit and bootstrap, used afresh for every lake
        so that a lake's result depends neither on the other lakes nor on
        their order, and equals ``turnback fit --seed`` on its record.
    scheme : {"recursive", "fixed"}
        Bootstrap scheme (:func:`turnback.model.fit.fit_monitoring`).
    level : float
        Coverage of the bootstrap bands in (0.5, 1).

    Returns
    -------
    ScreenResult

    Raises
    ------
    ValueError
        When the lake has neither parameters nor a record, or its record
        cannot be fitted; the message says what to fix.
    """
    load = lake.load_kg_per_yr
    if lake.params is not None:
        params = lake.params
        fs = folds(params)
        tipping = fs[0].load if fs else None
        recovery = fs[1].load if fs else None
        p_irr: float | None = None
        p_hys: float | None = None
        regime = regime_from_folds(fs)
        extra: tuple[str, ...] = ()
    else:
        if lake.record is None:
            raise FieldError(
                ("records",),
                "are needed: the lake has no model parameters; give loss_rate, recycling_max, recycling_half "
                "and recycling_exponent in the lake table, or its annual rows in the records file",
            )
        fit = fit_monitoring(lake.record, lake.volume_m3, replicates=replicates, rng=rng, scheme=scheme, level=level)
        params = fit.params
        tipping = fit.tipping_load.estimate
        recovery = fit.recovery_load.estimate
        p_irr = fit.regime_probability.irreversible
        p_hys = fit.regime_probability.hysteretic
        regime = fit.regime
        extra = fit.warnings
    margin = tipping - load if tipping is not None else None
    warnings = (*lake.notes, *extra, *_past_tipping(tipping, load))
    state = _state(params, lake)
    how = "fitted" if lake.params is None else "given parameters"
    margin_text = "no tipping load" if margin is None else f"margin {margin:+,.0f} kg/yr to the tipping load"
    return ScreenResult(
        lake_id=lake.lake_id,
        regime=regime,
        tipping_load=tipping,
        recovery_load=recovery,
        margin_kg_yr=margin,
        state=state,
        p_irreversible=p_irr,
        p_hysteretic=p_hys,
        warnings=warnings,
        params=params,
        load_kg_per_yr=load,
        fitted=lake.params is None,
        status="warning" if warnings else "ok",
        message=f"{regime} lake ({how}); {margin_text}",
    )


def screen_many(
    lakes: Sequence[RegionLake],
    *,
    replicates: int = DEFAULT_REPLICATES,
    rng: int | None = 1,
    scheme: Scheme = "recursive",
    level: float = 0.9,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> list[ScreenResult | ScreenFailure]:
    """Screen lakes one after another, in order; a lake that fails becomes a :class:`ScreenFailure`.

    A bad lake never stops the batch: a ``ValueError`` (bad input) or an
    arithmetic error becomes a failure with its message; any other error
    becomes a failure that says it is an internal error.  ``progress`` is
    called after each lake; ``cancel()`` is asked before each and raises
    :class:`~turnback.model.progress.RunCancelled` when it returns True.
    Other arguments as :func:`screen_lake`.
    """
    out: list[ScreenResult | ScreenFailure] = []
    n = len(lakes)
    for i, lake in enumerate(lakes):
        check_cancel(cancel)
        try:
            out.append(screen_lake(lake, replicates=replicates, rng=rng, scheme=scheme, level=level))
        except (ValueError, ArithmeticError) as exc:
            out.append(ScreenFailure(lake.lake_id, str(exc) or type(exc).__name__))
        except Exception as exc:  # never let one lake stop the batch
            out.append(
                ScreenFailure(lake.lake_id, f"internal error while screening this lake ({type(exc).__name__}: {exc})")
            )
        report(progress, (i + 1) / n, f"{i + 1} of {n} lakes screened")
    return out


def screen_chunk(
    lakes: Sequence[RegionLake], replicates: int, rng: int | None, scheme: Scheme = "recursive", level: float = 0.9
) -> list[ScreenResult | ScreenFailure]:
    """:func:`screen_many` with positional arguments: the task each Dask worker runs."""
    return screen_many(lakes, replicates=replicates, rng=rng, scheme=scheme, level=level)


def plan_chunks(lakes: Sequence[RegionLake], n_workers: int) -> list[tuple[int, ...]]:
    """Group lake indices into tasks, so that scheduling costs little next to the computing.

    Fitted lakes go :data:`FITTED_CHUNK` to a task (each is a fit and a
    bootstrap, 0.1 s and up).  Analysis-only lakes are cheap (tens of µs),
    so they go in runs of ``ceil(n / (4 n_workers))`` (about four tasks per
    worker, so the workers finish together), kept between
    :data:`MIN_ANALYSIS_CHUNK` and :data:`MAX_ANALYSIS_CHUNK`.  Fitted lakes come first (the longest tasks start
    first); within a kind, input order is kept.

    Returns
    -------
    list of tuple of int
        Indices into ``lakes``; every index appears exactly once.
    """
    if n_workers < 1:
        raise FieldError(("workers",), f"must be at least 1; got {n_workers}")
    fitted = [i for i, lake in enumerate(lakes) if lake.fitted]
    given = [i for i, lake in enumerate(lakes) if not lake.fitted]
    chunks = [tuple(fitted[k : k + FITTED_CHUNK]) for k in range(0, len(fitted), FITTED_CHUNK)]
    if given:
        size = math.ceil(len(given) / (_TASKS_PER_WORKER * n_workers))
        size = min(MAX_ANALYSIS_CHUNK, max(MIN_ANALYSIS_CHUNK, size))
        chunks += [tuple(given[k : k + size]) for k in range(0, len(given), size)]
    return chunks


def estimated_seconds(lakes: Sequence[RegionLake], replicates: int) -> float:
    """Rough single-core time [s] to screen ``lakes``: :data:`ANALYSIS_SECONDS` per lake with parameters,
    :data:`REPLICATE_SECONDS` per bootstrap replicate of a fitted lake.  Used to decide whether starting
    worker processes pays."""
    n_fitted = sum(lake.fitted for lake in lakes)
    return (len(lakes) - n_fitted) * ANALYSIS_SECONDS + n_fitted * replicates * REPLICATE_SECONDS

"""Published coefficient sets of trophic state and recreational caution, with their sources.

Each set is a frozen dataclass whose fields carry the published numbers; the
source of every field is named beside it.  :mod:`turnback.model.clarity`
computes with the instances defined here, so a number lives in one place.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "CARLSON_1977",
    "CARLSON_SIMPSON_1996",
    "OECD_1982",
    "WHO_2003",
    "CarlsonBands",
    "CarlsonIndex",
    "OecdBoundaries",
    "WhoLevels",
]


@dataclass(frozen=True)
class CarlsonIndex:
    """Carlson's (1977) trophic state index, ``TSI = a + b ln x`` (Secchi: ``a − b ln SD``).

    Source: Carlson, R. E. (1977). A trophic state index for lakes.
    Limnology and Oceanography 22(2), 361–369; the three equations of its
    index (SD [m], Chl [µg L⁻¹], TP [µg L⁻¹]).
    """

    secchi_a: float = 60.0  # Carlson (1977): TSI(SD) = 60 − 14.41 ln SD
    secchi_b: float = 14.41  # Carlson (1977)
    chl_a: float = 30.6  # Carlson (1977): TSI(Chl) = 9.81 ln Chl + 30.6
    chl_b: float = 9.81  # Carlson (1977)
    tp_a: float = 4.15  # Carlson (1977): TSI(TP) = 14.42 ln TP + 4.15
    tp_b: float = 14.42  # Carlson (1977)


@dataclass(frozen=True)
class CarlsonBands:
    """Trophic-state bands on the TSI scale; an edge value goes to the higher band.

    Source: Carlson, R. E. & Simpson, J. (1996). A coordinator's guide to
    volunteer lake monitoring methods. North American Lake Management
    Society (cut points checked against secondary sources that cite it).
    """

    mesotrophic_from: float = 40.0  # Carlson & Simpson (1996): TSI 40–50 mesotrophy
    eutrophic_from: float = 50.0  # Carlson & Simpson (1996): TSI 50–70 eutrophy
    hypertrophic_from: float = 70.0  # Carlson & Simpson (1996): TSI > 70 hypereutrophy

    @property
    def edges(self) -> tuple[float, float, float]:
        return (self.mesotrophic_from, self.eutrophic_from, self.hypertrophic_from)


@dataclass(frozen=True)
class OecdBoundaries:
    """The OECD fixed boundary system on annual mean values, least to most enriched class.

    Source: OECD (1982). Eutrophication of waters: monitoring, assessment
    and control (Vollenweider & Kerekes), fixed boundary table (checked
    against a secondary reproduction of the table).
    """

    tp_ug_l: tuple[float, float, float, float] = (
        4.0,
        10.0,
        35.0,
        100.0,
    )  # OECD (1982): mean TP ≤4 … ≥100
    chl_ug_l: tuple[float, float, float, float] = (1.0, 2.5, 8.0, 25.0)  # OECD (1982): mean Chl
    secchi_m: tuple[float, float, float, float] = (12.0, 6.0, 3.0, 1.5)  # OECD (1982): mean SD (falling)


@dataclass(frozen=True)
class WhoLevels:
    """Recreational guidance levels of chlorophyll-a where cyanobacteria dominate [µg L⁻¹].

    Source: World Health Organization (2003). Guidelines for safe
    recreational water environments, Vol. 1, ch. 8 (levels checked against
    the US EPA summary of that table).
    """

    low_probability_ug_l: float = 10.0  # WHO (2003): relatively low probability of adverse health effects
    moderate_probability_ug_l: float = 50.0  # WHO (2003): moderate probability of adverse health effects


CARLSON_1977 = CarlsonIndex()
CARLSON_SIMPSON_1996 = CarlsonBands()
OECD_1982 = OecdBoundaries()
WHO_2003 = WhoLevels()

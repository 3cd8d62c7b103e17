"""Data shipped inside the package: the demo lake's invented record and the stylesheet.

Read through :mod:`importlib.resources`, so they are found the same way
from a source checkout, an editable install and an installed wheel.
"""

from __future__ import annotations

from importlib.resources import files
from importlib.resources.abc import Traversable

DEMO_RECORD_NAME = "amberlin_monitoring.csv"
#: the invented demo region (40 fictional lakes): the lake table and the records, in ``sample_data/region``
DEMO_REGION_FILES = ("LAKES.csv", "RECORDS.csv")


def sample_file(name: str) -> Traversable:
    """A file of the ``sample_data`` package data."""
    return files("turnback.sample_data").joinpath(name)


def demo_record_bytes() -> bytes:
    """The invented monitoring record of the demo lake, Lake Amberlin (CSV bytes)."""
    return sample_file(DEMO_RECORD_NAME).read_bytes()


def demo_region_bytes() -> tuple[bytes, bytes]:
    """The invented demo region's LAKES.csv and RECORDS.csv (CSV bytes; made by sample_data/make_demo_region.py)."""
    lakes, records = (files("turnback.sample_data").joinpath("region", n).read_bytes() for n in DEMO_REGION_FILES)
    return lakes, records


def assets_folder() -> str:
    """The folder of the dashboard's stylesheet (a real folder: Dash serves it from disk)."""
    return str(files("turnback.assets"))

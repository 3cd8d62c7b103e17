"""The region view's files: uploads of LAKES.csv and RECORDS.csv, the demo region, and reading them.

The files ready to screen live in ``REGION_FILES`` (memory:
:class:`turnback.app.stores.RegionFiles`).  An upload is read at once by
the region reader (:func:`turnback.model.io.region_csv.read_region`, the
reader of ``turnback screen``) together with the other file; a file it
refuses is not taken, its one-line message says what to fix, and the files
already taken and the last screen's results stay as they were.
"""

from __future__ import annotations

import base64
import binascii
from collections.abc import Mapping
from typing import Any

from dash import no_update
from turnback.model.io.region_csv import Region, RegionError, read_region
from turnback.model.io.resources import DEMO_REGION_FILES, demo_region_bytes

from ...stores import RegionFile, RegionFiles

#: the invented demo region's names, as shown
DEMO_NAMES = tuple(f"demo {n}" for n in DEMO_REGION_FILES)


def data_url(raw: bytes) -> str:
    """A CSV file as the data URL an upload gives."""
    return "data:text/csv;base64," + base64.b64encode(raw).decode("ascii")


def decode(contents: Any) -> bytes | None:
    """The bytes of an upload's data URL, or None when it cannot be read."""
    if not isinstance(contents, str) or "," not in contents:
        return None
    try:
        return base64.b64decode(contents.split(",", 1)[1], validate=True)
    except (ValueError, binascii.Error):
        return None


def _raw(entry: Mapping[str, Any] | None) -> bytes | None:
    return None if not entry else decode(entry.get("contents"))


def read_files(files: Mapping[str, Any] | None) -> tuple[Region | None, str]:
    """The region in ``files``, or None and what to fix."""
    lakes = _raw((files or {}).get("lakes"))
    if lakes is None:
        return None, "Upload a LAKES.csv first (or load the demo region)."
    try:
        return read_region(lakes, _raw((files or {}).get("records"))), ""
    except RegionError as exc:
        return None, str(exc)


def describe(region: Region, files: Mapping[str, Any]) -> str:
    """Which files are ready and what is in them, in one line."""
    lakes = region.lakes
    n_fit = sum(lake.fitted for lake in lakes)
    refused = len(region.entries) - len(lakes)
    rec = files.get("records")
    parts = [
        f"Ready: {files['lakes']['name']}" + (f" and {rec['name']}" if rec else ""),
        f"{len(region.entries)} lakes, {len(lakes) - n_fit} with parameters, {n_fit} to fit from their records",
    ]
    if refused:
        parts.append(f"{refused} cannot be screened (listed after the screen)")
    return "; ".join(parts) + ". Press 'Screen these lakes'."


def _entry(name: Any, contents: Any) -> RegionFile:
    return {"name": str(name or "the file")[:200], "contents": str(contents)}


def update_files(
    trigger: str | None,
    kind: str | None,
    contents: Any,
    filename: Any,
    files: Mapping[str, Any] | None,
) -> tuple[Any, str, str]:
    """Take an uploaded file (``kind`` "lakes" or "records") or the demo region, if the reader accepts it.

    Returns ``(files, note, message)``: the new files (``no_update`` when
    the upload is refused), the line saying which files are ready, and what
    to fix.  The demo region replaces both files.
    """
    current: RegionFiles = {
        "lakes": (files or {}).get("lakes"),  # type: ignore[typeddict-item]
        "records": (files or {}).get("records"),  # type: ignore[typeddict-item]
    }
    if trigger == "demo":
        lakes_raw, records_raw = demo_region_bytes()
        new: RegionFiles = {
            "lakes": _entry(DEMO_NAMES[0], data_url(lakes_raw)),
            "records": _entry(DEMO_NAMES[1], data_url(records_raw)),
        }
    elif kind in ("lakes", "records") and contents:
        name = str(filename or "the file")
        if decode(contents) is None:
            return no_update, no_update, f"{name}: the upload could not be read; choose the file again."  # type: ignore[return-value]
        new = {**current, kind: _entry(name, contents)}  # type: ignore[misc]
        if kind == "records" and not current.get("lakes"):
            return new, f"Ready: {name} (records). Now upload the LAKES.csv they belong to.", ""
    else:
        return no_update, no_update, ""  # type: ignore[return-value]
    region, message = read_files(new)
    if region is None:
        taken = "the demo region" if trigger == "demo" else str(filename or "the file")
        keep = "The files already taken and the lakes on show are unchanged."
        if kind == "lakes" and current.get("records") and current["records"]:
            # the records may be what is wrong: try the lake table alone
            alone, _ = read_files({"lakes": new["lakes"], "records": None})
            if alone is not None:
                dropped: RegionFiles = {"lakes": new["lakes"], "records": None}
                return (
                    dropped,
                    describe(alone, dropped),
                    f"{current['records']['name']} was set aside: {message} Upload a corrected records file.",
                )
        return no_update, no_update, f"{taken} was not taken. {keep} {message}"  # type: ignore[return-value]
    return new, describe(region, new), ""

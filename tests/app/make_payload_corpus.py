"""Write tests/app/payload_corpus.json: malformed callback requests generated from the app's callback map.

Run ``python -m tests.app.make_payload_corpus`` after adding or changing a
callback; the test checks that the corpus still matches the callback map.
A case names a callback (its ``output``) and the values to replace in the
request the page would send for it (``overrides``); the test rebuilds the
request from the live layout.  Structural cases carry a whole body no
browser would send.  Every case must get a clear refusal, never an HTTP 500.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any

from .payloads import base_values, compact, request_for

OUT = Path(__file__).resolve().parent / "payload_corpus.json"

STORE_IDS = {
    "lake-store", "history-store", "history-tail", "record-store", "fit-store", "plan-store", "plan-editing",
    "plan-results-store", "plan-precaution-store", "plan-run-request", "plan-precaution-request",
    "region-store", "region-files",
}  # fmt: skip


def _deep(n: int) -> Any:
    v: Any = 1
    for _ in range(n):
        v = {"a": [v]}
    return v


def _bad_stores(store: str) -> list[tuple[str, Any]]:
    common: list[tuple[str, Any]] = [("text instead of an object", "x"), ("an empty object", {}), ("a list", [1, 2])]
    specific: dict[str, list[tuple[str, Any]]] = {
        "lake-store": [
            ("q beyond the engine", {"params": {"loss_rate": 0.5, "recycling_max": 1800.0, "recycling_half": 2500.0,
                                                "recycling_exponent": 1e20}, "profile": {}}),
            ("a boolean area", {"params": {}, "profile": {"name": "x", "area_km2": True, "volume_m3": 1e6,
                                                          "load_kg_yr": 1.0}}),
        ],
        "history-store": [
            ("a NaN load", {"lake_key": "k", "year": [0], "load": [float("nan")], "p": [1.0], "event": ["start"]}),
            ("a negative load", {"lake_key": "k", "year": [0], "load": [-1e6], "p": [1.0], "event": ["start"]}),
            ("lists of different lengths", {"lake_key": "k", "year": [0, 1], "load": [1.0], "p": [1.0],
                                            "event": ["start"]}),
            ("a history too long", {"lake_key": "k", "year": {"$range": 25_000}, "load": compact(25_000, 1.0),
                                    "p": compact(25_000, 1.0), "event": compact(25_000, "")}),
        ],
        "history-tail": [
            ("a NaN load", {"lake_key": "k", "year": 0, "load": float("nan"), "p": 1.0, "n": 1, "first": 0}),
            ("a load of -1e6", {"lake_key": "k", "year": 0, "load": -1e6, "p": 1.0, "n": 1, "first": 0}),
            ("a length of 10**9", {"lake_key": "k", "year": 0, "load": 1.0, "p": 1.0, "n": 10**9, "first": 0}),
        ],
        "record-store": [
            ("a 20,000-year record", {"name": "big", "year": {"$range": 20_000}, "load_kg": compact(20_000, 1.0),
                                      "tp_ug_l": compact(20_000, 20.0), "secchi_m": None, "chl_ug_l": None}),
            ("an infinite TP", {"name": "r", "year": [1, 2], "load_kg": [1.0, 1.0], "tp_ug_l": [1e400, 2.0],
                                "secchi_m": None, "chl_ug_l": None}),
        ],
        "plan-store": [("a bad scenario", {"scenarios": [{"name": "x", "years": 1e9, "load": {"kind": []}}]})],
        "plan-run-request": [("a token that is a path", {"token": "../../etc/passwd"})],
        "region-store": [
            ("a lake of an unknown regime", {"source": "x", "replicates": 100, "seed": 1, "failed": [], "notes": [],
                                             "lakes": [{"lake_id": "A", "regime": "maybe", "params": {}}]}),
            ("3,000 lakes", {"source": "x", "replicates": 100, "seed": 1, "failed": [], "notes": [],
                             "lakes": compact(3000, {"lake_id": "A"})}),
        ],
        "region-files": [
            ("a file that is a number", {"lakes": {"name": "LAKES.csv", "contents": 5}, "records": None}),
            ("an unknown file", {"lakes": None, "records": None, "loads": {"name": "x", "contents": "data:,"}}),
        ],
    }
    return common + specific.get(store, [])


def build() -> list[dict[str, Any]]:
    os.environ.setdefault("TURNBACK_CACHE_DIR", tempfile.mkdtemp(prefix="turnback-corpus-"))
    from turnback.app.server import create_app

    client = create_app(data_dir=tempfile.mkdtemp(prefix="turnback-corpus-data-")).server.test_client()
    deps = client.get("/_dash-dependencies").get_json()
    values = base_values(client)
    cases: list[dict[str, Any]] = []
    for dep in deps:
        entries = dep["inputs"] + dep["state"]
        first = f"{dep['inputs'][0]['id']}.{dep['inputs'][0]['property']}"
        for what, bad in (("NaN", float("nan")), ("infinity", float("inf")), ("nesting 40 deep", _deep(40)),
                          ("a list of 500,000 numbers", compact(500_000))):
            cases.append({"name": f"{dep['output'][:60]} | {first} = {what}", "output": dep["output"],
                          "overrides": {first: bad}})
        for e in entries:
            if e["id"] in STORE_IDS and e["property"] == "data":
                key = f"{e['id']}.data"
                for what, bad in _bad_stores(e["id"]):
                    cases.append({"name": f"{dep['output'][:60]} | {key} = {what}", "output": dep["output"],
                                  "overrides": {key: bad}})
    small = min(deps, key=lambda d: len(json.dumps(request_for(d, values))))
    good = request_for(small, values)
    structural: list[tuple[str, Any]] = [
        ("not an object", [1, 2, 3]),
        ("inputs not a list", {**good, "inputs": {"a": 1}}),
        ("no inputs", {k: v for k, v in good.items() if k != "inputs"}),
        ("no output", {k: v for k, v in good.items() if k != "output"}),
        ("an unknown output", {**good, "output": "no-such-component.children"}),
        ("an input without an id", {**good, "inputs": [{"property": "value", "value": 1}]}),
        ("an input id that is a number", {**good, "inputs": [{"id": 7, "property": "value", "value": 1}]}),
        ("a wildcard list of junk", {**good, "inputs": [[1, 2, {"id": 3}]]}),
        ("state not a list", {**good, "state": "x"}),
        ("changedPropIds a number", {**good, "changedPropIds": 5}),
    ]
    cases += [{"name": f"structure | {what}", "body": body} for what, body in structural]
    return cases


def main() -> None:
    cases = build()
    OUT.write_text(json.dumps({"cases": cases}, indent=None) + "\n")
    print(f"wrote {len(cases)} cases to {OUT.name}")


if __name__ == "__main__":
    main()

"""Callback requests built from the app's own callback map, for the trust-boundary tests.

:func:`base_values` reads every component property of the page's layout;
:func:`request_for` builds the JSON body the browser would send for one
callback from those values, with some of them replaced.
"""

from __future__ import annotations

from typing import Any


def walk(node: Any, out: dict[str, Any]) -> None:
    """Every ``id.property`` of a layout tree (as served by /_dash-layout)."""
    if isinstance(node, list):
        for x in node:
            walk(x, out)
        return
    if not isinstance(node, dict):
        return
    props = node.get("props", {})
    cid = props.get("id")
    if isinstance(cid, str):
        for k, v in props.items():
            if k != "children":
                out[f"{cid}.{k}"] = v
    walk(props.get("children"), out)


def base_values(client: Any) -> dict[str, Any]:
    values: dict[str, Any] = {}
    walk(client.get("/_dash-layout").get_json(), values)
    return values


def _entry(dep: dict[str, Any], values: dict[str, Any], overrides: dict[str, Any]) -> dict[str, Any]:
    key = f"{dep['id']}.{dep['property']}"
    return {"id": dep["id"], "property": dep["property"], "value": overrides.get(key, values.get(key))}


def request_for(dep: dict[str, Any], values: dict[str, Any], overrides: dict[str, Any] | None = None) -> dict[str, Any]:
    """The body of a callback request for dependency ``dep`` (from /_dash-dependencies)."""
    overrides = overrides or {}
    outputs = [
        {"id": p.split(".")[0].split("@")[0], "property": p.split(".")[-1].split("@")[0]}
        for p in dep["output"].strip(".").split("...")
    ]
    first = dep["inputs"][0]
    return {
        "output": dep["output"],
        "outputs": outputs if dep["output"].startswith("..") else outputs[0],
        "inputs": [_entry(i, values, overrides) for i in dep["inputs"]],
        "state": [_entry(s, values, overrides) for s in dep["state"]],
        "changedPropIds": [f"{first['id']}.{first['property']}"],
    }


def compact(n: int, value: Any = 0) -> dict[str, Any]:
    """A corpus marker for a list of ``n`` copies of ``value`` (kept small on disk, expanded by :func:`expand`)."""
    return {"$repeat": value, "$times": n}


def expand(v: Any) -> Any:
    """A corpus value with its markers expanded: ``{"$repeat", "$times"}`` and ``{"$range": n}``."""
    if isinstance(v, dict):
        if set(v) == {"$repeat", "$times"}:
            return [expand(v["$repeat"]) for _ in range(int(v["$times"]))]
        if set(v) == {"$range"}:
            return list(range(int(v["$range"])))
        return {k: expand(x) for k, x in v.items()}
    if isinstance(v, list):
        return [expand(x) for x in v]
    return v

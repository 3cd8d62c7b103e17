"""What stands between a browser and the callbacks: request checks, limits, errors and headers.

* Every callback request is checked before any callback runs
  (:mod:`turnback.app.store_checks`): a bad store or input gets a message in
  the page's notice line, the callback does not run, and the page keeps its
  last good state.
* Requests have a size limit (Flask ``MAX_CONTENT_LENGTH``); the upload box
  refuses larger files in the browser with a message (``assets/upload-limit.js``).
* A callback that fails anyway shows a one-line message and changes nothing
  (Dash's ``on_error``); a request Dash cannot even read gets HTTP 400.  The
  log gets one line, never a traceback.
* Every response carries security headers: no framing, no content-type
  sniffing, and a content-security policy that allows only this server.
"""

from __future__ import annotations

import logging
from typing import Any

from dash import Dash, set_props
from flask import Response, jsonify, request
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from . import ids
from .store_checks import LARGE_TEXT_STORES, MAX_REQUEST_BYTES, StoreError, check_payload_value, check_store, label

__all__ = ["check_request", "install", "on_callback_error"]

log = logging.getLogger("turnback.server")

#: inputs that are numbers with a range: (component id, property) -> (low, high)
_RANGES: dict[tuple[str, str], tuple[float, float]] = {
    (ids.LOAD_SLIDER, "value"): (0.0, 1.0e15),
}


def _notice(message: str) -> Response:
    """A callback response that changes none of its outputs and shows ``message`` in the page's notice."""
    return jsonify({"multi": True, "response": {}, "sideUpdate": {ids.PAGE_NOTICE: {"children": message}}})


def _items(entries: Any) -> list[dict[str, Any]]:
    """The ``{"id", "property", "value"}`` entries of a request's inputs or state (wildcards give lists)."""
    out: list[dict[str, Any]] = []
    for e in entries if isinstance(entries, list) else []:
        if isinstance(e, list):
            out.extend(x for x in e if isinstance(x, dict))
        elif isinstance(e, dict):
            out.append(e)
    return out


def check_request(body: Any) -> None:
    """Check a callback request's inputs and state; :class:`StoreError` for the first bad one."""
    if not isinstance(body, dict) or not isinstance(body.get("inputs", []), list):
        raise StoreError("The page sent a request the server cannot read; nothing was changed.")
    for entry in _items(body.get("inputs", [])) + _items(body.get("state", [])):
        cid, prop, value = entry.get("id"), entry.get("property"), entry.get("value")
        if isinstance(cid, dict):  # a pattern-matching id
            check_payload_value(value, "a value")
            continue
        if not isinstance(cid, str):
            raise StoreError("The page sent a request the server cannot read; nothing was changed.")
        max_text = MAX_REQUEST_BYTES if prop == "contents" or cid in LARGE_TEXT_STORES else None
        check_payload_value(value, label(cid), **({"max_text": max_text} if max_text else {}))
        if prop == "data":
            check_store(cid, value)
        bounds = _RANGES.get((cid, str(prop)))
        if bounds is not None and value is not None:
            if isinstance(value, bool) or not isinstance(value, int | float) or not bounds[0] <= value <= bounds[1]:
                raise StoreError(
                    f"The page sent {label(cid)} as {value!r}, outside {bounds[0]:g} to {bounds[1]:g}; "
                    "nothing was changed."
                )


def _before_request() -> Response | None:
    if not request.path.endswith("/_dash-update-component") or request.method != "POST":
        return None
    if request.args.get("cacheKey"):  # a background job's progress poll: its inputs were checked when it started
        return None
    body = request.get_json(silent=True)
    try:
        check_request(body)
    except StoreError as exc:
        log.warning("refused a callback request: %s", exc)
        return _notice(str(exc))
    return None


def _security_headers(response: Response) -> Response:
    response.headers.setdefault("X-Frame-Options", "DENY")
    response.headers.setdefault("X-Content-Type-Options", "nosniff")
    response.headers.setdefault("Referrer-Policy", "same-origin")
    response.headers.setdefault("Content-Security-Policy", _CSP)
    return response


# Dash's page holds one inline script (the renderer's start-up); Plotly sets inline styles and draws
# images from data: and blob: URLs.  Everything else comes from this server.
_CSP = "; ".join(
    [
        "default-src 'self'",
        "script-src 'self' 'unsafe-inline' 'unsafe-eval'",
        "style-src 'self' 'unsafe-inline'",
        "img-src 'self' data: blob:",
        "font-src 'self' data:",
        "connect-src 'self'",
        "object-src 'none'",
        "base-uri 'self'",
        "form-action 'self'",
        "frame-ancestors 'none'",
    ]
)


def _http_error(exc: HTTPException) -> Response | HTTPException:
    if isinstance(exc, RequestEntityTooLarge):
        return jsonify({"message": f"The request is larger than {MAX_REQUEST_BYTES // 1_000_000} MB."}), 413  # type: ignore[return-value]
    return exc


def _any_error(exc: Exception) -> Any:
    """A request Dash could not read (a malformed payload): HTTP 400, one log line, no traceback."""
    if isinstance(exc, HTTPException):
        return exc
    log.warning("refused a request to %s: %s: %s", request.path, type(exc).__name__, str(exc)[:200])
    return jsonify({"message": "The request could not be read; nothing was changed."}), 400


def on_callback_error(exc: Exception) -> None:
    """Dash's ``on_error``: a failed callback changes none of its outputs and says so in the page."""
    log.warning("a callback failed: %s: %s", type(exc).__name__, str(exc)[:300])
    text = str(exc) if isinstance(exc, ValueError) else "That step could not be done"
    try:
        set_props(ids.PAGE_NOTICE, {"children": f"{text}. Nothing was changed."[:600].replace("..", ".")})
    except Exception:  # outside a callback context: nothing to show it in
        pass


def install(app: Dash) -> None:
    """Put the checks, limits, error handlers and headers on the app's server."""
    server = app.server
    server.config["MAX_CONTENT_LENGTH"] = MAX_REQUEST_BYTES
    server.before_request(_before_request)
    server.after_request(_security_headers)
    server.register_error_handler(HTTPException, _http_error)
    server.register_error_handler(Exception, _any_error)

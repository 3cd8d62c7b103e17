"""The server's trust boundary: a browser that sends anything gets a clear refusal, never an HTTP 500.

The committed corpus (tests/app/payload_corpus.json, made from the app's own
callback map by tests/app/make_payload_corpus.py) is replayed against the
app; every response must be a refusal with a message (or a normal answer),
and the server log must hold no traceback.
"""

from __future__ import annotations

import json
import logging
import math
from pathlib import Path
from typing import Any

import pytest
from turnback.app import ids
from turnback.app.server import create_app
from turnback.app.stores import new_history
from turnback.app.views.lake.history import tail_of

from .payloads import base_values, expand, request_for

CORPUS = json.loads((Path(__file__).resolve().parent / "payload_corpus.json").read_text())["cases"]


@pytest.fixture(scope="module")
def client(tmp_path_factory: pytest.TempPathFactory) -> Any:
    import os

    os.environ.setdefault("TURNBACK_CACHE_DIR", str(tmp_path_factory.mktemp("cache")))
    return create_app(data_dir=tmp_path_factory.mktemp("data")).server.test_client()


@pytest.fixture(scope="module")
def deps(client: Any) -> dict[str, dict[str, Any]]:
    return {d["output"]: d for d in client.get("/_dash-dependencies").get_json()}


def _post(client: Any, body: Any) -> Any:
    return client.post("/_dash-update-component", data=json.dumps(body), content_type="application/json")


def test_the_corpus_is_large_and_matches_the_callback_map(deps: dict[str, dict[str, Any]]) -> None:
    assert len(CORPUS) >= 60
    named = {c["output"] for c in CORPUS if "output" in c}
    assert named <= set(deps), "the corpus names a callback the app no longer has: run make_payload_corpus"
    assert named == set(deps), "a callback has no malformed cases: run make_payload_corpus"


def test_every_malformed_payload_is_refused_without_a_500_or_a_traceback(
    client: Any, deps: dict[str, dict[str, Any]], caplog: pytest.LogCaptureFixture, capsys: pytest.CaptureFixture
) -> None:
    values = base_values(client)
    statuses: dict[int, int] = {}
    with caplog.at_level(logging.WARNING):
        for case in CORPUS:
            if "body" in case:
                body = case["body"]
            else:
                body = request_for(deps[case["output"]], values, expand(case["overrides"]))
            r = _post(client, body)
            statuses[r.status_code] = statuses.get(r.status_code, 0) + 1
            assert r.status_code in (200, 204, 400, 413), (case["name"], r.status_code)
            if r.status_code == 200:
                out = r.get_json()
                assert out.get("response") == {} and "page-notice" in out.get("sideUpdate", {}), case["name"]
    assert not any(rec.exc_info for rec in caplog.records)
    assert "Traceback" not in capsys.readouterr().err
    assert statuses.get(500, 0) == 0


def _load_request(deps: dict[str, dict[str, Any]], values: dict[str, Any], load: Any, history: Any) -> dict:
    dep = next(d for d in deps.values() if any(i["id"] == ids.LOAD_SLIDER for i in d["inputs"]))
    return request_for(dep, values, {f"{ids.LOAD_SLIDER}.value": load, f"{ids.HISTORY_TAIL}.data": tail_of(history)})


@pytest.mark.parametrize("bad", [math.nan, math.inf, -1.0e6, 1e300, "500", True])
def test_a_bad_load_is_refused_and_the_session_goes_on(client: Any, deps: dict[str, dict[str, Any]], bad: Any) -> None:
    values = base_values(client)
    history = new_history(values[f"{ids.LAKE_STORE}.data"])
    r = _post(client, _load_request(deps, values, bad, history))
    assert r.status_code == 200
    assert r.get_json()["response"] == {}
    notice = r.get_json()["sideUpdate"][ids.PAGE_NOTICE]["children"]
    assert "nothing was changed" in notice
    ok = _post(client, _load_request(deps, values, 600.0, history)).get_json()
    new = ok["response"][ids.HISTORY_TAIL]["data"]
    assert new["load"] == 600.0 and math.isfinite(new["p"]) and new["n"] > 1


def test_a_request_over_the_size_limit_is_refused(client: Any) -> None:
    from turnback.app.store_checks import MAX_REQUEST_BYTES

    r = client.post("/_dash-update-component", data=b"x" * (MAX_REQUEST_BYTES + 10), content_type="application/json")
    assert r.status_code == 413 and "larger than" in r.get_json()["message"]


def test_security_headers_on_every_page(client: Any) -> None:
    for path in ("/", "/_dash-layout", "/assets/turnback.css"):
        h = client.get(path).headers
        assert h["X-Frame-Options"] == "DENY" and h["X-Content-Type-Options"] == "nosniff"
        assert "frame-ancestors 'none'" in h["Content-Security-Policy"]

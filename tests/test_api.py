"""The HTTP API: behaviour, the error shape, limits, security, metrics, hot swap."""

from __future__ import annotations

import json
import shutil
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from prometheus_client.parser import text_string_to_metric_families

from service.app import create_app
from service.settings import Settings
from tests.helpers import open_store, republish, until
from widen.decisions.sqlite import SqliteDecisionStore
from widen.expansion.options import ExpansionOptions
from widen.model.store import Store


def _settings(store: Path, **extra: object) -> Settings:
    values: dict[str, object] = {
        "store": store,
        "access_log": False,
        "poll_seconds": 0.05,
        "decisions_poll_seconds": 0.05,
    }
    values.update(extra)
    return Settings(**values)  # type: ignore[arg-type]


@pytest.fixture
def client(store_copy: Path) -> Iterator[TestClient]:
    with TestClient(create_app(_settings(store_copy, admin_token="tollbridge-admin"))) as c:
        yield c


def test_get_and_post_return_the_core_result(client: TestClient, store_copy: Path) -> None:
    decisions = SqliteDecisionStore(Store(store_copy).decisions_path).snapshot()
    expected = open_store(store_copy).expand("lorry driver", ExpansionOptions(), decisions)
    got = client.get("/v1/expand", params={"q": "lorry driver"})
    assert got.status_code == 200 and got.json() == json.loads(expected.model_dump_json())
    posted = client.post("/v1/expand", json={"query": "lorry driver"})
    assert posted.json() == got.json()
    narrow = client.post("/v1/expand", json={"query": "lorry driver", "max": 1, "explain": True, "operator": "OR"})
    body = narrow.json()
    assert len(body["segments"][0]["expansions"]) == 1 and body["segments"][0]["dropped"]


def test_batch_and_model(client: TestClient) -> None:
    batch = client.post("/v1/expand/batch", json={"queries": ["rn", "kitchen porter hensby"], "max": 2})
    assert batch.status_code == 200
    assert [r["query"] for r in batch.json()["results"]] == ["rn", "kitchen porter hensby"]
    model = client.get("/v1/model").json()
    assert model["version"] == client.get("/readyz").json()["version"]
    assert model["corpus"]["postings_read"] > 0 and model["gate"]["passed"] is True


BAD = [
    ("get", "/v1/expand", {"params": {"q": ""}}, 400, "q"),
    ("get", "/v1/expand", {"params": {"q": "   "}}, 400, "q"),
    ("get", "/v1/expand", {"params": {"q": "x" * 257}}, 400, "q"),
    ("get", "/v1/expand", {"params": {"q": " ".join(["nurse"] * 33)}}, 400, "q"),
    ("get", "/v1/expand", {"params": {"q": "rn", "max": 0}}, 400, "max"),
    ("get", "/v1/expand", {"params": {"q": "rn", "max": 51}}, 400, "max"),
    ("get", "/v1/expand", {"params": {"q": "rn", "max": "five"}}, 400, "max"),
    ("get", "/v1/expand", {"params": {"q": "rn", "min_similarity": 1.5}}, 400, "min_similarity"),
    ("get", "/v1/expand", {"params": {"q": "rn", "min_similarity": -0.1}}, 400, "min_similarity"),
    ("get", "/v1/expand", {"params": {"q": "rn", "operator": "XOR"}}, 400, "operator"),
    ("get", "/v1/expand", {"params": {"q": "..."}}, 400, "q"),
    ("get", "/v1/expand", {}, 400, "q"),
    ("post", "/v1/expand", {"json": {"query": 5}}, 400, "query"),
    ("post", "/v1/expand", {"json": {"query": "rn", "max": "5"}}, 400, "max"),
    ("post", "/v1/expand", {"json": {"query": "rn", "explain": "yes"}}, 400, "explain"),
    ("post", "/v1/expand", {"json": {"query": "rn", "colour": "red"}}, 400, "colour"),
    ("post", "/v1/expand", {"json": ["rn"]}, 400, None),
    ("post", "/v1/expand", {"content": b"{not json", "headers": {"content-type": "application/json"}}, 400, None),
    (
        "post",
        "/v1/expand",
        {"content": b'{"query": "caf\xe9"}', "headers": {"content-type": "application/json"}},
        400,
        None,
    ),
    (
        "post",
        "/v1/expand",
        {"content": b"x" * (64 * 1024 + 1), "headers": {"content-type": "application/json"}},
        413,
        None,
    ),
    ("post", "/v1/expand/batch", {"json": {"queries": ["rn"] * 101}}, 400, "queries"),
    ("post", "/v1/expand/batch", {"json": {"queries": []}}, 400, "queries"),
    ("post", "/v1/expand/batch", {"json": {"queries": ["rn", ""]}}, 400, "queries.1"),
    ("get", "/v2/expand", {}, 404, None),
    ("delete", "/v1/expand", {}, 405, None),
]


@pytest.mark.parametrize("method, path, kwargs, status, field", BAD, ids=[f"{b[1]}-{i}" for i, b in enumerate(BAD)])
def test_bad_input_is_a_clear_4xx_in_the_error_shape(
    client: TestClient, method: str, path: str, kwargs: dict[str, object], status: int, field: str | None
) -> None:
    response = getattr(client, method)(path, **kwargs)
    assert response.status_code == status, response.text
    body = response.json()
    assert set(body) == {"error"} and set(body["error"]) == {"code", "message", "field"}
    assert body["error"]["code"] and body["error"]["message"]
    assert body["error"]["field"] == field


def test_admin_endpoints_need_the_token(store_copy: Path) -> None:
    with TestClient(create_app(_settings(store_copy))) as off:
        assert off.post("/v1/admin/reload").status_code == 404  # no token configured: off, never open
    with TestClient(create_app(_settings(store_copy, admin_token="tollbridge-admin"))) as on:
        assert on.post("/v1/admin/reload").status_code == 401
        assert on.post("/v1/admin/reload", headers={"Authorization": "Bearer wrong"}).status_code == 403
        assert on.post("/v1/admin/reload", headers={"Authorization": "Basic tollbridge-admin"}).status_code == 401
        ok = on.post("/v1/admin/reload", headers={"Authorization": "Bearer tollbridge-admin"})
        assert ok.status_code == 200 and ok.json()["result"] == "unchanged"


def test_request_id_is_echoed_or_made(client: TestClient) -> None:
    assert client.get("/healthz", headers={"X-Request-ID": "tvj-search-42"}).headers["x-request-id"] == "tvj-search-42"
    made = client.get("/healthz").headers["x-request-id"]
    assert len(made) == 32 and made != client.get("/healthz").headers["x-request-id"]
    assert len(client.get("/healthz", headers={"X-Request-ID": "x" * 500}).headers["x-request-id"]) == 32


def test_cors_is_off_by_default_and_follows_the_settings(store_copy: Path) -> None:
    origin = {"Origin": "https://jobs.tollbridge.example"}
    with TestClient(create_app(_settings(store_copy))) as c:
        assert "access-control-allow-origin" not in c.get("/healthz", headers=origin).headers
    with TestClient(create_app(_settings(store_copy, cors_origins=["https://jobs.tollbridge.example"]))) as c:
        assert c.get("/healthz", headers=origin).headers["access-control-allow-origin"] == origin["Origin"]
        for _ in range(2):  # the second is a cache hit, and must carry the header too
            got = c.get("/v1/expand", params={"q": "rn"}, headers=origin)
            assert got.headers["access-control-allow-origin"] == origin["Origin"]


def test_metrics_parse_with_the_reference_parser(client: TestClient) -> None:
    client.get("/v1/expand", params={"q": "kitchen porter"})
    client.get("/v1/expand", params={"q": "kitchen porter"})
    client.get("/v1/expand", params={"q": ""})
    text = client.get("/metrics").text
    # Reference implementation of the Prometheus text format: prometheus-client's own parser.
    families = {f.name: f for f in text_string_to_metric_families(text)}
    requests = {
        (s.labels["route"], s.labels["status"]): s.value
        for s in families["widen_requests"].samples
        if s.name == "widen_requests_total"
    }
    assert requests[("/v1/expand", "200")] == 2 and requests[("/v1/expand", "400")] == 1
    assert any(s.name == "widen_request_seconds_bucket" for s in families["widen_request_seconds"].samples)
    assert families["widen_cache_hits"].samples[0].value == 1
    info = families["widen_model_info"].samples[0]
    assert info.labels["version"] == client.get("/readyz").json()["version"]
    assert "widen_reloads_refused" in families and "widen_ready" in families


def test_empty_store_is_alive_not_ready_until_a_bundle_is_published(tmp_path: Path, trained_store: Path) -> None:
    store = tmp_path / "store"
    with TestClient(create_app(_settings(store))) as c:
        assert c.get("/healthz").status_code == 200
        ready = c.get("/readyz")
        assert ready.status_code == 503 and ready.json()["error"]["code"] == "not_ready"
        assert c.get("/v1/expand", params={"q": "rn"}).status_code == 503
        shutil.copytree(trained_store / "bundles", store / "bundles")
        Store(store).set_current(Store(trained_store).current_version() or "", by="test")
        deadline = time.monotonic() + 5
        while c.get("/readyz").status_code != 200 and time.monotonic() < deadline:
            time.sleep(0.05)
        assert c.get("/readyz").status_code == 200
        assert c.get("/v1/expand", params={"q": "rn"}).status_code == 200


def test_a_decision_written_by_another_process_takes_effect_without_a_retrain(
    client: TestClient, store_copy: Path
) -> None:
    before = client.get("/v1/expand", params={"q": "kitchen porter"}).json()
    victim = before["segments"][0]["expansions"][0]["phrase"]
    SqliteDecisionStore(Store(store_copy).decisions_path).add("kitchen porter", "block", "ana", neighbour=victim)

    def gone() -> bool:
        now = client.get("/v1/expand", params={"q": "kitchen porter"}).json()
        return victim not in [e["phrase"] for e in now["segments"][0]["expansions"]]

    until(gone, "the block never took effect (the decisions are polled every 0.05 s here)")


def test_hot_swap_under_load_fails_no_request(client: TestClient, store_copy: Path) -> None:
    old = client.get("/readyz").json()["version"]
    stop = threading.Event()
    seen: list[tuple[int, str | None]] = []
    queries = ["lorry driver", "rn", "kitchen porter hensby", "night shift staff nurse", "server"]

    def load() -> None:
        n = 0
        deadline = time.monotonic() + 15
        while not stop.is_set() and time.monotonic() < deadline and n < 5000:
            r = client.get("/v1/expand", params={"q": queries[n % len(queries)], "max": 1 + n % 5})
            seen.append((r.status_code, r.json().get("model", {}).get("version")))
            n += 1

    workers = [threading.Thread(target=load) for _ in range(4)]
    for w in workers:
        w.start()
    until(lambda: len(seen) >= 50, "no load on the old bundle")
    new = republish(store_copy)
    until(lambda: sum(v == new for _, v in seen) >= 50, "the new bundle did not serve under load")
    # A corrupt bundle is refused; the good one keeps serving.
    bad = republish(store_copy, "flip")
    until(
        lambda: "widen_reloads_refused_total 1.0" in client.get("/metrics").text, "the corrupt bundle was not refused"
    )
    until(lambda: sum(v == new for _, v in seen) >= 100, "requests stopped after the refusal")
    stop.set()
    for w in workers:
        w.join()
    assert seen and all(status == 200 for status, _ in seen), {s for s, _ in seen}
    versions = [v for _, v in seen]
    assert old in versions and new in versions and bad not in versions
    assert client.get("/readyz").json()["version"] == new
    metrics = client.get("/metrics").text
    assert "widen_reloads_refused_total 1.0" in metrics
    # One model series, the serving bundle's, as an Info metric shows it (the old one went away).
    info = [s for f in text_string_to_metric_families(metrics) for s in f.samples if s.name == "widen_model_info"]
    assert [(s.labels["version"], s.value) for s in info] == [(new, 1.0)]


@pytest.mark.parametrize("cache_size", [0, 10000])
def test_the_get_shortcut_answers_with_the_routes_bytes(
    store_copy: Path, demo_dir: Path, cache_size: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A GET of /v1/expand is answered before the framework's routing (`ExpandShortcut`); a browser's
    GET (an Origin header) goes through the framework's route. Both must give the same bytes and
    headers, for every demo query and 200 distinct queries of the day's log, with the cache off and on,
    and both read the request and answer it through the one reader and responder; errors too."""
    queries = [json.loads(line)["query"] for line in (demo_dir / "queries.jsonl").open(encoding="utf-8")]
    logged = dict.fromkeys(json.loads(line)["q"] for line in (demo_dir / "query_log.jsonl").open(encoding="utf-8"))
    queries += list(logged)[:200]
    import service.middleware.expand_shortcut as shortcut
    import service.routes.expansion as route

    at_the_shortcut: list[bytes] = []
    expanded: list[str] = []
    original_answer, original_expanded = route.answer, route._expanded

    def answered(state: object, call: route.ExpandCall) -> bytes:
        at_the_shortcut.append(call.query.encode())
        return original_answer(state, call)  # type: ignore[arg-type]

    def counted(state: object, serving: object, decisions: object, call: route.ExpandCall) -> object:
        expanded.append(call.query)
        return original_expanded(state, serving, decisions, call)  # type: ignore[arg-type]

    monkeypatch.setattr(shortcut, "answer", answered)
    monkeypatch.setattr(route, "_expanded", counted)
    browser = {"Origin": "https://jobs.tollbridge.example"}
    with TestClient(create_app(_settings(store_copy, cache_size=cache_size))) as c:
        for q in queries:
            at_edge = c.get("/v1/expand", params={"q": q})
            routed = c.get("/v1/expand", params={"q": q}, headers=browser)  # through the framework's route
            assert at_edge.status_code == routed.status_code == 200
            assert at_edge.content == routed.content, q
            assert at_edge.headers["content-type"] == routed.headers["content-type"] == "application/json"
            # Every header, in order, but the request id (new each request).
            assert [h for h in at_edge.headers.raw if h[0] != b"x-request-id"] == [
                h for h in routed.headers.raw if h[0] != b"x-request-id"
            ]
        # Every plain GET was answered at the shortcut; each was expanded once when the cache is on.
        assert len(at_the_shortcut) == len(queries)
        assert len(expanded) == (len(set(queries)) if cache_size else 2 * len(queries))
        for bad, code in (("", None), ("   ", "empty_query"), ("x" * 257, None), ("?!", "empty_query")):
            got = c.get("/v1/expand", params={"q": bad})
            assert got.status_code == 400 and "error" in got.json()
            assert got.content == c.get("/v1/expand", params={"q": bad}, headers=browser).content
            if code:
                assert got.json()["error"]["code"] == code
        families = {f.name: f for f in text_string_to_metric_families(c.get("/metrics").text)}
        requests = {
            (s.labels["route"], s.labels["status"]): s.value
            for s in families["widen_requests"].samples
            if s.name == "widen_requests_total"
        }
        assert requests[("/v1/expand", "200")] == 2 * len(queries)
        if cache_size:  # each plain query missed once, at the edge, and is counted
            misses = [s.value for s in families["widen_cache_misses"].samples if s.name == "widen_cache_misses_total"]
            assert misses and misses[0] >= len(set(queries))

"""POST /v1/batch (issue 7): many independent analyses in one call.

Every item is answered by exactly what its own endpoint answers (without the
provenance, which the batch carries once), in the order given; a bad item is
answered by its own problem, with pointers into the batch body, and never
fails the others. The process pool gives the same bytes as the inline path.

The data are invented plate assays (a few wells per buffer).
"""

from __future__ import annotations

import random

import pytest
from fastapi.testclient import TestClient

from familywise.api.app import create_app
from familywise.api.settings import Settings

JSON = {"content-type": "application/json"}
PROBLEM = "application/problem+json"


def _plate(seed: int, k: int = 4, n: int = 5) -> list[dict]:
    rng = random.Random(seed)
    return [{"label": f"buffer {chr(65 + i)}", "values": [round(rng.gauss(40.0 + 1.5 * i, 1.2), 2) for _ in range(n)]}
            for i in range(k)]


@pytest.fixture(scope="module")
def client() -> TestClient:
    return TestClient(create_app(Settings(warm_up=False, batch_workers=1)))


def _without_provenance(body: dict) -> dict:
    return {key: value for key, value in body.items() if key != "provenance"}


MIXED = [
    ("omnibus", "/v1/omnibus", {"groups": _plate(1)}),
    ("pairwise", "/v1/followup/pairwise", {"groups": _plate(2), "method": "tukey_kramer"}),
    ("control", "/v1/followup/control", {"groups": _plate(3), "control": "buffer A"}),
    ("best", "/v1/followup/best", {"groups": _plate(4), "best": "highest"}),
    ("contrasts", "/v1/followup/contrasts",
     {"groups": _plate(5), "contrasts": [{"name": "A vs B", "coefficients": {"buffer A": 1, "buffer B": -1}}]}),
    ("equivalence", "/v1/followup/equivalence", {"groups": _plate(6), "reference": "buffer A", "margin": 3}),
    ("plan", "/v1/plan", {"k": 4, "power": 0.8, "effect": {"cohens_f": 0.4}}),
]


def test_each_item_equals_its_own_endpoint_in_order(client) -> None:
    items = [{"id": f"analyte {i}", "operation": op, "request": body} for i, (op, _, body) in enumerate(MIXED)]
    response = client.post("/v1/batch", json={"items": items})
    assert response.status_code == 200, response.text
    results = response.json()["results"]
    assert [r["id"] for r in results] == [item["id"] for item in items]
    for (operation, path, body), result in zip(MIXED, results, strict=True):
        single = client.post(path, json=body)
        assert single.status_code == 200, (operation, single.text)
        assert result["status"] == 200, (operation, result)
        assert result["result"] == _without_provenance(single.json()), operation


def test_a_bad_item_fails_alone_with_pointers_into_the_batch(client) -> None:
    items = [
        {"id": "good", "operation": "pairwise", "request": {"groups": _plate(7)}},
        {"id": "unknown control", "operation": "control", "request": {"groups": _plate(8), "control": "buffer Z"}},
        {"id": "string value", "operation": "omnibus",
         "request": {"groups": [{"label": "a", "values": [1, "2", 3]}, {"label": "b", "values": [4, 5, 6]}]}},
        {"id": "also good", "operation": "omnibus", "request": {"groups": _plate(9)}},
    ]
    response = client.post("/v1/batch", json={"items": items})
    assert response.status_code == 200, response.text
    good, unknown, bad_value, also_good = response.json()["results"]
    assert good["status"] == 200 and also_good["status"] == 200
    assert unknown["status"] == 422
    assert unknown["problem"]["pointer"] == "/items/1/request/control"
    assert bad_value["status"] == 422
    assert bad_value["problem"]["pointer"] == "/items/2/request/groups/0/values/1"
    # every entry of the problem's errors[] points into the batch body too
    assert all(e["pointer"].startswith("/items/2/request/") for e in bad_value["problem"]["errors"])
    # the good items are what their endpoints return
    single = client.post("/v1/followup/pairwise", json=items[0]["request"])
    assert good["result"] == _without_provenance(single.json())


def test_duplicate_ids_and_unknown_operations_are_refused(client) -> None:
    twice = [{"id": "same", "operation": "omnibus", "request": {"groups": _plate(1)}}] * 2
    response = client.post("/v1/batch", json={"items": twice})
    assert response.status_code == 422
    assert response.headers["content-type"] == PROBLEM
    assert response.json()["pointer"] == "/items/1/id"
    unknown = [{"id": "x", "operation": "anova_table", "request": {"groups": _plate(1)}}]
    response = client.post("/v1/batch", json={"items": unknown})
    assert response.status_code == 422
    assert response.json()["pointer"] == "/items/0/operation"


def test_the_process_pool_gives_the_same_bytes_as_inline() -> None:
    """64 items (enough for the pool) through two worker processes, against the inline path."""
    items = [{"id": f"analyte {i}", "operation": ("pairwise", "control", "omnibus")[i % 3],
              "request": {"groups": _plate(100 + i), **({"control": "buffer A"} if i % 3 == 1 else {})}}
             for i in range(64)]
    inline = TestClient(create_app(Settings(warm_up=False, batch_workers=1)))
    pooled = TestClient(create_app(Settings(warm_up=False, batch_workers=2)))
    with pooled:  # the lifespan shuts the pool down at the end
        from_pool = pooled.post("/v1/batch", json={"items": items})
    from_inline = inline.post("/v1/batch", json={"items": items})
    assert from_pool.status_code == from_inline.status_code == 200
    assert from_pool.json()["results"] == from_inline.json()["results"]


@pytest.mark.parametrize(("text", "cpus"), [("max 100000\n", None), ("200000 100000\n", 2), ("150000 100000\n", 2),
                                             ("50000 100000\n", 1), ("garbage\n", None)])
def test_the_pool_follows_a_container_cpu_quota(tmp_path, text, cpus) -> None:
    """cgroup v2 cpu.max is "<quota> <period>" or "max <period>" (Linux kernel documentation,
    admin-guide/cgroup-v2, "cpu.max")."""
    from familywise.api.batch import cpu_quota

    path = tmp_path / "cpu.max"
    path.write_text(text, encoding="ascii")
    assert cpu_quota(str(path)) == cpus
    assert cpu_quota(str(tmp_path / "absent")) is None

"""Every refusal is a 4xx problem+json naming the field and the rule."""

from __future__ import annotations

import pytest

from familywise.api.settings import Settings

OK = [1.0, 2.0, 3.0]


def _groups(*lists):
    return [{"label": f"g{i}", "values": v} for i, v in enumerate(lists)]


def _post(client, body=None, content=None, headers=None, path="/v1/omnibus"):
    if content is not None:
        return client.post(path, content=content,
                           headers=headers or {"content-type": "application/json"})
    return client.post(path, json=body)


CASES = [
    # (description, body or raw text, status, pointer, rule)
    ("one group", {"groups": _groups(OK)}, 422, "/groups", "too_short"),
    ("no groups", {"groups": []}, 422, "/groups", "too_short"),
    ("empty group", {"groups": _groups(OK, [])}, 422, "/groups/1/values", "too_short"),
    ("no within df", {"groups": _groups([1.0], [2.0])}, 422, "/groups", "within-df"),
    ("string value", {"groups": _groups(OK, [1.0, "2"])}, 422, "/groups/1/values/1", "value_error"),
    ("boolean value", {"groups": _groups(OK, [True, 2.0])}, 422, "/groups/1/values/0", "value_error"),
    ("null value", {"groups": _groups(OK, [None, 2.0])}, 422, "/groups/1/values/0", "value_error"),
    ("duplicate labels", {"groups": [{"label": "a", "values": OK}, {"label": "a", "values": OK}]},
     422, "/groups/1/label", "label-duplicate"),
    ("empty label", {"groups": [{"label": "", "values": OK}, {"label": "b", "values": OK}]},
     422, "/groups/0/label", "string_too_short"),
    ("blank label", {"groups": [{"label": "  ", "values": OK}, {"label": "b", "values": OK}]},
     422, "/groups/0/label", "label-empty"),
    ("label of 10 kB", {"groups": [{"label": "x" * 10_000, "values": OK}, {"label": "b", "values": OK}]},
     422, "/groups/0/label", "string_too_long"),
    ("alpha zero", {"groups": _groups(OK, OK), "alpha": 0}, 422, "/alpha", "alpha_range"),
    ("alpha above half", {"groups": _groups(OK, OK), "alpha": 0.6}, 422, "/alpha", "alpha_range"),
    ("alpha as string", {"groups": _groups(OK, OK), "alpha": "0.05"}, 422, "/alpha", "number_type"),
    ("unknown field", {"groups": _groups(OK, OK), "alhpa": 0.05}, 422, "/alhpa", "extra_forbidden"),
    ("all values identical", {"groups": _groups([5.0, 5.0], [5.0, 5.0])}, 422, "/groups", "constant-data"),
    ("zero within variance", {"groups": _groups([5.0, 5.0], [6.0, 6.0])}, 422, "/groups", "zero-variance"),
    ("huge value", {"groups": _groups(OK, [1e308, 2.0])}, 422, "/groups/1/values/0", "finite"),
    ("groups not a list", {"groups": {"a": OK}}, 422, "/groups", "list_type"),
]


@pytest.mark.parametrize(("description", "body", "status", "pointer", "rule"), CASES,
                         ids=[c[0] for c in CASES])
def test_refusals(client, description, body, status, pointer, rule) -> None:
    response = _post(client, body)
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert problem["status"] == status
    assert problem["pointer"] == pointer
    assert problem["rule"] == rule
    assert problem["detail"] and problem["title"] and problem["type"].startswith("/problems/")


RAW = [
    ("malformed JSON", '{"groups": [', 400, "json"),
    ("empty body", "", 400, "json"),
    ("NaN literal", '{"groups": [{"label": "a", "values": [NaN, 1]}, {"label": "b", "values": [1, 2]}]}',
     400, "json-number"),
    ("Infinity literal", '{"groups": [{"label": "a", "values": [Infinity]}]}', 400, "json-number"),
    ("duplicate key", '{"groups": [], "groups": []}', 400, "duplicate-key"),
    ("deep nesting", "[" * 5000 + "]" * 5000, 400, "depth"),
    ("not UTF-8", b'{"groups": "\xff\xfe"}', 400, "utf-8"),
]


@pytest.mark.parametrize(("description", "content", "status", "rule"), RAW, ids=[r[0] for r in RAW])
def test_malformed_bodies(client, description, content, status, rule) -> None:
    response = _post(client, content=content)
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == "application/problem+json"
    assert response.json()["rule"] == rule


def test_wrong_content_type(client) -> None:
    response = _post(client, content="groups", headers={"content-type": "text/plain"})
    assert response.status_code == 415
    assert response.json()["rule"] == "media-type"


def test_limits_are_named():
    from fastapi.testclient import TestClient

    from familywise.api.app import create_app

    small = TestClient(create_app(Settings(warm_up=False, max_body_bytes=2000, max_groups=3,
                                           max_values=10)))
    r = small.post("/v1/omnibus", json={"groups": _groups(OK, OK, OK, OK)})
    assert r.status_code == 422 and r.json()["rule"] == "max_groups"
    r = small.post("/v1/omnibus", json={"groups": _groups(OK * 3, OK * 2)})
    assert r.status_code == 422 and r.json()["rule"] == "max_values"
    r = small.post("/v1/omnibus", content=b"{" + b" " * 3000 + b"}",
                   headers={"content-type": "application/json"})
    assert r.status_code == 413 and r.json()["rule"] == "max_body_bytes"


def test_csv_refusals(client) -> None:
    def csv(text, query=""):
        return client.post("/v1/omnibus" + query, content=text, headers={"content-type": "text/csv"})

    r = csv("group,value\na,1\na,x\nb,2\n")
    assert r.status_code == 422 and r.json()["rule"] == "csv-number"
    # the bad cell is on line 3 of the file (the header is line 1)
    assert "line 3" in r.json()["detail"] and "'value'" in r.json()["detail"]
    assert r.json()["pointer"] == "/csv/lines/3/value"
    r = csv("kind,value\na,1\nb,2\n")
    assert r.status_code == 422 and r.json()["rule"] == "csv-column"
    r = csv("")
    assert r.status_code == 400 and r.json()["rule"] == "csv-empty"
    r = csv("group value\na 1\n")
    assert r.status_code == 400 and r.json()["rule"] == "csv-delimiter"
    r = csv("group,value\na,1\n", "?delimiter=%23")
    assert r.status_code == 400 and r.json()["rule"] == "csv-delimiter"

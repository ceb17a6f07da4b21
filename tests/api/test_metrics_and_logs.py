"""Operations (issue 7): /metrics counts and times requests per endpoint, method
and status, and computation time; the request id is taken from the caller or
made, and echoed; the access log is one JSON object per request carrying the
id and never the request's data.

The exposition format is Prometheus's text format, read with
prometheus_client's own parser. Data are invented (a plate assay whose values
and labels are chosen to be recognisable anywhere they might leak).
"""

from __future__ import annotations

import json
import logging
import re
from types import SimpleNamespace

import pytest
from prometheus_client.parser import text_string_to_metric_families

from familywise.api import logs, metrics

#: Values and labels that must never reach a log: digits and words no log line would otherwise hold.
SECRET_VALUES = ["73519.2846", "73521.9917", "73524.0388", "81632.5071", "81630.1142", "81635.7753"]
SECRET_LABELS = ["strain QX-7741 sealed", "strain ZW-0093 sealed"]
SECRET_PLATE = {"groups": [
    {"label": SECRET_LABELS[0], "values": [float(v) for v in SECRET_VALUES[:3]]},
    {"label": SECRET_LABELS[1], "values": [float(v) for v in SECRET_VALUES[3:]]},
]}
WELLS = {"groups": [{"label": "well A", "values": [41.2, 43.8, 42.5]},
                    {"label": "well B", "values": [48.7, 50.2, 49.5]}]}
HEX_ID = re.compile(r"^[0-9a-f]{32}$")


def _samples(client) -> dict[tuple[str, frozenset], float]:
    """Every sample of GET /metrics: (name, labels) -> value."""
    response = client.get("/metrics")
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/plain")
    return {(s.name, frozenset(s.labels.items())): s.value
            for family in text_string_to_metric_families(response.text) for s in family.samples}


def _value(samples, name: str, **labels: str) -> float:
    return samples.get((name, frozenset(labels.items())), 0.0)


# --------------------------------------------------------------------------
# /metrics
# --------------------------------------------------------------------------


def test_requests_are_counted_and_timed_per_endpoint_method_and_status(client) -> None:
    before = _samples(client)
    assert client.post("/v1/omnibus", json=WELLS).status_code == 200
    assert client.post("/v1/omnibus", json=WELLS).status_code == 200
    assert client.post("/v1/omnibus", json={"groups": WELLS["groups"][:1]}).status_code == 422
    assert client.get("/v1/no-such-endpoint").status_code == 404
    after = _samples(client)

    def grew(name: str, **labels: str) -> float:
        return _value(after, name, **labels) - _value(before, name, **labels)

    ok = {"endpoint": "/v1/omnibus", "method": "POST", "status": "200"}
    refused = {**ok, "status": "422"}
    unknown = {"endpoint": "other", "method": "GET", "status": "404"}
    assert grew("familywise_requests_total", **ok) == 2
    assert grew("familywise_requests_total", **refused) == 1
    assert grew("familywise_requests_total", **unknown) == 1
    assert grew("familywise_request_duration_seconds_count", **ok) == 2
    assert grew("familywise_request_duration_seconds_count", **refused) == 1
    assert grew("familywise_request_duration_seconds_count", **unknown) == 1
    assert grew("familywise_request_duration_seconds_sum", **ok) > 0
    assert grew("familywise_request_duration_seconds_bucket", **ok, le="+Inf") == 2
    # computation time: only the accepted requests computed anything
    assert grew("familywise_computation_seconds_count", operation="/v1/omnibus") == 2
    assert grew("familywise_computation_seconds_sum", operation="/v1/omnibus") > 0


def test_label_values_come_from_fixed_sets(client) -> None:
    """An unknown path or method is counted as "other": probing cannot add label values, and no
    label carries anything the caller wrote."""
    before = _samples(client)
    client.request("BREW", "/v1/omnibus")
    client.get("/v1/omnibus/" + SECRET_LABELS[0])
    client.post("/v1/omnibus", json=SECRET_PLATE)
    after = _samples(client)
    grown = {key for key, value in after.items() if value != before.get(key, 0.0)}
    methods = {dict(labels).get("method") for _, labels in grown} - {None}
    assert methods <= {"GET", "POST", "other"}, methods
    assert ("familywise_requests_total",
            frozenset({"endpoint": "/v1/omnibus", "method": "other", "status": "405"}.items())) in grown
    text = client.get("/metrics").text
    for secret in [*SECRET_LABELS, *SECRET_VALUES, "BREW"]:
        assert secret not in text


def test_family_computation_is_observed_by_family_and_method() -> None:
    """metrics.timed_family: one observation per family computed, labelled by the result."""
    name = "familywise_family_computation_seconds_count"

    def count(family: str, method: str) -> float:
        value = metrics.FAMILY_COMPUTATION.labels(family, method)._sum  # make the child exist
        del value
        return next(s.value for m in metrics.FAMILY_COMPUTATION.collect() for s in m.samples
                    if s.name == name and s.labels == {"family": family, "method": method})

    @metrics.timed_family
    def compute(request):
        if request == "bad data":
            raise ValueError(request)
        return SimpleNamespace(family="pairwise", method="games_howell")

    before = count("pairwise", "games_howell")
    assert compute("plate").method == "games_howell"
    assert compute.__name__ == "compute"
    with pytest.raises(ValueError):
        compute("bad data")
    assert count("pairwise", "games_howell") - before == 1


def test_the_family_of_an_analysis_and_of_batch_items_is_in_the_metrics(client) -> None:
    before = _samples(client)
    analysis = client.post("/v1/analysis", json={**WELLS, "question": {"reference": "control", "control": "well A"}})
    assert analysis.status_code == 200, analysis.text
    followup = analysis.json()["followup"]
    batch = client.post("/v1/batch", json={"items": [
        {"id": "a", "operation": "pairwise", "request": {**WELLS, "method": "games_howell"}},
        {"id": "b", "operation": "best", "request": WELLS}]})
    assert batch.status_code == 200, batch.text
    after = _samples(client)
    name = "familywise_family_computation_seconds_count"
    for family, method in [(followup["family"], followup["method"]), ("pairwise", "games_howell"),
                           ("best", batch.json()["results"][1]["result"]["method"])]:
        assert _value(after, name, family=family, method=method) > _value(before, name, family=family,
                                                                          method=method), (family, method)


# --------------------------------------------------------------------------
# request ids
# --------------------------------------------------------------------------


@pytest.mark.parametrize("request_id", ["plate-7.run_2:A1", "0", "a" * 128, "7f3c2e9a-1b2d-4c5e-8f90-123456789abc"])
def test_a_safe_request_id_is_echoed(client, request_id) -> None:
    ok = client.post("/v1/omnibus", json=WELLS, headers={"X-Request-ID": request_id})
    refused = client.post("/v1/omnibus", json={}, headers={"X-Request-ID": request_id})
    missing = client.get("/v1/nothing-here", headers={"X-Request-ID": request_id})
    assert (ok.status_code, refused.status_code, missing.status_code) == (200, 422, 404)
    for response in (ok, refused, missing):
        assert response.headers["x-request-id"] == request_id


@pytest.mark.parametrize("request_id", ["", "two words", "a" * 129, "semi;colon", "<script>", b"id\xc3\xa9",
                                        "comma,separated", "quote\"d", "tab\tinside"])
def test_an_unsafe_request_id_is_replaced(client, request_id) -> None:
    response = client.post("/v1/omnibus", json=WELLS, headers={"X-Request-ID": request_id})
    assert response.status_code == 200
    echoed = response.headers["x-request-id"]
    assert HEX_ID.match(echoed) and echoed != request_id


def test_a_request_id_is_made_when_none_is_sent(client) -> None:
    first = client.post("/v1/omnibus", json=WELLS).headers["x-request-id"]
    second = client.post("/v1/omnibus", json=WELLS).headers["x-request-id"]
    assert HEX_ID.match(first) and HEX_ID.match(second) and first != second


# --------------------------------------------------------------------------
# the access log
# --------------------------------------------------------------------------


def _formatted(caplog) -> list[str]:
    """The service's log records as JsonFormatter writes them (the test client's own httpx records,
    which name the URL it called, are the caller's, not the service's)."""
    formatter = logs.JsonFormatter()
    return [formatter.format(record) for record in caplog.records if not record.name.startswith(("httpx", "httpcore"))]


def test_the_access_log_is_one_json_object_per_request_with_its_id(client, caplog) -> None:
    with caplog.at_level(logging.INFO, logger="familywise"):
        response = client.post("/v1/omnibus", json=WELLS, headers={"X-Request-ID": "plate-7.access-log"})
        made = client.post("/v1/omnibus", json={"groups": []})
    access = [json.loads(line) for line in _formatted(caplog) if '"familywise.access"' in line]
    assert len(access) == 2
    first, second = access
    assert first["event"] == "request" and first["level"] == "info" and first["logger"] == "familywise.access"
    assert (first["request_id"], first["method"], first["path"], first["status"]) == (
        "plate-7.access-log", "POST", "/v1/omnibus", 200) == (response.headers["x-request-id"], "POST",
                                                              "/v1/omnibus", response.status_code)
    assert first["duration_ms"] >= 0 and first["time"].endswith("Z")
    assert (second["request_id"], second["status"]) == (made.headers["x-request-id"], 422)


def test_no_log_line_carries_data_values_or_labels(client, caplog) -> None:
    csv = "group,value\n" + "".join(f"{g['label']},{v}\n" for g in SECRET_PLATE["groups"] for v in g["values"])
    refused_csv = csv + f"{SECRET_LABELS[0]},{SECRET_VALUES[0]}x\n"
    with caplog.at_level(logging.DEBUG):
        assert client.post("/v1/omnibus", json=SECRET_PLATE).status_code == 200
        assert client.post("/v1/followup/control", json={**SECRET_PLATE, "control": SECRET_LABELS[0]}
                           ).status_code == 200
        assert client.post("/v1/followup/control", json={**SECRET_PLATE, "control": SECRET_VALUES[0]}
                           ).status_code == 422  # the detail names the value; the log must not
        assert client.post("/v1/followup/control?control=" + SECRET_LABELS[1].replace(" ", "%20"), content=csv,
                           headers={"content-type": "text/csv"}).status_code == 200
        assert client.post("/v1/omnibus", content=refused_csv, headers={"content-type": "text/csv"}
                           ).status_code == 422
        assert client.post("/v1/batch", json={"items": [
            {"id": "item 1", "operation": "omnibus", "request": SECRET_PLATE},
            {"id": "item 2", "operation": "control", "request": {**SECRET_PLATE, "control": "absent"}}]}
        ).status_code == 200
    lines = _formatted(caplog)
    assert sum('"familywise.access"' in line for line in lines) == 6, lines
    for line in lines:
        json.loads(line)
        for secret in [*SECRET_VALUES, *SECRET_LABELS, "QX-7741", "ZW-0093"]:
            assert secret not in line, line

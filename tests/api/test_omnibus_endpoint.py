"""POST /v1/omnibus end to end, JSON and CSV."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from familywise.api import examples


def test_demo_request_matches_scipy(client) -> None:
    response = client.post("/v1/omnibus", json=examples.BUFFER_PLATE)
    assert response.status_code == 200
    body = response.json()
    groups = [np.array(g["values"]) for g in examples.BUFFER_PLATE["groups"]]
    ref = stats.f_oneway(*groups)  # reference: scipy.stats.f_oneway
    assert body["anova"]["f"] == pytest.approx(ref.statistic, rel=1e-12)
    assert body["anova"]["p_value"] == pytest.approx(ref.pvalue, rel=1e-10)
    assert body["anova"]["between"]["df"] == 4 and body["anova"]["within"]["df"] == 25
    assert body["anova"]["total"]["ss"] == pytest.approx(
        body["anova"]["between"]["ss"] + body["anova"]["within"]["ss"], rel=1e-14)
    assert [g["label"] for g in body["groups"]] == [g["label"] for g in examples.BUFFER_PLATE["groups"]]
    # minimum and maximum are exactly the numbers as written
    assert body["groups"][0]["minimum"] == 40.9 and body["groups"][0]["maximum"] == 44.1
    for key in ("welch", "brown_forsythe", "kruskal_wallis", "levene", "shapiro_wilk",
                "effect_sizes", "diagnostics", "provenance"):
        assert key in body
    assert len(body["provenance"]["input_sha256"]) == 64
    assert body["diagnostics"]["notes"]


def test_same_request_same_bytes_and_hash_ignores_formatting(client) -> None:
    a = client.post("/v1/omnibus", json=examples.BUFFER_PLATE)
    b = client.post("/v1/omnibus", json=examples.BUFFER_PLATE)
    assert a.content == b.content
    # 41.2 written as 41.20 and alpha left to its default: same canonical input
    tweaked = {"groups": [dict(g) for g in examples.BUFFER_PLATE["groups"]]}
    text = client.post("/v1/omnibus", content=str(tweaked).replace("'", '"').replace("41.2,", "41.20,"),
                       headers={"content-type": "application/json"})
    assert text.status_code == 200
    assert text.json()["provenance"]["input_sha256"] == a.json()["provenance"]["input_sha256"]


def _hash_of(client, values: list[str]) -> str:
    first = ", ".join(values)
    body = '{"groups": [{"label": "a", "values": [' + first + ']}, {"label": "b", "values": [1, 2, 4]}]}'
    response = client.post("/v1/omnibus", content=body, headers={"content-type": "application/json"})
    assert response.status_code == 200, response.text
    return response.json()["provenance"]["input_sha256"]


def test_hash_sees_every_digit_and_only_the_value(client) -> None:
    # The hash names the exact input (design: provenance); values differing in the
    # 35th significant digit are different inputs, -0.0 and 0 are the same number.
    long = "1.0000000000000000000000000000000000001"
    longer = "1.0000000000000000000000000000000000002"
    assert _hash_of(client, [long, "2", "3"]) != _hash_of(client, [longer, "2", "3"])
    assert _hash_of(client, ["-0.0", "2", "3"]) == _hash_of(client, ["0", "2.000", "3"])


def test_csv_long_and_wide_equal_json(client) -> None:
    groups = examples.UNBALANCED_PLATE["groups"]
    reference = client.post("/v1/omnibus", json={"groups": groups, "alpha": 0.1}).json()
    long_rows = ["well,formulation,activity"] + [
        f"{i},{g['label']},{v}" for g in groups for i, v in enumerate(g["values"])]
    long = client.post("/v1/omnibus?alpha=0.1&group_column=formulation&value_column=activity",
                       content="\n".join(long_rows), headers={"content-type": "text/csv"})
    assert long.status_code == 200, long.text
    depth = max(len(g["values"]) for g in groups)
    wide_rows = [";".join(g["label"] for g in groups)] + [
        ";".join(str(g["values"][r]).replace(".", ",") if r < len(g["values"]) else "" for g in groups)
        for r in range(depth)]
    wide = client.post("/v1/omnibus?alpha=0.1&layout=wide&delimiter=;&decimal_separator=,",
                       content="\n".join(wide_rows), headers={"content-type": "text/csv"})
    assert wide.status_code == 200, wide.text
    for other in (long.json(), wide.json()):
        assert other["anova"] == reference["anova"]
        assert other["groups"] == reference["groups"]
        assert other["provenance"]["input_sha256"] == reference["provenance"]["input_sha256"]


def test_unicode_labels_echoed(client) -> None:
    groups = [{"label": "Puffer µ-A (pH 7,4) — 緩衝液", "values": [1.0, 2.0, 3.0]},
              {"label": "Ärger ✓", "values": [2.0, 3.5, 4.0]}]
    body = client.post("/v1/omnibus", json={"groups": groups}).json()
    assert [g["label"] for g in body["groups"]] == [g["label"] for g in groups]


def test_group_of_one_reports_no_sd(client) -> None:
    groups = [{"label": "a", "values": [1.0]}, {"label": "b", "values": [2.0, 3.0, 2.5]}]
    body = client.post("/v1/omnibus", json={"groups": groups}).json()
    assert body["groups"][0]["sd"] is None and body["groups"][0]["ci_low"] is None
    assert body["welch"]["p_value"] is None and body["welch"]["unavailable"]

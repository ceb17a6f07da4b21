"""The four follow-up endpoints end to end, and their refusals."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from familywise.api import examples

PLATE = examples.BUFFER_PLATE
UNBALANCED = examples.UNBALANCED_PLATE
FIXED_ROW = {"first", "second", "difference", "se", "statistic", "df", "p_value", "ci_low", "ci_high",
             "significant"}
FIXED_FAMILY = {"family", "method", "alpha", "critical_value", "comparisons", "error_rate", "summary",
                "provenance"}


def _post(client, path, **fields):
    return client.post(f"/v1/followup/{path}", json={**PLATE, **fields})


def test_pairwise_tukey_against_scipy(client) -> None:
    body = _post(client, "pairwise", method="tukey_kramer").json()
    assert body.keys() >= FIXED_FAMILY and body["error_rate"] == "familywise"
    groups = [np.array(g["values"]) for g in PLATE["groups"]]
    ref = stats.tukey_hsd(*groups)  # reference: scipy.stats.tukey_hsd
    labels = [g["label"] for g in PLATE["groups"]]
    assert len(body["comparisons"]) == 10
    for row in body["comparisons"]:
        assert row.keys() >= FIXED_ROW
        i, j = labels.index(row["first"]), labels.index(row["second"])
        assert row["difference"] == pytest.approx(groups[i].mean() - groups[j].mean(), rel=1e-12)
        assert row["p_value"] == pytest.approx(ref.pvalue[i, j], rel=1e-7, abs=1e-10)
        assert (row["ci_low"] > 0 or row["ci_high"] < 0) == row["significant"] == (row["p_value"] < 0.05)
    assert set(body["letters"]) == set(labels)
    assert body["summary"]


@pytest.mark.parametrize("method", ["lsd", "bonferroni", "sidak", "holm", "games_howell",
                                    "benjamini_hochberg", "dunn"])
def test_every_pairwise_method_answers(client, method) -> None:
    body = _post(client, "pairwise", method=method).json()
    assert body["method"] == method and len(body["comparisons"]) == 10
    expected = {"lsd": "per_comparison", "benjamini_hochberg": "false_discovery"}.get(method, "familywise")
    assert body["error_rate"] == expected
    for row in body["comparisons"]:
        assert 0.0 <= row["p_value"] <= 1.0
        if row["ci_low"] is not None:
            assert row["ci_low"] <= row["difference"] <= row["ci_high"]


def test_protected_lsd_without_a_significant_omnibus_declares_nothing(client) -> None:
    flat = {"groups": [{"label": "a", "values": [1.0, 2.0, 3.0]}, {"label": "b", "values": [1.5, 2.5, 3.1]},
                       {"label": "c", "values": [1.2, 2.2, 2.9]}], "method": "lsd", "protected": True}
    body = client.post("/v1/followup/pairwise", json=flat).json()
    assert not any(r["significant"] for r in body["comparisons"])
    assert any("Protected LSD" in n for n in body["notes"])


def test_control_rows_and_one_sided_intervals(client) -> None:
    body = client.post("/v1/followup/control", json={**UNBALANCED, "control": "reference buffer",
                                                     "alternative": "greater"}).json()
    assert body["family"] == "control" and body["alternative"] == "greater"
    assert [r["second"] for r in body["comparisons"]] == ["reference buffer"] * 4
    assert all(r["ci_high"] is None and r["ci_low"] is not None for r in body["comparisons"])
    stepdown = client.post("/v1/followup/control", json={**UNBALANCED, "control": "reference buffer",
                                                         "method": "dunnett_stepdown"}).json()
    assert stepdown["critical_value"] is None
    assert all(r["ci_low"] is None and r["critical_value"] for r in stepdown["comparisons"])


def test_best_reports_the_candidate_set(client) -> None:
    body = client.post("/v1/followup/best", json={**UNBALANCED, "best": "highest"}).json()
    assert body["best_set"] == ["HEPES pH 7.5"]
    assert all(r["second"] == "best of others" for r in body["comparisons"])
    assert [r["may_be_best"] for r in body["comparisons"]] == [r["first"] in body["best_set"]
                                                               for r in body["comparisons"]]
    lowest = client.post("/v1/followup/best", json={**UNBALANCED, "best": "lowest"}).json()
    assert lowest["best_set"] == ["citrate pH 6.0"]


def test_contrasts_with_every_adjustment(client) -> None:
    for adjustment in ("none", "bonferroni", "sidak", "holm", "multivariate_t", "scheffe"):
        body = client.post("/v1/followup/contrasts", json={
            **PLATE, "contrasts": examples.PLANNED_CONTRASTS, "adjustment": adjustment}).json()
        assert body["method"] == adjustment, body
        assert [r["name"] for r in body["comparisons"]] == [c["name"] for c in examples.PLANNED_CONTRASTS]
        for row in body["comparisons"]:
            assert row["f"] == pytest.approx(row["statistic"] ** 2, rel=1e-12)


REFUSALS = [
    ("pairwise", {"groups": [{"label": "a", "values": [1.0]}, {"label": "b", "values": [2.0]}]},
     "/groups", "within-df"),
    ("pairwise", {"groups": [{"label": "a", "values": [1.0, 1.0]}, {"label": "b", "values": [2.0, 2.0]}]},
     "/groups", "zero-variance"),
    ("pairwise", {**PLATE, "method": "dunnett"}, "/method", "literal_error"),
    ("pairwise", {**PLATE, "protected": "yes"}, "/protected", "bool_type"),
    ("pairwise", {"groups": [{"label": "a", "values": [1.0]}, {"label": "b", "values": [2.0, 3.0]}],
                  "method": "games_howell"}, "/groups", "group-size"),
    ("control", {**PLATE, "control": "no such buffer"}, "/control", "unknown-group"),
    ("control", {**PLATE}, "/control", "missing"),
    ("control", {**PLATE, "control": "reference buffer", "method": "tukey_kramer"}, "/method",
     "literal_error"),
    ("best", {**PLATE, "best": "middle"}, "/best", "literal_error"),
    ("contrasts", {**PLATE, "contrasts": [{"name": "x", "coefficients": {"HEPES pH 7.5": 1}}]},
     "/contrasts/0/coefficients", "sum-to-zero"),
    ("contrasts", {**PLATE, "contrasts": [{"name": "x", "coefficients": {"nope": 1, "HEPES pH 7.5": -1}}]},
     "/contrasts/0/coefficients/nope", None),
    ("contrasts", {**PLATE, "contrasts": []}, "/contrasts", "too_short"),
]


@pytest.mark.parametrize(("path", "body", "pointer", "rule"), REFUSALS)
def test_refusals(client, path, body, pointer, rule) -> None:
    response = client.post(f"/v1/followup/{path}", json=body)
    assert response.status_code == 422, response.text
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert problem["pointer"] == pointer
    if rule is not None:
        assert problem["rule"] == rule


def test_csv_body_on_a_family(client) -> None:
    rows = ["group,value"] + [f"{g['label']},{v}" for g in PLATE["groups"] for v in g["values"]]
    csv = client.post("/v1/followup/control?control=reference%20buffer&alpha=0.01",
                      content="\n".join(rows), headers={"content-type": "text/csv"})
    json = client.post("/v1/followup/control", json={**PLATE, "control": "reference buffer", "alpha": 0.01})
    assert csv.status_code == 200, csv.text
    assert csv.json()["comparisons"] == json.json()["comparisons"]

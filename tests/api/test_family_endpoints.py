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
    # Fisher (1935): no pair is declared unless the omnibus F test rejects; the
    # F p-value from scipy.stats.f_oneway. Each p-value is max(p_F, p_pair),
    # so p, significant and the (absent) intervals cannot disagree.
    flat = {"groups": [{"label": "a", "values": [1.0, 2.0, 3.0]}, {"label": "b", "values": [1.5, 2.5, 3.1]},
                       {"label": "c", "values": [1.2, 2.2, 2.9]}], "method": "lsd", "protected": True}
    body = client.post("/v1/followup/pairwise", json=flat).json()
    p_f = stats.f_oneway(*[np.array(g["values"]) for g in flat["groups"]]).pvalue
    assert p_f > 0.05
    assert not any(r["significant"] for r in body["comparisons"])
    assert all(r["p_value"] >= p_f - 1e-12 and r["p_value"] >= 0.05 for r in body["comparisons"])
    assert body["interval"] == "none" and body["critical_value"] is None
    assert all(r["ci_low"] is None and r["ci_high"] is None for r in body["comparisons"])
    assert any("Protected LSD" in n for n in body["notes"])


def test_protected_lsd_after_a_significant_omnibus_agrees_with_its_intervals(client) -> None:
    # The buffer plate's F test is significant (scipy.stats.f_oneway); then the
    # protected LSD declares what the LSD declares, with its t intervals, and
    # every row's interval excludes zero exactly when p < alpha.
    groups = [np.array(g["values"]) for g in PLATE["groups"]]
    assert stats.f_oneway(*groups).pvalue < 0.05
    body = _post(client, "pairwise", method="lsd", protected=True).json()
    plain = _post(client, "pairwise", method="lsd").json()
    assert body["interval"] == "per_comparison"
    for row, unprotected in zip(body["comparisons"], plain["comparisons"], strict=True):
        assert (row["ci_low"] > 0 or row["ci_high"] < 0) == row["significant"] == (row["p_value"] < 0.05)
        assert row["significant"] == unprotected["significant"]


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


def _hsu_candidates(groups, labels, highest=True, alpha=0.05) -> list[str]:
    """The groups that may be best, from Hsu's (1996, ch. 4) definition:
    group i stays a candidate when min_j (m_i - m_j + d_i se_ij) > 0, d_i
    the one-sided many-to-one quantile with i as reference. The decision is
    settled here without computing d_i: d_i lies between the one-sided
    t quantile at alpha (one rival; scipy.stats.t) and the Bonferroni
    quantile at alpha / (k - 1) (the union bound), and the data must give the
    same decision at both ends, otherwise this derivation refuses to decide."""
    sign = 1.0 if highest else -1.0
    m = sign * np.array([g.mean() for g in groups])
    n = np.array([g.size for g in groups], dtype=float)
    k, df = len(groups), int(n.sum()) - len(groups)
    s = np.sqrt(sum(((g - g.mean()) ** 2).sum() for g in groups) / df)
    d_low, d_high = stats.t.isf(alpha, df), stats.t.isf(alpha / (k - 1), df)
    out = []
    for i in range(k):
        gaps = [(m[i] - m[j], s * np.sqrt(1 / n[i] + 1 / n[j])) for j in range(k) if j != i]
        at_low = min(g + d_low * se for g, se in gaps) > 0
        at_high = min(g + d_high * se for g, se in gaps) > 0
        assert at_low == at_high, f"{labels[i]}: the bounds on d_i do not settle the decision"
        if at_low:
            out.append(labels[i])
    return out


def test_best_reports_the_candidate_set(client) -> None:
    groups = [np.array(g["values"]) for g in UNBALANCED["groups"]]
    labels = [g["label"] for g in UNBALANCED["groups"]]
    body = client.post("/v1/followup/best", json={**UNBALANCED, "best": "highest"}).json()
    assert body["best_set"] == _hsu_candidates(groups, labels, highest=True)  # == ["HEPES pH 7.5"]
    assert all(r["second"] == "best of others" for r in body["comparisons"])
    assert [r["may_be_best"] for r in body["comparisons"]] == [r["first"] in body["best_set"]
                                                               for r in body["comparisons"]]
    lowest = client.post("/v1/followup/best", json={**UNBALANCED, "best": "lowest"}).json()
    assert lowest["best_set"] == _hsu_candidates(groups, labels, highest=False)  # == ["citrate pH 6.0"]


@pytest.mark.parametrize("fields", [{"method": "lsd", "protected": True}, {"method": "lsd", "protected": False},
                                    {"method": "tukey_kramer", "protected": False},
                                    {"method": "dunn", "dunn_adjustment": "none"}])
def test_options_of_the_chosen_method_are_accepted(client, fields) -> None:
    # protected false asks for nothing another method would not do; the refusals are above
    assert _post(client, "pairwise", **fields).status_code == 200


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
    # an option of another method is refused, not ignored (design.md: nothing silently dropped)
    ("pairwise", {**PLATE, "method": "tukey_kramer", "protected": True}, "/protected", "contradiction"),
    ("pairwise", {**PLATE, "protected": True}, "/protected", "contradiction"),
    ("pairwise", {**PLATE, "method": "dunn", "protected": True}, "/protected", "contradiction"),
    ("pairwise", {**PLATE, "method": "tukey_kramer", "dunn_adjustment": "none"}, "/dunn_adjustment",
     "contradiction"),
    ("pairwise", {**PLATE, "method": "lsd", "dunn_adjustment": "holm"}, "/dunn_adjustment", "contradiction"),
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

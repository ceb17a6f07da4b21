"""POST /v1/followup/equivalence end to end: the interval level, the flags,
the alpha rule, and the critical value's basis.

Sources: statsmodels CompareMeans.tconfint_diff (pooled) for a one-candidate
interval at the implied level; the control endpoint for the one-sided Dunnett
quantile; the rest are rules of ours (common practice, no source), named at
each check.
"""

from __future__ import annotations

import numpy as np
import pytest
from statsmodels.stats.weightstats import CompareMeans, DescrStatsW

from familywise.api import examples

PATH = "/v1/followup/equivalence"
BODY = {**examples.BUFFER_PLATE, "reference": "reference buffer", "margin": 2.0}
PROBLEM = "application/problem+json"


@pytest.mark.parametrize("alpha", [0.5])
@pytest.mark.parametrize("kind", ["equivalence", "non_inferiority", "non_superiority"])
def test_alpha_of_one_half_is_refused(client, alpha, kind) -> None:
    # Rule of ours: at alpha = 0.5 the one-sided critical value is 0 and the interval's level
    # (1 - 2 alpha) is 0, so equivalence refuses alpha >= 0.5 and names /alpha and the rule.
    response = client.post(PATH, json={**BODY, "alpha": alpha, "kind": kind})
    assert response.status_code == 422, response.text
    assert response.headers["content-type"] == PROBLEM
    problem = response.json()
    assert (problem["pointer"], problem["rule"]) == ("/alpha", "alpha-below-half")
    assert "0.5" in problem["detail"]


def test_alpha_rule_in_analysis_names_the_top_level_alpha(client) -> None:
    body = {**examples.BUFFER_PLATE, "alpha": 0.5,
            "question": {"reference": "control", "control": "reference buffer", "goal": "equivalence",
                         "margin": 2.0}}
    response = client.post("/v1/analysis", json=body)
    assert response.status_code == 422, response.text
    assert (response.json()["pointer"], response.json()["rule"]) == ("/alpha", "alpha-below-half")


def test_schema_states_the_alpha_limit(client) -> None:
    schema = client.get("/openapi.json").json()["components"]["schemas"]["EquivalenceRequest"]
    assert schema["properties"]["alpha"]["exclusiveMaximum"] == 0.5


@pytest.mark.parametrize("method", ["dunnett_tost", "bonferroni_tost", "tost"])
def test_interval_level_and_flags(client, method) -> None:
    # Level: 1 - 2 alpha for two-sided equivalence, 1 - alpha one-sided (Berger and Hsu 1996).
    # Flags: a candidate is equivalent exactly when its interval lies inside the margin.
    for alpha in (0.05, 0.1):
        answer = client.post(PATH, json={**BODY, "method": method, "alpha": alpha}).json()
        assert answer["extra"]["interval_level"] == pytest.approx(1 - 2 * alpha)
        assert any(f"level at least {1 - 2 * alpha:g}" in n or f"level {1 - 2 * alpha:g}" in n
                   for n in answer["notes"])
        for row in answer["comparisons"]:
            assert row["equivalent"] is (row["ci_low"] > -2.0 and row["ci_high"] < 2.0) is row["significant"]
            assert "non_inferior" not in row and "non_superior" not in row
        one_sided = client.post(PATH, json={**BODY, "method": method, "alpha": alpha,
                                            "kind": "non_inferiority"}).json()
        assert one_sided["extra"]["interval_level"] == pytest.approx(1 - alpha)
        for row in one_sided["comparisons"]:
            assert row["non_inferior"] is (row["ci_low"] > -2.0) is row["significant"]
            assert row["ci_high"] is None
            assert "equivalent" not in row


def test_buffer_plate_decisions(client) -> None:
    # The plate's means (arithmetic): reference 42.42, phosphate 45.65, HEPES 49.40, Tris 43.05,
    # citrate 39.00. With a margin of 2 only Tris (0.63 above) can be equivalent; phosphate and
    # HEPES are more than 2 above, citrate more than 2 below, so they are not.
    answer = client.post(PATH, json=BODY).json()
    flags = {row["first"]: row["equivalent"] for row in answer["comparisons"]}
    assert not flags["phosphate pH 7.0"] and not flags["HEPES pH 7.5"] and not flags["citrate pH 6.0"]
    tris = next(r for r in answer["comparisons"] if r["first"] == "Tris pH 8.0")
    assert tris["difference"] == pytest.approx(43.05 - 42.41666666666667, rel=1e-12)
    assert tris["equivalent"] is (tris["ci_low"] > -2 and tris["ci_high"] < 2)
    assert answer["extra"]["critical_value_basis"] == "worst_sign_pattern"


def test_single_candidate_interval_matches_statsmodels(client) -> None:
    # reference: statsmodels CompareMeans.tconfint_diff(alpha = 2 * 0.05, usevar="pooled"), the 90% interval
    groups = examples.BUFFER_PLATE["groups"][:2]
    answer = client.post(PATH, json={"groups": groups, "reference": "reference buffer", "margin": 4.0}).json()
    x, y = (np.array(g["values"]) for g in (groups[1], groups[0]))
    low, high = CompareMeans(DescrStatsW(x), DescrStatsW(y)).tconfint_diff(alpha=0.1, usevar="pooled")
    row = answer["comparisons"][0]
    assert (row["ci_low"], row["ci_high"]) == pytest.approx((low, high), rel=1e-12)
    assert row["equivalent"] is bool(low > -4.0 and high < 4.0)
    assert answer["extra"]["interval_level"] == pytest.approx(0.9)


def test_relative_margin_note(client) -> None:
    answer = client.post(PATH, json={**BODY, "margin": {"relative": 0.05}}).json()
    assert answer["extra"]["margin_kind"] == "relative"
    assert any("sampling error is not taken into account" in n for n in answer["notes"])

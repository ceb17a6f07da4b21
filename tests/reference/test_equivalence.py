"""Equivalence and non-inferiority against outside references.

Sources, named at each check: statsmodels.stats.weightstats.ttost_ind
(pooled-variance TOST, Schuirmann 1987) for a single comparison; the
control-family endpoint's one-sided Dunnett quantile for the simultaneous
critical value; a seeded simulation at the margin boundary for the familywise
error (the definition of familywise error; Berger and Hsu 1996).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from statsmodels.stats.weightstats import ttost_ind

from familywise.api import examples
from familywise.stats.data import OneWayData
from familywise.stats.families import versus_control
from familywise.stats.families.equivalence import equivalence_family


def test_single_comparison_matches_statsmodels_ttost() -> None:
    rng = np.random.default_rng(3)
    reference, candidate = rng.normal(10, 1, 9), rng.normal(10.3, 1, 11)
    data = OneWayData.from_arrays(["ref", "new"], [reference, candidate])
    for kind in ("equivalence", "non_inferiority", "non_superiority"):
        ours = equivalence_family(data, "ref", 1.2, kind=kind, method="tost").comparisons[0]
        # reference: statsmodels ttost_ind(x1, x2, low, upp, usevar="pooled"): new - ref in (-1.2, 1.2)
        p, lower, upper = ttost_ind(candidate, reference, -1.2, 1.2, usevar="pooled")
        assert ours.p_lower == pytest.approx(lower[1], rel=1e-10)
        assert ours.p_upper == pytest.approx(upper[1], rel=1e-10)
        expected = {"equivalence": p, "non_inferiority": lower[1], "non_superiority": upper[1]}[kind]
        assert ours.p_value == pytest.approx(expected, rel=1e-10)
        assert ours.significant == (expected < 0.05)


def test_tost_interval_is_the_one_minus_two_alpha_interval() -> None:
    # Schuirmann (1987): TOST at alpha concludes equivalence exactly when the
    # 1 - 2 alpha interval lies inside the margin.
    rng = np.random.default_rng(4)
    groups = [rng.normal(10, 1, 8), rng.normal(10.2, 1, 8), rng.normal(11.5, 1, 8)]
    data = OneWayData.from_arrays(["ref", "a", "b"], groups)
    result = equivalence_family(data, "ref", 1.0, method="tost", alpha=0.05)
    from scipy import stats

    q = stats.t.isf(0.05, 21)
    for row in result.comparisons:
        assert (row.ci_low, row.ci_high) == pytest.approx((row.difference - q * row.se, row.difference + q * row.se))
        assert row.significant == (row.ci_low > -1.0 and row.ci_high < 1.0) == (row.p_value < 0.05)


def test_simultaneous_critical_value_is_the_one_sided_many_to_one_quantile(client) -> None:
    # The dunnett_tost multiplier must equal the one-sided Dunnett critical
    # value of the control family for the same data (cross-check through the
    # control endpoint).
    body = {**examples.UNBALANCED_PLATE, "reference": "reference buffer", "margin": 3.0}
    equivalence = client.post("/v1/followup/equivalence", json=body).json()
    control = client.post("/v1/followup/control", json={
        **examples.UNBALANCED_PLATE, "control": "reference buffer", "alternative": "greater"}).json()
    assert equivalence["critical_value"] == pytest.approx(control["critical_value"], rel=1e-12)
    for e, c in zip(equivalence["comparisons"], control["comparisons"], strict=True):
        assert e["se"] == pytest.approx(c["se"], rel=1e-14)
        assert e["ci_low"] == pytest.approx(e["difference"] - equivalence["critical_value"] * e["se"])


@pytest.mark.parametrize("method", ["dunnett_tost", "bonferroni_tost"])
def test_familywise_error_at_the_margin_boundary(method) -> None:
    # Every candidate sits exactly at +margin (not equivalent, same side): the
    # chance that any is called equivalent must be at most alpha, within
    # three Monte Carlo standard errors.
    rng = np.random.default_rng(11)
    sizes, margin, alpha, replicates = (8, 7, 9, 8), 1.0, 0.05, 2000
    labels = ["ref", "a", "b", "c"]
    wrong = 0
    for _ in range(replicates):
        groups = [rng.normal(0.0 if i == 0 else margin, 1.0, n) for i, n in enumerate(sizes)]
        result = equivalence_family(OneWayData.from_arrays(labels, groups), "ref", margin, method=method,
                                    alpha=alpha)
        wrong += any(r.significant for r in result.comparisons)
    rate = wrong / replicates
    assert rate <= alpha + 3 * math.sqrt(alpha * (1 - alpha) / replicates), rate


def test_relative_margin_is_stated_in_data_units() -> None:
    data = OneWayData.from_arrays(["ref", "a"], [np.array([40.0, 42.0, 44.0]), np.array([41.0, 43.0, 45.0])])
    result = equivalence_family(data, "ref", 0.1, relative=True, method="tost")
    assert result.extra["margin"] == pytest.approx(4.2)
    assert result.extra["margin_kind"] == "relative"
    assert result.comparisons[0].conclusion


BAD = [
    ({"margin": 0}, "/margin"),
    ({"margin": -1.5}, "/margin"),
    ({"reference": "not a buffer"}, "/reference"),
    ({"margin": {"relative": 0.1}, "groups": [{"label": "reference buffer", "values": [-1.0, 1.0]},
                                              {"label": "b", "values": [0.5, 1.5]}]}, "/margin/relative"),
    ({"kind": "superiority"}, "/kind"),
    ({"method": "dunnett"}, "/method"),
]


@pytest.mark.parametrize(("change", "pointer"), BAD)
def test_bad_input(client, change, pointer) -> None:
    body = {**examples.BUFFER_PLATE, "reference": "reference buffer", "margin": 2.0, **change}
    response = client.post("/v1/followup/equivalence", json=body)
    assert response.status_code == 422, response.text
    assert response.headers["content-type"] == "application/problem+json"
    assert response.json()["pointer"] == pointer


def test_recommendation_routes_equivalence_questions(client) -> None:
    body = {**examples.BUFFER_PLATE, "question": {"reference": "control", "control": "reference buffer",
                                                  "goal": "equivalence", "margin": 2.0}}
    recommendation = client.post("/v1/recommendation", json=body).json()
    assert (recommendation["family"], recommendation["method"]) == ("equivalence", "dunnett_tost")
    assert recommendation["options"]["margin"] == 2.0
    analysis = client.post("/v1/analysis", json=body).json()
    direct = client.post("/v1/followup/equivalence", json={
        **examples.BUFFER_PLATE, "reference": "reference buffer", "margin": 2.0}).json()
    assert analysis["followup"]["comparisons"] == direct["comparisons"]


def test_versus_control_and_equivalence_share_the_estimates() -> None:
    rng = np.random.default_rng(6)
    data = OneWayData.from_arrays(["r", "a", "b"], [rng.normal(0, 1, 6), rng.normal(0.2, 1, 7),
                                                     rng.normal(-0.1, 1, 5)])
    control = versus_control(data, "r")
    equivalence = equivalence_family(data, "r", 1.0)
    for c, e in zip(control.comparisons, equivalence.comparisons, strict=True):
        assert (c.difference, c.se) == (e.difference, e.se)

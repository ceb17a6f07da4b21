"""Power and sample size against outside references.

Sources, named at each check: statsmodels FTestAnovaPower (noncentral F,
lambda = f^2 N); Cohen (1988), Table 8.4.4 (n per group for power 0.80 at
alpha 0.05), values from memory, compared to the tables' printed precision
(Cohen's tables come from a normal approximation to the noncentral F, which
moves some cells by one unit of n); scipy.stats.nct for the exact
per-comparison power; a direct Monte Carlo of Hsu's MCB on simulated raw data
for the simulated family power.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from statsmodels.stats.power import FTestAnovaPower

from familywise.stats.data import OneWayData
from familywise.stats.families import versus_best
from familywise.stats.planning import cohens_f_from_means, family_power, omnibus_power, plan_family, plan_omnibus


def test_unrounded_total_matches_statsmodels() -> None:
    # reference: statsmodels FTestAnovaPower; the issue measured 72.2 for f = 0.40, k = 4.
    ours = plan_omnibus(4, 0.05, 0.80, 0.40)
    reference = FTestAnovaPower().solve_power(effect_size=0.40, nobs=None, alpha=0.05, power=0.80, k_groups=4)
    assert ours.unrounded_total_n == pytest.approx(reference, rel=1e-6)
    assert round(ours.unrounded_total_n, 1) == 72.2
    assert ours.n_per_group == math.ceil(reference / 4) and ours.total_n == 4 * ours.n_per_group
    assert ours.achieved_power >= 0.80
    assert omnibus_power(0.40, 4, 4 * (ours.n_per_group - 1), 0.05) < 0.80


@pytest.mark.parametrize(("k", "f"), [(2, 0.25), (3, 0.25), (4, 0.10), (5, 0.40), (6, 0.25)])
def test_power_matches_statsmodels(k, f) -> None:
    # reference: statsmodels FTestAnovaPower.power at the planned N
    plan = plan_omnibus(k, 0.05, 0.8, f)
    reference = FTestAnovaPower().power(effect_size=f, nobs=plan.total_n, alpha=0.05, k_groups=k)
    assert plan.achieved_power == pytest.approx(reference, rel=1e-8)


COHEN_TABLE = [  # (k, f, n per group for power .80 at alpha .05), Cohen (1988) Table 8.4.4, from memory
    (2, 0.10, 393), (2, 0.25, 64), (2, 0.40, 26),
    (3, 0.25, 52),
    (4, 0.10, 274), (4, 0.25, 45), (4, 0.40, 18),
]


@pytest.mark.parametrize(("k", "f", "n"), COHEN_TABLE)
def test_cohen_tables_to_their_printed_precision(k, f, n) -> None:
    # Cohen's n reaches his .80 to the table's two decimals (power >= .795),
    # and our smallest n is his or one more (his approximation is slightly generous).
    assert omnibus_power(f, k, k * n, 0.05) >= 0.795
    assert plan_omnibus(k, 0.05, 0.80, f).n_per_group in (n, n + 1)


def test_effect_from_means_and_sd() -> None:
    # Cohen (1988), eq. 8.2.1: f = sigma_m / sigma with sigma_m the SD of the means.
    means, sd = [40.0, 42.0, 44.0, 46.0], 4.0
    assert cohens_f_from_means(means, sd) == pytest.approx(np.std(means) / sd, rel=1e-14)


def test_exact_per_comparison_power_by_simulation() -> None:
    # The Tukey-Kramer and Dunnett powers are exact noncentral-t probabilities;
    # check them against a direct simulation of the pair's t statistic.
    from familywise.stats.distributions import many_to_one_isf, studentized_range_isf

    rng = np.random.default_rng(2)
    k, n, delta, sd, reps = 5, 10, 1.2, 1.0, 200_000
    nu = k * (n - 1)
    t = (delta + rng.normal(0, sd * math.sqrt(2 / n), reps)) / (sd * np.sqrt(rng.chisquare(nu, reps) / nu)
                                                                 * math.sqrt(2 / n))
    tukey = studentized_range_isf(0.05, k, nu) / math.sqrt(2)
    dunnett = many_to_one_isf(0.05, np.full(k - 1, math.sqrt(0.5)), nu)
    se = 3 * math.sqrt(0.25 / reps)
    assert family_power("pairwise", k, n, 0.05, delta, sd)[0] == pytest.approx(np.mean(np.abs(t) > tukey), abs=se)
    assert family_power("control", k, n, 0.05, delta, sd)[0] == pytest.approx(np.mean(np.abs(t) > dunnett), abs=se)


def test_mcb_simulated_power_agrees_with_a_direct_monte_carlo() -> None:
    # The planner simulates the group means and the pooled SD; the direct check
    # simulates raw data and runs the MCB procedure itself.
    k, n, delta, sd = 4, 8, 1.5, 1.0
    planned, error = family_power("best", k, n, 0.05, delta, sd)
    rng = np.random.default_rng(9)
    reps, excluded = 1500, 0
    labels = [f"g{i}" for i in range(k)]
    for _ in range(reps):
        groups = [rng.normal(delta if i == 0 else 0.0, sd, n) for i in range(k)]
        result = versus_best(OneWayData.from_arrays(labels, groups), "highest", 0.05)
        excluded += not result.comparisons[1].may_be_best
    direct = excluded / reps
    direct_error = math.sqrt(direct * (1 - direct) / reps)
    assert planned == pytest.approx(direct, abs=3 * math.hypot(error, direct_error))


def test_family_plans_reach_the_target_with_the_fewest_replicates() -> None:
    for family in ("pairwise", "control", "best"):
        plan = plan_family(family, None, 5, 0.05, 0.8, 2.0, 1.5)
        assert plan.achieved_power >= 0.8
        assert family_power(family, 5, plan.n_per_group - 1, 0.05, 2.0, 1.5)[0] < 0.8
        assert (plan.power_standard_error is not None) == (family == "best")


BAD = [
    ({"k": 1, "power": 0.8, "effect": {"cohens_f": 0.3}}, "/k"),
    ({"k": 4, "power": 1.2, "effect": {"cohens_f": 0.3}}, "/power"),
    ({"k": 4, "power": 0.8, "effect": {"cohens_f": -0.3}}, "/effect"),
    ({"k": 4, "power": 0.8, "effect": {"cohens_f": 0.3, "means": [1, 2, 3, 4], "sd": 1}}, "/effect"),
    ({"k": 4, "power": 0.8, "effect": {"means": [1, 2, 3], "sd": 1}}, "/effect/means"),
    ({"k": 4, "power": 0.8, "effect": {"means": [1, 2, 3, 4]}}, "/effect/sd"),
    ({"k": 4, "power": 0.8, "effect": {}}, "/effect"),
    ({"k": 4, "power": 0.8, "family": "control", "effect": {"sd": 1.0}}, "/difference"),
    ({"k": 4, "power": 0.8, "family": "control", "difference": 1.0, "effect": {}}, "/effect/sd"),
    ({"k": 4, "power": 0.8, "family": "best", "method": "dunnett", "difference": 1, "effect": {"sd": 1}},
     "/method"),
    ({"k": 4, "power": 0.8, "family": "pairwise", "alternative": "greater", "difference": 1,
      "effect": {"sd": 1}}, "/alternative"),
    ({"k": 4, "power": 0.8, "difference": 1.0, "effect": {"cohens_f": 0.3}}, "/family"),
    ({"k": "4", "power": 0.8, "effect": {"cohens_f": 0.3}}, "/k"),
]


@pytest.mark.parametrize(("body", "pointer"), BAD)
def test_bad_plan_requests(client, body, pointer) -> None:
    response = client.post("/v1/plan", json=body)
    assert response.status_code == 422, response.text
    assert response.json()["pointer"] == pointer


def test_plan_endpoint_states_the_rounding(client) -> None:
    body = client.post("/v1/plan", json={"k": 4, "power": 0.8, "effect": {"cohens_f": 0.4}}).json()
    assert body["n_per_group"] == 19 and body["total_n"] == 76
    assert "smallest whole number" in body["rounding"]
    assert body["unrounded_total_n"] == pytest.approx(72.17, abs=0.01)

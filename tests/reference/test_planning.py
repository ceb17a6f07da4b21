"""Power and sample size against outside references.

Sources, named at each check: statsmodels FTestAnovaPower (noncentral F,
lambda = f^2 N); an independent computation of the noncentral F power as a
Poisson mixture of central F tails (Johnson, Kotz and Balakrishnan 1995,
Continuous Univariate Distributions vol. 2, ch. 30), and scipy.stats.ncf, at
the grid of Cohen's (1988) power tables 8.3.1-8.3.33 (power of the F test for
given u, f, n; the printed power cells themselves could not be reproduced here
with certainty, so they are not used); Cohen (1988), Table 8.4.4 (n per group
for power .80 at alpha .05), values from memory, checked at the tables'
printed precision (two decimals of power); scipy.stats.nct with the Dunnett
(1955) one-sided critical value, computed here by quadrature, for the exact
per-comparison power; a direct Monte Carlo of Hsu's MCB on simulated raw data
for the simulated family power.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats
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


def _mixture_power(f: float, u: int, n: int, alpha: float) -> float:
    """Power of the one-way F test with u + 1 groups of n, from first principles:
    a noncentral chi-square with u df and noncentrality lambda is a central
    chi-square with u + 2J df, J ~ Poisson(lambda / 2) (Johnson, Kotz and
    Balakrishnan 1995, ch. 30), so P(F' > c) = sum_j P(J = j) P(F_{u+2j, v} >
    c u / (u + 2j)). lambda = f^2 N is Cohen's (1988, ch. 8) noncentrality
    (statsmodels FTestAnovaPower uses the same)."""
    total = (u + 1) * n
    v = total - u - 1
    lam = f * f * total
    c = stats.f.isf(alpha, u, v)
    j = np.arange(0, int(lam / 2 + 40 * math.sqrt(lam / 2 + 1) + 50))
    return float(np.sum(stats.poisson.pmf(j, lam / 2) * stats.f.sf(c * u / (u + 2 * j), u + 2 * j, v)))


# The grid of Cohen's (1988) power tables 8.3.1-8.3.33: alpha .01, .05, .10;
# u = 1-6, 8, 10, 12, 15, 24; f from .05 to .80; n per group in rows (a subset).
COHEN_GRID_U = (1, 2, 3, 4, 5, 6, 8, 10, 12, 15, 24)
COHEN_GRID_F = (0.05, 0.10, 0.25, 0.40, 0.80)
COHEN_GRID_N = (5, 10, 20, 50, 100)


@pytest.mark.parametrize("alpha", [0.01, 0.05, 0.10])
def test_power_at_the_grid_of_cohens_power_tables(alpha) -> None:
    # reference: the Poisson mixture above and scipy.stats.ncf, both exact; compared
    # far below the tables' printed precision (two decimals of power).
    for u in COHEN_GRID_U:
        for f in COHEN_GRID_F:
            for n in COHEN_GRID_N:
                ours = omnibus_power(f, u + 1, (u + 1) * n, alpha)
                total, v = (u + 1) * n, (u + 1) * (n - 1)
                ncf = stats.ncf.sf(stats.f.isf(alpha, u, v), u, v, f * f * total)
                assert ours == pytest.approx(_mixture_power(f, u, n, alpha), abs=1e-9), (u, f, n)
                assert ours == pytest.approx(ncf, abs=1e-12), (u, f, n)


COHEN_TABLE = [  # (k, f, n per group for power .80 at alpha .05), Cohen (1988) Table 8.4.4, from memory
    (2, 0.10, 393), (2, 0.25, 64), (2, 0.40, 26),
    (3, 0.25, 52),
    (4, 0.10, 274), (4, 0.25, 45), (4, 0.40, 18),
]


@pytest.mark.parametrize(("k", "f", "n"), COHEN_TABLE)
def test_cohen_sample_sizes_reach_power_80_at_the_printed_precision(k, f, n) -> None:
    # Cohen's n (from memory, see above) reaches power .80 to the tables' two printed
    # decimals (>= .795). Only the lower side is checked: a sample-size table gives the
    # n where the power first reaches .80, and with few replicates one more of them can
    # lift the power well past it (k = 2, f = .40: .79 at n = 25, .81 at n = 26).
    assert omnibus_power(f, k, k * n, 0.05) >= 0.795
    # Our n is the smallest whole n whose exact power (independent Poisson mixture) reaches .80.
    # Cohen's tables come from an approximation to the noncentral F and may differ from it by one.
    planned = plan_omnibus(k, 0.05, 0.80, f).n_per_group
    assert _mixture_power(f, k - 1, planned, 0.05) >= 0.80 > _mixture_power(f, k - 1, planned - 1, 0.05)


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


def _dunnett_one_sided(alpha: float, m: int, nu: float) -> float:
    """One-sided Dunnett (1955) critical value d for m treatments against a
    control with equal n (correlation 1/2), computed here from its definition:
    T_i = (Z_i - Z_0) / (S sqrt 2) with Z iid N(0, 1) and S = sqrt(chi2_nu / nu),
    so P(max_i T_i <= d) = E[Phi(Z_0 + d S sqrt 2)^m]; Z_0 by Gauss-Hermite
    quadrature, S by adaptive quadrature of its density, d by root finding."""
    z, w = np.polynomial.hermite_e.hermegauss(120)
    w = w / math.sqrt(2.0 * math.pi)
    low, high = (stats.chi.ppf(q, nu) / math.sqrt(nu) for q in (1e-15, 1.0 - 1e-15))

    def coverage(d: float) -> float:
        def integrand(s: float) -> float:
            density = math.sqrt(nu) * stats.chi.pdf(s * math.sqrt(nu), nu)
            return float(np.sum(w * stats.norm.cdf(z + d * s * math.sqrt(2.0)) ** m)) * density

        return integrate.quad(integrand, low, high, epsabs=1e-13, epsrel=1e-12, limit=400)[0]

    return optimize.brentq(lambda d: coverage(d) - (1.0 - alpha), 0.5, 8.0, xtol=1e-12)


def test_one_sided_dunnett_critical_value_by_quadrature() -> None:
    # Dunnett (1955), one-sided table, alpha .05, 3 treatments, 20 df: 2.19 (from memory),
    # to the table's two printed decimals; ours equals the quadrature far below that.
    from familywise.stats.distributions import many_to_one_isf

    d = _dunnett_one_sided(0.05, 3, 20.0)
    assert round(d, 2) == 2.19
    assert many_to_one_isf(0.05, np.full(3, math.sqrt(0.5)), 20.0, "one_sided") == pytest.approx(d, abs=1e-6)


@pytest.mark.parametrize(("k", "difference", "sd"), [(4, 1.0, 1.0), (3, 2.0, 1.5), (6, 0.8, 1.2)])
@pytest.mark.parametrize("alternative", ["greater", "less"])
def test_one_sided_control_plan_against_noncentral_t(client, k, difference, sd, alternative) -> None:
    # reference: scipy.stats.nct with the one-sided Dunnett critical value (quadrature above).
    # The difference is the size of the true difference in the direction of the
    # alternative: a treatment mean above the control by it (greater), or below it (less).
    alpha, target = 0.05, 0.80

    def power(n: int) -> float:
        nu = k * (n - 1)
        d = _dunnett_one_sided(alpha, k - 1, nu)
        ncp = difference / (sd * math.sqrt(2.0 / n))
        if alternative == "greater":  # P(T > d), T noncentral t with noncentrality +ncp
            return float(stats.nct.sf(d, nu, ncp))
        return float(stats.nct.cdf(-d, nu, -ncp))  # P(T < -d), noncentrality -ncp (mean below the control)

    plan = plan_family("control", None, k, alpha, target, difference, sd, alternative)
    n = plan.n_per_group
    assert power(n) >= target > power(n - 1)
    assert plan.achieved_power == pytest.approx(power(n), abs=1e-6)
    assert plan.power_standard_error is None
    # one-sided needs no more than two-sided for the same difference
    assert n <= plan_family("control", None, k, alpha, target, difference, sd).n_per_group
    body = client.post("/v1/plan", json={"k": k, "alpha": alpha, "power": target, "family": "control",
                                         "difference": difference, "alternative": alternative,
                                         "effect": {"sd": sd}}).json()
    assert body["n_per_group"] == n and body["total_n"] == k * n
    assert body["achieved_power"] == pytest.approx(power(n), abs=1e-6)


def _mcb_excluded(groups: np.ndarray, n: int, d: float) -> np.ndarray:
    """Hsu's MCB (highest is best), equal n: group 1 is excluded from the groups
    that may be best when max_{j != 1} mean_j - mean_1 >= d s sqrt(2 / n), s the
    pooled SD (Hsu 1996, section 4.1). ``groups``: (replicates, k, n) raw data."""
    means = groups.mean(axis=2)
    k = groups.shape[1]
    s = np.sqrt(((groups - means[:, :, None]) ** 2).sum(axis=(1, 2)) / (k * (n - 1)))
    return np.delete(means, 1, axis=1).max(axis=1) - means[:, 1] >= d * s * math.sqrt(2.0 / n)


@pytest.mark.parametrize(("k", "n", "delta"), [(4, 8, 1.5), (6, 5, 1.2)])
def test_mcb_simulated_power_agrees_with_a_direct_monte_carlo(k, n, delta) -> None:
    # The planner simulates the group means and the pooled SD (20 000 replicates)
    # and states the standard error of its power. The direct check simulates raw
    # data with its own seed, 1 000 000 replicates, so that its own error is a
    # seventh of the stated one and the agreement tests the stated error.
    sd, alpha = 1.0, 0.05
    planned, error = family_power("best", k, n, alpha, delta, sd)
    rng = np.random.default_rng(20260611)
    labels = [f"g{i}" for i in range(k)]
    shift = np.zeros(k)
    shift[0] = delta  # group 0 is the best; group 1, delta below it, is the one to exclude
    # The decision rule above is checked against the procedure itself on a few
    # hundred data sets, and takes the procedure's critical value.
    sample = rng.normal(shift[None, :, None], sd, (300, k, n))
    results = [versus_best(OneWayData.from_arrays(labels, list(groups)), "highest", alpha) for groups in sample]
    d = results[0].comparisons[1].critical_value
    assert [not r.comparisons[1].may_be_best for r in results] == _mcb_excluded(sample, n, d).tolist()
    reps, chunk, excluded = 1_000_000, 125_000, 0
    for _ in range(reps // chunk):
        excluded += int(_mcb_excluded(rng.normal(shift[None, :, None], sd, (chunk, k, n)), n, d).sum())
    direct = excluded / reps
    direct_error = math.sqrt(direct * (1 - direct) / reps)
    assert direct_error < error / 5
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

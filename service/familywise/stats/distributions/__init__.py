"""Distribution functions of the follow-up families.

* :mod:`.studentized_range` — Tukey-Kramer and Games-Howell;
* :mod:`.many_to_one` — Dunnett (single step and step-down), Hsu's MCB,
  equivalence against a reference: the multivariate t with product correlation;
* :mod:`.multivariate_t` — any correlation (sets of contrasts), randomised
  quasi-Monte Carlo with a fixed seed and a reported error bound.
"""

from familywise.stats.distributions.many_to_one import (
    many_to_one_cdf,
    many_to_one_curve,
    many_to_one_isf,
    many_to_one_logsf,
    many_to_one_ppf,
    many_to_one_sf,
)
from familywise.stats.distributions.studentized_range import (
    studentized_range_cdf,
    studentized_range_curve,
    studentized_range_isf,
    studentized_range_logsf,
    studentized_range_ppf,
    studentized_range_sf,
)

__all__ = [
    "many_to_one_cdf",
    "many_to_one_curve",
    "many_to_one_isf",
    "many_to_one_logsf",
    "many_to_one_ppf",
    "many_to_one_sf",
    "studentized_range_cdf",
    "studentized_range_curve",
    "studentized_range_isf",
    "studentized_range_logsf",
    "studentized_range_ppf",
    "studentized_range_sf",
    "warm_up",
]


def warm_up(max_groups: int = 12) -> None:
    """Load the compiled kernels and tabulate the range for small k, so that
    the first requests do not pay for it (the service's readiness waits on this)."""
    for k in range(2, max_groups + 1):
        studentized_range_sf(3.0, k, 20.0)
    studentized_range_isf(0.05, 3, 20.0)
    many_to_one_sf([1.0, 2.0], [0.6, 0.7], 20.0)
    many_to_one_sf(1.0, [0.6], 20.0, "one_sided")
    many_to_one_isf(0.05, [0.6, 0.7], 20.0)
    many_to_one_isf(0.05, [0.6], 20.0, "one_sided")

"""Multiple comparisons with the best (Hsu's MCB), exact for unequal n.

For each group i the parameter is theta_i - max_{j != i} theta_j ("best" =
highest; for "lowest", theta_i - min_{j != i} theta_j and every sign turns).
Constrained simultaneous intervals (Hsu 1996, section 4.1; unequal sample
sizes as there, recalled here from the derivation below):

    d_i   = one-sided many-to-one quantile at alpha with lambda_j = sqrt(n_j / (n_i + n_j)), j != i
    se_ij = s * sqrt(1/n_i + 1/n_j)
    D_i+  = max(0, min_{j != i} (m_i - m_j + d_i se_ij))
    G     = {i : D_i+ > 0}                           (the groups that may be best)
    D_i-  = 0 if G = {i}, else min(0, min_{j in G, j != i} (m_i - m_j - d_j se_ij))

Derivation: with b the (unknown) best group, the event that
(m_b - m_l - theta_b + theta_l) / se_bl > -d_b for every l != b has
probability 1 - alpha (a one-sided many-to-one event with b as "control").
On it, theta_b - theta_l < m_b - m_l + d_b se_bl gives the upper bounds (for
i != b the parameter is <= 0 <= D_i+), b lies in G, and theta_i - theta_b >
m_i - m_b - d_b se_ib gives the lower bounds over the candidates j in G.

Rows: ``first`` the group, ``second`` "best of others", and

* ``difference`` = m_i - m_r and ``se`` = se_ir, against the rival r with
  the highest mean among the others (the "best of the others" by mean);
* ``statistic`` = min_{j != i} (m_i - m_j) / se_ij, the smallest standardised
  gap, which decides the exclusion. With equal sizes every se_ij is the same
  and the minimum is at r, so statistic = difference / se. With unequal
  sizes it can be at another rival j (a lower mean but a smaller se_ij, from
  a larger n_j), and then statistic != difference / se;
* ``critical_value`` = d_i, the row's own quantile (the lambdas depend on
  n_i). The interval is Hsu's constrained [D_i-, D_i+] above, not
  difference +- d_i se: its upper end comes from the minimum over all
  rivals of m_i - m_j + d_i se_ij and is cut at 0, its lower end from the
  candidates' own d_j;
* ``p_value`` = P(max_l T_l >= -statistic) for the many-to-one with group i
  as reference: the smallest alpha at which group i is excluded from the
  best (``significant``, i.e. ``may_be_best`` false). Group i is excluded
  exactly when -statistic > d_i, that is when D_i+ = 0, so ``significant``
  agrees with both the p-value and the interval.

The family's ``critical_value`` is the common d when all sizes are equal
(then every d_i is the same) and null otherwise, each row carrying its own.

Reference
---------
Hsu, J. C. (1996). Multiple Comparisons: Theory and Methods. Chapman & Hall,
chapter 4 (multiple comparisons with the best).
"""

from __future__ import annotations

import numpy as np

from familywise.stats.data import OneWayData
from familywise.stats.distributions import many_to_one_curve
from familywise.stats.errors import DataError
from familywise.stats.families._common import Comparison, FamilyResult, pooled

DIRECTIONS = ("highest", "lowest")
OTHERS = "best of others"


def versus_best(data: OneWayData, best: str = "highest", alpha: float = 0.05) -> FamilyResult:
    """Hsu's constrained MCB intervals and the set of groups that may be best."""
    if best not in DIRECTIONS:
        raise DataError("best", "best must be 'highest' or 'lowest'", "/best")
    s, df = pooled(data)
    k = data.k
    sign = 1.0 if best == "highest" else -1.0
    m = sign * data.mean_deviations
    n = data.sizes
    se = s * np.sqrt(1.0 / n[:, None] + 1.0 / n[None, :])
    gap = m[:, None] - m[None, :]
    d = np.empty(k)
    statistic = np.empty(k)
    p = np.empty(k)
    rival = np.empty(k, dtype=int)
    for i in range(k):
        others = np.array([j for j in range(k) if j != i])
        lam = np.sqrt(n[others] / (n[i] + n[others]))
        curve = many_to_one_curve(lam, df, "one_sided")
        d[i] = curve.isf(alpha)
        standardised = gap[i, others] / se[i, others]
        statistic[i] = standardised.min()
        p[i] = float(curve.sf(-statistic[i])[0])
        rival[i] = others[np.argmax(m[others])]
    # Consistency: group i is excluded exactly when p_i < alpha; the upper
    # bound is then 0 by construction (statistic <= -d_i), up to the last
    # place, which the exclusion decision settles.
    excluded = p < alpha
    upper = np.empty(k)
    for i in range(k):
        others = [j for j in range(k) if j != i]
        upper[i] = 0.0 if excluded[i] else max(0.0, min(gap[i, j] + d[i] * se[i, j] for j in others))
    candidates = [i for i in range(k) if not excluded[i]]
    lower = np.empty(k)
    for i in range(k):
        rivals = [j for j in candidates if j != i]
        if candidates == [i] or not rivals:
            lower[i] = 0.0
        else:
            lower[i] = min(0.0, min(gap[i, j] - d[j] * se[i, j] for j in rivals))
    rows = []
    for i in range(k):
        difference = m[i] - m[rival[i]]
        low, high = (lower[i], upper[i]) if sign > 0 else (-upper[i], -lower[i])
        rows.append(Comparison(
            first=data.labels[i], second=OTHERS, difference=float(sign * difference),
            se=float(se[i, rival[i]]), statistic=float(statistic[i]), df=df, p_value=float(p[i]),
            ci_low=float(low), ci_high=float(high), significant=bool(excluded[i]),
            critical_value=float(d[i]), may_be_best=not bool(excluded[i]),
        ))
    best_set = tuple(data.labels[i] for i in candidates)
    balanced = bool(np.all(n == n[0]))
    if len(best_set) == 1:
        summary = (f"{best_set[0]} is the {best} group at familywise alpha = {alpha:g} (Hsu's MCB): "
                   "every other group is excluded from the best.")
    else:
        summary = (f"{len(best_set)} of {k} groups may be the {best} at familywise alpha = {alpha:g} "
                   f"(Hsu's MCB): {', '.join(best_set)}.")
    notes = ["Constrained intervals for each mean minus the best of the others: an upper end of 0 "
             "excludes the group from the best; a lower end of 0 shows it is the best."]
    if not balanced:
        notes.append("Unequal group sizes: each group has its own critical value, computed exactly.")
    return FamilyResult(
        family="best", method="hsu_mcb", alpha=alpha, error_rate="familywise",
        critical_value=float(d[0]) if balanced else None, comparisons=tuple(rows), summary=summary,
        notes=tuple(notes), error_df=df, pooled_sd=s, interval="simultaneous", best_set=best_set,
        extra={"best": best},
    )

"""Each group against a control.

Rows are the treatments in input order, ``first`` the treatment, ``second``
the control, ``difference = mean(treatment) - mean(control)``, pooled SE
s * sqrt(1/n_i + 1/n_0), N - k degrees of freedom.

Methods
-------
dunnett
    Single step (Dunnett 1955): p-values and the simultaneous multiplier from
    the maximum of the many-to-one t with lambda_i = sqrt(n_i / (n_i + n_0)),
    exact for unequal n. Two-sided, or one-sided (``greater``: treatment above
    control; ``less``: below), the one-sided intervals bounded on one side only.
dunnett_stepdown
    Step-down (Dunnett and Tamhane 1991; a closed testing procedure, Marcus,
    Peritz and Gabriel 1976): hypotheses in order of decreasing statistic,
    each tested against the maximum over the hypotheses not yet rejected
    (their own lambdas), adjusted p-values made monotone. It rejects at least
    what the single step rejects, and gives decisions, not intervals.

References
----------
Dunnett, C. W. (1955). JASA 50, 1096-1121.
Dunnett, C. W. and Tamhane, A. C. (1991). Step-down multiple tests for
comparing treatments with a control in unbalanced one-way layouts.
Statistics in Medicine 10, 939-947.
Marcus, R., Peritz, E. and Gabriel, K. R. (1976). On closed testing
procedures with special reference to ordered analysis of variance.
Biometrika 63, 655-660.
"""

from __future__ import annotations

import numpy as np

from familywise.stats.data import OneWayData
from familywise.stats.distributions import many_to_one_curve
from familywise.stats.errors import DataError
from familywise.stats.families._common import (
    FamilyResult,
    agreeing_critical_value,
    comparison_rows,
    mean_differences,
    pooled,
)

METHODS = ("dunnett", "dunnett_stepdown")
ALTERNATIVES = ("two_sided", "greater", "less")


def versus_control(
    data: OneWayData,
    control: str,
    method: str = "dunnett",
    alternative: str = "two_sided",
    alpha: float = 0.05,
) -> FamilyResult:
    """Each group against ``control`` (see the module docstring)."""
    if method not in METHODS:
        raise DataError("method", f"unknown method {method!r} for comparisons with a control", "/method")
    if alternative not in ALTERNATIVES:
        raise DataError("alternative", f"alternative must be one of {', '.join(ALTERNATIVES)}",
                        "/alternative")
    if control not in data.labels:
        raise DataError("unknown-group", f"no group is labelled {control!r}", "/control")
    s, df = pooled(data)
    c = data.labels.index(control)
    treated = np.array([g for g in range(data.k) if g != c])
    diff = mean_differences(data, treated, np.full(treated.size, c))
    se = s * np.sqrt(1.0 / data.sizes[treated] + 1.0 / data.sizes[c])
    t = diff / se
    lam = np.sqrt(data.sizes[treated] / (data.sizes[treated] + data.sizes[c]))
    sided = "two_sided" if alternative == "two_sided" else "one_sided"
    # The statistic whose large values are evidence for the alternative.
    evidence = {"two_sided": np.abs(t), "greater": t, "less": -t}[alternative]
    notes: list[str] = []
    if method == "dunnett":
        curve = many_to_one_curve(lam, df, sided)
        p = curve.sf(evidence)
        critical = curve.isf(alpha)
        critical = agreeing_critical_value(critical, evidence, p, alpha)
        if alternative == "two_sided":
            low, high = diff - critical * se, diff + critical * se
        elif alternative == "greater":
            low, high = diff - critical * se, [None] * diff.size
        else:
            low, high = [None] * diff.size, diff + critical * se
        step_critical = [None] * diff.size
        interval = "simultaneous"
    else:
        p, step_critical = _step_down(evidence, lam, df, sided, alpha)
        critical = None
        low = high = [None] * diff.size
        interval = "none"
        notes.append("A step-down procedure gives decisions, not simultaneous intervals; each row "
                     "carries the critical value of its step.")
    if alternative != "two_sided":
        notes.append(f"One-sided: the alternative is that a treatment mean is "
                     f"{'above' if alternative == 'greater' else 'below'} the control's; intervals are "
                     "bounded on one side only (the other end is null).")
    m = treated.size
    rows = comparison_rows(
        first=[data.labels[g] for g in treated.tolist()], second=[control] * m, difference=diff.tolist(),
        se=se.tolist(), statistic=t.tolist(), df=[df] * m, p_value=np.asarray(p).tolist(),
        ci_low=np.asarray(low, dtype=object).tolist() if isinstance(low, list) else low.tolist(),
        ci_high=np.asarray(high, dtype=object).tolist() if isinstance(high, list) else high.tolist(),
        significant=(np.asarray(p) < alpha).tolist(),
        critical_value=[None if c is None else float(c) for c in step_critical],
    )
    found = [row.first for row in rows if row.significant]
    plural, singular = {"two_sided": ("differ from", "differs from"), "greater": ("exceed", "exceeds"),
                        "less": ("fall below", "falls below")}[alternative]
    named = method.replace("_", " ")
    if found:
        summary = (f"{len(found)} of {len(rows)} groups {plural} the control {control!r} at familywise "
                   f"alpha = {alpha:g} ({named}): {', '.join(found)}.")
    else:
        summary = f"No group {singular} the control {control!r} at familywise alpha = {alpha:g} ({named})."
    return FamilyResult(
        family="control", method=method, alpha=alpha, error_rate="familywise", critical_value=critical,
        comparisons=rows, summary=summary, notes=tuple(notes), error_df=df, pooled_sd=s,
        alternative=alternative, interval=interval, extra={"control": control},
    )


def _step_down(evidence: np.ndarray, lam: np.ndarray, df: float, sided: str,
               alpha: float) -> tuple[np.ndarray, list[float | None]]:
    order = np.argsort(-evidence, kind="stable")
    adjusted = np.empty(evidence.size)
    step_critical: list[float | None] = [None] * evidence.size
    running = 0.0
    for step, index in enumerate(order):
        curve = many_to_one_curve(lam[order[step:]], df, sided)
        running = max(running, float(curve.sf(evidence[index])[0]))
        adjusted[index] = running
        step_critical[index] = curve.isf(alpha)
    return adjusted, step_critical

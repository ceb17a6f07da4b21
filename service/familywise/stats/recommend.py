"""Which follow-up family and method fit the question (and the data).

The logic follows the usual reasoning of the multiple-comparison literature
(Hsu 1996, ch. 1-2; Hochberg and Tamhane 1987): first *what* is compared
(planned contrasts, every group against a control, every group against the
best, all pairs, or equivalence to a reference), then *which error rate*
matters (familywise, per comparison, false discovery), then what the data
say about the assumptions (unequal variances, non-normality with small
groups, imbalance, a non-significant omnibus F).

Variances count as markedly unequal when Levene's test (median-centred)
rejects at alpha or the largest/smallest variance ratio exceeds 10 (with
small groups the sample ratio often exceeds the rule-of-thumb 4 under equal
variances); "small" groups and "very" unbalanced designs as in
:mod:`familywise.stats.omnibus`. All three are common practice, no source.

References
----------
Hsu, J. C. (1996). Multiple Comparisons: Theory and Methods. Chapman & Hall.
Hochberg, Y. and Tamhane, A. C. (1987). Multiple Comparison Procedures. Wiley.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from familywise.stats import contrasts as contrast_rules
from familywise.stats.data import OneWayData
from familywise.stats.errors import DataError
from familywise.stats.omnibus import (
    MARKED_IMBALANCE,
    SMALL_GROUP,
    HypothesisTest,
    anova_table,
    levene_median,
    shapiro_wilk_residuals,
)

RECOMMENDATION_VARIANCE_RATIO = 10.0
STATISTICIAN = (
    "familywise supports, and does not replace, a qualified statistician and the regulations and "
    "local procedures that apply to your work; choose the family before seeing the data."
)


@dataclass(frozen=True)
class Question:
    """What the caller wants to know (see the module docstring)."""

    planned: bool = False
    reference: str = "none"  # none | control | best
    control: str | None = None
    best: str | None = None  # highest | lowest (reference = best)
    alternative: str = "two_sided"  # reference = control
    error_rate: str = "familywise"
    contrasts: tuple[tuple[str, Mapping[str, float]], ...] = ()
    intervals_needed: bool = True
    goal: str = "differences"  # differences | equivalence
    margin: object = None  # equivalence: passed through to the options


@dataclass(frozen=True)
class Choice:
    family: str
    method: str
    options: dict[str, object] = field(default_factory=dict)
    when: str | None = None


@dataclass(frozen=True)
class Findings:
    """What the data say, when they are given."""

    variance_ratio: float | None
    levene_p_value: float | None
    shapiro_p_value: float | None
    smallest_group: int
    size_ratio: float
    omnibus_p_value: float | None
    unequal_variances: bool
    non_normal_small: bool
    very_unbalanced: bool
    own_variances: bool  # every group has n >= 2 and a positive variance (Games-Howell can run)


@dataclass(frozen=True)
class Recommendation:
    family: str
    method: str
    options: dict[str, object]
    reasons: tuple[str, ...]
    cautions: tuple[str, ...]
    alternatives: tuple[Choice, ...]
    findings: Findings | None


def findings(data: OneWayData, alpha: float) -> Findings:
    """The diagnostics the recommendation looks at."""
    data.require_error_df()
    var = data.variances[data.sizes > 1]
    ratio = float(var.max() / var.min()) if var.size >= 2 and var.min() > 0 else None
    levene = levene_median(data)
    shapiro = shapiro_wilk_residuals(data)
    levene_p = levene.p_value if isinstance(levene, HypothesisTest) else None
    shapiro_p = shapiro.p_value if isinstance(shapiro, HypothesisTest) else None
    try:
        omnibus_p = anova_table(data).p_value
    except DataError:
        omnibus_p = None
    smallest = int(data.sizes.min())
    size_ratio = float(data.sizes.max() / data.sizes.min())
    unequal = (ratio is None and var.size >= 2 and var.max() > 0) or (
        ratio is not None and ratio > RECOMMENDATION_VARIANCE_RATIO) or (levene_p is not None and levene_p < alpha)
    return Findings(
        variance_ratio=ratio, levene_p_value=levene_p, shapiro_p_value=shapiro_p,
        smallest_group=smallest, size_ratio=size_ratio, omnibus_p_value=omnibus_p,
        unequal_variances=bool(unequal),
        non_normal_small=bool(shapiro_p is not None and shapiro_p < alpha and smallest < SMALL_GROUP),
        very_unbalanced=size_ratio > MARKED_IMBALANCE,
        own_variances=bool(np.all(data.sizes >= 2) and np.all(data.variances > 0)),
    )


def recommend(
    question: Question,
    data: OneWayData | None = None,
    sizes: Mapping[str, int] | None = None,
    alpha: float = 0.05,
) -> Recommendation:
    """The family, method and options that fit ``question``, with reasons,
    cautions and ranked alternatives."""
    labels, n = _design(data, sizes)
    _check_question(question, labels)
    found = findings(data, alpha) if data is not None else None
    if question.goal == "equivalence":
        choice, reasons, cautions, alternatives = _equivalence(question)
    elif question.contrasts:
        choice, reasons, cautions, alternatives = _contrasts(question, labels, n, alpha)
    elif question.reference == "control":
        choice, reasons, cautions, alternatives = _control(question, labels, n, found)
    elif question.reference == "best":
        choice, reasons, cautions, alternatives = _best(question)
    else:
        choice, reasons, cautions, alternatives = _pairs(question, labels, found, alpha)
    if found is not None:
        cautions += _data_cautions(choice, found, alpha)
    if labels is not None and len(labels) == 2 and choice.family != "equivalence":
        cautions.append("With two groups every family reduces to a single comparison: the pooled t test "
                        "(or Welch's t with unequal variances).")
    cautions.append(STATISTICIAN)
    return Recommendation(
        family=choice.family, method=choice.method, options=choice.options, reasons=tuple(reasons),
        cautions=tuple(dict.fromkeys(cautions)), alternatives=tuple(alternatives), findings=found,
    )


# --------------------------------------------------------------------------


def _design(data, sizes) -> tuple[tuple[str, ...] | None, np.ndarray | None]:
    if data is not None:
        return data.labels, data.sizes
    if sizes:
        labels, n = contrast_rules.group_sizes(sizes)
        return labels, n
    return None, None


def _check_question(q: Question, labels) -> None:
    """Refuse contradictory answers instead of guessing what was meant."""
    if q.reference not in ("none", "control", "best"):
        raise DataError("reference", "reference must be none, control or best", "/question/reference")
    if q.error_rate not in ("familywise", "per_comparison", "false_discovery"):
        raise DataError("error-rate", "error_rate must be familywise, per_comparison or false_discovery",
                        "/question/error_rate")
    if q.goal not in ("differences", "equivalence"):
        raise DataError("goal", "goal must be differences or equivalence", "/question/goal")
    if q.reference == "control":
        if not q.control:
            raise DataError("contradiction", "reference is 'control' but no control group is named",
                            "/question/control")
        if labels is not None and q.control not in labels:
            raise DataError("unknown-group", f"no group is labelled {q.control!r}", "/question/control")
    elif q.control is not None:
        raise DataError("contradiction", f"a control is named but reference is {q.reference!r}",
                        "/question/control")
    if q.reference == "best":
        if q.best not in ("highest", "lowest"):
            raise DataError("contradiction", "reference is 'best': say whether the highest or the lowest "
                            "mean is best", "/question/best")
    elif q.best is not None:
        raise DataError("contradiction", f"best is given but reference is {q.reference!r}", "/question/best")
    if q.margin is not None and q.goal != "equivalence":
        raise DataError("contradiction", "a margin is given but the goal is not equivalence", "/question/margin")
    if q.alternative not in ("two_sided", "greater", "less"):
        raise DataError("alternative", "alternative must be two_sided, greater or less",
                        "/question/alternative")
    if q.alternative != "two_sided" and q.reference != "control":
        raise DataError("contradiction", "a one-sided alternative is offered for comparisons with a "
                        "control only", "/question/alternative")
    if q.contrasts and q.reference != "none":
        raise DataError("contradiction", "contrasts are given but reference is not 'none': ask for the "
                        "contrasts or for a reference family, not both", "/question/contrasts")
    if q.goal == "equivalence":
        if q.reference != "control":
            raise DataError("contradiction", "equivalence is shown against a reference group: set reference "
                            "to 'control' and name it", "/question/reference")
        if q.error_rate == "false_discovery":
            raise DataError("contradiction", "equivalence is offered with familywise or per-comparison "
                            "error control, not false discovery", "/question/error_rate")
    if q.contrasts and not q.planned and q.error_rate != "familywise":
        raise DataError("contradiction", "contrasts chosen after seeing the data need familywise control "
                        "(Scheffé)", "/question/error_rate")


def _equivalence(q: Question):
    options = {"reference": q.control, "kind": "equivalence"}
    if q.margin is not None:
        options["margin"] = q.margin
    if q.error_rate == "familywise":
        choice = Choice("equivalence", "dunnett_tost", options)
        reasons = ["Showing that candidates are practically the same as a reference needs an equivalence "
                   "test: failing to find a difference is not evidence of sameness.",
                   "Familywise error over all candidates: Dunnett's one-sided critical value for each "
                   "of the two one-sided tests."]
        alternatives = [Choice("equivalence", "bonferroni_tost", options,
                               "when candidates that are not equivalent may lie on both sides of the margin "
                               "and the familywise guarantee must hold in every configuration"),
                        Choice("equivalence", "tost", options, "for one candidate, or per-candidate error")]
    else:
        choice = Choice("equivalence", "tost", options)
        reasons = ["Equivalence of each candidate on its own (per-comparison error): Schuirmann's two "
                   "one-sided tests."]
        alternatives = [Choice("equivalence", "dunnett_tost", options,
                               "when the conclusion must hold for all candidates together")]
    cautions = ["The margin must be fixed in advance on scientific or regulatory grounds, not from the data."]
    if q.margin is None:
        cautions.append("No margin was given: the equivalence family needs one.")
    return choice, reasons, cautions, alternatives


def _contrasts(q: Question, labels, n, alpha):
    if labels is None:
        raise DataError("sizes-needed", "give groups or sizes: orthogonality depends on the group sizes",
                        "/sizes")
    names, matrix = contrast_rules.coefficient_matrix(labels, list(q.contrasts))
    contrast_rules.require_contrasts_sum_to_zero(names, matrix)
    contrasts = [{"name": name, "coefficients": dict(coef)} for name, coef in q.contrasts]
    if not q.planned:
        choice = Choice("contrasts", "scheffe", {"contrasts": contrasts, "adjustment": "scheffe"})
        reasons = ["The contrasts were chosen after seeing the data: only Scheffé's method holds for every "
                   "contrast that could have been chosen."]
        return choice, reasons, [], [Choice("contrasts", "multivariate_t",
                                            {"contrasts": contrasts, "adjustment": "multivariate_t"},
                                            "only if these contrasts were in fact fixed in advance")]
    check = contrast_rules.validate_contrasts(names, matrix, n, labels=labels, alpha=alpha)
    summary = check.set
    orthogonal = summary.mutually_orthogonal and not summary.exceeds_between_df
    if orthogonal and q.error_rate in ("familywise", "per_comparison"):
        choice = Choice("contrasts", "none", {"contrasts": contrasts, "adjustment": "none"})
        reasons = [f"The {len(names)} planned contrasts are mutually orthogonal under the actual group sizes "
                   "(sum of c_i d_i / n_i = 0) and no more than k - 1: each may be tested at alpha."]
        cautions = ["Testing each orthogonal contrast at alpha controls the error of each contrast; the chance "
                    "of at least one false finding in the set is larger."] if len(names) > 1 else []
        alternatives = [Choice("contrasts", "multivariate_t",
                               {"contrasts": contrasts, "adjustment": "multivariate_t"},
                               "when the whole set must hold at alpha jointly (exact, slightly wider)")]
        return choice, reasons, cautions, alternatives
    if q.error_rate == "false_discovery":
        choice = Choice("contrasts", "benjamini_hochberg",
                        {"contrasts": contrasts, "adjustment": "benjamini_hochberg"})
        return choice, ["Many planned contrasts screened for leads: false-discovery-rate control."], [], [
            Choice("contrasts", "holm", {"contrasts": contrasts, "adjustment": "holm"},
                   "when every declared contrast must be protected (familywise)")]
    why = []
    if summary.exceeds_between_df:
        why.append(f"there are {len(names)} contrasts, more than the k - 1 = {summary.between_df} "
                   "between-groups degrees of freedom")
    if not summary.mutually_orthogonal:
        why.append("they are not orthogonal under the actual group sizes"
                   + (" (they would be with equal sizes)" if summary.orthogonal_for_equal_sizes else ""))
    reason = f"The planned contrasts need a multiplicity adjustment: {'; '.join(why)}."
    if q.error_rate == "per_comparison":
        choice = Choice("contrasts", "none", {"contrasts": contrasts, "adjustment": "none"})
        return choice, [reason.replace("need", "would need") + " Per-comparison error was asked for, so "
                        "each is tested at alpha."], ["The familywise error of the set exceeds alpha."], [
            Choice("contrasts", "multivariate_t", {"contrasts": contrasts, "adjustment": "multivariate_t"},
                   "for familywise control with exact simultaneous intervals")]
    if q.intervals_needed:
        choice = Choice("contrasts", "multivariate_t", {"contrasts": contrasts, "adjustment": "multivariate_t"})
        reasons = [reason, "multivariate_t gives exact simultaneous intervals for this set's own correlation."]
        alternatives = [Choice("contrasts", "holm", {"contrasts": contrasts, "adjustment": "holm"},
                               "when decisions suffice and intervals are not needed (more powerful)"),
                        Choice("contrasts", "bonferroni", {"contrasts": contrasts, "adjustment": "bonferroni"},
                               "simpler to explain; slightly conservative")]
    else:
        choice = Choice("contrasts", "holm", {"contrasts": contrasts, "adjustment": "holm"})
        reasons = [reason, "Only decisions are needed: Holm's step-down is uniformly more powerful than "
                   "Bonferroni and needs no assumption on the correlation."]
        alternatives = [Choice("contrasts", "multivariate_t",
                               {"contrasts": contrasts, "adjustment": "multivariate_t"},
                               "when simultaneous intervals are needed")]
    return choice, reasons, [], alternatives


def _control(q: Question, labels, n, found):
    options: dict[str, object] = {"control": q.control, "alternative": q.alternative}
    if q.error_rate == "familywise":
        if q.intervals_needed:
            choice = Choice("control", "dunnett", options)
            reasons = ["Each group against a control with familywise error: Dunnett's many-to-one "
                       "comparisons, exact for unequal group sizes."]
            alternatives = [Choice("control", "dunnett_stepdown", options,
                                   "when only decisions are needed (rejects at least as much)")]
        else:
            choice = Choice("control", "dunnett_stepdown", options)
            reasons = ["Each group against a control, decisions only: Dunnett's step-down procedure rejects "
                       "at least what the single-step test rejects."]
            alternatives = [Choice("control", "dunnett", options, "when simultaneous intervals are needed")]
    else:
        method = "none" if q.error_rate == "per_comparison" else "benjamini_hochberg"
        contrasts = _versus_reference(labels, n, q.control)
        choice = Choice("contrasts", method, {"contrasts": contrasts, "adjustment": method})
        reasons = ["Each group against a control with "
                   + ("per-comparison error: one t test per group on the pooled variance."
                      if method == "none" else "false-discovery-rate control, for screening many groups.")]
        alternatives = [Choice("control", "dunnett", options, "when the familywise error must be controlled")]
    cautions = []
    if found is not None and found.unequal_variances:
        cautions.append("Dunnett's procedure pools the variances; with markedly unequal variances compare "
                        "with Games-Howell, whose pairwise results include each group against the control.")
        if found.own_variances:
            alternatives = [*alternatives, Choice("pairwise", "games_howell", {},
                                                  "with markedly unequal variances")]
    return choice, reasons, cautions, alternatives


def _versus_reference(labels, n, control) -> list[dict]:
    if labels is None:
        return []
    names, matrix = contrast_rules.reference_contrasts(labels, n, control)
    return [{"name": name, "coefficients": {labels[j]: float(matrix[i, j]) for j in range(len(labels))
                                            if matrix[i, j] != 0}}
            for i, name in enumerate(names)]


def _best(q: Question):
    choice = Choice("best", "hsu_mcb", {"best": q.best})
    reasons = [f"Each group against the best of the others ({q.best} is best): Hsu's multiple comparisons "
               "with the best give the set of groups that may be best, with constrained intervals."]
    cautions = []
    if q.error_rate != "familywise":
        cautions.append("Hsu's MCB controls the familywise error; no per-comparison or false-discovery "
                        "version is offered.")
    alternatives = [Choice("pairwise", "tukey_kramer", {}, "when every pair, not only the best, matters")]
    return choice, reasons, cautions, alternatives


def _pairs(q: Question, labels, found, alpha):
    k = len(labels) if labels is not None else None
    m = k * (k - 1) // 2 if k else None
    cautions: list[str] = []
    if q.error_rate == "per_comparison":
        choice = Choice("pairwise", "lsd")
        reasons = ["All pairs with per-comparison error: unadjusted t tests on the pooled variance "
                   "(Fisher's least significant difference)."]
        if m:
            independent = 1.0 - (1.0 - alpha) ** m
            cautions.append(
                f"With {m} pairs the chance of at least one false difference grows: about "
                f"{independent:.3g} were the tests independent, and up to {min(1.0, m * alpha):.3g} "
                "(the Bonferroni bound).")
        else:
            cautions.append("With m = k(k-1)/2 pairs the chance of at least one false difference grows to "
                            "1 - (1 - alpha)^m were the tests independent, and up to m alpha.")
        return choice, reasons, cautions, [Choice("pairwise", "tukey_kramer", {},
                                                  "when a false difference anywhere matters")]
    if q.error_rate == "false_discovery":
        choice = Choice("pairwise", "benjamini_hochberg")
        reasons = ["Screening many pairs for leads: false-discovery-rate control (Benjamini-Hochberg) "
                   "keeps the expected share of false differences among those declared at alpha."]
        return choice, reasons, cautions, [Choice("pairwise", "tukey_kramer", {},
                                                  "when every declared difference must be protected")]
    alternatives = [Choice("pairwise", "holm", {}, "when decisions suffice (no intervals)"),
                    Choice("pairwise", "bonferroni", {}, "simple and conservative")]
    if found is not None and found.unequal_variances and not found.own_variances:
        cautions.append("The variances look unequal, but a group has a single value or no spread at all, so "
                        "Games-Howell (which needs every group's own variance) cannot be used: the pooled "
                        "comparisons below assume a common variance; check the data (for example values "
                        "at a detection limit).")
    elif found is not None and found.unequal_variances:
        choice = Choice("pairwise", "games_howell")
        reasons = ["All pairs, familywise, with markedly unequal variances: Games-Howell (Welch standard "
                   "errors and degrees of freedom per pair)."]
        alternatives = [Choice("pairwise", "tukey_kramer", {}, "if the variances can be taken as equal"),
                        *alternatives]
        if found.non_normal_small:
            cautions.append("The residuals also depart from normality with small groups: treat borderline "
                            "results with care.")
        return choice, reasons, cautions, alternatives
    if found is not None and found.non_normal_small:
        choice = Choice("pairwise", "dunn", {"dunn_adjustment": "holm"})
        reasons = ["All pairs, familywise, with clearly non-normal residuals and small groups: Dunn's "
                   "rank-based comparisons with Holm's adjustment."]
        return choice, reasons, cautions, [Choice("pairwise", "tukey_kramer", {},
                                                  "if the departure from normality is judged harmless"),
                                           *alternatives]
    choice = Choice("pairwise", "tukey_kramer")
    reasons = ["All pairs with familywise error: Tukey-Kramer, based on the studentized range (exact for "
               "equal group sizes, conservative for unequal)."]
    return choice, reasons, cautions, alternatives


def _data_cautions(choice: Choice, found: Findings, alpha: float) -> list[str]:
    out = []
    if found.very_unbalanced and choice.method == "tukey_kramer":
        out.append(f"The design is very unbalanced (largest/smallest group size {found.size_ratio:.3g}): "
                   "Tukey-Kramer is then conservative.")
    if found.omnibus_p_value is not None and found.omnibus_p_value >= alpha:
        p = found.omnibus_p_value
        if choice.method == "lsd":
            out.append(f"The omnibus F test is not significant (p = {p:.3g}): Fisher's protected LSD would "
                       "stop here and declare no difference.")
        elif choice.family in ("control", "contrasts", "equivalence", "best"):
            out.append(f"The omnibus F test is not significant (p = {p:.3g}); planned comparisons of this "
                       "family do not depend on it, and a non-significant F does not show the means equal.")
        else:
            out.append(f"The omnibus F test is not significant (p = {p:.3g}). This family does not require "
                       "a significant F, but a significant pair after a non-significant F deserves care; "
                       "and a non-significant F does not show the means equal.")
    if found.unequal_variances and choice.family in ("contrasts", "best", "equivalence"):
        out.append("The variances look markedly unequal, and this family pools them: interpret with care.")
    return out



"""Which follow-up family and method fit the question (and the data).

The logic follows the usual reasoning of the multiple-comparison literature
(Hsu 1996, ch. 1-2; Hochberg and Tamhane 1987): first *what* is compared
(planned contrasts, every group against a control, every group against the
best, all pairs, or equivalence to a reference), then *which error rate*
matters (familywise, per comparison, false discovery), then what the data
say about the assumptions (unequal variances, non-normality with small
groups, imbalance, a non-significant omnibus F).

The data findings are applied on every path, whatever the family and the
error rate:

* markedly unequal variances: all pairs with familywise error -> Games-Howell
  (Welch standard errors and degrees of freedom per pair; Games and Howell
  1976). Every other choice that pools the variances keeps the family and
  the error rate asked for (no Welch-based version of it is offered here) but
  carries a caution and Games-Howell as an alternative -- or, when a group has
  a single value or no spread, the caution that Games-Howell cannot run;
* clearly non-normal residuals with small groups (variances not markedly
  unequal): all pairs -> Dunn's rank-based comparisons (Dunn 1964) with the
  adjustment matching the error rate (familywise: Holm; per comparison:
  none; false discovery: Benjamini-Hochberg). For a control, the best or
  contrasts: a caution and Dunn with that adjustment as an alternative; for
  equivalence, a caution (no rank-based equivalence test is offered). With
  unequal variances as well, rank methods are not offered: they assume the
  groups differ only in location;
* very unbalanced designs: Tukey-Kramer is conservative;
* a non-significant omnibus F: what it does and does not mean for the family.

Every per-comparison choice states how the chance of at least one false
finding grows with the number m of tests: 1 - (1 - alpha)^m were the tests
independent, and at most m alpha (the Bonferroni inequality).

Variances count as markedly unequal when Levene's test (median-centred)
rejects at alpha or the largest/smallest variance ratio exceeds 10 (with
small groups the sample ratio often exceeds the rule-of-thumb 4 under equal
variances); "small" groups and "very" unbalanced designs as in
:mod:`familywise.stats.omnibus`. All three are common practice, no source.

Contradictory answers are refused (:class:`DataError` naming the field of
the question and the rule), never resolved by guessing which answer was
meant.

References
----------
Dunn, O. J. (1964). Multiple comparisons using rank sums. Technometrics 6, 241-252.
Games, P. A. and Howell, J. F. (1976). Pairwise multiple comparison procedures with unequal n's
and/or variances. Journal of Educational Statistics 1, 113-125.
Hsu, J. C. (1996). Multiple Comparisons: Theory and Methods. Chapman & Hall.
Hochberg, Y. and Tamhane, A. C. (1987). Multiple Comparison Procedures. Wiley.
"""

from __future__ import annotations

import math
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
#: Dunn's adjustment that matches each error rate.
DUNN_ADJUSTMENT = {"familywise": "holm", "per_comparison": "none", "false_discovery": "benjamini_hochberg"}
#: Methods that give decisions (and p-values) but no intervals.
NO_INTERVALS = frozenset({"holm", "benjamini_hochberg", "dunn", "dunnett_stepdown"})
_ERROR_RATE_WORDS = {"familywise": "familywise error", "per_comparison": "per-comparison error",
                     "false_discovery": "false discovery rate"}
_ADJUSTMENT_NAMES = {"holm": "Holm", "none": "none", "benjamini_hochberg": "Benjamini-Hochberg",
                     "bonferroni": "Bonferroni", "sidak": "Šidák", "multivariate_t": "multivariate t",
                     "scheffe": "Scheffé"}


@dataclass(frozen=True)
class Question:
    """What the caller wants to know (see the module docstring)."""

    planned: bool = False
    reference: str = "none"  # none | control | best
    control: str | None = None
    best: str | None = None  # highest | lowest (reference = best)
    alternative: str = "two_sided"  # reference = control, goal = differences, familywise
    error_rate: str = "familywise"
    contrasts: tuple[tuple[str, Mapping[str, float]], ...] = ()
    intervals_needed: bool = True
    goal: str = "differences"  # differences | equivalence
    margin: object = None  # equivalence: a positive number, or {"relative": positive fraction}


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
        choice, reasons, cautions, alternatives = _equivalence(question, labels, alpha)
    elif question.contrasts:
        choice, reasons, cautions, alternatives = _contrasts(question, labels, n, alpha)
    elif question.reference == "control":
        choice, reasons, cautions, alternatives = _control(question, labels, n, alpha)
    elif question.reference == "best":
        choice, reasons, cautions, alternatives = _best(question)
    else:
        choice, reasons, cautions, alternatives = _pairs(question, labels, found, alpha)
    if found is not None:
        advice, suggested = _data_advice(question, choice, found)
        cautions += advice
        alternatives = _ranked(choice, suggested, alternatives)
        cautions += _data_cautions(choice, found, alpha)
    if question.intervals_needed and choice.method in NO_INTERVALS:
        cautions.append(f"Intervals were asked for, but {_METHOD_NAMES.get(choice.method, choice.method)} "
                        "gives decisions and p-values, not intervals; the alternatives say which methods "
                        "give them.")
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
    if q.margin is not None:
        _check_margin(q.margin)
    if q.alternative not in ("two_sided", "greater", "less"):
        raise DataError("alternative", "alternative must be two_sided, greater or less",
                        "/question/alternative")
    if q.alternative != "two_sided":
        if q.reference != "control":
            raise DataError("contradiction", "a one-sided alternative is offered for comparisons with a "
                            "control only", "/question/alternative")
        if q.goal == "equivalence":
            raise DataError("contradiction", "alternative is for finding differences from the control; an "
                            "equivalence question has no one-sided alternative (for a one-sided claim, send "
                            "followup.kind non_inferiority or non_superiority to /v1/analysis, or kind to "
                            "/v1/followup/equivalence)", "/question/alternative")
        if q.error_rate != "familywise":
            raise DataError("contradiction", "a one-sided alternative is offered with familywise error "
                            "(Dunnett's one-sided test) only; comparisons with a control under "
                            f"{_ERROR_RATE_WORDS[q.error_rate]} control are two-sided t tests here: set "
                            "alternative to two_sided or error_rate to familywise", "/question/alternative")
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


def _check_margin(margin: object) -> None:
    """The margin the equivalence family would take: a positive number, or a
    positive fraction of the reference mean's magnitude (``{"relative": x}``)."""
    relative = isinstance(margin, Mapping)
    value = margin.get("relative") if isinstance(margin, Mapping) else margin
    try:
        number = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        number = math.nan
    if not (math.isfinite(number) and number > 0.0):
        what = ("a relative margin must be a positive fraction of the reference mean's magnitude" if relative
                else "the margin must be a positive number (in data units)")
        raise DataError("margin", f"{what}: equivalence means a difference from the reference smaller than "
                        "the margin on either side", "/question/margin")


def _multiplicity_warning(kind: str, alpha: float, k: int | None = None, m: int | None = None) -> str:
    """How the chance of at least one false finding grows with the number m of
    tests each made at alpha: 1 - (1 - alpha)^m were they independent, at most
    m alpha (Bonferroni's inequality)."""
    counts = {
        "pairs": ("m = k(k-1)/2", "pairs", "false difference"),
        "control": ("m = k - 1", "comparisons with the control", "false difference"),
        "candidates": ("m = k - 1", "candidates", "false claim of equivalence"),
        "contrasts": ("m", "contrasts", "false finding"),
    }
    formula, noun, error = counts[kind]
    if m is None and k is not None:
        m = k * (k - 1) // 2 if kind == "pairs" else k - 1
    shared = " (they share the control, which correlates them positively)" if kind == "control" else ""
    if m is None:
        return (f"With k groups there are {formula} {noun}, each tested at alpha = {alpha:g}: the chance of at "
                f"least one {error} among them is 1 - (1 - alpha)^m were the m tests independent{shared}, and "
                "at most m·alpha (the Bonferroni bound). Give the groups or their sizes to have the numbers.")
    independent = 1.0 - (1.0 - alpha) ** m
    bound = m * alpha
    bound_text = (f"at most m·alpha = {bound:.3g} (the Bonferroni bound)" if bound < 1.0 else
                  f"the Bonferroni bound m·alpha = {bound:.3g} exceeds 1 and so sets no limit")
    where = f"With k = {k} groups there are {formula} = {m} {noun}" if k is not None and kind != "contrasts" \
        else f"With {formula} = {m} {noun}"
    return (f"{where}, each tested at alpha = {alpha:g}: the chance of at least one {error} among them is "
            f"1 - (1 - alpha)^m = {independent:.3g} were the {m} tests independent{shared}, and {bound_text}.")


def _equivalence(q: Question, labels, alpha):
    options = {"reference": q.control, "kind": "equivalence"}
    if q.margin is not None:
        options["margin"] = q.margin
    cautions = ["The margin must be fixed in advance on scientific or regulatory grounds, not from the data."]
    if q.error_rate == "familywise":
        choice = Choice("equivalence", "dunnett_tost", options)
        reasons = ["Showing that candidates are practically the same as a reference needs an equivalence "
                   "test: failing to find a difference is not evidence of sameness.",
                   "Familywise error over all candidates: the two one-sided tests of every candidate share "
                   "one critical value from the many-to-one t, the largest over the ways the candidates "
                   "that are not equivalent may lie above or below the margin, so that the guarantee holds "
                   "in every configuration."]
        alternatives = [Choice("equivalence", "bonferroni_tost", options,
                               "when a simpler, slightly more conservative familywise rule is wanted (the "
                               "critical value of Bonferroni's inequality, which needs no distribution code)"),
                        Choice("equivalence", "tost", options, "for one candidate, or per-candidate error")]
    else:
        choice = Choice("equivalence", "tost", options)
        reasons = ["Equivalence of each candidate on its own (per-comparison error): Schuirmann's two "
                   "one-sided tests."]
        alternatives = [Choice("equivalence", "dunnett_tost", options,
                               "when the conclusion must hold for all candidates together")]
        cautions.append(_multiplicity_warning("candidates", alpha, k=len(labels) if labels else None))
    if q.margin is None:
        cautions.append("No margin was given: the equivalence family needs one.")
    return choice, reasons, cautions, alternatives


def _contrasts(q: Question, labels, n, alpha):
    if labels is None:
        raise DataError("sizes-needed", "give groups or sizes: orthogonality depends on the group sizes",
                        "/sizes")
    try:
        names, matrix = contrast_rules.coefficient_matrix(labels, list(q.contrasts))
        contrast_rules.require_contrasts_sum_to_zero(names, matrix)
    except DataError as exc:  # the contrasts are the question's: point into it
        pointer = "/question" + exc.pointer if exc.pointer.startswith("/contrasts") else exc.pointer
        raise DataError(exc.rule, exc.message, pointer) from None
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
                    "of at least one false finding in the set is larger.",
                    _multiplicity_warning("contrasts", alpha, m=len(names))] if len(names) > 1 else []
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
                        "each is tested at alpha."], [
            "The familywise error of the set exceeds alpha.", _multiplicity_warning("contrasts", alpha, m=len(names))
        ], [Choice("contrasts", "multivariate_t", {"contrasts": contrasts, "adjustment": "multivariate_t"},
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


def _control(q: Question, labels, n, alpha):
    options: dict[str, object] = {"control": q.control, "alternative": q.alternative}
    cautions: list[str] = []
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
        return choice, reasons, cautions, alternatives
    method = "none" if q.error_rate == "per_comparison" else "benjamini_hochberg"
    contrast_options: dict[str, object] = {"adjustment": method}
    if labels is None:
        cautions.append(
            f"No groups or sizes were given, so the comparisons with the control cannot be written out and "
            f"options has no 'contrasts': before sending options to /v1/followup/contrasts, add one contrast "
            f"per other group, coefficient 1 for the group and -1 for {q.control!r} (for example "
            f"{{\"name\": \"<group> vs {q.control}\", \"coefficients\": {{\"<group>\": 1, \"{q.control}\": "
            f"-1}}}}), or ask again with the groups or their sizes to have them filled in.")
    else:
        contrast_options = {"contrasts": _versus_reference(labels, n, q.control), **contrast_options}
    choice = Choice("contrasts", method, contrast_options)
    reasons = ["Each group against a control with "
               + ("per-comparison error: one t test per group on the pooled variance."
                  if method == "none" else "false-discovery-rate control, for screening many groups.")]
    if method == "none":
        cautions.append(_multiplicity_warning("control", alpha, k=len(labels) if labels is not None else None))
    alternatives = [Choice("control", "dunnett", options, "when the familywise error must be controlled")]
    return choice, reasons, cautions, alternatives


def _versus_reference(labels, n, control) -> list[dict]:
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
    cautions: list[str] = []
    unequal = found is not None and found.unequal_variances
    ranks = found is not None and found.non_normal_small and not unequal
    if q.error_rate == "per_comparison":
        cautions.append(_multiplicity_warning("pairs", alpha, k=k))
        if ranks:
            choice = Choice("pairwise", "dunn", {"dunn_adjustment": "none"})
            reasons = ["All pairs with per-comparison error, with clearly non-normal residuals and small "
                       "groups: Dunn's rank-based comparisons, unadjusted."]
            return choice, reasons, cautions, [
                Choice("pairwise", "lsd", {}, "if the departure from normality is judged harmless"),
                Choice("pairwise", "dunn", {"dunn_adjustment": "holm"}, "when a false difference anywhere matters")]
        choice = Choice("pairwise", "lsd")
        reasons = ["All pairs with per-comparison error: unadjusted t tests on the pooled variance "
                   "(Fisher's least significant difference)."]
        return choice, reasons, cautions, [Choice("pairwise", "tukey_kramer", {},
                                                  "when a false difference anywhere matters")]
    if q.error_rate == "false_discovery":
        if ranks:
            choice = Choice("pairwise", "dunn", {"dunn_adjustment": "benjamini_hochberg"})
            reasons = ["Screening many pairs for leads, with clearly non-normal residuals and small groups: "
                       "Dunn's rank-based comparisons with false-discovery-rate control (Benjamini-Hochberg)."]
            return choice, reasons, cautions, [
                Choice("pairwise", "benjamini_hochberg", {}, "if the departure from normality is judged harmless"),
                Choice("pairwise", "dunn", {"dunn_adjustment": "holm"},
                       "when every declared difference must be protected")]
        choice = Choice("pairwise", "benjamini_hochberg")
        reasons = ["Screening many pairs for leads: false-discovery-rate control (Benjamini-Hochberg) "
                   "keeps the expected share of false differences among those declared at alpha."]
        return choice, reasons, cautions, [Choice("pairwise", "tukey_kramer", {},
                                                  "when every declared difference must be protected")]
    alternatives = [Choice("pairwise", "holm", {}, "when decisions suffice (no intervals)"),
                    Choice("pairwise", "bonferroni", {}, "simple and conservative")]
    if unequal and found.own_variances:
        choice = Choice("pairwise", "games_howell")
        reasons = ["All pairs, familywise, with markedly unequal variances: Games-Howell (Welch standard "
                   "errors and degrees of freedom per pair)."]
        return choice, reasons, cautions, [
            Choice("pairwise", "tukey_kramer", {}, "if the variances can be taken as equal"), *alternatives]
    if ranks:
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


_METHOD_NAMES = {
    "lsd": "Fisher's least significant difference", "tukey_kramer": "Tukey-Kramer",
    "benjamini_hochberg": "Benjamini-Hochberg", "holm": "Holm's procedure", "bonferroni": "Bonferroni",
    "dunnett": "Dunnett's procedure", "dunnett_stepdown": "Dunnett's step-down procedure",
    "hsu_mcb": "Hsu's MCB", "dunn": "Dunn's test", "multivariate_t": "the multivariate t adjustment",
    "scheffe": "Scheffé's method", "none": "the unadjusted t tests", "dunnett_tost": "the equivalence tests",
    "bonferroni_tost": "the equivalence tests", "tost": "the equivalence tests",
}


def _pooling(choice: Choice) -> str:
    if choice.family == "contrasts" and choice.method == "none":
        return "the unadjusted contrast t tests"
    if choice.family == "contrasts":
        return f"the {_ADJUSTMENT_NAMES.get(choice.method, choice.method)}-adjusted contrast t tests"
    return _METHOD_NAMES.get(choice.method, choice.method)


def _variance_evidence(found: Findings) -> str:
    parts = []
    if found.variance_ratio is not None:
        parts.append(f"largest/smallest variance {found.variance_ratio:.3g}")
    elif not found.own_variances:
        parts.append("some groups show no spread while others do")
    if found.levene_p_value is not None:
        parts.append(f"Levene's test p = {found.levene_p_value:.3g}")
    return "; ".join(parts)


def _data_advice(q: Question, choice: Choice, found: Findings) -> tuple[list[str], list[Choice]]:
    """Cautions and suggested alternatives from the data, on every path."""
    cautions: list[str] = []
    suggested: list[Choice] = []
    ranks = choice.method == "dunn"
    pools = choice.method not in ("games_howell", "dunn")
    rate = _ERROR_RATE_WORDS[q.error_rate]
    if found.unequal_variances and pools:
        what = _pooling(choice)
        head = (f"The variances look markedly unequal ({_variance_evidence(found)}), and the pooled variance "
                f"underlies {what}")
        if choice.family == "equivalence":
            cautions.append(f"{head}: the standard errors of the comparisons with the reference may be too "
                            "small or too large. No equivalence test on each group's own variance is offered "
                            "here; have the margin decision checked with a Welch-type two one-sided test.")
        elif found.own_variances:
            cautions.append(f"{head}; no version of it on each group's own variance is offered here, so "
                            "compare with Games-Howell (Welch standard errors and degrees of freedom per pair) "
                            "before drawing conclusions.")
            suggested.append(Choice("pairwise", "games_howell", {}, _games_howell_when(q, choice)))
        else:
            cautions.append(f"{head}, but a group has a single value or no spread at all, so Games-Howell "
                            "(which needs every group's own variance) cannot be used: the comparisons assume "
                            "a common variance; check the data (for example values at a detection limit).")
    if found.non_normal_small and not ranks:
        head = (f"The residuals depart clearly from normality (Shapiro-Wilk p = {found.shapiro_p_value:.3g}) "
                f"and the smallest group has {found.smallest_group} values")
        if found.unequal_variances:
            cautions.append(f"{head}: treat borderline results with care. Rank-based comparisons (Dunn) are "
                            "not suggested, as they assume the groups differ only in location and the "
                            "variances here differ too.")
        elif choice.family == "equivalence":
            cautions.append(f"{head}: the t-based equivalence tests may be unreliable; no rank-based "
                            "equivalence test is offered here.")
        else:
            adjustment = DUNN_ADJUSTMENT[q.error_rate]
            cautions.append(f"{head}: the t-based results ({_pooling(choice)}) may be unreliable; Dunn's "
                            f"rank-based comparisons with the adjustment matching the {rate} "
                            f"({_ADJUSTMENT_NAMES[adjustment]}) are listed among the alternatives.")
            suggested.append(Choice("pairwise", "dunn", {"dunn_adjustment": adjustment},
                                    _dunn_when(q, choice, adjustment)))
    return cautions, suggested


def _games_howell_when(q: Question, choice: Choice) -> str:
    base = "with markedly unequal variances: each pair on its own variances (Welch)"
    if q.reference == "control":
        return (f"{base}; read the rows that involve {q.control!r}. It controls the familywise error over all "
                "k(k-1)/2 pairs, so it is conservative for the k - 1 comparisons with the control"
                + ("" if q.error_rate == "familywise" else f", and stricter than the "
                   f"{_ERROR_RATE_WORDS[q.error_rate]} asked for") + ".")
    if choice.family == "best":
        return (f"{base}; groups not shown below the top group remain candidates for best, but without the "
                "constrained intervals of Hsu's MCB.")
    if choice.family == "contrasts":
        return f"{base}, if the contrasts of interest are differences between two groups (it covers pairs only)."
    return (f"{base}. It controls the familywise error, stricter than the {_ERROR_RATE_WORDS[q.error_rate]} "
            "asked for: no unadjusted or false-discovery version on the groups' own variances is offered "
            "here.")


def _dunn_when(q: Question, choice: Choice, adjustment: str) -> str:
    words = {"holm": "Holm-adjusted (familywise)", "none": "unadjusted (per comparison)",
             "benjamini_hochberg": "Benjamini-Hochberg-adjusted (false discovery rate)"}[adjustment]
    base = f"with clearly non-normal residuals and small groups: rank-based comparisons, {words}"
    if q.reference == "control":
        extra = "" if adjustment == "none" else (
            "; the adjustment counts all k(k-1)/2 pairs, so it is conservative for the k - 1 comparisons "
            "with the control")
        return f"{base}; read the rows that involve {q.control!r}{extra}."
    if choice.family == "best":
        return f"{base}; it says which groups differ from the top group in rank, not which may be best."
    if choice.family == "contrasts":
        return f"{base}, if the contrasts of interest are differences between two groups (it covers pairs only)."
    return f"{base}."


def _ranked(choice: Choice, suggested: list[Choice], alternatives: list[Choice]) -> list[Choice]:
    """The data's suggestions first, then the others; no repeats, never the choice itself."""
    out: list[Choice] = []
    seen = {(choice.family, choice.method, repr(sorted(choice.options.items())))}
    for alternative in (*suggested, *alternatives):
        key = (alternative.family, alternative.method, repr(sorted(alternative.options.items())))
        if key not in seen:
            seen.add(key)
            out.append(alternative)
    return out


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
    return out

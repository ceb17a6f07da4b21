"""The recommendation logic, row by row.

Each row: a question, the data's shape, the family/method expected, a
phrase the reasons or cautions must contain, and (where the data should
bring one) the alternative that must be offered. The expectations follow
the standard guidance of the multiple-comparison literature (Hsu 1996,
ch. 1-2; Hochberg and Tamhane 1987) as the issue states it: Games-Howell
(Games and Howell 1976) for markedly unequal variances, Dunn's rank-based
comparisons (Dunn 1964) for clearly non-normal small groups, with the
adjustment that matches the error rate asked for. The data are simulated
with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest

from familywise.stats.data import OneWayData
from familywise.stats.errors import DataError
from familywise.stats.recommend import STATISTICIAN, Question, recommend

LABELS = ["A", "B", "C", "D"]


def _data(sizes=(8, 8, 8, 8), sds=(1, 1, 1, 1), shift=(0.0, 0.8, 1.6, 2.4), seed=0, skew=False):
    """Seeds chosen so that each shape shows only the feature it is meant to
    show (checked by the findings assertions in the test)."""
    rng = np.random.default_rng(seed)
    groups = []
    for n, s, m in zip(sizes, sds, shift, strict=True):
        values = rng.lognormal(0.0, 1.2, n) if skew else rng.normal(0.0, s, n)
        groups.append(values + m)
    return OneWayData.from_arrays(LABELS[: len(sizes)], groups)


def _no_spread():
    """One group at a constant value (for example at a detection limit)."""
    rng = np.random.default_rng(5)
    return OneWayData.from_arrays(LABELS, [np.full(12, 5.0)] + [rng.normal(m, 1.0, 12) for m in (5.5, 6.0, 6.5)])


ORTHOGONAL = (("A vs B", {"A": 1, "B": -1}), ("AB vs CD", {"A": 1, "B": 1, "C": -1, "D": -1}),
              ("C vs D", {"C": 1, "D": -1}))
CONTROL = {"reference": "control", "control": "A"}
PER_COMPARISON = {"error_rate": "per_comparison"}
FDR = {"error_rate": "false_discovery"}
EQUIVALENCE = {**CONTROL, "goal": "equivalence", "margin": 1.0}
GAMES_HOWELL = ("pairwise", "games_howell", {})


def _dunn(adjustment: str) -> tuple[str, str, dict]:
    return "pairwise", "dunn", {"dunn_adjustment": adjustment}


ROWS = [
    # planned orthogonal contrasts (equal n) -> contrasts without adjustment
    (Question(planned=True, contrasts=ORTHOGONAL), "equal", "contrasts", "none", "orthogonal", None),
    # same set with unequal n: no longer orthogonal -> multivariate t
    (Question(planned=True, contrasts=ORTHOGONAL), "unequal_n", "contrasts", "multivariate_t",
     "not orthogonal under the actual group sizes", None),
    # ... decisions only -> Holm
    (Question(planned=True, contrasts=ORTHOGONAL, intervals_needed=False), "unequal_n", "contrasts", "holm",
     "Holm", None),
    # contrasts chosen after seeing the data -> Scheffé
    (Question(planned=False, contrasts=ORTHOGONAL), "equal", "contrasts", "scheffe", "Scheffé", None),
    # each group against a control -> Dunnett; decisions only -> step-down
    (Question(**CONTROL), "equal", "control", "dunnett", "Dunnett", None),
    (Question(**CONTROL, intervals_needed=False), "equal", "control", "dunnett_stepdown", "step-down", None),
    (Question(**CONTROL, alternative="greater"), "equal", "control", "dunnett", "Dunnett", None),
    # ... per comparison: one t test per group, with the warning for m = k - 1 comparisons
    (Question(**CONTROL, **PER_COMPARISON), "equal", "contrasts", "none", "m = k - 1 = 3", None),
    (Question(**CONTROL, **FDR), "equal", "contrasts", "benjamini_hochberg", "false-discovery", None),
    # against the best -> Hsu's MCB
    (Question(reference="best", best="highest"), "equal", "best", "hsu_mcb", "best", None),
    # all pairs, familywise -> Tukey-Kramer; per comparison -> LSD with the warning; screening -> BH
    (Question(), "equal", "pairwise", "tukey_kramer", "Tukey-Kramer", None),
    (Question(**PER_COMPARISON), "equal", "pairwise", "lsd", "Bonferroni bound", None),
    (Question(**FDR), "equal", "pairwise", "benjamini_hochberg", "false-discovery", None),
    # data-driven: markedly unequal variances -> Games-Howell for familywise pairs ...
    (Question(), "unequal_var", "pairwise", "games_howell", "unequal variances", None),
    (Question(), "unequal_var_large", "pairwise", "games_howell", "unequal variances", None),
    # ... and on every other path a caution and Games-Howell as an alternative
    (Question(**PER_COMPARISON), "unequal_var_large", "pairwise", "lsd", "markedly unequal", GAMES_HOWELL),
    (Question(**FDR), "unequal_var_large", "pairwise", "benjamini_hochberg", "markedly unequal", GAMES_HOWELL),
    (Question(**CONTROL), "unequal_var_large", "control", "dunnett", "markedly unequal", GAMES_HOWELL),
    (Question(**CONTROL, **PER_COMPARISON), "unequal_var_large", "contrasts", "none", "markedly unequal",
     GAMES_HOWELL),
    (Question(**CONTROL, **FDR), "unequal_var_large", "contrasts", "benjamini_hochberg", "markedly unequal",
     GAMES_HOWELL),
    (Question(reference="best", best="lowest"), "unequal_var_large", "best", "hsu_mcb", "markedly unequal",
     GAMES_HOWELL),
    (Question(planned=True, contrasts=ORTHOGONAL), "unequal_var_large", "contrasts", "none", "markedly unequal",
     GAMES_HOWELL),
    (Question(**EQUIVALENCE), "unequal_var_large", "equivalence", "dunnett_tost",
     "no equivalence test on each group's own variance", None),
    # ... unless a group has no spread: Games-Howell cannot run, and the caution says so
    (Question(), "no_spread", "pairwise", "tukey_kramer", "cannot be used", None),
    (Question(**PER_COMPARISON), "no_spread", "pairwise", "lsd", "cannot be used", None),
    (Question(**CONTROL), "no_spread", "control", "dunnett", "cannot be used", None),
    # strong non-normality with small groups -> Dunn with the adjustment matching the error rate for pairs ...
    (Question(), "skewed_small", "pairwise", "dunn", "non-normal", None),
    (Question(**PER_COMPARISON), "skewed_small", "pairwise", "dunn", "non-normal", None),
    (Question(**FDR), "skewed_small", "pairwise", "dunn", "non-normal", None),
    # ... and a caution with Dunn (matching adjustment) as an alternative everywhere else
    (Question(**CONTROL), "skewed_small", "control", "dunnett", "depart clearly from normality", _dunn("holm")),
    (Question(**CONTROL, **PER_COMPARISON), "skewed_small", "contrasts", "none", "depart clearly from normality",
     _dunn("none")),
    (Question(**CONTROL, **FDR), "skewed_small", "contrasts", "benjamini_hochberg",
     "depart clearly from normality", _dunn("benjamini_hochberg")),
    (Question(reference="best", best="highest"), "skewed_small", "best", "hsu_mcb",
     "depart clearly from normality", _dunn("holm")),
    (Question(planned=True, contrasts=ORTHOGONAL), "skewed_small", "contrasts", "none",
     "depart clearly from normality", _dunn("holm")),
    (Question(**EQUIVALENCE), "skewed_small", "equivalence", "dunnett_tost", "no rank-based equivalence test",
     None),
    # very unbalanced -> Tukey-Kramer with the note that it is conservative
    (Question(), "very_unbalanced", "pairwise", "tukey_kramer", "conservative", None),
    # non-significant omnibus F -> what it does and does not mean
    (Question(), "flat", "pairwise", "tukey_kramer", "does not require a significant F", None),
    (Question(**PER_COMPARISON), "flat", "pairwise", "lsd", "protected LSD would stop", None),
    (Question(**CONTROL), "flat", "control", "dunnett", "do not depend on it", None),
    # equivalence to a reference
    (Question(**EQUIVALENCE), "equal", "equivalence", "dunnett_tost", "equivalence", None),
    (Question(**EQUIVALENCE, **PER_COMPARISON), "equal", "equivalence", "tost", "one-sided", None),
]

SHAPES = {
    "equal": lambda: _data(),
    "unequal_n": lambda: _data(sizes=(4, 12, 6, 9)),
    "unequal_var": lambda: _data(sds=(0.3, 1.0, 3.0, 6.0), seed=2),
    "unequal_var_large": lambda: _data(sizes=(12, 12, 12, 12), sds=(0.5, 1.0, 2.0, 4.0), seed=0),
    "no_spread": _no_spread,
    "skewed_small": lambda: _data(sizes=(6, 6, 6, 6), shift=(0, 1, 2, 3), skew=True, seed=11),
    "very_unbalanced": lambda: _data(sizes=(3, 20, 8, 9)),
    "flat": lambda: _data(shift=(0.0, 0.0, 0.0, 0.0), seed=4),
}
FEATURES = {  # shape -> (unequal_variances, non_normal_small, very_unbalanced, omnibus significant, own variances)
    "equal": (False, False, False, True, True),
    "unequal_var": (True, True, False, False, True),
    "unequal_var_large": (True, False, False, True, True),
    "no_spread": (True, False, False, True, False),
    "skewed_small": (False, True, False, False, True),
    "very_unbalanced": (False, False, True, True, True),
    "flat": (False, False, False, False, True),
}


@pytest.mark.parametrize("shape", sorted(FEATURES))
def test_shapes_show_their_feature(shape) -> None:
    found = recommend(Question(), SHAPES[shape]()).findings
    observed = (found.unequal_variances, found.non_normal_small, found.very_unbalanced,
                found.omnibus_p_value < 0.05, found.own_variances)
    assert observed == FEATURES[shape]


def _key(choice) -> tuple:
    return choice.family, choice.method, dict(choice.options)


@pytest.mark.parametrize(("question", "shape", "family", "method", "phrase", "alternative"), ROWS,
                         ids=[f"{r[1]}-{r[0].reference}-{r[0].error_rate}-{r[2]}-{r[3]}" for r in ROWS])
def test_recommendation_rows(question, shape, family, method, phrase, alternative) -> None:
    data = SHAPES[shape]()
    result = recommend(question, data, alpha=0.05)
    assert (result.family, result.method) == (family, method), result
    text = " ".join(result.reasons + result.cautions)
    assert phrase.lower() in text.lower(), text
    assert STATISTICIAN in result.cautions
    assert result.findings is not None
    for offered in result.alternatives:
        assert offered.when
        assert _key(offered) != (result.family, result.method, dict(result.options))
    if alternative is not None:
        assert alternative in [_key(a) for a in result.alternatives], result.alternatives


@pytest.mark.parametrize(("error_rate", "adjustment"), [
    ("familywise", "holm"), ("per_comparison", "none"), ("false_discovery", "benjamini_hochberg")])
def test_dunn_adjustment_matches_the_error_rate(error_rate, adjustment) -> None:
    # Dunn (1964) with Holm (familywise), no adjustment (per comparison) or
    # Benjamini-Hochberg (false discovery rate): the error rate asked for is kept.
    result = recommend(Question(error_rate=error_rate), SHAPES["skewed_small"]())
    assert (result.method, result.options) == ("dunn", {"dunn_adjustment": adjustment})
    control = recommend(Question(**CONTROL, error_rate=error_rate), SHAPES["skewed_small"]())
    assert _dunn(adjustment) in [_key(a) for a in control.alternatives]


def test_unequal_variances_and_non_normality_together_do_not_suggest_ranks() -> None:
    # Rank tests assume the groups differ only in location (Dunn 1964): with
    # markedly unequal variances they are not suggested, and the caution says why.
    for question in (Question(), Question(**PER_COMPARISON), Question(**CONTROL)):
        result = recommend(question, SHAPES["unequal_var"]())
        assert all(a.method != "dunn" for a in result.alternatives)
        assert any("assume the groups differ only in location" in c for c in result.cautions)


def _independent(m: int, alpha: float) -> str:
    # 1 - (1 - alpha)^m: the chance of at least one false finding among m independent tests at alpha
    # (elementary probability); m alpha: Bonferroni's inequality.
    return f"{1.0 - (1.0 - alpha) ** m:.3g}"


def test_per_comparison_warning_states_the_formula_and_the_numbers() -> None:
    # m = k(k-1)/2 = 6 pairs: 1 - (1 - alpha)^m = 0.265 (independent tests) and m alpha = 0.3.
    result = recommend(Question(error_rate="per_comparison"), _data(), alpha=0.05)
    warning = next(c for c in result.cautions if "6 pairs" in c)
    for part in ("m = k(k-1)/2 = 6", "1 - (1 - alpha)^m", "m·alpha", _independent(6, 0.05), "= 0.3 ",
                 "Bonferroni bound", "independent"):
        assert part in warning, (part, warning)


def test_per_comparison_warning_for_comparisons_with_a_control() -> None:
    # m = k - 1 = 3 comparisons: 1 - 0.95^3 = 0.143, 3 x 0.05 = 0.15.
    result = recommend(Question(**CONTROL, **PER_COMPARISON), _data(), alpha=0.05)
    warning = next(c for c in result.cautions if "comparisons with the control" in c)
    for part in ("m = k - 1 = 3", "1 - (1 - alpha)^m", _independent(3, 0.05), "m·alpha = 0.15"):
        assert part in warning, (part, warning)


def test_per_comparison_warning_when_the_bonferroni_bound_exceeds_one() -> None:
    # k = 10: m = 45 pairs, m alpha = 2.25 > 1 bounds nothing; 1 - 0.95^45 = 0.901.
    sizes = {f"g{i}": 4 for i in range(10)}
    result = recommend(Question(**PER_COMPARISON), sizes=sizes)
    warning = next(c for c in result.cautions if "45 pairs" in c)
    assert _independent(45, 0.05) in warning and "2.25 exceeds 1" in warning


def test_per_comparison_warning_without_the_design_gives_the_formula() -> None:
    result = recommend(Question(**PER_COMPARISON))
    warning = next(c for c in result.cautions if "m = k(k-1)/2" in c)
    assert "1 - (1 - alpha)^m" in warning and "m·alpha" in warning and "Give the groups" in warning


def test_control_per_comparison_without_the_design_says_what_to_add() -> None:
    # No labels: the contrasts cannot be written, so options carry none (an empty
    # list would be refused by /v1/followup/contrasts) and a caution says what to add.
    for rate in ("per_comparison", "false_discovery"):
        result = recommend(Question(**CONTROL, error_rate=rate))
        assert result.family == "contrasts" and "contrasts" not in result.options
        assert any("options has no 'contrasts'" in c and "-1 for 'A'" in c for c in result.cautions)
        with_sizes = recommend(Question(**CONTROL, error_rate=rate), sizes={"A": 4, "B": 4, "C": 5})
        assert [c["coefficients"] for c in with_sizes.options["contrasts"]] == [{"A": -1.0, "B": 1.0},
                                                                                  {"A": -1.0, "C": 1.0}]


def test_decisions_only_methods_say_so_when_intervals_were_asked_for() -> None:
    # Benjamini-Hochberg and Dunn's rank test give no intervals (their own notes say so).
    assert any("not intervals" in c for c in recommend(Question(**FDR), _data()).cautions)
    assert not any("not intervals" in c for c in recommend(Question(**FDR, intervals_needed=False), _data()).cautions)


def test_sizes_alone_decide_orthogonality() -> None:
    # The same contrasts: orthogonal for equal sizes, not for these sizes.
    q = Question(planned=True, contrasts=ORTHOGONAL)
    assert recommend(q, sizes={"A": 5, "B": 5, "C": 5, "D": 5}).method == "none"
    assert recommend(q, sizes={"A": 5, "B": 3, "C": 5, "D": 5}).method == "multivariate_t"


CONTRADICTIONS = [
    (Question(reference="control"), "/question/control"),
    (Question(reference="control", control="Z"), "/question/control"),
    (Question(control="A"), "/question/control"),
    (Question(reference="best"), "/question/best"),
    (Question(best="highest"), "/question/best"),
    (Question(alternative="greater"), "/question/alternative"),
    (Question(**CONTROL, contrasts=ORTHOGONAL), "/question/contrasts"),
    (Question(goal="equivalence"), "/question/reference"),
    (Question(**CONTROL, goal="equivalence", error_rate="false_discovery"), "/question/error_rate"),
    (Question(margin=1.0), "/question/margin"),
    # a one-sided alternative with an equivalence goal, or with per-comparison / FDR control (two-sided t tests)
    (Question(**EQUIVALENCE, alternative="greater"), "/question/alternative"),
    (Question(**CONTROL, **PER_COMPARISON, alternative="greater"), "/question/alternative"),
    (Question(**CONTROL, **FDR, alternative="less"), "/question/alternative"),
    # margins the equivalence family would refuse
    (Question(**{**EQUIVALENCE, "margin": -1.0}), "/question/margin"),
    (Question(**{**EQUIVALENCE, "margin": 0.0}), "/question/margin"),
    (Question(**{**EQUIVALENCE, "margin": {"relative": -0.1}}), "/question/margin"),
    (Question(**{**EQUIVALENCE, "margin": {"relative": 0.0}}), "/question/margin"),
    # the question's own contrasts are pointed at inside the question
    (Question(planned=True, contrasts=(("A vs Q", {"A": 1, "Q": -1}),)), "/question/contrasts/0/coefficients/Q"),
    (Question(planned=True, contrasts=(("A vs 2B", {"A": 1, "B": -2}),)), "/question/contrasts/0/coefficients"),
]


@pytest.mark.parametrize(("question", "pointer"), CONTRADICTIONS)
def test_contradictions_are_refused(question, pointer) -> None:
    with pytest.raises(DataError) as info:
        recommend(question, _data())
    assert info.value.pointer == pointer

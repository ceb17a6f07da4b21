"""The recommendation logic, row by row.

Each row: a question, the data's shape, the family/method expected and a
phrase the reasons or cautions must contain. The expectations follow the
standard guidance of the multiple-comparison literature (Hsu 1996, ch. 1-2;
Hochberg and Tamhane 1987) as the issue states it; the data are simulated
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


ORTHOGONAL = (("A vs B", {"A": 1, "B": -1}), ("AB vs CD", {"A": 1, "B": 1, "C": -1, "D": -1}),
              ("C vs D", {"C": 1, "D": -1}))

ROWS = [
    # planned orthogonal contrasts (equal n) -> contrasts without adjustment
    (Question(planned=True, contrasts=ORTHOGONAL), "equal", "contrasts", "none", "orthogonal"),
    # same set with unequal n: no longer orthogonal -> multivariate t
    (Question(planned=True, contrasts=ORTHOGONAL), "unequal_n", "contrasts", "multivariate_t",
     "not orthogonal under the actual group sizes"),
    # ... decisions only -> Holm
    (Question(planned=True, contrasts=ORTHOGONAL, intervals_needed=False), "unequal_n", "contrasts", "holm",
     "Holm"),
    # contrasts chosen after seeing the data -> Scheffé
    (Question(planned=False, contrasts=ORTHOGONAL), "equal", "contrasts", "scheffe", "Scheffé"),
    # each group against a control -> Dunnett; decisions only -> step-down
    (Question(reference="control", control="A"), "equal", "control", "dunnett", "Dunnett"),
    (Question(reference="control", control="A", intervals_needed=False), "equal", "control",
     "dunnett_stepdown", "step-down"),
    (Question(reference="control", control="A", alternative="greater"), "equal", "control", "dunnett",
     "Dunnett"),
    # against the best -> Hsu's MCB
    (Question(reference="best", best="highest"), "equal", "best", "hsu_mcb", "best"),
    # all pairs, familywise -> Tukey-Kramer; per comparison -> LSD with the warning; screening -> BH
    (Question(), "equal", "pairwise", "tukey_kramer", "Tukey-Kramer"),
    (Question(error_rate="per_comparison"), "equal", "pairwise", "lsd", "Bonferroni bound"),
    (Question(error_rate="false_discovery"), "equal", "pairwise", "benjamini_hochberg", "false-discovery"),
    # data-driven: markedly unequal variances -> Games-Howell
    (Question(), "unequal_var", "pairwise", "games_howell", "unequal variances"),
    # strong non-normality with small groups -> Dunn
    (Question(), "skewed_small", "pairwise", "dunn", "non-normal"),
    # very unbalanced -> Tukey-Kramer with the note that it is conservative
    (Question(), "very_unbalanced", "pairwise", "tukey_kramer", "conservative"),
    # non-significant omnibus F -> what it does and does not mean
    (Question(), "flat", "pairwise", "tukey_kramer", "does not require a significant F"),
    (Question(error_rate="per_comparison"), "flat", "pairwise", "lsd", "protected LSD would stop"),
    (Question(reference="control", control="A"), "flat", "control", "dunnett", "do not depend on it"),
    # equivalence to a reference
    (Question(reference="control", control="A", goal="equivalence", margin=1.0), "equal", "equivalence",
     "dunnett_tost", "equivalence"),
    (Question(reference="control", control="A", goal="equivalence", margin=1.0,
              error_rate="per_comparison"), "equal", "equivalence", "tost", "one-sided"),
]

SHAPES = {
    "equal": lambda: _data(),
    "unequal_n": lambda: _data(sizes=(4, 12, 6, 9)),
    "unequal_var": lambda: _data(sds=(0.3, 1.0, 3.0, 6.0), seed=2),
    "skewed_small": lambda: _data(sizes=(6, 6, 6, 6), shift=(0, 1, 2, 3), skew=True, seed=11),
    "very_unbalanced": lambda: _data(sizes=(3, 20, 8, 9)),
    "flat": lambda: _data(shift=(0.0, 0.0, 0.0, 0.0), seed=4),
}
FEATURES = {  # shape -> (unequal_variances, non_normal_small, very_unbalanced, omnibus significant)
    "equal": (False, False, False, True),
    "unequal_var": (True, True, False, False),
    "skewed_small": (False, True, False, False),
    "very_unbalanced": (False, False, True, True),
    "flat": (False, False, False, False),
}


@pytest.mark.parametrize("shape", sorted(FEATURES))
def test_shapes_show_their_feature(shape) -> None:
    found = recommend(Question(), SHAPES[shape]()).findings
    observed = (found.unequal_variances, found.non_normal_small, found.very_unbalanced,
                found.omnibus_p_value < 0.05)
    assert observed == FEATURES[shape]


@pytest.mark.parametrize(("question", "shape", "family", "method", "phrase"), ROWS,
                         ids=[f"{r[1]}-{r[2]}-{r[3]}" for r in ROWS])
def test_recommendation_rows(question, shape, family, method, phrase) -> None:
    data = SHAPES[shape]()
    result = recommend(question, data, alpha=0.05)
    assert (result.family, result.method) == (family, method), result
    text = " ".join(result.reasons + result.cautions)
    assert phrase.lower() in text.lower(), text
    assert STATISTICIAN in result.cautions
    assert result.findings is not None
    for alternative in result.alternatives:
        assert alternative.when


def test_per_comparison_warning_numbers() -> None:
    # m = k(k-1)/2 = 6 pairs: 1 - (1 - alpha)^m = 0.265 (independent tests) and m alpha = 0.3.
    result = recommend(Question(error_rate="per_comparison"), _data(), alpha=0.05)
    warning = next(c for c in result.cautions if "6 pairs" in c)
    assert "0.265" in warning and "0.3" in warning


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
    (Question(reference="control", control="A", contrasts=ORTHOGONAL), "/question/contrasts"),
    (Question(goal="equivalence"), "/question/reference"),
    (Question(reference="control", control="A", goal="equivalence", error_rate="false_discovery"),
     "/question/error_rate"),
    (Question(margin=1.0), "/question/margin"),
]


@pytest.mark.parametrize(("question", "pointer"), CONTRADICTIONS)
def test_contradictions_are_refused(question, pointer) -> None:
    with pytest.raises(DataError) as info:
        recommend(question, _data())
    assert info.value.pointer == pointer

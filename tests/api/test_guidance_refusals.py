"""/v1/recommendation and /v1/analysis over HTTP: contradictions refused where
the caller wrote them, and the data findings on every path.

Refusals follow the house rule "refuse, never guess" (DEVELOPERS.md): a 422
problem naming the field with a JSON pointer into *this* request and the
rule. The statistical expectations (Games-Howell for markedly unequal
variances, Games and Howell 1976; Dunn's rank test with the adjustment that
matches the error rate, Dunn 1964) are those of tests/unit/test_recommendation_table.py.
"""

from __future__ import annotations

import numpy as np
import pytest

GROUPS = [{"label": "a", "values": [1.0, 2.0, 3.5, 2.2]}, {"label": "b", "values": [2.5, 3.0, 4.5, 3.1]},
          {"label": "c", "values": [5.0, 6.5, 7.0, 5.9]}]
CONTROL = {"reference": "control", "control": "a"}
EQUIVALENCE = {**CONTROL, "goal": "equivalence", "margin": 1.0}
PAIR = [{"name": "a vs b", "coefficients": {"a": 1, "b": -1}}]


def _problem(response, pointer: str, rule: str | None = None) -> dict:
    assert response.status_code == 422, response.text
    assert response.headers["content-type"].startswith("application/problem+json")
    body = response.json()
    assert body["pointer"] == pointer, body
    if rule is not None:
        assert body["rule"] == rule, body
    return body


CONTRADICTORY_QUESTIONS = [
    ({"reference": "control"}, "/question/control", "contradiction"),
    ({"reference": "control", "control": "zz"}, "/question/control", "unknown-group"),
    ({"control": "a"}, "/question/control", "contradiction"),
    ({"reference": "best"}, "/question/best", "contradiction"),
    ({"best": "highest"}, "/question/best", "contradiction"),
    ({"alternative": "greater"}, "/question/alternative", "contradiction"),
    ({**CONTROL, "contrasts": PAIR}, "/question/contrasts", "contradiction"),
    ({"goal": "equivalence"}, "/question/reference", "contradiction"),
    ({**EQUIVALENCE, "error_rate": "false_discovery"}, "/question/error_rate", "contradiction"),
    ({"margin": 1.0}, "/question/margin", "contradiction"),
    ({"contrasts": PAIR, "error_rate": "per_comparison"}, "/question/error_rate", "contradiction"),
    # alternative is not ignored when the goal is equivalence, nor with two-sided per-comparison / FDR tests
    ({**EQUIVALENCE, "alternative": "greater"}, "/question/alternative", "contradiction"),
    ({**CONTROL, "error_rate": "per_comparison", "alternative": "less"}, "/question/alternative", "contradiction"),
    ({**CONTROL, "error_rate": "false_discovery", "alternative": "greater"}, "/question/alternative",
     "contradiction"),
    # margins the equivalence family would refuse are refused in the question
    ({**EQUIVALENCE, "margin": -1}, "/question/margin", "margin"),
    ({**EQUIVALENCE, "margin": 0}, "/question/margin", "margin"),
    ({**EQUIVALENCE, "margin": {"relative": -0.1}}, "/question/margin", "margin"),
    # the question's contrasts are pointed at inside the question
    ({"planned": True, "contrasts": [{"name": "x", "coefficients": {"a": 1, "q": -1}}]},
     "/question/contrasts/0/coefficients/q", "unknown-group"),
    ({"planned": True, "contrasts": [{"name": "x", "coefficients": {"a": 1, "b": -2}}]},
     "/question/contrasts/0/coefficients", "sum-to-zero"),
]


@pytest.mark.parametrize(("question", "pointer", "rule"), CONTRADICTORY_QUESTIONS)
def test_contradictory_questions_are_refused_by_both_endpoints(client, question, pointer, rule) -> None:
    _problem(client.post("/v1/recommendation", json={"groups": GROUPS, "question": question}), pointer, rule)
    _problem(client.post("/v1/analysis", json={"groups": GROUPS, "question": question}), pointer, rule)


def test_margin_is_checked_without_data(client) -> None:
    _problem(client.post("/v1/recommendation", json={"question": {**EQUIVALENCE, "margin": -1}}),
             "/question/margin", "margin")


FOLLOWUP_REFUSALS = [
    # silent overrides are refused, naming the field and the rule
    ({"family": "best", "method": "nope"}, "/followup/method", "method"),
    ({"family": "best", "method": "tukey_kramer"}, "/followup/method", "method"),
    ({"family": "contrasts", "method": "holm", "adjustment": "none", "contrasts": PAIR}, "/followup/method",
     "contradiction"),
    ({"family": "pairwise", "dunn_adjustment": "none"}, "/followup/dunn_adjustment", "contradiction"),
    ({"family": "pairwise", "method": "holm", "protected": True}, "/followup/protected", "contradiction"),
    # schema errors of the family's own request point into followup
    ({"family": "contrasts", "method": "nope", "contrasts": PAIR}, "/followup/method", "literal_error"),
    ({"family": "contrasts", "adjustment": "none"}, "/followup/contrasts", "missing"),
    ({"family": "pairwise", "method": "nope"}, "/followup/method", "literal_error"),
    ({"family": "pairwise", "control": "a"}, "/followup/control", "extra_forbidden"),
    ({"family": "control", "method": "dunnett"}, "/followup/control", "missing"),
    # the family's data rules point where the value was written
    ({"family": "control", "control": "zz"}, "/followup/control", "unknown-group"),
    ({"family": "equivalence", "reference": "zz", "margin": 1.0}, "/followup/reference", "unknown-group"),
    ({"family": "equivalence", "reference": "a", "margin": -1.0}, "/followup/margin", "margin"),
    ({"family": "equivalence", "reference": "a"}, "/followup/margin", "margin"),
    ({"family": "contrasts", "contrasts": [{"name": "x", "coefficients": {"a": 1, "Q": -1}}]},
     "/followup/contrasts/0/coefficients/Q", "unknown-group"),
]


@pytest.mark.parametrize(("followup", "pointer", "rule"), FOLLOWUP_REFUSALS)
def test_followup_refusals_point_into_followup(client, followup, pointer, rule) -> None:
    _problem(client.post("/v1/analysis", json={"groups": GROUPS, "followup": followup}), pointer, rule)


def test_a_refusal_of_the_recommended_family_points_into_the_question(client) -> None:
    # A relative margin needs a reference mean other than zero: the equivalence
    # family says /margin/relative, which in the analysis request is the question's.
    groups = [{"label": "a", "values": [-1.0, 1.0, 0.0]}, {"label": "b", "values": [2.5, 3.0, 4.5]}]
    question = {**EQUIVALENCE, "margin": {"relative": 0.1}}
    _problem(client.post("/v1/analysis", json={"groups": groups, "question": question}),
             "/question/margin/relative", "relative-margin")
    followup = {"family": "equivalence", "reference": "a", "margin": {"relative": 0.1}}
    _problem(client.post("/v1/analysis", json={"groups": groups, "followup": followup}),
             "/followup/margin/relative", "relative-margin")


def test_refusals_inside_a_batch_keep_the_mapped_pointer(client) -> None:
    item = {"id": "x", "operation": "analysis", "request": {"groups": GROUPS, "followup": {
        "family": "control", "control": "zz"}}}
    answer = client.post("/v1/batch", json={"items": [item]}).json()["results"][0]
    assert answer["status"] == 422
    assert answer["problem"]["pointer"] == "/items/0/request/followup/control"


def _without_provenance(body: dict) -> dict:
    return {k: v for k, v in body.items() if k != "provenance"}


@pytest.mark.parametrize("followup", [
    {"family": "contrasts", "method": "holm", "contrasts": PAIR},
    {"family": "contrasts", "method": "holm", "adjustment": "holm", "contrasts": PAIR},
    {"family": "contrasts", "adjustment": "holm", "contrasts": PAIR},
])
def test_contrasts_method_is_the_adjustment(client, followup) -> None:
    body = client.post("/v1/analysis", json={"groups": GROUPS, "followup": followup})
    assert body.status_code == 200, body.text
    direct = client.post("/v1/followup/contrasts", json={"groups": GROUPS, "contrasts": PAIR, "adjustment": "holm"})
    assert body.json()["followup"] == _without_provenance(direct.json())


def test_best_accepts_its_own_method_name(client) -> None:
    # hsu_mcb is what /v1/recommendation calls the method of the best family.
    body = client.post("/v1/analysis", json={"groups": GROUPS, "followup": {"family": "best", "method": "hsu_mcb"}})
    assert body.status_code == 200, body.text
    direct = client.post("/v1/followup/best", json={"groups": GROUPS})
    assert body.json()["followup"] == _without_provenance(direct.json())


# --------------------------------------------------------------------------
# data findings over HTTP


def _groups(sizes, sds, means, seed, skew=False) -> list[dict]:
    rng = np.random.default_rng(seed)
    out = []
    for i, (n, s, m) in enumerate(zip(sizes, sds, means, strict=True)):
        values = rng.lognormal(0.0, 1.2, n) if skew else rng.normal(0.0, s, n)
        out.append({"label": "ABCD"[i], "values": [round(float(v + m), 6) for v in values]})
    return out


UNEQUAL = _groups((12, 12, 12, 12), (0.5, 1.0, 2.0, 4.0), (0.0, 0.8, 1.6, 2.4), 0)
SKEWED = _groups((6, 6, 6, 6), (1, 1, 1, 1), (0, 1, 2, 3), 11, skew=True)


@pytest.mark.parametrize(("question", "family", "method"), [
    ({"error_rate": "per_comparison"}, "pairwise", "lsd"),
    ({"error_rate": "false_discovery"}, "pairwise", "benjamini_hochberg"),
    ({"reference": "control", "control": "A"}, "control", "dunnett"),
    ({"reference": "control", "control": "A", "error_rate": "per_comparison"}, "contrasts", "none"),
    ({"reference": "control", "control": "A", "error_rate": "false_discovery"}, "contrasts", "benjamini_hochberg"),
    ({"reference": "best", "best": "highest"}, "best", "hsu_mcb"),
])
def test_unequal_variances_bring_games_howell_on_every_path(client, question, family, method) -> None:
    body = client.post("/v1/recommendation", json={"groups": UNEQUAL, "question": question}).json()
    assert body["findings"]["unequal_variances"] and not body["findings"]["non_normal_small"]
    assert (body["family"], body["method"]) == (family, method)
    assert any("markedly unequal" in c and "Games-Howell" in c for c in body["cautions"])
    games_howell = [a for a in body["alternatives"] if a["method"] == "games_howell"]
    assert games_howell and games_howell[0]["family"] == "pairwise" and games_howell[0]["when"]
    # the alternative is sendable as it stands
    direct = client.post("/v1/followup/pairwise", json={"groups": UNEQUAL, "method": "games_howell",
                                                         **games_howell[0]["options"]})
    assert direct.status_code == 200, direct.text


@pytest.mark.parametrize(("question", "adjustment"), [
    ({"reference": "control", "control": "A"}, "holm"),
    ({"reference": "control", "control": "A", "error_rate": "per_comparison"}, "none"),
    ({"reference": "control", "control": "A", "error_rate": "false_discovery"}, "benjamini_hochberg"),
    ({"reference": "best", "best": "lowest"}, "holm"),
])
def test_non_normal_small_groups_bring_dunn_on_every_path(client, question, adjustment) -> None:
    body = client.post("/v1/recommendation", json={"groups": SKEWED, "question": question}).json()
    assert body["findings"]["non_normal_small"] and not body["findings"]["unequal_variances"]
    assert any("depart clearly from normality" in c for c in body["cautions"])
    dunn = [a for a in body["alternatives"] if a["method"] == "dunn"]
    assert dunn and dunn[0]["options"] == {"dunn_adjustment": adjustment}
    direct = client.post("/v1/followup/pairwise", json={"groups": SKEWED, "method": "dunn", **dunn[0]["options"]})
    assert direct.status_code == 200, direct.text


@pytest.mark.parametrize(("error_rate", "adjustment"), [
    ("familywise", "holm"), ("per_comparison", "none"), ("false_discovery", "benjamini_hochberg")])
def test_analysis_runs_dunn_with_the_matching_adjustment(client, error_rate, adjustment) -> None:
    body = client.post("/v1/analysis", json={"groups": SKEWED, "question": {"error_rate": error_rate}}).json()
    assert body["followup"]["method"] == "dunn"
    assert body["followup"]["extra"]["adjustment"] == adjustment
    assert body["followup"]["error_rate"] == error_rate


def test_per_comparison_warning_over_http(client) -> None:
    # m = k(k-1)/2 = 6 pairs (k = 4): 1 - 0.95^6 = 0.265 were they independent; 6 x 0.05 = 0.3 (Bonferroni).
    body = client.post("/v1/recommendation", json={"groups": UNEQUAL, "question": {"error_rate": "per_comparison"}})
    warning = next(c for c in body.json()["cautions"] if "m = k(k-1)/2 = 6" in c)
    assert "1 - (1 - alpha)^m = 0.265" in warning and "m·alpha = 0.3" in warning
    control = client.post("/v1/recommendation", json={"groups": UNEQUAL, "question": {
        "reference": "control", "control": "A", "error_rate": "per_comparison"}}).json()
    # m = k - 1 = 3: 1 - 0.95^3 = 0.143; 3 x 0.05 = 0.15.
    assert any("m = k - 1 = 3" in c and "0.143" in c and "m·alpha = 0.15" in c for c in control["cautions"])


def test_control_options_without_design_say_what_to_add(client) -> None:
    body = client.post("/v1/recommendation", json={"question": {
        "reference": "control", "control": "a", "error_rate": "per_comparison"}}).json()
    assert body["family"] == "contrasts" and "contrasts" not in body["options"]
    assert any("options has no 'contrasts'" in c for c in body["cautions"])
    with_sizes = client.post("/v1/recommendation", json={"sizes": {"a": 3, "b": 4, "c": 3}, "question": {
        "reference": "control", "control": "a", "error_rate": "per_comparison"}}).json()
    # now ready to send: the options with the data give the comparisons with the control
    response = client.post("/v1/followup/contrasts", json={"groups": GROUPS, **with_sizes["options"]})
    assert response.status_code == 200, response.text
    assert [row["name"] for row in response.json()["comparisons"]] == [c["name"] for c in
                                                                      with_sizes["options"]["contrasts"]]

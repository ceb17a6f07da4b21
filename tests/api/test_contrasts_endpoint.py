"""POST /v1/contrasts/validate end to end, and its refusals.

Sources, named at each check: numpy for the between-groups SS and the
weighted products of the demo plates (definitions of Scheffé 1959: Cov(L_c,
L_d) / sigma^2 = sum c_i d_i / n_i); patsy's ``Helmert`` for the equal-n
Helmert set; Fisher and Yates (1938), orthogonal polynomials (from memory).
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
from fastapi.testclient import TestClient
from patsy.contrasts import Helmert

from familywise.api import examples
from familywise.api.app import create_app
from familywise.api.schemas.contrasts import ContrastValidationResponse
from familywise.api.settings import Settings

PATH = "/v1/contrasts/validate"
LABELS = [g["label"] for g in examples.BUFFER_PLATE["groups"]]


def _post(client, body):
    return client.post(PATH, json=body)


def _between_ss(groups) -> float:
    values = [np.array(g["values"]) for g in groups]
    n = np.array([v.size for v in values])
    means = np.array([v.mean() for v in values])
    return float(np.sum(n * (means - np.sum(n * means) / n.sum()) ** 2))


def test_balanced_plate_is_an_orthogonal_complete_set(client) -> None:
    response = _post(client, examples.CONTRASTS_BALANCED)
    assert response.status_code == 200, response.text
    body = response.json()
    ContrastValidationResponse.model_validate(body)  # the documented schema
    assert body["verdict"] == "orthogonal"
    assert body["set"]["mutually_orthogonal"] and body["set"]["complete"] and body["set"]["rank"] == 4
    assert body["set"]["linearly_independent"] and body["set"]["ss_partition_holds"] is True
    # between-groups SS from numpy (definition), and the partition by the contrast SS
    assert body["set"]["ss_between"] == pytest.approx(_between_ss(examples.BUFFER_PLATE["groups"]), rel=1e-12)
    assert sum(c["ss"] for c in body["contrasts"]) == pytest.approx(body["set"]["ss_between"], rel=1e-10)
    assert [c["name"] for c in body["contrasts"]] == [c["name"] for c in examples.BUFFER_CONTRAST_SET]
    assert all(c["sums_to_zero"] and c["sum"] == 0.0 for c in body["contrasts"])
    assert len(body["pairs"]) == 6 and all(p["orthogonal"] for p in body["pairs"])
    assert body["consequences"][0].startswith("Orthogonal planned set: test each at alpha")
    assert len(body["provenance"]["input_sha256"]) == 64


def test_unbalanced_plate_flips_the_verdict(client) -> None:
    body = _post(client, examples.CONTRASTS_UNBALANCED).json()
    ContrastValidationResponse.model_validate(body)
    assert body["verdict"] == "not_orthogonal"
    assert body["set"]["orthogonal_for_equal_sizes"] and not body["set"]["mutually_orthogonal"]
    assert not body["set"]["complete"] and body["set"]["ss_partition_holds"] is None
    assert body["consequences"][0].startswith("Orthogonal only for equal group sizes")
    assert any("multiplicity adjustment" in s and "holm" in s for s in body["consequences"])
    # weighted products from their definition, sum c_i d_i / n_i, with numpy
    n = np.array([len(g["values"]) for g in examples.UNBALANCED_PLATE["groups"]], dtype=float)
    rows = np.array([[c["coefficients"].get(label, 0.0) for label in LABELS]
                     for c in examples.BUFFER_CONTRAST_SET], dtype=float)
    products = (rows / n) @ rows.T
    for pair in body["pairs"]:
        i = [c["name"] for c in examples.BUFFER_CONTRAST_SET].index(pair["first"])
        j = [c["name"] for c in examples.BUFFER_CONTRAST_SET].index(pair["second"])
        assert pair["weighted_product"] == pytest.approx(products[i, j], rel=1e-13, abs=1e-15)
        assert pair["orthogonal"] == (abs(products[i, j]) < 1e-12)


def test_sizes_with_a_weighted_helmert_set(client) -> None:
    body = _post(client, examples.CONTRASTS_HELMERT_SIZES).json()
    ContrastValidationResponse.model_validate(body)
    assert body["verdict"] == "orthogonal" and body["set"]["complete"]
    assert body["standard"]["kind"] == "helmert" and body["standard"]["orthogonal_by_construction"]
    assert all(c["origin"] == "helmert" and c["ss"] is None for c in body["contrasts"])
    assert body["set"]["ss_between"] is None
    # weighted Helmert: group j against the size-weighted mean of the groups before it
    sizes = examples.CONTRASTS_HELMERT_SIZES["sizes"]
    second = body["contrasts"][1]["coefficients"]
    assert second["reference buffer"] / second["phosphate pH 7.0"] == pytest.approx(
        sizes["reference buffer"] / sizes["phosphate pH 7.0"])


def test_equal_sizes_helmert_matches_patsy_and_contrasts_and_standard_combine(client) -> None:
    body = _post(client, {"sizes": dict.fromkeys(LABELS, 4), "standard": {"kind": "helmert"},
                          "contrasts": [{"name": "HEPES vs Tris", "coefficients": {
                              "HEPES pH 7.5": 1, "Tris pH 8.0": -1}}]}).json()
    assert [c["origin"] for c in body["contrasts"]] == ["given"] + ["helmert"] * 4
    generated = np.array([[c["coefficients"][label] for label in LABELS] for c in body["contrasts"][1:]])
    # patsy Helmert contrast matrix, transposed
    np.testing.assert_array_equal(generated, Helmert().code_without_intercept(LABELS).matrix.T)
    assert body["set"]["exceeds_between_df"] and body["verdict"] == "not_orthogonal"


def test_polynomial_levels_give_the_tabulated_trends(client) -> None:
    levels = {"1 mM": 1, "2 mM": 2, "3 mM": 3, "4 mM": 4}
    body = _post(client, {"sizes": dict.fromkeys(levels, 5),
                          "standard": {"kind": "polynomial", "levels": levels, "degree": 2}}).json()
    # Fisher and Yates (1938), 4 levels (from memory): linear -3 -1 1 3, quadratic 1 -1 -1 1
    assert [list(c["coefficients"].values()) for c in body["contrasts"]] == [[-3, -1, 1, 3], [1, -1, -1, 1]]
    assert body["verdict"] == "orthogonal" and not body["set"]["complete"]


def test_pairwise_and_reference_sets_say_they_are_not_orthogonal(client) -> None:
    sizes = {g["label"]: len(g["values"]) for g in examples.UNBALANCED_PLATE["groups"]}
    body = _post(client, {"sizes": sizes, "standard": {"kind": "versus_reference",
                                                       "reference": "reference buffer"}}).json()
    assert body["verdict"] == "not_orthogonal" and not body["standard"]["orthogonal_by_construction"]
    assert any("Dunnett" in s for s in body["consequences"])
    body = _post(client, {"sizes": sizes, "standard": {"kind": "pairwise"}}).json()
    assert len(body["contrasts"]) == 10 and body["set"]["rank"] == 4 and body["set"]["exceeds_between_df"]
    assert any("Tukey-Kramer" in s for s in body["consequences"])


def test_contrast_not_summing_to_zero_is_an_invalid_verdict(client) -> None:
    body = _post(client, {"sizes": {"a": 3, "b": 3, "c": 3}, "contrasts": [
        {"name": "a vs b", "coefficients": {"a": 1, "b": -1}},
        {"name": "a and b", "coefficients": {"a": 1, "b": 1}}]}).json()
    assert body["verdict"] == "invalid" and not body["contrasts"][1]["sums_to_zero"]
    assert not body["contrasts"][1]["estimable"] and body["contrasts"][0]["estimable"]


def test_same_request_same_bytes(client) -> None:
    a = _post(client, examples.CONTRASTS_UNBALANCED)
    b = _post(client, copy.deepcopy(examples.CONTRASTS_UNBALANCED))
    assert a.content == b.content


ONE = [{"name": "a vs b", "coefficients": {"a": 1, "b": -1}}]
SIZES = {"a": 3, "b": 4, "c": 5}

REFUSALS = [
    # (description, body, status, pointer, rule)
    ("unknown label", {"sizes": SIZES, "contrasts": [{"name": "x", "coefficients": {"a": 1, "z": -1}}]},
     422, "/contrasts/0/coefficients/z", "unknown-group"),
    ("unknown label, data", {"groups": [{"label": "a", "values": [1, 2]}, {"label": "b", "values": [3]}],
                             "contrasts": [{"name": "x", "coefficients": {"a": 1, "B": -1}}]},
     422, "/contrasts/0/coefficients/B", "unknown-group"),
    ("all-zero contrast", {"sizes": SIZES, "contrasts": [*ONE, {"name": "y", "coefficients": {"a": 0}}]},
     422, "/contrasts/1/coefficients", "contrast-zero"),
    ("empty coefficients", {"sizes": SIZES, "contrasts": [{"name": "y", "coefficients": {}}]},
     422, "/contrasts/0/coefficients", "contrast-zero"),
    ("duplicate names", {"sizes": SIZES, "contrasts": ONE * 2}, 422, "/contrasts/1/name",
     "contrast-name-duplicate"),
    ("string coefficient", {"sizes": SIZES, "contrasts": [{"name": "x", "coefficients": {"a": "1"}}]},
     422, "/contrasts/0/coefficients/a", "number_type"),
    ("null coefficient", {"sizes": SIZES, "contrasts": [{"name": "x", "coefficients": {"a": None}}]},
     422, "/contrasts/0/coefficients/a", "number_type"),
    ("coefficient too large", {"sizes": SIZES, "contrasts": [{"name": "x", "coefficients": {"a": 1e200}}]},
     422, "/contrasts/0/coefficients/a", "finite"),
    ("groups and sizes", {"sizes": SIZES, "groups": [{"label": "a", "values": [1]},
                                                      {"label": "b", "values": [2]}], "contrasts": ONE},
     422, "", "groups_or_sizes"),
    ("neither groups nor sizes", {"contrasts": ONE}, 422, "", "groups_or_sizes"),
    ("no contrasts at all", {"sizes": SIZES}, 422, "", "contrasts_or_standard"),
    ("size zero", {"sizes": {"a": 0, "b": 2}, "contrasts": ONE}, 422, "/sizes/a", "size_range"),
    ("size not whole", {"sizes": {"a": 2.5, "b": 2}, "contrasts": ONE}, 422, "/sizes/a", "int_type"),
    ("one group", {"sizes": {"a": 2}, "contrasts": ONE}, 422, "/sizes", "too_short"),
    ("blank label", {"sizes": {" ": 2, "b": 2}, "contrasts": ONE}, 422, "/sizes/ ", "label-empty"),
    ("unknown kind", {"sizes": SIZES, "standard": {"kind": "sequential"}}, 422, "/standard/kind",
     "literal_error"),
    ("polynomial without levels", {"sizes": SIZES, "standard": {"kind": "polynomial"}}, 422,
     "/standard/levels", "levels_required"),
    ("missing level", {"sizes": SIZES, "standard": {"kind": "polynomial", "levels": {"a": 1, "b": 2}}},
     422, "/standard/levels", "levels-missing"),
    ("tied levels", {"sizes": SIZES, "standard": {"kind": "polynomial", "levels": {"a": 1, "b": 2, "c": 2}}},
     422, "/standard/levels/c", "levels-distinct"),
    ("degree too high", {"sizes": SIZES, "standard": {"kind": "polynomial", "degree": 3,
                                                      "levels": {"a": 1, "b": 2, "c": 3}}},
     422, "/standard/degree", "degree"),
    ("reference missing", {"sizes": SIZES, "standard": {"kind": "versus_reference"}}, 422,
     "/standard/reference", "reference_required"),
    ("reference unknown", {"sizes": SIZES, "standard": {"kind": "versus_reference", "reference": "q"}},
     422, "/standard/reference", "unknown-group"),
    ("levels for helmert", {"sizes": SIZES, "standard": {"kind": "helmert", "levels": {"a": 1}}}, 422,
     "/standard/levels", "levels_unused"),
    ("unknown field", {"sizes": SIZES, "contrasts": ONE, "alhpa": 0.05}, 422, "/alhpa", "extra_forbidden"),
    ("too many generated contrasts", {"sizes": {f"g{i}": 2 for i in range(30)},
                                      "standard": {"kind": "pairwise"}}, 422, "/standard", "max_contrasts"),
]


@pytest.mark.parametrize(("description", "body", "status", "pointer", "rule"), REFUSALS,
                         ids=[r[0] for r in REFUSALS])
def test_refusals(client, description, body, status, pointer, rule) -> None:
    response = _post(client, body)
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert (problem["pointer"], problem["rule"]) == (pointer, rule)
    assert problem["detail"] and problem["type"].startswith("/problems/")


def test_non_finite_literal_and_huge_number_are_refused(client) -> None:
    text = '{"sizes": {"a": 3, "b": 4}, "contrasts": [{"name": "x", "coefficients": {"a": %s, "b": -1}}]}'
    response = client.post(PATH, content=text % "NaN", headers={"content-type": "application/json"})
    assert response.status_code == 400 and response.json()["rule"] == "json-number"
    response = client.post(PATH, content=text % "1e999", headers={"content-type": "application/json"})
    assert response.status_code == 422
    assert (response.json()["pointer"], response.json()["rule"]) == ("/contrasts/0/coefficients/a",
                                                                      "number_range")


def test_more_contrasts_than_the_configured_limit() -> None:
    small = TestClient(create_app(Settings(warm_up=False, max_contrasts=3)))
    contrasts = [{"name": f"c{i}", "coefficients": {"a": 1, "b": -1}} for i in range(4)]
    response = small.post(PATH, json={"sizes": SIZES, "contrasts": contrasts})
    assert response.status_code == 422
    assert (response.json()["pointer"], response.json()["rule"]) == ("/contrasts", "max_contrasts")

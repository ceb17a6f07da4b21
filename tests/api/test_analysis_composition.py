"""The one-call analysis equals the endpoints called one by one (property test).

For random designs and questions, /v1/analysis must return exactly what
/v1/omnibus, /v1/recommendation and the chosen family's endpoint return for
the same data (provenance aside, which names each request's own input).
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

LABELS = ["reference", "alpha", "beta", "gamma", "delta"]


@st.composite
def designs(draw, smallest_k: int = 2):
    k = draw(st.integers(smallest_k, 5))
    groups = []
    for label in LABELS[:k]:
        n = draw(st.integers(2, 7))
        centre = draw(st.integers(100, 999)) / 10
        values = draw(st.lists(st.integers(-50, 50), min_size=n, max_size=n))
        groups.append({"label": label, "values": [round(centre + v / 10, 1) for v in values]})
    return groups


PAIR = [{"name": "reference vs alpha", "coefficients": {"reference": 1, "alpha": -1}}]
#: Orthogonal with equal group sizes only: with the drawn sizes usually not.
TWO = [*PAIR, {"name": "reference and alpha vs beta", "coefficients": {"reference": 1, "alpha": 1, "beta": -2}}]
CONTROL = {"reference": "control", "control": "reference"}

#: Every family, and every error rate where it is offered (question, smallest k that fits it).
QUESTIONS = [
    ({}, 2),
    ({"error_rate": "per_comparison"}, 2),
    ({"error_rate": "false_discovery"}, 2),
    ({"error_rate": "per_comparison", "intervals_needed": False}, 2),
    (CONTROL, 2),
    ({**CONTROL, "intervals_needed": False}, 2),
    ({**CONTROL, "alternative": "greater"}, 2),
    ({**CONTROL, "alternative": "less", "intervals_needed": False}, 2),
    ({**CONTROL, "error_rate": "per_comparison"}, 2),
    ({**CONTROL, "error_rate": "false_discovery"}, 2),
    ({**CONTROL, "error_rate": "per_comparison", "intervals_needed": False}, 2),
    ({"reference": "best", "best": "highest"}, 2),
    ({"reference": "best", "best": "lowest", "error_rate": "per_comparison"}, 2),
    ({**CONTROL, "goal": "equivalence", "margin": 1.0}, 2),
    ({**CONTROL, "goal": "equivalence", "margin": {"relative": 0.05}, "error_rate": "per_comparison"}, 2),
    ({"planned": True, "contrasts": PAIR}, 2),
    ({"planned": False, "contrasts": PAIR}, 2),
    ({"planned": True, "contrasts": PAIR, "error_rate": "false_discovery"}, 2),
    ({"planned": True, "contrasts": TWO}, 3),
    ({"planned": True, "contrasts": TWO, "intervals_needed": False}, 3),
    ({"planned": True, "contrasts": TWO, "error_rate": "per_comparison"}, 3),
    ({"planned": True, "contrasts": TWO, "error_rate": "false_discovery"}, 3),
    ({"planned": False, "contrasts": TWO}, 3),
]


def _without_provenance(body: dict) -> dict:
    return {k: v for k, v in body.items() if k != "provenance"}


@pytest.mark.parametrize(("question", "smallest_k"), QUESTIONS, ids=[str(i) for i in range(len(QUESTIONS))])
@settings(max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_analysis_equals_the_composed_endpoints(client, question, smallest_k, data) -> None:
    groups = data.draw(designs(smallest_k))
    # Designs whose values are all equal within every group cannot be analysed;
    # the analysis must then refuse exactly as the omnibus endpoint does.
    omnibus = client.post("/v1/omnibus", json={"groups": groups})
    analysis = client.post("/v1/analysis", json={"groups": groups, "question": question})
    if omnibus.status_code != 200:
        assert analysis.status_code == omnibus.status_code
        assert analysis.json()["rule"] == omnibus.json()["rule"]
        return
    assert analysis.status_code == 200, analysis.text
    body = analysis.json()
    assert body["omnibus"] == _without_provenance(omnibus.json())
    recommendation = client.post("/v1/recommendation", json={"groups": groups, "question": question}).json()
    assert body["recommendation"] == _without_provenance(recommendation)
    family, method, options = recommendation["family"], recommendation["method"], recommendation["options"]
    request = {"groups": groups, **options}
    if family == "contrasts":
        request["adjustment"] = method
    elif family != "best":
        request["method"] = method
    direct = client.post(f"/v1/followup/{family}", json=request)
    assert direct.status_code == 200, direct.text
    assert body["followup"] == _without_provenance(direct.json())
    assert body["followup"]["method"] == method
    assert body["report"] and body["followup_source"] == "recommended"


def test_explicit_followup_overrides_the_recommendation(client) -> None:
    groups = [{"label": "a", "values": [1.0, 2.0, 3.5]}, {"label": "b", "values": [2.5, 3.0, 4.5]},
              {"label": "c", "values": [5.0, 6.5, 7.0]}]
    body = client.post("/v1/analysis", json={
        "groups": groups, "followup": {"family": "pairwise", "method": "games_howell"}}).json()
    direct = client.post("/v1/followup/pairwise", json={"groups": groups, "method": "games_howell"}).json()
    assert body["followup_source"] == "requested"
    assert body["followup"] == _without_provenance(direct)


def test_followup_options_that_do_not_fit_are_refused(client) -> None:
    groups = [{"label": "a", "values": [1.0, 2.0, 3.5]}, {"label": "b", "values": [2.5, 3.0, 4.5]}]
    response = client.post("/v1/analysis", json={
        "groups": groups, "followup": {"family": "control", "method": "dunnett"}})
    assert response.status_code == 422
    assert response.json()["pointer"] == "/followup/control"  # the control the followup lacks

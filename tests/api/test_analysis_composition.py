"""The one-call analysis equals the endpoints called one by one (property test).

For random designs and questions, /v1/analysis must return exactly what
/v1/omnibus, /v1/recommendation and the chosen family's endpoint return for
the same data (provenance aside, which names each request's own input).
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

LABELS = ["reference", "alpha", "beta", "gamma", "delta"]


@st.composite
def designs(draw):
    k = draw(st.integers(2, 5))
    groups = []
    for label in LABELS[:k]:
        n = draw(st.integers(2, 7))
        centre = draw(st.integers(100, 999)) / 10
        values = draw(st.lists(st.integers(-50, 50), min_size=n, max_size=n))
        groups.append({"label": label, "values": [round(centre + v / 10, 1) for v in values]})
    return groups


QUESTIONS = st.sampled_from([
    {},
    {"error_rate": "per_comparison"},
    {"error_rate": "false_discovery"},
    {"reference": "control", "control": "reference"},
    {"reference": "control", "control": "reference", "intervals_needed": False},
    {"reference": "best", "best": "highest"},
    {"reference": "control", "control": "reference", "goal": "equivalence", "margin": 1.0},
])


def _without_provenance(body: dict) -> dict:
    return {k: v for k, v in body.items() if k != "provenance"}


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(groups=designs(), question=QUESTIONS)
def test_analysis_equals_the_composed_endpoints(client, groups, question) -> None:
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
    assert response.json()["pointer"].startswith("/followup")

"""Every client method, sync and async, against a live server: the client adds no distortion.

Each case calls a method (with a model, a mapping, keyword fields, or a
mixture) and posts the body it stands for with plain httpx; the client's
answer must be the server's answer: the same keys, every number the same
double as the server's JSON text, the same bytes for figures.

Data: an invented enzyme-activity plate assay, specific activity (U/mg) of
one enzyme in four buffer formulations, five wells each (demo data).
"""

from __future__ import annotations

import asyncio
import json
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

import httpx
import pytest
from client_test_support import LiveServer

from familywise_client import AsyncClient, Client, models

PLATE = {
    "reference buffer": [52.1, 50.8, 53.4, 51.7, 52.9],
    "phosphate pH 7.2": [55.3, 56.1, 54.8, 57.0, 55.9],
    "MOPS pH 7.0": [58.4, 59.9, 57.6, 60.2, 58.8],
    "acetate pH 5.5": [47.2, 46.1, 48.0, 45.9, 47.5],
}
GROUPS = [{"label": label, "values": values} for label, values in PLATE.items()]
REFERENCE_VS_REST = {"name": "reference vs new buffers",
                     "coefficients": {"reference buffer": 3, "phosphate pH 7.2": -1, "MOPS pH 7.0": -1,
                                      "acetate pH 5.5": -1}}
NEAR_NEUTRAL = {"name": "phosphate vs MOPS", "coefficients": {"phosphate pH 7.2": 1, "MOPS pH 7.0": -1}}
AGAINST_REFERENCE = {"reference": "control", "control": "reference buffer"}


@dataclass(frozen=True)
class Case:
    method: str
    path: str
    body: dict[str, Any]  # what the call stands for, as the API takes it
    request: Any = None  # the call's positional argument
    fields: dict[str, Any] = field(default_factory=dict)
    accept: str = "application/json"


CASES = [
    Case("omnibus", "/v1/omnibus", {"groups": GROUPS}, fields={"groups": PLATE}),
    Case("pairwise", "/v1/followup/pairwise", {"groups": GROUPS, "method": "tukey_kramer"},
         request=models.PairwiseRequest(groups=[models.Group(**g) for g in GROUPS], method="tukey_kramer")),
    Case("control", "/v1/followup/control",
         {"groups": GROUPS, "control": "reference buffer", "alternative": "greater"},
         request={"groups": GROUPS, "control": "reference buffer"}, fields={"alternative": "greater"}),
    Case("best", "/v1/followup/best", {"groups": GROUPS, "best": "highest", "alpha": 0.1},
         fields={"groups": GROUPS, "best": "highest", "alpha": 0.1}),
    Case("contrasts", "/v1/followup/contrasts",
         {"groups": GROUPS, "contrasts": [REFERENCE_VS_REST, NEAR_NEUTRAL], "adjustment": "scheffe"},
         fields={"groups": PLATE, "contrasts": [REFERENCE_VS_REST, NEAR_NEUTRAL], "adjustment": "scheffe"}),
    Case("equivalence", "/v1/followup/equivalence",
         {"groups": GROUPS, "reference": "reference buffer", "margin": {"relative": 0.2}},
         fields={"groups": PLATE, "reference": "reference buffer", "margin": {"relative": 0.2}}),
    Case("validate_contrasts", "/v1/contrasts/validate",
         {"sizes": {label: 5 for label in PLATE}, "contrasts": [REFERENCE_VS_REST, NEAR_NEUTRAL]},
         fields={"sizes": {label: 5 for label in PLATE}, "contrasts": [REFERENCE_VS_REST, NEAR_NEUTRAL]}),
    Case("recommendation", "/v1/recommendation", {"question": AGAINST_REFERENCE, "groups": GROUPS},
         fields={"question": models.Question(**AGAINST_REFERENCE), "groups": PLATE}),
    Case("analysis", "/v1/analysis", {"groups": GROUPS, "question": AGAINST_REFERENCE},
         fields={"groups": PLATE, "question": AGAINST_REFERENCE}),
    Case("plan", "/v1/plan", {"k": 4, "power": 0.9, "effect": {"cohens_f": 0.35}},
         request=models.PlanRequest(k=4, power=0.9, effect=models.Effect(cohens_f=0.35))),
    Case("batch", "/v1/batch", {"items": [
        {"id": "plate 12 / activity", "operation": "pairwise", "request": {"groups": GROUPS}},
        {"id": "plate 12 / summary", "operation": "omnibus", "request": {"groups": GROUPS}},
        {"id": "plate 12 / no control", "operation": "control", "request": {"groups": GROUPS, "control": "none"}},
    ]}, request=[
        ("plate 12 / activity", "pairwise", {"groups": PLATE}),
        {"id": "plate 12 / summary", "operation": "omnibus", "request": models.OmnibusRequest(
            groups=[models.Group(**g) for g in GROUPS])},
        models.BatchItem(id="plate 12 / no control", operation="control",
                         request={"groups": GROUPS, "control": "none"}),
    ]),
    Case("figure_means", "/v1/figures/means", {"groups": GROUPS, "value_label": "specific activity (U/mg)"},
         fields={"groups": PLATE, "value_label": "specific activity (U/mg)"}, accept="image/svg+xml"),
    Case("figure_means", "/v1/figures/means", {"groups": GROUPS},
         fields={"groups": PLATE, "image_format": "png"}, accept="image/png"),
    Case("figure_differences", "/v1/figures/differences",
         {"groups": GROUPS, "family": "control", "control": "reference buffer"},
         fields={"groups": PLATE, "family": "control", "control": "reference buffer"}, accept="image/svg+xml"),
]


def assert_same(client_value: Any, server_value: Any, where: str = "") -> None:
    """The client's value is the server's: same keys and lengths, every number the same double.

    ``server_value`` comes from the server's JSON text with numbers as
    Decimal, so that a number is compared with the text the server wrote.
    """
    if isinstance(server_value, dict):
        assert isinstance(client_value, dict) and set(client_value) == set(server_value), where
        for key, value in server_value.items():
            assert_same(client_value[key], value, f"{where}/{key}")
    elif isinstance(server_value, list):
        assert isinstance(client_value, list) and len(client_value) == len(server_value), where
        for i, (mine, theirs) in enumerate(zip(client_value, server_value, strict=True)):
            assert_same(mine, theirs, f"{where}/{i}")
    elif isinstance(server_value, Decimal):
        assert isinstance(client_value, int | float) and not isinstance(client_value, bool), where
        mine = Decimal(repr(client_value)) if isinstance(client_value, float) else Decimal(client_value)
        assert mine == server_value, f"{where}: client {client_value!r}, server {server_value}"
    else:
        assert client_value == server_value and type(client_value) is type(server_value), where


def server_answer(raw: httpx.Client, case: Case) -> httpx.Response:
    response = raw.post(case.path, content=json.dumps(case.body), headers={
        "Content-Type": "application/json", "Accept": case.accept})
    assert response.status_code == 200, response.text
    return response


def check(case: Case, result: Any, answer: httpx.Response) -> None:
    if case.accept.startswith("image/"):
        assert isinstance(result, bytes)
        assert result == answer.content
        assert answer.headers["content-type"].startswith(case.accept)
        return
    operation_models = {"batch": models.BatchResponse, "omnibus": models.OmnibusResponse,
                        "validate_contrasts": models.ContrastValidationResponse,
                        "recommendation": models.RecommendationResponse, "analysis": models.AnalysisResponse,
                        "plan": models.PlanResponse}
    assert type(result) is operation_models.get(case.method, models.FamilyResponse)
    exact = json.loads(answer.content, parse_float=Decimal, parse_int=Decimal)
    assert_same(result.model_dump(mode="python", by_alias=True, exclude_unset=True), exact)


def _id(case: Case) -> str:
    return f"{case.method}-{case.accept.split('/')[-1]}" if case.method.startswith("figure") else case.method


@pytest.mark.parametrize("case", CASES, ids=_id)
def test_sync_method_answers_what_the_server_answers(case: Case, client: Client, raw: httpx.Client) -> None:
    result = getattr(client, case.method)(case.request, **case.fields)
    check(case, result, server_answer(raw, case))


@pytest.mark.parametrize("case", CASES, ids=_id)
def test_async_method_answers_what_the_server_answers(case: Case, live_server: LiveServer,
                                                      raw: httpx.Client) -> None:
    async def call() -> Any:
        async with AsyncClient(live_server.base_url, api_key=live_server.api_key) as client:
            return await getattr(client, case.method)(case.request, **case.fields)

    check(case, asyncio.run(call()), server_answer(raw, case))


def test_every_method_has_a_case() -> None:
    assert {case.method for case in CASES} == {name for name in dir(Client) if not name.startswith("_")} - {
        "close"}


def test_batch_results_keep_each_items_answer(client: Client) -> None:
    batch = next(case for case in CASES if case.method == "batch")
    answer = client.batch(batch.request)
    assert [(r.id, r.status) for r in answer.results] == [
        ("plate 12 / activity", 200), ("plate 12 / summary", 200), ("plate 12 / no control", 422)]
    assert isinstance(answer.results[0].result, dict) and "letters" in answer.results[0].result
    problem = answer.results[2].problem
    assert problem is not None and problem.pointer == "/items/2/request/control"


# --------------------------------------------------------------------------
# numbers: every digit reaches the service
# --------------------------------------------------------------------------

#: Values with constant leading digits, as some instruments write them (invented).
WIDE = ["1000000000000.4", "1000000000000.6", "1000000000000.5", "1000000000000.3"]
NARROW = ["1000000000000.9", "1000000000001.1", "1000000000001.0", "1000000000000.8"]


def _text_body(digits: list[str], more: list[str]) -> str:
    return ('{"groups":[{"label":"lot A","values":[' + ",".join(digits) + ']},'
            '{"label":"lot B","values":[' + ",".join(more) + "]}]}")


def test_decimal_values_arrive_with_every_digit(client: Client, raw: httpx.Client) -> None:
    # the last value is no double (a float would be 1000000000000.4): only a Decimal holds it; 25 significant
    # digits, within the 28 the service's input hash keeps (Decimal.normalize in the default context)
    digits = [*WIDE[:3], "1000000000000.400000000001"]
    result = client.omnibus(groups={"lot A": [Decimal(d) for d in digits], "lot B": [Decimal(d) for d in NARROW]})
    exact = raw.post("/v1/omnibus", content=_text_body(digits, NARROW), headers={"Content-Type": "application/json"})
    assert_same(result.model_dump(mode="python", exclude_unset=True),
                json.loads(exact.content, parse_float=Decimal, parse_int=Decimal))
    rounded = client.omnibus(groups={"lot A": [float(d) for d in digits], "lot B": [float(d) for d in NARROW]})
    assert rounded.provenance.input_sha256 != result.provenance.input_sha256, (
        "the float-rounded request must differ from the exact one, or the test shows nothing")


def test_float_values_are_sent_with_their_shortest_digits(client: Client, raw: httpx.Client) -> None:
    result = client.omnibus(groups={"lot A": [float(d) for d in WIDE], "lot B": [float(d) for d in NARROW]})
    answer = raw.post("/v1/omnibus", content=_text_body(WIDE, NARROW), headers={"Content-Type": "application/json"})
    assert result.provenance.input_sha256 == answer.json()["provenance"]["input_sha256"]
    assert result.groups[0].maximum == 1000000000000.6
    assert repr(result.groups[0].maximum) in answer.text  # the server's own digits, unchanged by the client


def test_request_id_is_sent_and_echoed(client: Client) -> None:
    client.plan(k=3, power=0.8, effect={"cohens_f": 0.5}, request_id="plate-12.run-3")
    assert client.last_request_id == "plate-12.run-3"
    client.plan(k=3, power=0.8, effect={"cohens_f": 0.5})
    assert client.last_request_id not in (None, "plate-12.run-3")

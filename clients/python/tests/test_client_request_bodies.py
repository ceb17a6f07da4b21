"""Request bodies: numbers written with exactly their digits, conveniences turned into the API's form.

No server needed: these check the JSON text the client would send.
"""

from __future__ import annotations

import json
from decimal import Decimal

import pytest
from pydantic import ValidationError

from familywise_client import models
from familywise_client._json import dumps
from familywise_client._operations import OPERATIONS, request_body


def test_decimals_are_json_numbers_with_every_digit() -> None:
    values = [Decimal("1000000000000.4"), Decimal("0.10000000000000000000000001"), Decimal("1.5E+3"),
              Decimal("-0"), Decimal("2.50"), Decimal("7")]
    text = dumps({"values": values}).decode()
    assert text == '{"values":[1000000000000.4,0.10000000000000000000000001,1.5E+3,-0,2.50,7]}'
    assert json.loads(text, parse_float=Decimal, parse_int=Decimal)["values"] == values  # numbers, not strings


def test_floats_and_ints_are_written_as_python_writes_them() -> None:
    values = [0.1, 1e-07, 1e16, 123456789.123, -0.0, 3, 10**30]
    assert dumps(values) == json.dumps(values, separators=(",", ":")).encode()


def test_strings_keep_their_characters() -> None:
    assert dumps({"label": 'pH 7.0 "MOPS" \\ ±2 °C\n'}) == json.dumps(
        {"label": 'pH 7.0 "MOPS" \\ ±2 °C\n'}, ensure_ascii=False, separators=(",", ":")).encode()


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), Decimal("NaN"), Decimal("-Infinity")])
def test_non_finite_numbers_are_refused(bad: object) -> None:
    with pytest.raises(ValueError, match="finite"):
        dumps([bad])


def test_other_objects_are_refused() -> None:
    with pytest.raises(TypeError, match="set"):
        dumps({"values": {1.0, 2.0}})
    with pytest.raises(TypeError, match="keys"):
        dumps({1: "one"})


def test_groups_as_a_mapping_become_the_apis_list_and_only_set_fields_are_sent() -> None:
    model = OPERATIONS["pairwise"].build(None, {"groups": {"reference buffer": (52.1, 50.8),
                                                           "MOPS pH 7.0": [Decimal("58.40"), 59]}})
    assert json.loads(request_body(model), parse_float=Decimal) == {"groups": [
        {"label": "reference buffer", "values": [Decimal("52.1"), Decimal("50.8")]},
        {"label": "MOPS pH 7.0", "values": [Decimal("58.40"), 59]},
    ]}  # no method, alpha or other default: the service fills in its own
    assert model.method == "tukey_kramer"  # the model still shows the service's default


def test_a_mapping_and_keyword_fields_combine_and_fields_win() -> None:
    model = OPERATIONS["control"].build({"groups": {"a": [1, 2], "b": [3, 4]}, "control": "a", "alpha": 0.05},
                                        {"control": "b"})
    assert isinstance(model, models.ControlRequest)
    assert (model.control, model.alpha) == ("b", 0.05)


def test_numpy_numbers_are_plain_numbers() -> None:
    numpy = pytest.importorskip("numpy")
    model = models.Group(label="well row A", values=[*numpy.array([1.25, 2.5]), numpy.int64(3)])
    assert dumps(model.model_dump(mode="python")) == b'{"label":"well row A","values":[1.25,2.5,3]}'


def test_request_models_refuse_what_the_service_refuses() -> None:
    for values in (["52.1"], [None], [True]):
        with pytest.raises(ValidationError):
            models.Group(label="a", values=values)
    with pytest.raises(ValidationError, match="Extra inputs"):
        models.OmnibusRequest(groups=[], colour="blue")
    with pytest.raises(ValidationError):
        models.PlanRequest(k=3.5, power=0.8, effect={"cohens_f": 0.5})


def test_response_models_keep_fields_they_do_not_know() -> None:
    row = models.SourceRowOut.model_validate({"df": 4, "ss": 1.5, "ms": 0.375, "added_later": "x"})
    assert row.model_extra == {"added_later": "x"}

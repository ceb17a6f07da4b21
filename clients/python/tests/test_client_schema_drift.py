"""models.py and the endpoint table never drift from the OpenAPI document.

Each check runs against two documents: the committed openapi/openapi.json
(the contract) and the live server's /openapi.json (the code as it is now;
when only this one passes, openapi/openapi.json is out of date: `make
openapi`). Two kinds of check:

* the generator, run in memory, gives exactly the committed models.py;
* independently of the generator's code, every schema's field names (in
  order), types, required-ness, defaults, enumerations and unknown-field
  policy agree with its model, and every endpoint with an operation.
"""

from __future__ import annotations

import importlib.util
import json
import sys
import types
import typing
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from client_test_support import CHECKOUT, LiveServer
from pydantic import BaseModel, StrictBool, StrictStr

from familywise_client import models
from familywise_client._operations import IMAGE_MEDIA_TYPES, OPERATIONS, BatchOperation, FigureOperation
from familywise_client._types import Integer, Number, RequestModel

CLIENT = Path(__file__).resolve().parents[1]
MODELS_PY = CLIENT / "src" / "familywise_client" / "models.py"
COMMITTED = CHECKOUT / "openapi" / "openapi.json"
REF = "#/components/schemas/"


def _generator() -> Any:
    name = "familywise_client_generate_models"
    spec = importlib.util.spec_from_file_location(name, CLIENT / "tools" / "generate_models.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module  # dataclasses look their module up there
    spec.loader.exec_module(module)
    return module


generator = _generator()


@pytest.fixture(scope="module", params=["committed", "live"])
def document(request: pytest.FixtureRequest) -> dict[str, Any]:
    if request.param == "committed":
        return json.loads(COMMITTED.read_text(encoding="utf-8"))
    server: LiveServer = request.getfixturevalue("live_server")
    with server.raw() as raw:
        return raw.get("/openapi.json").raise_for_status().json()


def test_models_py_is_what_the_generator_writes(document: dict[str, Any]) -> None:
    assert MODELS_PY.read_text(encoding="utf-8") == generator.render(document), (
        "clients/python/src/familywise_client/models.py is out of date: run "
        "`python clients/python/tools/generate_models.py` (after `make openapi`)")


# --------------------------------------------------------------------------
# the independent check: schema and model compared field by field
# --------------------------------------------------------------------------


def _enum_values(tokens: set[Any]) -> set[Any]:
    merged = {value for token in tokens if token[0] == "enum" for value in token[1]}
    rest = {token for token in tokens if token[0] != "enum"}
    return rest | ({("enum", frozenset(merged))} if merged else set())


def schema_kind(node: dict[str, Any]) -> frozenset[Any]:
    """What a schema node admits, as comparable tokens."""
    if "$ref" in node:
        return frozenset({("ref", node["$ref"].removeprefix(REF))})
    if "anyOf" in node or "oneOf" in node:
        tokens: set[Any] = set()
        for option in node.get("anyOf", node.get("oneOf")):
            tokens |= schema_kind(option)
        return frozenset(_enum_values(tokens))
    if "enum" in node:
        return frozenset({("enum", frozenset(node["enum"]))})
    kind = node.get("type")
    if kind is None:
        return frozenset({("any",)})
    if kind == "array":
        return frozenset({("array", schema_kind(node.get("items", {})))})
    if kind == "object":
        extra = node.get("additionalProperties", True)
        return frozenset({("object", schema_kind({} if extra is True else extra))})
    return frozenset({(kind,)})


def model_kind(annotation: Any, request: bool) -> frozenset[Any]:
    """What a model's annotation admits, as the same tokens. Request numbers must be the exact types."""
    exact = {id(Number): "number", id(Integer): "integer", id(StrictStr): "string", id(StrictBool): "boolean"}
    if id(annotation) in exact:
        return frozenset({(exact[id(annotation)],)})
    if annotation in (None, type(None)):
        return frozenset({("null",)})
    if annotation is Any:
        return frozenset({("any",)})
    origin = typing.get_origin(annotation)
    if origin in (typing.Union, types.UnionType):
        tokens: set[Any] = set()
        for arg in typing.get_args(annotation):
            tokens |= model_kind(arg, request)
        return frozenset(_enum_values(tokens))
    if origin is typing.Literal:
        return frozenset({("enum", frozenset(typing.get_args(annotation)))})
    if origin is list:
        return frozenset({("array", model_kind(typing.get_args(annotation)[0], request))})
    if origin is dict:
        key, value = typing.get_args(annotation)
        assert key is str
        return frozenset({("object", model_kind(value, request))})
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return frozenset({("ref", annotation.__name__)})
    plain = {str: "string", int: "integer", float: "number", bool: "boolean"}
    if annotation in plain:
        # a request takes numbers, strings and booleans only through the exact, strict types above
        return frozenset({(plain[annotation] if not request else f"lax {plain[annotation]}",)})
    raise AssertionError(f"unexpected annotation {annotation!r}")


def test_every_schema_has_a_model_and_every_model_a_schema(document: dict[str, Any]) -> None:
    assert set(models.__all__) == set(document["components"]["schemas"])


def test_every_model_matches_its_schema(document: dict[str, Any]) -> None:
    problems: list[str] = []
    for name, schema in document["components"]["schemas"].items():
        model = getattr(models, name, None)
        if model is None:
            problems.append(f"{name}: no model")
            continue
        problems += _differences(name, schema, model)
    assert not problems, "models.py differs from the schema:\n" + "\n".join(problems)


def _differences(name: str, schema: dict[str, Any], model: type[BaseModel]) -> list[str]:
    request = schema.get("additionalProperties") is False
    out = []
    if issubclass(model, RequestModel) != request or model.model_config.get("extra") != (
            "forbid" if request else "allow"):
        out.append(f"{name}: unknown fields should be {'refused' if request else 'kept'}")
    properties = schema.get("properties", {})
    fields = {(info.alias or field): (field, info) for field, info in model.model_fields.items()}
    if list(fields) != list(properties):
        out.append(f"{name}: fields {list(fields)} != schema properties {list(properties)}")
        return out
    hints = typing.get_type_hints(model, include_extras=True)
    required = set(schema.get("required", []))
    for prop, node in properties.items():
        field, info = fields[prop]
        if info.is_required() != (prop in required):
            out.append(f"{name}.{prop}: required is {info.is_required()}, schema says {prop in required}")
        expected = schema_kind(node)
        if prop not in required and "default" not in node:
            expected |= {("null",)}  # optional without a default: None means "not sent"
        admitted = model_kind(hints[field], request)
        if admitted != expected:
            out.append(f"{name}.{prop}: type {hints[field]!r} admits {sorted(map(str, admitted))}, "
                       f"the schema {sorted(map(str, expected))}")
        if "default" in node and info.default != node["default"]:
            out.append(f"{name}.{prop}: default {info.default!r} != schema default {node['default']!r}")
    return out


# --------------------------------------------------------------------------
# the endpoint table
# --------------------------------------------------------------------------


def _ref_name(content: dict[str, Any], media_type: str) -> str | None:
    ref = content.get(media_type, {}).get("schema", {}).get("$ref")
    return ref.removeprefix(REF) if ref else None


def test_every_endpoint_has_one_operation_with_its_models(document: dict[str, Any]) -> None:
    posts = {path: item["post"] for path, item in document["paths"].items() if "post" in item}
    by_path = {op.path: op for op in OPERATIONS.values()}
    assert set(by_path) == set(posts), "client operations and POST endpoints differ"
    for path, operation in posts.items():
        op = by_path[path]
        assert op.request_model.__name__ == _ref_name(operation["requestBody"]["content"], "application/json"), path
        answer = operation["responses"]["200"]["content"]
        if isinstance(op, FigureOperation):
            assert op.response_model is None
            assert set(answer) == set(IMAGE_MEDIA_TYPES.values()), path
        else:
            assert op.response_model is not None and op.response_model.__name__ == _ref_name(
                answer, "application/json"), path


def test_batch_operations_are_the_client_methods_of_the_same_name(document: dict[str, Any]) -> None:
    enum = document["components"]["schemas"]["BatchItem"]["properties"]["operation"]["enum"]
    computations = {name for name, op in OPERATIONS.items() if not isinstance(op, FigureOperation | BatchOperation)}
    assert set(enum) == computations


# --------------------------------------------------------------------------
# the generator's own rules, on small documents
# --------------------------------------------------------------------------


def _tiny(schema: dict[str, Any]) -> dict[str, Any]:
    return {
        "info": {"title": "t", "version": "1"},
        "paths": {"/x": {"post": {
            "requestBody": {"content": {"application/json": {"schema": {"$ref": REF + "Thing"}}}},
            "responses": {"200": {"content": {"application/json": {"schema": {"$ref": REF + "Answer"}}}}}}}},
        "components": {"schemas": {"Thing": schema, "Answer": {"type": "object", "properties": {
            "value": {"type": "number"}}, "required": ["value"]}}},
    }


def test_generated_request_models_keep_exact_numbers_and_alias_awkward_names() -> None:
    text = generator.render(_tiny({"type": "object", "additionalProperties": False, "required": ["values"],
                                   "properties": {"values": {"type": "array", "items": {"type": "number"}},
                                                  "copy": {"type": "integer"},
                                                  "long-name": {"type": "string", "enum": ["a", "b"]}}}))
    namespace: dict[str, Any] = {}
    exec(compile(text, "<generated>", "exec"), namespace)
    thing = namespace["Thing"]
    made = thing.model_validate({"values": [Decimal("0.10000000000000000001"), 2], "copy": 3, "long-name": "b"})
    assert made.model_dump(by_alias=True, exclude_unset=True) == {
        "values": [Decimal("0.10000000000000000001"), 2], "copy": 3, "long-name": "b"}
    assert "copy_: Integer | None = Field(default=None, alias=\"copy\")" in text
    assert namespace["Answer"].model_validate({"value": 1.5, "later": True}).model_extra == {"later": True}
    assert generator.render(_tiny({"type": "object", "properties": {}})) == generator.render(
        _tiny({"type": "object", "properties": {}})), "the same document must give the same text"


def test_generator_refuses_what_it_cannot_translate() -> None:
    inline = {"type": "object", "properties": {"nested": {"type": "object", "properties": {"a": {}}}}}
    with pytest.raises(generator.SchemaError, match="object with properties"):
        generator.render(_tiny(inline))

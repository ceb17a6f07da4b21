#!/usr/bin/env python3
"""Write the client's pydantic models from the service's OpenAPI document.

    python clients/python/tools/generate_models.py            # openapi/openapi.json -> models.py
    python clients/python/tools/generate_models.py --check    # exit 1 if models.py is out of date
    python clients/python/tools/generate_models.py --schema /tmp/openapi.json --output -

One class per schema under ``components/schemas``, fields in the schema's
order, classes in alphabetical order: the same document always gives the same
bytes. A schema reachable from a request body becomes a ``RequestModel``
(unknown fields refused, numbers kept exactly as given: int, float or
Decimal); every other schema a ``ResponseModel`` (unknown fields kept, for
forward compatibility). The models carry the schema's names, types,
required-ness, defaults and enumerations; value rules (lengths, ranges,
uniqueness) are left to the service, which answers them with a problem that
names the field.

Standard library only, so that it runs before anything is installed.
"""

from __future__ import annotations

import argparse
import json
import keyword
import re
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

CLIENT = Path(__file__).resolve().parents[1]
DEFAULT_SCHEMA = CLIENT.parents[1] / "openapi" / "openapi.json"
DEFAULT_OUTPUT = CLIENT / "src" / "familywise_client" / "models.py"
WIDTH = 120
REF_PREFIX = "#/components/schemas/"

#: Names a field cannot take on a pydantic model (they would shadow its API or the module's names).
RESERVED = frozenset({
    "Any", "Field", "Integer", "Literal", "Number", "RequestModel", "ResponseModel", "StrictBool", "StrictStr",
    "bool", "construct", "copy", "dict", "float", "from_orm", "int", "json", "list", "parse_file", "parse_obj",
    "parse_raw", "schema", "schema_json", "str", "update_forward_refs", "validate",
})


class SchemaError(ValueError):
    """The document uses a construct this generator does not translate."""


# --------------------------------------------------------------------------
# which schemas are requests
# --------------------------------------------------------------------------


def _refs(node: Any) -> Iterator[str]:
    if isinstance(node, dict):
        ref = node.get("$ref")
        if isinstance(ref, str) and ref.startswith(REF_PREFIX):
            yield ref[len(REF_PREFIX):]
        for value in node.values():
            yield from _refs(value)
    elif isinstance(node, list):
        for value in node:
            yield from _refs(value)


def _closure(names: set[str], schemas: dict[str, Any]) -> set[str]:
    seen: set[str] = set()
    todo = sorted(names)
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        seen.add(name)
        todo.extend(_refs(schemas[name]))
    return seen


def _operations(document: dict[str, Any]) -> Iterator[tuple[str, str, dict[str, Any]]]:
    for path, item in document.get("paths", {}).items():
        for method, operation in item.items():
            if isinstance(operation, dict) and "responses" in operation:
                yield method.upper(), path, operation


def request_schemas(document: dict[str, Any]) -> set[str]:
    """Names of the schemas that are (part of) a JSON request body."""
    schemas = document["components"]["schemas"]
    roots = {name for _, _, operation in _operations(document)
             for name in _refs(operation.get("requestBody", {}).get("content", {}).get("application/json", {}))}
    requests = _closure(roots, schemas)
    responses = _closure({name for _, _, operation in _operations(document)
                          for name in _refs(operation.get("responses", {}))}, schemas)
    both = sorted(requests & responses)
    if both:
        raise SchemaError(f"schemas used both in requests and in responses: {', '.join(both)}")
    return requests


def _roles(document: dict[str, Any]) -> dict[str, list[str]]:
    """Schema name -> what it is to an endpoint ("Body of POST /v1/x.", "Answer of ...")."""
    roles: dict[str, list[str]] = {}
    for method, path, operation in _operations(document):
        body = operation.get("requestBody", {}).get("content", {}).get("application/json", {})
        for name in _refs(body.get("schema", {})):
            roles.setdefault(name, []).append(f"Body of {method} {path}.")
        answer = operation.get("responses", {}).get("200", {}).get("content", {}).get("application/json", {})
        for name in _refs(answer.get("schema", {})):
            roles.setdefault(name, []).append(f"Answer of {method} {path}.")
    return roles


# --------------------------------------------------------------------------
# types
# --------------------------------------------------------------------------


def class_name(schema_name: str) -> str:
    name = re.sub(r"\W", "_", schema_name)
    return f"_{name}" if name[:1].isdigit() else name


def literal(value: Any) -> str:
    """Python source of a JSON value."""
    if value is None or isinstance(value, bool):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, list):
        return "[" + ", ".join(literal(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{literal(k)}: {literal(v)}" for k, v in value.items()) + "}"
    raise SchemaError(f"not a JSON value: {value!r}")


@dataclass(frozen=True)
class Name:
    """An annotation that is a name (``str``, ``Group``) or a literal value inside ``Literal[...]``."""

    text: str


@dataclass(frozen=True)
class Subscript:
    """``head[arg, ...]``: a generic (``list[Group]``) or a ``Literal``."""

    head: str
    args: tuple[Annotation, ...]


@dataclass(frozen=True)
class Union:
    """``part | part | ...`` (``None`` last)."""

    parts: tuple[Annotation, ...]


Annotation = Name | Subscript | Union
ANY = Name("Any")
NONE = Name("None")

_SCALARS = {
    # JSON type: (request annotation, response annotation)
    "string": ("StrictStr", "str"),
    "integer": ("Integer", "int"),
    "number": ("Number", "float"),
    "boolean": ("StrictBool", "bool"),
    "null": ("None", "None"),
}


def union(parts: list[Annotation]) -> Annotation:
    flat: list[Annotation] = []
    for part in parts:
        flat += part.parts if isinstance(part, Union) else [part]
    unique = list(dict.fromkeys(flat))
    if ANY in unique:
        return ANY
    if NONE in unique:
        unique = [p for p in unique if p != NONE] + [NONE]
    return unique[0] if len(unique) == 1 else Union(tuple(unique))


def annotation(node: dict[str, Any], request: bool) -> Annotation:
    """The Python annotation of a schema node."""
    if "$ref" in node:
        ref = node["$ref"]
        if not ref.startswith(REF_PREFIX):
            raise SchemaError(f"unsupported reference {ref!r}")
        return Name(class_name(ref[len(REF_PREFIX):]))
    for key in ("anyOf", "oneOf"):
        if key in node:
            return union([annotation(option, request) for option in node[key]])
    if "allOf" in node:
        if len(node["allOf"]) != 1:
            raise SchemaError("allOf with more than one member")
        return annotation(node["allOf"][0], request)
    if "const" in node:
        return Subscript("Literal", (Name(literal(node["const"])),))
    if "enum" in node:
        return Subscript("Literal", tuple(Name(literal(v)) for v in node["enum"]))
    kind = node.get("type")
    if isinstance(kind, list):
        return union([annotation({**node, "type": k}, request) for k in kind])
    if kind is None:
        return ANY
    if kind in _SCALARS:
        return Name(_SCALARS[kind][0 if request else 1])
    if kind == "array":
        return Subscript("list", (annotation(node.get("items", {}), request),))
    if kind == "object":
        if node.get("properties"):
            raise SchemaError("an object with properties outside components/schemas")
        extra = node.get("additionalProperties", True)
        value = ANY if extra is True or extra == {} else annotation(extra, request)
        return Subscript("dict", (Name("str"), value))
    raise SchemaError(f"unsupported type {kind!r}")


def text(kind: Annotation) -> str:
    """An annotation on one line."""
    if isinstance(kind, Name):
        return kind.text
    if isinstance(kind, Subscript):
        return f"{kind.head}[{', '.join(text(a) for a in kind.args)}]"
    return " | ".join(text(p) for p in kind.parts)


def lines(kind: Annotation, room: int) -> list[str]:
    """An annotation in lines of at most ``room`` characters where it can be broken (nested lines indented)."""
    one = text(kind)
    if len(one) <= room or isinstance(kind, Name):
        return [one]
    out: list[str]
    if isinstance(kind, Union):
        out = ["("]
        for i, part in enumerate(kind.parts):
            sub = lines(part, room - 6)
            out += [f"    {'| ' if i else ''}{sub[0]}", *[f"    {line}" for line in sub[1:]]]
        return [*out, ")"]
    out = [f"{kind.head}["]
    for arg in kind.args:
        sub = lines(arg, room - 4)
        out += [f"    {line}" for line in sub[:-1]] + [f"    {sub[-1]},"]
    return [*out, "]"]


# --------------------------------------------------------------------------
# source text
# --------------------------------------------------------------------------


def _string_pieces(text: str, room: int) -> list[str]:
    """``text`` as string literals of at most ``room`` characters each (split after spaces)."""
    pieces: list[str] = []
    current = ""
    for word in re.split(r"(?<= )", text):
        if current and len(json.dumps(current + word, ensure_ascii=False)) > room:
            pieces.append(current)
            current = ""
        current += word
    pieces.append(current)
    return [json.dumps(p, ensure_ascii=False) for p in pieces]


def field_name(name: str) -> str:
    python = re.sub(r"\W", "_", name)
    if (python != name or not python.isidentifier() or keyword.iskeyword(python) or python in RESERVED
            or python.startswith(("model_", "_")) or python[:1].isdigit()):
        python = python.lstrip("_")
        python = f"field_{python}" if not python or python[:1].isdigit() else python
        python += "_"
    return python


def render_field(name: str, node: dict[str, Any], required: bool, request: bool) -> list[str]:
    python = field_name(name)
    kind = annotation(node, request)
    arguments: list[str] = []
    if not required:
        if "default" not in node:
            kind = union([kind, NONE])
        arguments.append(f"default={literal(node.get('default'))}")
    if python != name:
        arguments.append(f"alias={literal(name)}")
    description = node.get("description")
    if description:
        arguments.append(f"description={literal(description)}")
    if python == name and not description:
        value = f" = {arguments[0].removeprefix('default=')}" if arguments else ""
    else:
        value = f" = Field({', '.join(arguments)})"
    prefix = f"    {python}: "
    kind_lines = lines(kind, WIDTH - len(prefix) - len(" = Field("))
    if len(kind_lines) == 1 and len(prefix + kind_lines[0] + value) <= WIDTH:
        return [prefix + kind_lines[0] + value]
    out = [prefix + kind_lines[0], *[f"    {line}" for line in kind_lines[1:]]]
    if not value.startswith(" = Field("):
        out[-1] += value
        return out
    out[-1] += " = Field("
    for argument in arguments:
        if argument.startswith("description=") and len(argument) + 9 > WIDTH:
            out.append("        description=(")
            out += [f"            {piece}" for piece in _string_pieces(description, WIDTH - 12)]
            out.append("        ),")
        else:
            out.append(f"        {argument},")
    out.append("    )")
    return out


def _docstring(lines: list[str]) -> list[str]:
    text = "\n\n".join(lines).replace("\\", "\\\\").replace('"""', '\\"\\"\\"')
    out: list[str] = []
    for paragraph in text.split("\n"):
        words = paragraph.split(" ")
        current = ""
        for word in words:
            if current and len(current) + 1 + len(word) > WIDTH - 8:
                out.append(current)
                current = word
            else:
                current = f"{current} {word}" if current else word
        out.append(current)
    if len(out) == 1 and len(out[0]) <= WIDTH - 10:
        return [f'    """{out[0]}"""']
    return ['    """' + out[0], *[f"    {line}".rstrip() for line in out[1:]], '    """']


def render_class(name: str, schema: dict[str, Any], request: bool, roles: list[str]) -> list[str]:
    if schema.get("type", "object") != "object":
        raise SchemaError(f"schema {name} is not an object")
    base = "RequestModel" if request else "ResponseModel"
    about = [*roles, schema["description"]] if schema.get("description") else roles
    lines = [f"class {class_name(name)}({base}):", *_docstring(about or [f"The ``{name}`` object."])]
    required = set(schema.get("required", []))
    properties = schema.get("properties", {})
    if properties:
        lines.append("")
    for field, node in properties.items():
        lines += render_field(field, node, field in required, request)
    return lines


def render(document: dict[str, Any]) -> str:
    """The text of models.py for an OpenAPI document."""
    schemas = document["components"]["schemas"]
    requests = request_schemas(document)
    roles = _roles(document)
    info = document.get("info", {})
    names = sorted(schemas, key=class_name)
    header = [
        '"""Request and response models of the familywise API.',
        "",
        "Generated from openapi/openapi.json by clients/python/tools/generate_models.py; do not edit.",
        "Regenerate after an API change: `python clients/python/tools/generate_models.py`.",
        '"""',
        "",
        "from __future__ import annotations",
        "",
        "from typing import Any, Literal",
        "",
        "from pydantic import Field, StrictBool, StrictStr",
        "",
        "from familywise_client._types import Integer, Number, RequestModel, ResponseModel",
        "",
        "__all__ = [",
        *[f"    {literal(class_name(n))}," for n in names],
        "]",
        "",
        f"API_TITLE = {literal(info.get('title', ''))}",
        f"API_VERSION = {literal(info.get('version', ''))}",
        *_frozenset("REQUEST_MODELS", [literal(class_name(n)) for n in sorted(requests, key=class_name)]),
    ]
    body: list[str] = []
    for name in names:
        body += ["", "", *render_class(name, schemas[name], name in requests, roles.get(name, []))]
    footer = ["", "", "for _model in (", *[f"    {class_name(n)}," for n in names], "):",
              "    _model.model_rebuild()", "del _model"]
    return "\n".join(header + body + footer) + "\n"


def _frozenset(name: str, members: list[str]) -> list[str]:
    line = f"{name} = frozenset({{{', '.join(members)}}})"
    if len(line) <= WIDTH:
        return [line]
    return [f"{name} = frozenset({{", *[f"    {m}," for m in members], "})"]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--schema", type=Path, default=DEFAULT_SCHEMA, help="the OpenAPI document (JSON)")
    parser.add_argument("--output", default=str(DEFAULT_OUTPUT), help="where to write models.py ('-': stdout)")
    parser.add_argument("--check", action="store_true", help="only say whether the output is up to date")
    args = parser.parse_args(argv)
    text = render(json.loads(args.schema.read_text(encoding="utf-8")))
    if args.check:
        current = Path(args.output).read_text(encoding="utf-8") if Path(args.output).exists() else ""
        if current != text:
            print(f"{args.output} is out of date with {args.schema}: run {Path(__file__).name}", file=sys.stderr)
            return 1
        return 0
    if args.output == "-":
        sys.stdout.write(text)
    else:
        Path(args.output).write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

"""Request bodies to Python objects, keeping every number's decimal text exact.

JSON numbers become :class:`decimal.Decimal` (integers too), so that the
statistics can compute from the digits the instrument wrote. Duplicate keys,
``NaN``/``Infinity`` literals and absurd nesting are refused, never guessed
at. CSV bodies, long or wide, become the same structure as the JSON form;
the other fields of a CSV request come from the query string, each converted
by the type of the request model's field it names.
"""

from __future__ import annotations

import csv
import io
import json
import re
import types
import typing
from collections.abc import Iterable
from decimal import Decimal, InvalidOperation
from typing import Any

from pydantic import BaseModel

from familywise.api.problems import ProblemError, pointer_from_location

MAX_DEPTH = 32


class _DuplicateKey(ValueError):
    pass


def _object_without_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    obj = dict(pairs)
    if len(obj) != len(pairs):
        seen: set[str] = set()
        for key, _ in pairs:
            if key in seen:
                raise _DuplicateKey(key)
            seen.add(key)
    return obj


def _json_number(text: str) -> Decimal:
    """A JSON number's exact value. An exponent beyond what decimal can hold
    (1e99999999999999999999) becomes an infinity of its sign, which the
    request models then refuse as not finite, naming the field."""
    try:
        return Decimal(text)
    except InvalidOperation:
        return Decimal("-Infinity" if text.startswith("-") else "Infinity")


def _refuse_constant(name: str) -> Any:
    raise ValueError(f"{name} is not a JSON number")


def _outside_strings(text: str):
    """(index, character, line, column) of each character outside JSON strings."""
    in_string = escaped = False
    line, column = 1, 0
    for i, ch in enumerate(text):
        column += 1
        if ch == "\n":
            line, column = line + 1, 0
        elif in_string:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_string = False
        elif ch == '"':
            in_string = True
        else:
            yield i, ch, line, column


def _depth_ok(text: str) -> bool:
    """Cheap scan: bracket nesting never deeper than MAX_DEPTH (strings skipped)."""
    depth = 0
    for _, ch, _, _ in _outside_strings(text):
        if ch in "[{":
            depth += 1
            if depth > MAX_DEPTH:
                return False
        elif ch in "]}":
            depth -= 1
    return True


def _where_constant(text: str) -> str:
    """'line L, column C' of the first NaN or Infinity literal outside strings."""
    for i, _, line, column in _outside_strings(text):
        if text.startswith(("NaN", "Infinity"), i):
            return f"line {line}, column {column}"
    return "position unknown"


def parse_json(raw: bytes) -> Any:
    """JSON text to Python, numbers as Decimal; ProblemError on any defect."""
    if not raw.strip():
        raise ProblemError("malformed-body", "the request body is empty", rule="json")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ProblemError("malformed-body", f"the body is not UTF-8 ({exc.reason} at byte {exc.start})",
                           rule="utf-8") from None
    if (text.count("[") + text.count("{") > MAX_DEPTH) and not _depth_ok(text):
        raise ProblemError("malformed-body", f"JSON nests deeper than {MAX_DEPTH} levels", rule="depth")
    try:
        return json.loads(
            text,
            parse_float=_json_number,
            parse_int=_json_number,
            parse_constant=_refuse_constant,
            object_pairs_hook=_object_without_duplicates,
        )
    except _DuplicateKey as exc:
        raise ProblemError("malformed-body", f"the key {exc.args[0]!r} appears twice in one object",
                           rule="duplicate-key") from None
    except json.JSONDecodeError as exc:
        raise ProblemError("malformed-body",
                           f"invalid JSON: {exc.msg} (line {exc.lineno}, column {exc.colno})",
                           rule="json") from None
    except ValueError as exc:  # NaN / Infinity literals
        raise ProblemError("malformed-body", f"{exc} ({_where_constant(text)}); JSON has no such literals: "
                           "leave the value out or send the group without it", rule="json-number") from None
    except RecursionError:
        raise ProblemError("malformed-body", f"JSON nests deeper than {MAX_DEPTH} levels",
                           rule="depth") from None


# --------------------------------------------------------------------------
# CSV
# --------------------------------------------------------------------------

CSV_FORMAT_PARAMETERS = frozenset(
    {"layout", "group_column", "value_column", "delimiter", "decimal_separator"}
)
_DELIMITERS = {",": ",", ";": ";", "tab": "\t", "\t": "\t", "|": "|"}

#: A number as instruments and spreadsheets write it, once the whitespace
#: around it is trimmed: an optional sign, ASCII digits, an optional fraction
#: (digits on both sides of the separator) and an optional exponent. Anything
#: else that Decimal() would read (1_0, .5, 1., nan, Infinity, digits of
#: other scripts) is refused rather than guessed at.
_CSV_NUMBER = re.compile(r"[+-]?[0-9]+(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?")
_CSV_NUMBER_FORM = "an optional sign, digits, an optional fraction and exponent, e.g. -12.5 or 1.25e3"


def _delimiter(text: str, requested: str | None) -> str:
    if requested is not None:
        if requested not in _DELIMITERS:
            raise ProblemError(
                "malformed-body",
                f"unknown delimiter {requested!r}: use one of ',', ';', 'tab', '|'",
                pointer="/delimiter", rule="csv-delimiter",
            )
        return _DELIMITERS[requested]
    header = next((line for line in io.StringIO(text, newline="") if line.strip()), "")
    counts = {d: header.count(d) for d in (",", ";", "\t", "|")}
    best = max(counts, key=lambda d: counts[d])
    if counts[best] == 0:
        raise ProblemError(
            "malformed-body",
            "cannot tell the delimiter from the header line: give ?delimiter=, ; tab or |",
            pointer="/delimiter", rule="csv-delimiter",
        )
    return best


def _cell_pointer(line: int, column: str | None = None) -> str:
    """``/csv/lines/{line}[/{column}]``, the column name escaped as RFC 6901 says (~ as ~0, / as ~1)."""
    return pointer_from_location(("csv", "lines", line) if column is None else ("csv", "lines", line, column))


def _number(cell: str, line: int, column: str, decimal_separator: str) -> Decimal:
    """The exact value of a CSV cell; ProblemError (rule csv-number, naming the
    line and the column) unless it is decimal text of the form _CSV_NUMBER."""
    text = cell.strip()
    if decimal_separator == ",":
        if "." in text:
            _refuse_number(cell, line, column, "with decimal_separator ',' a '.' is not part of a number "
                           "(a thousands separator is not read)")
        text = text.replace(",", ".")
    if not _CSV_NUMBER.fullmatch(text):
        _refuse_number(cell, line, column, f"a number here is {_CSV_NUMBER_FORM}"
                       + (", with ',' as the decimal separator" if decimal_separator == "," else ""))
    try:
        return Decimal(text)
    except InvalidOperation:  # an exponent beyond what decimal can hold
        _refuse_number(cell, line, column, "its exponent is beyond what a decimal can hold")


def _refuse_number(cell: str, line: int, column: str, why: str) -> typing.NoReturn:
    raise ProblemError(
        "invalid-input",
        f"line {line}, column {column!r}: {cell!r} is not a number: {why}",
        pointer=_cell_pointer(line, column), rule="csv-number",
    )


def _records(text: str, delimiter: str) -> list[tuple[int, list[str]]]:
    """The non-blank records of the CSV, each with the line of the file it starts on
    (counted from 1, blank lines included, so that it is the line an editor shows)."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    records: list[tuple[int, list[str]]] = []
    try:
        while True:
            line = reader.line_num + 1
            row = next(reader, None)
            if row is None:
                return records
            if any(cell.strip() for cell in row):
                records.append((line, row))
    except csv.Error as exc:
        raise ProblemError("malformed-body", f"invalid CSV at line {reader.line_num}: {exc}",
                           rule="csv") from None


def parse_csv(raw: bytes, options: dict[str, str]) -> dict[str, Any]:
    """CSV to ``{"groups": [{"label", "values"}]}``.

    ``layout=long`` (default): one row per measurement, a group column and a
    value column (``group`` and ``value`` unless ``group_column`` /
    ``value_column`` say otherwise; other columns are not read); groups keep
    the order of first appearance. ``layout=wide``: one column per group,
    the header holding the labels; columns may be ragged (empty cells are
    not values). Blank lines are skipped. A refusal names the line of the
    file (counted from 1 as an editor counts them, blank lines included)
    and the column: pointer ``/csv/lines/{line}/{column}``.
    """
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ProblemError("malformed-body", f"the CSV is not UTF-8 ({exc.reason})", rule="utf-8") from None
    if not text.strip():
        raise ProblemError("malformed-body", "the CSV body is empty", rule="csv-empty")
    delimiter = _delimiter(text, options.get("delimiter"))
    decimal_separator = options.get("decimal_separator", ".")
    if decimal_separator not in (".", ","):
        raise ProblemError("invalid-input", "decimal_separator must be '.' or ','",
                           pointer="/decimal_separator", rule="csv-decimal")
    if decimal_separator == delimiter:
        raise ProblemError("invalid-input", "the decimal separator cannot also be the delimiter",
                           pointer="/decimal_separator", rule="csv-decimal")
    records = _records(text, delimiter)
    if len(records) < 2:
        raise ProblemError("malformed-body", "the CSV needs a header line and at least one data row",
                           rule="csv-empty")
    header = [cell.strip() for cell in records[0][1]]
    layout = options.get("layout", "long")
    if layout == "long":
        return {"groups": _long(records, header, options, decimal_separator)}
    if layout == "wide":
        return {"groups": _wide(records, header, decimal_separator)}
    raise ProblemError("invalid-input", "layout must be 'long' or 'wide'", pointer="/layout",
                       rule="csv-layout")


def _long(records: list[tuple[int, list[str]]], header: list[str], options: dict[str, str],
          sep: str) -> list[dict]:
    group_column = options.get("group_column", "group")
    value_column = options.get("value_column", "value")
    if group_column == value_column:
        raise ProblemError("invalid-input", f"group_column and value_column both name {group_column!r}",
                           pointer="/value_column", rule="csv-column")
    for name, param in ((group_column, "group_column"), (value_column, "value_column")):
        count = header.count(name)
        if count != 1:
            found = (f"has no column {name!r} (columns: {', '.join(map(repr, header))})" if count == 0
                     else f"has {count} columns named {name!r}")
            raise ProblemError("invalid-input", f"the CSV {found}; name the column with ?{param}=",
                               pointer=f"/{param}", rule="csv-column")
    gi, vi = header.index(group_column), header.index(value_column)
    groups: dict[str, list[Decimal]] = {}
    for line, row in records[1:]:
        if max(gi, vi) >= len(row):
            raise ProblemError("invalid-input", f"line {line} has only {len(row)} cells",
                               pointer=_cell_pointer(line), rule="csv-row")
        label = row[gi].strip()
        if not label:
            raise ProblemError("invalid-input", f"line {line}: the group cell is empty",
                               pointer=_cell_pointer(line, group_column), rule="csv-label")
        groups.setdefault(label, []).append(_number(row[vi], line, value_column, sep))
    return [{"label": label, "values": values} for label, values in groups.items()]


def _wide(records: list[tuple[int, list[str]]], header: list[str], sep: str) -> list[dict]:
    if len(set(header)) != len(header) or any(not h for h in header):
        raise ProblemError("invalid-input", "wide CSV headers must be distinct, non-empty group labels",
                           pointer="/csv/header", rule="csv-header")
    columns: list[list[Decimal]] = [[] for _ in header]
    ended = [False] * len(header)
    for line, row in records[1:]:
        if len(row) > len(header):
            raise ProblemError("invalid-input", f"line {line} has more cells than the header",
                               pointer=_cell_pointer(line), rule="csv-row")
        for c, name in enumerate(header):
            cell = row[c] if c < len(row) else ""
            if not cell.strip():
                ended[c] = True
                continue
            if ended[c]:
                raise ProblemError(
                    "invalid-input",
                    f"column {name!r} has a gap before line {line}: ragged columns may only end early",
                    pointer=_cell_pointer(line, name), rule="csv-gap",
                )
            columns[c].append(_number(cell, line, name, sep))
    return [{"label": name, "values": values} for name, values in zip(header, columns, strict=True)]


# --------------------------------------------------------------------------
# The other fields of a CSV request, from the query string
# --------------------------------------------------------------------------

#: A JSON number (RFC 8259, section 6): what a number field takes from the query string.
_JSON_NUMBER = re.compile(r"-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?")


def _kinds(annotation: Any) -> frozenset[str]:
    """What a field's type takes that a query parameter can spell: "text" (free
    text such as a label), "choice" (one of fixed words), "number", "boolean",
    "null". Objects and arrays cannot be spelled there (empty set)."""
    origin = typing.get_origin(annotation)
    if origin is typing.Annotated:
        return _kinds(typing.get_args(annotation)[0])
    if origin is typing.Union or origin is types.UnionType:
        return frozenset().union(*(_kinds(arg) for arg in typing.get_args(annotation)))
    if origin is typing.Literal:
        return frozenset(
            "boolean" if isinstance(v, bool) else "number" if isinstance(v, int | float | Decimal)
            else "null" if v is None else "choice"
            for v in typing.get_args(annotation)
        )
    if annotation is type(None):
        return frozenset({"null"})
    if annotation is bool:
        return frozenset({"boolean"})
    if annotation in (int, float, Decimal):
        return frozenset({"number"})
    if annotation is str:
        return frozenset({"text"})
    return frozenset()


def query_value(text: str, kinds: frozenset[str] | None = None) -> Any:
    """A query parameter as the JSON value it stands for in a field that takes ``kinds`` (see :func:`_kinds`).

    Text stays text in a field that takes free text (``?control=0`` names
    the group "0"). A number field takes JSON number text as its exact
    Decimal (as a JSON body would give it); a boolean field takes ``true`` or
    ``false`` and nothing else; a field that may be null and takes no free
    text takes ``null``. Anything else stays text, which the request model
    then refuses, naming the field.

    ``kinds=None`` (the field is not known) keeps the older reading from the
    text alone, a number wherever the text spells one; that cannot tell a
    label "0" from the number 0, so callers should pass the field's kinds
    (:func:`query_fields` does).
    """
    if kinds is None:
        if text in ("true", "false"):
            return text == "true"
        try:
            value = Decimal(text)
        except InvalidOperation:
            return text
        return value if value.is_finite() else text
    if "text" in kinds:
        return text
    if "boolean" in kinds and text in ("true", "false"):
        return text == "true"
    if "number" in kinds and _JSON_NUMBER.fullmatch(text):
        return _json_number(text)
    if "null" in kinds and text == "null":
        return None
    return text


def query_fields(params: Iterable[tuple[str, str]], model: type[BaseModel]) -> dict[str, Any]:
    """The request fields that a CSV request gives in its query string, each
    converted by the type of the field of ``model`` that it names (see
    :func:`query_value`): the body holds the groups, the query string every
    other field (alpha, method, control, ...).

    ``params`` are every (name, value) pair of the query string, repeats
    included (``request.query_params.multi_items()``). The CSV format
    parameters are left out; a parameter given twice is refused (which one
    would count?), and so is ``groups``, which only the body may give. A name
    that is not a field stays text, for the model to refuse.
    """
    fields_by_name = {info.alias or name: info for name, info in model.model_fields.items()}
    seen: set[str] = set()
    fields: dict[str, Any] = {}
    for key, text in params:
        if key in seen:
            raise ProblemError("invalid-input", f"the query parameter {key!r} is given more than once",
                               pointer=pointer_from_location((key,)), rule="duplicate-parameter")
        seen.add(key)
        if key in CSV_FORMAT_PARAMETERS:
            continue
        if key == "groups":
            raise ProblemError("invalid-input", "with a CSV body the groups come from the body, not from "
                               "the query string", pointer="/groups", rule="csv-groups")
        info = fields_by_name.get(key)
        fields[key] = query_value(text, _kinds(info.annotation) if info is not None else frozenset({"text"}))
    return fields

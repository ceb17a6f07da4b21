"""Request bodies to Python objects, keeping every number's decimal text exact.

JSON numbers become :class:`decimal.Decimal` (integers too), so that the
statistics can compute from the digits the instrument wrote. Duplicate keys,
``NaN``/``Infinity`` literals and absurd nesting are refused, never guessed
at. CSV bodies, long or wide, become the same structure as the JSON form.
"""

from __future__ import annotations

import csv
import io
import json
from decimal import Decimal, InvalidOperation
from typing import Any

from familywise.api.problems import ProblemError

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


def _depth_ok(text: str) -> bool:
    """Cheap scan: bracket nesting never deeper than MAX_DEPTH (strings skipped)."""
    depth = 0
    in_string = False
    escaped = False
    for ch in text:
        if in_string:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_string = False
        elif ch == '"':
            in_string = True
        elif ch in "[{":
            depth += 1
            if depth > MAX_DEPTH:
                return False
        elif ch in "]}":
            depth -= 1
    return True


def _where_constant(text: str) -> str:
    """'line L, column C' of the first NaN or Infinity literal outside strings."""
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
        elif text.startswith(("NaN", "Infinity"), i):
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


def _delimiter(text: str, requested: str | None) -> str:
    if requested is not None:
        if requested not in _DELIMITERS:
            raise ProblemError(
                "malformed-body",
                f"unknown delimiter {requested!r}: use one of ',', ';', 'tab', '|'",
                pointer="/delimiter", rule="csv-delimiter",
            )
        return _DELIMITERS[requested]
    header = text.split("\n", 1)[0]
    counts = {d: header.count(d) for d in (",", ";", "\t", "|")}
    best = max(counts, key=lambda d: counts[d])
    if counts[best] == 0:
        raise ProblemError(
            "malformed-body",
            "cannot tell the delimiter from the header line: give ?delimiter=, ; tab or |",
            pointer="/delimiter", rule="csv-delimiter",
        )
    return best


def _number(cell: str, row: int, column: str, decimal_separator: str) -> Decimal:
    text = cell.strip()
    if decimal_separator == ",":
        text = text.replace(",", ".")
    try:
        value = Decimal(text)
    except InvalidOperation:
        value = None
    if value is None or not value.is_finite():
        raise ProblemError(
            "invalid-input",
            f"row {row}, column {column!r}: {cell!r} is not a finite number",
            pointer=f"/csv/rows/{row}/{column}", rule="csv-number",
        )
    return value


def parse_csv(raw: bytes, options: dict[str, str]) -> dict[str, Any]:
    """CSV to ``{"groups": [{"label", "values"}]}``.

    ``layout=long`` (default): one row per measurement, a group column and a
    value column (``group`` and ``value`` unless ``group_column`` /
    ``value_column`` say otherwise); groups keep the order of first
    appearance. ``layout=wide``: one column per group, the header holding the
    labels; columns may be ragged (empty cells are not values). Rows are
    counted from 1 after the header.
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
    reader = csv.reader(io.StringIO(text), delimiter=delimiter)
    try:
        rows = [row for row in reader if any(cell.strip() for cell in row)]
    except csv.Error as exc:
        raise ProblemError("malformed-body", f"invalid CSV: {exc}", rule="csv") from None
    if len(rows) < 2:
        raise ProblemError("malformed-body", "the CSV needs a header line and at least one data row",
                           rule="csv-empty")
    header = [cell.strip() for cell in rows[0]]
    layout = options.get("layout", "long")
    if layout == "long":
        return {"groups": _long(rows, header, options, decimal_separator)}
    if layout == "wide":
        return {"groups": _wide(rows, header, decimal_separator)}
    raise ProblemError("invalid-input", "layout must be 'long' or 'wide'", pointer="/layout",
                       rule="csv-layout")


def _long(rows: list[list[str]], header: list[str], options: dict[str, str], sep: str) -> list[dict]:
    group_column = options.get("group_column", "group")
    value_column = options.get("value_column", "value")
    for name, param in ((group_column, "group_column"), (value_column, "value_column")):
        if name not in header:
            raise ProblemError(
                "invalid-input",
                f"the CSV has no column {name!r} (columns: {', '.join(map(repr, header))}); "
                f"name it with ?{param}=",
                pointer=f"/{param}", rule="csv-column",
            )
    gi, vi = header.index(group_column), header.index(value_column)
    groups: dict[str, list[Decimal]] = {}
    for r, row in enumerate(rows[1:], start=1):
        if max(gi, vi) >= len(row):
            raise ProblemError("invalid-input", f"row {r} has only {len(row)} cells",
                               pointer=f"/csv/rows/{r}", rule="csv-row")
        label = row[gi].strip()
        if not label:
            raise ProblemError("invalid-input", f"row {r}: the group cell is empty",
                               pointer=f"/csv/rows/{r}/{group_column}", rule="csv-label")
        groups.setdefault(label, []).append(_number(row[vi], r, value_column, sep))
    return [{"label": label, "values": values} for label, values in groups.items()]


def _wide(rows: list[list[str]], header: list[str], sep: str) -> list[dict]:
    if len(set(header)) != len(header) or any(not h for h in header):
        raise ProblemError("invalid-input", "wide CSV headers must be distinct, non-empty group labels",
                           pointer="/csv/header", rule="csv-header")
    columns: list[list[Decimal]] = [[] for _ in header]
    ended = [False] * len(header)
    for r, row in enumerate(rows[1:], start=1):
        if len(row) > len(header):
            raise ProblemError("invalid-input", f"row {r} has more cells than the header",
                               pointer=f"/csv/rows/{r}", rule="csv-row")
        for c, name in enumerate(header):
            cell = row[c] if c < len(row) else ""
            if not cell.strip():
                ended[c] = True
                continue
            if ended[c]:
                raise ProblemError(
                    "invalid-input",
                    f"column {name!r} has a gap before row {r}: ragged columns may only end early",
                    pointer=f"/csv/rows/{r}/{name}", rule="csv-gap",
                )
            columns[c].append(_number(cell, r, name, sep))
    return [{"label": name, "values": values} for name, values in zip(header, columns, strict=True)]


def query_value(text: str) -> Any:
    """A query parameter as the JSON value it spells (number, boolean, or text)."""
    if text in ("true", "false"):
        return text == "true"
    try:
        value = Decimal(text)
    except InvalidOperation:
        return text
    return value if value.is_finite() else text

"""CSV bodies as instruments write them: which number texts are read, where a
refusal points, and how the query string's fields are typed.

Every accepted CSV is checked against the same request sent as JSON (the
contract of issue 7: "decimal text is kept exact as in JSON"), byte for byte
where the request is the same. Which number spellings instruments and
spreadsheets write is common practice, no source; the JSON number grammar is
RFC 8259, section 6; JSON pointer escaping (~0, ~1) is RFC 6901, section 3.

Data are invented: an enzyme-activity plate assay, and a dose plate whose
groups are labelled by their dose in mg/L (0, 10, 100).
"""

from __future__ import annotations

from decimal import Decimal

import pytest

from familywise.api.parsing import parse_csv, query_fields
from familywise.api.problems import ProblemError
from familywise.api.schemas.families import ControlRequest, EquivalenceRequest, PairwiseRequest
from familywise.api.schemas.figures import MeansFigureRequest
from familywise.api.schemas.omnibus import OmnibusRequest

CSV = {"content-type": "text/csv"}
PROBLEM = "application/problem+json"

#: The groups of the dose plate (invented), labelled by dose.
DOSES = {"0": ["12.1", "11.8", "12.6", "12.0"], "10": ["13.4", "13.9", "13.1", "13.6"],
         "100": ["15.2", "15.8", "14.9", "15.5"]}


def _long_csv(groups: dict[str, list[str]], header: str = "group,value") -> bytes:
    return (header + "\n" + "".join(f"{label},{v}\n" for label, vs in groups.items() for v in vs)).encode()


def _json_groups(groups: dict[str, list[str]]) -> str:
    """The same groups as JSON text, each number written with the digits of the CSV cell."""
    return "[" + ", ".join(f'{{"label": "{label}", "values": [{", ".join(vs)}]}}'
                           for label, vs in groups.items()) + "]"


def _problem(response, status: int, rule: str, pointer: str | None) -> dict:
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == PROBLEM
    problem = response.json()
    assert (problem["rule"], problem.get("pointer")) == (rule, pointer), problem
    return problem


def _omnibus_csv(client, body: bytes, query: str = ""):
    return client.post("/v1/omnibus" + query, content=body, headers=CSV)


# --------------------------------------------------------------------------
# which cell texts are numbers
# --------------------------------------------------------------------------

#: Spellings an instrument or spreadsheet writes (common practice, no source), each with the JSON
#: number it stands for.
ACCEPTED = [("+12.5", "12.5"), (" 12.5 ", "12.5"), ("\t-0.25\t", "-0.25"), ("1.25e1", "12.5"),
            ("1.25E+01", "12.5"), ("125e-1", "12.5"), ("0012.50", "12.50"), ("12", "12")]


@pytest.mark.parametrize(("cell", "json_number"), ACCEPTED, ids=[a[0] for a in ACCEPTED])
def test_decimal_text_is_read_exactly(client, cell, json_number) -> None:
    groups = {"well A": [cell, "11", "13"], "well B": ["14", "15", "16"]}
    as_csv = _omnibus_csv(client, _long_csv(groups))
    same = _json_groups({**groups, "well A": [json_number, "11", "13"]})
    as_json = client.post("/v1/omnibus", content=f'{{"groups": {same}}}', headers={"content-type": "application/json"})
    assert as_csv.status_code == as_json.status_code == 200, (as_csv.text, as_json.text)
    # expected: the same request as JSON (the input hash in provenance too: the same exact decimals)
    assert as_csv.json()["groups"] == as_json.json()["groups"]
    assert as_csv.json()["anova"] == as_json.json()["anova"]


#: Texts Decimal() would read but that are not decimal text as defined (optional sign, digits,
#: optional fraction and exponent): each refused, never guessed at.
REFUSED = ["1_0", ".5", "5.", "1 0", "1,000", "--1", "+-1", "1e", "1e5.5", "1.2.3", "\u22121",
           "\u0661\u0662", "\uff11\uff12", "NaN", "sNaN", "Infinity", "-inf", "0x10", "12 mg", "1/2", "1e1_0"]


@pytest.mark.parametrize("cell", REFUSED)
def test_other_number_spellings_are_refused_naming_line_and_column(client, cell) -> None:
    body = f'group,value\nwell A,11\nwell A,"{cell}"\nwell B,14\nwell B,15\n'.encode()
    problem = _problem(_omnibus_csv(client, body), 422, "csv-number", "/csv/lines/3/value")
    assert "line 3" in problem["detail"] and "'value'" in problem["detail"]


def test_an_exponent_beyond_decimal_range_is_refused_as_a_cell(client) -> None:
    body = b"group,value\nwell A,11\nwell A,1e99999999999999999999\nwell B,14\nwell B,15\n"
    _problem(_omnibus_csv(client, body), 422, "csv-number", "/csv/lines/3/value")


def test_decimal_comma(client) -> None:
    groups = {"well A": ["11,5", "12,25", "13"], "well B": ["14,75", "15", "16,5"]}
    body = ("group;value\n" + "".join(f"{g};{v}\n" for g, vs in groups.items() for v in vs)).encode()
    as_csv = _omnibus_csv(client, body, "?decimal_separator=,")
    as_json = client.post("/v1/omnibus", json={"groups": [
        {"label": "well A", "values": [11.5, 12.25, 13]}, {"label": "well B", "values": [14.75, 15, 16.5]}]})
    assert as_csv.status_code == 200, as_csv.text
    assert as_csv.json()["anova"] == as_json.json()["anova"]  # expected: the same numbers as JSON


@pytest.mark.parametrize("cell", ["1.500", "1.234,5", "1 234,5", ",5", "5,"])
def test_with_a_decimal_comma_a_point_is_not_guessed_at(client, cell) -> None:
    """'1.500' in a file that writes decimals with a comma may be 1500 with a thousands separator:
    refused, not read as 1.5."""
    body = f"group;value\nwell A;11\nwell A;{cell}\nwell B;14\nwell B;15\n".encode()
    _problem(_omnibus_csv(client, body, "?decimal_separator=,"), 422, "csv-number", "/csv/lines/3/value")


def test_wide_cells_follow_the_same_rule(client) -> None:
    body = b"well A,well B\n11,14\n1_2,15\n13,16\n"
    _problem(_omnibus_csv(client, body, "?layout=wide"), 422, "csv-number", "/csv/lines/3/well A")


# --------------------------------------------------------------------------
# where a refusal points: the line of the file, the column escaped
# --------------------------------------------------------------------------

LINE_CASES = [
    # (body, line of the bad cell as an editor shows it)
    (b"group,value\n\n\nwell A,11\n\nwell A,x\nwell B,14\n", 6),  # blank lines count
    (b"\n\ngroup,value\nwell A,11\nwell A,x\nwell B,14\n", 5),  # so do blank lines before the header
    (b"group,value\r\nwell A,11\r\n\r\nwell A,x\r\n", 4),  # CRLF, as spreadsheets on Windows write
    (b"group,value\rwell A,11\r\rwell A,x\r", 4),  # CR alone, as old instrument software writes
    (b"group,value\n   \nwell A,11\nwell A,x\n", 4),  # a line of spaces is blank
    (b'group,value\n"well\nA",11\nwell A,x\n', 4),  # a quoted label over two lines
    (b'group,value\nwell A,"1\n1"\n', 2),  # a record over two lines: the line it starts on
]


@pytest.mark.parametrize(("body", "line"), LINE_CASES)
def test_refusals_name_the_line_of_the_file(client, body, line) -> None:
    problem = _problem(_omnibus_csv(client, body), 422, "csv-number", f"/csv/lines/{line}/value")
    assert f"line {line}," in problem["detail"]


def test_column_names_are_escaped_in_pointers(client) -> None:
    # RFC 6901, section 3: '~' is written '~0' and '/' is written '~1'
    wide = b"activity U/mg,lot~2\n11,14\n12,x\n"
    _problem(_omnibus_csv(client, wide, "?layout=wide"), 422, "csv-number", "/csv/lines/3/lot~02")
    wide = b"activity U/mg,lot~2\n11,14\ny,15\n"
    _problem(_omnibus_csv(client, wide, "?layout=wide"), 422, "csv-number", "/csv/lines/3/activity U~1mg")
    long = b"buffer,U/mg\nwell A,11\nwell A,zz\n"
    _problem(_omnibus_csv(client, long, "?group_column=buffer&value_column=U%2Fmg"), 422, "csv-number",
             "/csv/lines/3/U~1mg")


def test_other_line_refusals_name_the_line(client) -> None:
    _problem(_omnibus_csv(client, b"group,value\n\nwell A,11\nwell A\n"), 422, "csv-row", "/csv/lines/4")
    _problem(_omnibus_csv(client, b"group,value\n\nwell A,11\n ,12\n"), 422, "csv-label", "/csv/lines/4/group")
    _problem(_omnibus_csv(client, b"a,b\n1,2\n\n3,4,5\n", "?layout=wide"), 422, "csv-row", "/csv/lines/4")
    _problem(_omnibus_csv(client, b"a,b\n1,2\n,3\n4,5\n", "?layout=wide"), 422, "csv-gap", "/csv/lines/4/a")


def test_a_column_named_twice_is_not_guessed_at(client) -> None:
    _problem(_omnibus_csv(client, b"group,value,value\nwell A,1,2\nwell B,3,4\n"), 422, "csv-column",
             "/value_column")


# --------------------------------------------------------------------------
# the other fields, from the query string, typed by the request model
# --------------------------------------------------------------------------


def test_query_fields_follow_the_field_types() -> None:
    # a label stays text, whatever it looks like; a number field takes JSON number text, exactly
    assert query_fields([("control", "0"), ("alpha", "0.01"), ("method", "dunnett")], ControlRequest) == {
        "control": "0", "alpha": Decimal("0.01"), "method": "dunnett"}
    assert query_fields([("reference", "10"), ("margin", "2.5")], EquivalenceRequest) == {
        "reference": "10", "margin": Decimal("2.5")}
    assert type(query_fields([("alpha", "1e-2")], OmnibusRequest)["alpha"]) is Decimal
    # booleans only from true and false
    assert query_fields([("protected", "true")], PairwiseRequest) == {"protected": True}
    assert query_fields([("protected", "false")], PairwiseRequest) == {"protected": False}
    for text in ("1", "yes", "on", "True"):
        assert query_fields([("protected", text)], PairwiseRequest) == {"protected": text}
    # RFC 8259 section 6 number text only: what is not stays text, for the model to refuse by name
    for text in (".05", "5.", "+0.05", "0x1", "NaN", "1_0", " 0.05"):
        assert query_fields([("alpha", text)], OmnibusRequest) == {"alpha": text}
    # null where the field takes it and takes no free text
    assert query_fields([("letters_method", "null"), ("title", "null")], MeansFigureRequest) == {
        "letters_method": None, "title": "null"}
    # the CSV format parameters are not fields; unknown names stay text for the model to refuse
    assert query_fields([("layout", "wide"), ("delimiter", ";"), ("colour", "1")], OmnibusRequest) == {
        "colour": "1"}


def test_query_fields_refuse_repeats_and_groups() -> None:
    with pytest.raises(ProblemError) as caught:
        query_fields([("alpha", "0.05"), ("alpha", "0.01")], OmnibusRequest)
    assert (caught.value.rule, caught.value.pointer) == ("duplicate-parameter", "/alpha")
    with pytest.raises(ProblemError) as caught:
        query_fields([("layout", "long"), ("layout", "wide")], OmnibusRequest)
    assert (caught.value.rule, caught.value.pointer) == ("duplicate-parameter", "/layout")
    with pytest.raises(ProblemError) as caught:
        query_fields([("groups", "[]")], OmnibusRequest)
    assert (caught.value.rule, caught.value.pointer) == ("csv-groups", "/groups")


def test_parse_csv_keeps_the_digits() -> None:
    parsed = parse_csv(b"group,value\nwell A, +0012.50 \nwell A,1.25E+01\n", {})
    assert parsed == {"groups": [{"label": "well A", "values": [Decimal("12.50"), Decimal("12.5")]}]}
    assert str(parsed["groups"][0]["values"][0]) == "12.50"



def test_a_numeric_group_label_names_the_control(client) -> None:
    query = "?control=0&alpha=0.01"
    as_csv = client.post("/v1/followup/control" + query, content=_long_csv(DOSES), headers=CSV)
    as_json = client.post("/v1/followup/control", content=f'{{"groups": {_json_groups(DOSES)}, '
                          '"control": "0", "alpha": 0.01}', headers={"content-type": "application/json"})
    assert as_csv.status_code == 200, as_csv.text
    assert as_csv.content == as_json.content  # expected: the same request as JSON, byte for byte
    assert {row["second"] for row in as_csv.json()["comparisons"]} == {"0"}


def test_a_numeric_reference_and_a_number_margin(client) -> None:
    query = "?reference=10&margin=2.5&kind=non_inferiority&method=tost"
    as_csv = client.post("/v1/followup/equivalence" + query, content=_long_csv(DOSES), headers=CSV)
    as_json = client.post("/v1/followup/equivalence", content=f'{{"groups": {_json_groups(DOSES)}, '
                          '"reference": "10", "margin": 2.5, "kind": "non_inferiority", "method": "tost"}',
                          headers={"content-type": "application/json"})
    assert as_csv.status_code == 200, as_csv.text
    assert as_csv.content == as_json.content  # expected: the same request as JSON, byte for byte


def test_a_number_field_takes_json_number_text_only(client) -> None:
    _problem(_omnibus_csv(client, _long_csv(DOSES), "?alpha=.05"), 422, "number_type", "/alpha")


def test_a_repeated_query_parameter_is_refused(client) -> None:
    _problem(_omnibus_csv(client, _long_csv(DOSES), "?alpha=0.05&alpha=0.5"), 422, "duplicate-parameter",
             "/alpha")


def test_a_boolean_field_takes_true_or_false(client) -> None:
    ok = client.post("/v1/followup/pairwise?method=lsd&protected=true", content=_long_csv(DOSES), headers=CSV)
    assert ok.status_code == 200, ok.text
    refused = client.post("/v1/followup/pairwise?method=lsd&protected=1", content=_long_csv(DOSES), headers=CSV)
    assert refused.status_code == 422 and refused.json()["pointer"] == "/protected", refused.text

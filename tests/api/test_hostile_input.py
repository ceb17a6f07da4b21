"""A catalogue of hostile input (issue 8): each case expects one specific 4xx, with its rule.

A lab pipeline sends whatever its instrument produced. Every case here is
answered by a problem document (application/problem+json) whose status,
rule and (where a field is at fault) pointer are fixed, never by a 5xx and
never by a guess.

The request data are invented (a plate assay's wells).
"""

from __future__ import annotations

import json

import pytest
from fastapi.testclient import TestClient

from familywise.api.app import create_app
from familywise.api.routes import ROUTERS
from familywise.api.settings import Settings

PROBLEM = "application/problem+json"
JSON = {"content-type": "application/json"}
CSV = {"content-type": "text/csv"}

WELLS = '[{"label": "well A", "values": [41.2, 43.8, 42.5]}, {"label": "well B", "values": [48.7, 50.2, 49.5]}]'


def _groups_with(first_values: str) -> str:
    return ('{"groups": [{"label": "well A", "values": [@]}, '
            '{"label": "well B", "values": [48.7, 50.2, 49.5]}]}').replace("@", first_values)


def _w(template: str) -> str:
    """A body template with @WELLS standing for the two wells' groups."""
    return template.replace("@WELLS", WELLS)


def _post_routes() -> dict[str, bool]:
    """Every POST endpoint of the service, and whether it also takes CSV."""
    return {route.path: bool(getattr(route, "accepts_csv", False)) for router in ROUTERS for route in router.routes
            if "POST" in getattr(route, "methods", ())}


POST_ROUTES = _post_routes()
POST_PATHS = sorted(POST_ROUTES)
CSV_PATHS = [p for p in POST_PATHS if POST_ROUTES[p]]
JSON_ONLY_PATHS = [p for p in POST_PATHS if p not in CSV_PATHS]


def assert_problem(response, status: int, rule: str, pointer: str | None = None) -> dict:
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == PROBLEM
    problem = response.json()
    assert problem["status"] == status
    assert problem["rule"] == rule, problem
    assert problem["type"].startswith("/problems/") and problem["title"] and problem["detail"]
    if pointer is not None:
        assert problem["pointer"] == pointer, problem
    return problem


# --------------------------------------------------------------------------
# malformed bodies, on every endpoint
# --------------------------------------------------------------------------

MALFORMED = [
    # (id, raw body, status, rule)
    ("truncated JSON", '{"groups": [', 400, "json"),
    ("trailing garbage", '{"groups": []} x', 400, "json"),
    ("single quotes", "{'groups': []}", 400, "json"),
    ("comment", '{"groups": [] /* note */}', 400, "json"),
    ("empty body", "", 400, "json"),
    ("whitespace only", "  \n\t ", 400, "json"),
    ("byte-order mark", "\ufeff{}", 400, "json"),
    ("NaN literal", _groups_with("NaN, 1, 2"), 400, "json-number"),
    ("Infinity literal", _groups_with("Infinity, 1, 2"), 400, "json-number"),
    ("-Infinity literal", _groups_with("-Infinity, 1, 2"), 400, "json-number"),
    ("duplicate top-level key", '{"alpha": 0.05, "alpha": 0.1}', 400, "duplicate-key"),
    ("duplicate nested key", '{"groups": [{"label": "a", "label": "b", "values": [1, 2]}]}', 400, "duplicate-key"),
    ("nesting 33 deep", '{"groups": ' + "[" * 32 + "]" * 32 + "}", 400, "depth"),
    ("nesting 100 000 deep", "[" * 100_000 + "]" * 100_000, 400, "depth"),
    ("objects nested 40 deep", '{"a": ' * 40 + "1" + "}" * 40, 400, "depth"),
]


@pytest.mark.parametrize("path", POST_PATHS)
@pytest.mark.parametrize(("case", "content", "status", "rule"), MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_bodies_on_every_endpoint(client, path, case, content, status, rule) -> None:
    assert_problem(client.post(path, content=content.encode("utf-8"), headers=JSON), status, rule)


@pytest.mark.parametrize("path", POST_PATHS)
def test_bytes_that_are_not_utf8(client, path) -> None:
    assert_problem(client.post(path, content=b'{"groups": "\xff\xfe"}', headers=JSON), 400, "utf-8")
    utf16 = '{"groups": []}'.encode("utf-16")
    assert_problem(client.post(path, content=utf16, headers=JSON), 400, "utf-8")


def test_brackets_inside_strings_are_not_nesting(client) -> None:
    """The depth scan skips strings: a label full of brackets is an ordinary (too long) label."""
    body = '{"groups": [{"label": "@", "values": [1, 2]}, {"label": "b", "values": [1, 3]}]}'.replace("@", "[" * 300)
    assert_problem(client.post("/v1/omnibus", content=body, headers=JSON), 422, "string_too_long",
                   "/groups/0/label")


# --------------------------------------------------------------------------
# content types
# --------------------------------------------------------------------------

WRONG_TYPES = ["text/plain", "application/xml", "application/x-www-form-urlencoded", "multipart/form-data",
               "application/ld+json", "application/octet-stream"]


@pytest.mark.parametrize("path", POST_PATHS)
@pytest.mark.parametrize("content_type", WRONG_TYPES)
def test_wrong_content_type(client, path, content_type) -> None:
    response = client.post(path, content=(_w('{"groups": @WELLS}')).encode(), headers={"content-type": content_type})
    assert_problem(response, 415, "media-type")


@pytest.mark.parametrize("path", JSON_ONLY_PATHS)
def test_csv_where_only_json_is_taken(client, path) -> None:
    response = client.post(path, content=b"group,value\nwell A,1\nwell A,2\n", headers=CSV)
    problem = assert_problem(response, 415, "media-type")
    assert "application/json" in problem["detail"]


def test_no_content_type(client) -> None:
    """Without a content type a body that opens like JSON is read as JSON; anything else is refused."""
    assert client.post("/v1/omnibus", content=(_w('{"groups": @WELLS}')).encode()).status_code == 200
    assert_problem(client.post("/v1/omnibus", content=b"well A,1\n"), 415, "media-type")


@pytest.mark.parametrize("content_type", ["application/json; charset=utf-8", "Application/JSON"])
def test_json_media_type_parameters_and_case(client, content_type) -> None:
    response = client.post("/v1/omnibus", content=(_w('{"groups": @WELLS}')).encode(),
                           headers={"content-type": content_type})
    assert response.status_code == 200, response.text


# --------------------------------------------------------------------------
# numbers
# --------------------------------------------------------------------------

NUMBERS = [
    # (id, path, body, status, rule, pointer)
    ("value 1e308", "/v1/omnibus", _groups_with("1e308, 1, 2"), 422, "finite", "/groups/0/values/0"),
    ("value -1e308", "/v1/omnibus", _groups_with("1, -1e308, 2"), 422, "finite", "/groups/0/values/1"),
    ("value 1e309 (beyond double)", "/v1/omnibus", _groups_with("1, 2, 1e309"), 422, "finite",
     "/groups/0/values/2"),
    ("value 1.1e150 (squares overflow)", "/v1/omnibus", _groups_with("1.1e150, 1, 2"), 422, "finite",
     "/groups/0/values/0"),
    ("integer of 5000 digits", "/v1/omnibus", _groups_with("1" + "0" * 5000 + ", 1, 2"), 422, "finite",
     "/groups/0/values/0"),
    ("alpha 1e308", "/v1/omnibus", _w('{"groups": @WELLS, "alpha": 1e308}'), 422, "alpha_range", "/alpha"),
    ("alpha 1e309", "/v1/omnibus", _w('{"groups": @WELLS, "alpha": 1e309}'), 422, "number_range", "/alpha"),
    ("alpha negative", "/v1/omnibus", _w('{"groups": @WELLS, "alpha": -0.05}'), 422, "alpha_range", "/alpha"),
    ("margin 1e308 absolute", "/v1/followup/equivalence",
     _w('{"groups": @WELLS, "reference": "well A", "margin": 1e309}'), 422, "number_range", None),
]


@pytest.mark.parametrize(("case", "path", "content", "status", "rule", "pointer"), NUMBERS,
                         ids=[n[0] for n in NUMBERS])
def test_huge_numbers(client, case, path, content, status, rule, pointer) -> None:
    response = client.post(path, content=content, headers=JSON)
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == PROBLEM
    problem = response.json()
    if rule is not None:
        assert problem["rule"] == rule, problem
    if pointer is not None:
        assert problem["pointer"] == pointer, problem
    else:
        assert problem["pointer"].split("/")[1] in json.loads(content), problem


@pytest.mark.parametrize("value", ["1e999999999", "-1e999999999"])
def test_huge_exponents_in_json(client, value) -> None:
    """A well-formed decimal far beyond double range (its exact difference from the other values would
    overflow decimal's own range): refused as not finite, naming the value."""
    assert_problem(client.post("/v1/omnibus", content=_groups_with(f"{value}, 1, 2"), headers=JSON),
                   422, "finite", "/groups/0/values/0")


def test_exponent_beyond_decimal_range_in_json(client) -> None:
    """An exponent that decimal cannot even represent: read as an infinity, refused naming the value."""
    assert_problem(client.post("/v1/omnibus", content=_groups_with("1e99999999999999999999, 1, 2"),
                               headers=JSON), 422, "value_error", "/groups/0/values/0")


def test_huge_exponents_in_csv(client) -> None:
    body = b"group,value\nwell A,1e999999999\nwell A,1\nwell B,2\nwell B,3\n"
    assert_problem(client.post("/v1/omnibus", content=body, headers=CSV), 422, "finite", "/groups/0/values/0")


def test_tiny_exponents_are_numbers_near_zero(client) -> None:
    """1e-999999999 is a well-formed decimal whose double is 0: accepted, not refused."""
    response = client.post("/v1/omnibus", content=_groups_with("1e-999999999, 1, 2"), headers=JSON)
    assert response.status_code == 200, response.text
    assert response.json()["groups"][0]["minimum"] == 0.0


#: Hostile but well-formed parameters (each once answered with a 500): a 422 naming the field and the rule.
HOSTILE_PARAMETERS = [
    ("plan: pairwise family for k = 501 groups", "/v1/plan",
     '{"k": 501, "power": 0.8, "family": "pairwise", "effect": {"sd": 1}, "difference": 1}', "k", "/k"),
    ("plan: omnibus for k = 1e308 groups", "/v1/plan", '{"k": 1e308, "power": 0.8, "effect": {"cohens_f": 0.25}}',
     "int_range", "/k"),
    ("plan: Cohen's f of 1e300", "/v1/plan", '{"k": 3, "power": 0.8, "effect": {"cohens_f": 1e300}}', "effect",
     "/effect"),
    ("plan: means of 1e308 and -1e308", "/v1/plan",
     '{"k": 3, "power": 0.8, "effect": {"means": [0, 1e308, -1e308], "sd": 1}}', "effect", "/effect"),
    ("plan: zero SD with means", "/v1/plan", '{"k": 3, "power": 0.8, "effect": {"means": [1, 2, 3], "sd": 0}}',
     "sd", "/effect/sd"),
    ("plan: difference of 1e300 SDs", "/v1/plan",
     '{"k": 3, "power": 0.8, "family": "pairwise", "effect": {"sd": 1e-300}, "difference": 1e300}', "difference",
     "/difference"),
    ("recommendation for a group size of 1e308", "/v1/recommendation",
     '{"question": {}, "sizes": {"well A": 1e308, "well B": 3}}', "int_range", "/sizes/well A"),
    ("alpha: the smallest subnormal", "/v1/omnibus", _w('{"groups": @WELLS, "alpha": 5e-324}'), "alpha_range",
     "/alpha"),
]


@pytest.mark.parametrize(("case", "path", "content", "rule", "pointer"), HOSTILE_PARAMETERS,
                         ids=[k[0] for k in HOSTILE_PARAMETERS])
def test_hostile_parameters(client, case, path, content, rule, pointer) -> None:
    assert_problem(client.post(path, content=content, headers=JSON), 422, rule, pointer)


def test_power_just_above_alpha_is_planned(client) -> None:
    """A target power barely above alpha is reached by the smallest design (two per group), and said so."""
    response = client.post("/v1/plan", content='{"k": 3, "power": 0.0500001, "effect": {"cohens_f": 0.25}}',
                           headers=JSON)
    assert response.status_code == 200, response.text
    plan = response.json()
    assert plan["n_per_group"] == 2
    assert plan["achieved_power"] >= 0.0500001


def test_contrast_coefficients_of_any_magnitude(client) -> None:
    """Coefficients of 1e-300 are the contrast B - A scaled: the same t and p as coefficients of 1, and the
    estimate and its SE scaled by 1e-300 (scale invariance of t = L / SE; Scheffé 1959, ch. 3)."""
    def answer(size: str) -> dict:
        body = _w('{"groups": @WELLS, "contrasts": [{"name": "B - A", "coefficients": {"well A": -' + size
                  + ', "well B": ' + size + '}}]}')
        response = client.post("/v1/followup/contrasts", content=body, headers=JSON)
        assert response.status_code == 200, response.text
        return response.json()["comparisons"][0]
    tiny, unit = answer("1e-300"), answer("1")
    assert tiny["statistic"] == pytest.approx(unit["statistic"], rel=1e-14)
    assert tiny["p_value"] == pytest.approx(unit["p_value"], rel=1e-14)
    assert tiny["difference"] == pytest.approx(unit["difference"] * 1e-300, rel=1e-14)
    assert tiny["se"] == pytest.approx(unit["se"] * 1e-300, rel=1e-14)


def test_values_near_the_bottom_of_the_double_range(client) -> None:
    """Values that differ by about 1e-300 cannot be squared in double precision: a 422 that says to rescale,
    never a claim that the groups are constant."""
    body = ('{"groups": [{"label": "well A", "values": [1e-300, 2e-300, 3e-300]}, '
            '{"label": "well B", "values": [4e-300, 5e-300, 7e-300]}]}')
    problem = assert_problem(client.post("/v1/followup/pairwise", content=body, headers=JSON), 422, "spread",
                             "/groups")
    assert "rescale" in problem["detail"]


STRINGS = [
    ("value as string", "/v1/omnibus", _groups_with('"41.2", 43.8, 42.5'), "value_error", "/groups/0/values/0"),
    ("value as string with unit", "/v1/omnibus", _groups_with('41.2, "43.8 mg", 42.5'), "value_error",
     "/groups/0/values/1"),
    ("value as boolean", "/v1/omnibus", _groups_with("true, 43.8, 42.5"), "value_error", "/groups/0/values/0"),
    ("value as null", "/v1/omnibus", _groups_with("41.2, null, 42.5"), "value_error", "/groups/0/values/1"),
    ("value as object", "/v1/omnibus", _groups_with('{"v": 1}, 2, 3'), "value_error", "/groups/0/values/0"),
    ("alpha as string", "/v1/omnibus", _w('{"groups": @WELLS, "alpha": "0.05"}'), "number_type", "/alpha"),
    ("plan k as string", "/v1/plan", '{"k": "3", "power": 0.8, "effect": {"cohens_f": 0.25}}', "int_type", "/k"),
    ("plan power as string", "/v1/plan", '{"k": 3, "power": "0.8", "effect": {"cohens_f": 0.25}}', "number_type",
     "/power"),
    ("contrast coefficient as string", "/v1/followup/contrasts",
     _w('{"groups": @WELLS, "contrasts": [{"name": "B - A", "coefficients": {"well A": "-1", "well B": 1}}]}'),
     "number_type", "/contrasts/0/coefficients/well A"),
]


@pytest.mark.parametrize(("case", "path", "content", "rule", "pointer"), STRINGS, ids=[s[0] for s in STRINGS])
def test_numbers_as_strings_are_refused(client, case, path, content, rule, pointer) -> None:
    assert_problem(client.post(path, content=content, headers=JSON), 422, rule, pointer)


UNION_POINTERS = [  # the margin is a number or {"relative": fraction}: the pointer names what was sent
    ('"1"', "number_type", "/margin"),
    ("null", "number_type", "/margin"),
    ('{"relative": "0.1"}', "number_type", "/margin/relative"),
    ("{}", "missing", "/margin/relative"),
    ('{"relative": 0.1, "absolute": 2}', "extra_forbidden", "/margin/absolute"),
]


@pytest.mark.parametrize(("margin", "rule", "pointer"), UNION_POINTERS, ids=[u[0] for u in UNION_POINTERS])
def test_union_field_pointer_names_the_field(client, margin, rule, pointer) -> None:
    body = _w('{"groups": @WELLS, "reference": "well A", "margin": ' + margin + '}')
    problem = assert_problem(client.post("/v1/followup/equivalence", content=body, headers=JSON), 422, rule,
                             pointer)
    assert len(problem["errors"]) == 1, problem


CSV_NUMBERS = [
    ("nan", "csv-number"), ("inf", "csv-number"), ("-Infinity", "csv-number"), ("1,5", "csv-number"),
    ("12 mg", "csv-number"), ("0x10", "csv-number"),
]


@pytest.mark.parametrize(("cell", "rule"), CSV_NUMBERS, ids=[c[0] for c in CSV_NUMBERS])
def test_csv_cells_that_are_not_numbers(client, cell, rule) -> None:
    body = f'group,value\nwell A,"{cell}"\nwell A,1\nwell B,2\nwell B,3\n'.encode()
    # the cell is on line 2 of the file (the header is line 1)
    assert_problem(client.post("/v1/omnibus", content=body, headers=CSV), 422, rule, "/csv/lines/2/value")


def test_csv_huge_number(client) -> None:
    body = b"group,value\nwell A,1e308\nwell A,1\nwell B,2\nwell B,3\n"
    assert_problem(client.post("/v1/omnibus", content=body, headers=CSV), 422, "finite", "/groups/0/values/0")


# --------------------------------------------------------------------------
# sizes: a million tiny groups, labels of 10 kB
# --------------------------------------------------------------------------

MILLION = 1_000_000


@pytest.fixture(scope="module")
def million_groups_json() -> bytes:
    return ('{"groups": [' + ", ".join(f'{{"label": "{i}", "values": [1]}}' for i in range(MILLION))
            + "]}").encode()


def test_a_million_tiny_groups_hit_the_body_limit(client, million_groups_json) -> None:
    """About 34 MB: refused from the declared length before it is read."""
    problem = assert_problem(client.post("/v1/omnibus", content=million_groups_json, headers=JSON), 413,
                             "max_body_bytes")
    assert "FAMILYWISE_MAX_BODY_BYTES" in problem["detail"]


def test_a_million_tiny_groups_hit_the_group_limit(million_groups_json) -> None:
    """With the body limit raised out of the way, the group limit refuses them (before any computation)."""
    roomy = TestClient(create_app(Settings(warm_up=False, max_body_bytes=64 * 1024 * 1024)))
    problem = assert_problem(roomy.post("/v1/omnibus", content=million_groups_json, headers=JSON), 422,
                             "max_groups", "/groups")
    assert f"{MILLION} groups" in problem["detail"] and "FAMILYWISE_MAX_GROUPS" in problem["detail"]


def test_a_million_tiny_groups_as_csv_hit_the_group_limit() -> None:
    roomy = TestClient(create_app(Settings(warm_up=False, max_body_bytes=64 * 1024 * 1024)))
    body = ("group,value\n" + "".join(f"g{i},1\n" for i in range(MILLION))).encode()
    assert_problem(roomy.post("/v1/omnibus", content=body, headers=CSV), 422, "max_groups", "/groups")


TEN_KB = "x" * 10_000

LONG_LABELS = [
    ("group label", "/v1/omnibus",
     {"groups": [{"label": TEN_KB, "values": [1, 2]}, {"label": "well B", "values": [1, 3]}]}, "/groups/0/label"),
    ("control label", "/v1/followup/control", {"groups": json.loads(WELLS), "control": TEN_KB}, "/control"),
    ("equivalence reference", "/v1/followup/equivalence",
     {"groups": json.loads(WELLS), "reference": TEN_KB, "margin": 1}, "/reference"),
    ("contrast name", "/v1/followup/contrasts",
     {"groups": json.loads(WELLS), "contrasts": [{"name": TEN_KB, "coefficients": {"well A": -1, "well B": 1}}]},
     "/contrasts/0/name"),
    ("batch item id", "/v1/batch",
     {"items": [{"id": TEN_KB, "operation": "omnibus", "request": {"groups": json.loads(WELLS)}}]},
     "/items/0/id"),
]


@pytest.mark.parametrize(("case", "path", "body", "pointer"), LONG_LABELS, ids=[c[0] for c in LONG_LABELS])
def test_labels_of_ten_kilobytes(client, case, path, body, pointer) -> None:
    problem = assert_problem(client.post(path, json=body), 422, "string_too_long", pointer)
    assert TEN_KB not in problem["detail"]  # the refusal names the rule, it does not echo 10 kB back


def test_csv_label_of_ten_kilobytes(client) -> None:
    body = f"group,value\n{TEN_KB},1\n{TEN_KB},2\nwell B,2\nwell B,3\n".encode()
    assert_problem(client.post("/v1/omnibus", content=body, headers=CSV), 422, "string_too_long",
                   "/groups/0/label")


def test_contrast_coefficients_keyed_by_long_labels(client) -> None:
    body = {"groups": json.loads(WELLS), "contrasts": [{"name": "c", "coefficients": {TEN_KB: 1, "well B": -1}}]}
    response = client.post("/v1/followup/contrasts", json=body)
    assert response.status_code == 422 and response.headers["content-type"] == PROBLEM
    assert response.json()["rule"] == "string_too_long"


# --------------------------------------------------------------------------
# unicode labels: accepted and echoed intact
# --------------------------------------------------------------------------

UNICODE_LABELS = [
    "Tris–HCl pH 8.0 (µM)",          # en dash, micro sign
    "NaCl 150 mM ✓",
    "株式 試料 Ⅲ",                      # CJK, roman numeral
    "مخزن A",                          # right-to-left
    "e\u0301chantillon",              # e + combining acute: must not be normalised to é
    "échantillon",                    # precomposed é: a different label from the one above
    "🧪 tube 7",                       # astral plane (surrogate pair in UTF-16)
    "zero\u200bwidth",                # zero-width space
]


def test_unicode_labels_are_accepted_and_echoed_intact(client) -> None:
    groups = [{"label": label, "values": [40.0 + i, 41.5 + i, 39.25 + i]} for i, label in enumerate(UNICODE_LABELS)]
    body = json.dumps({"groups": groups, "method": "tukey_kramer"}, ensure_ascii=False).encode("utf-8")
    pairwise = client.post("/v1/followup/pairwise", content=body, headers=JSON)
    assert pairwise.status_code == 200, pairwise.text
    answer = pairwise.json()
    assert set(answer["letters"]) == set(UNICODE_LABELS)
    seen = {row["first"] for row in answer["comparisons"]} | {row["second"] for row in answer["comparisons"]}
    assert seen == set(UNICODE_LABELS)
    omnibus = client.post("/v1/omnibus", content=body.replace(b', "method": "tukey_kramer"', b""), headers=JSON)
    assert [g["label"] for g in omnibus.json()["groups"]] == UNICODE_LABELS
    # escaped in the request (\\uXXXX) or raw UTF-8: the same labels come back
    escaped = json.dumps({"groups": groups}, ensure_ascii=True).encode("ascii")
    assert client.post("/v1/omnibus", content=escaped, headers=JSON).json()["groups"] == omnibus.json()["groups"]


def test_unicode_labels_in_csv_and_as_the_control(client) -> None:
    rows = "".join(f"{label},{40 + i + d}\n" for i, label in enumerate(UNICODE_LABELS[:4]) for d in (0.5, 1.25, 2))
    body = ("\ufeffgroup,value\n" + rows).encode("utf-8")  # with the byte-order mark spreadsheets write
    response = client.post(f"/v1/followup/control?control={UNICODE_LABELS[2]}", content=body, headers=CSV)
    assert response.status_code == 200, response.text
    answer = response.json()
    assert {row["second"] for row in answer["comparisons"]} == {UNICODE_LABELS[2]}
    assert {row["first"] for row in answer["comparisons"]} == set(UNICODE_LABELS[:4]) - {UNICODE_LABELS[2]}


def test_labels_differing_only_by_normalisation_are_different_groups(client) -> None:
    body = {"groups": [{"label": "e\u0301", "values": [1, 2]}, {"label": "\u00e9", "values": [1, 3]}]}
    response = client.post("/v1/omnibus", json=body)
    assert response.status_code == 200, response.text
    assert [g["label"] for g in response.json()["groups"]] == ["e\u0301", "\u00e9"]


def test_lone_surrogate_in_a_label(client) -> None:
    body = '{"groups": [{"label": "\\ud800", "values": [1, 2]}, {"label": "b", "values": [1, 3]}]}'
    assert_problem(client.post("/v1/omnibus", content=body, headers=JSON), 422, "string_unicode", "/groups/0/label")


# --------------------------------------------------------------------------
# duplicate keys, wherever they are
# --------------------------------------------------------------------------

DUPLICATES = [
    ("top level", "/v1/omnibus", _w('{"groups": @WELLS, "groups": @WELLS}')),
    ("inside a group", "/v1/omnibus",
     '{"groups": [{"label": "well A", "values": [1, 2], "values": [3, 4]}, {"label": "b", "values": [1, 3]}]}'),
    ("contrast coefficients", "/v1/followup/contrasts",
     _w('{"groups": @WELLS, "contrasts": [{"name": "c", "coefficients": {"well A": 1, "well A": -1}}]}')),
    ("inside a batch item's request", "/v1/batch",
     _w('{"items": [{"id": "1", "operation": "omnibus", "request": {"groups": @WELLS, "alpha": 0.1, "alpha": 0.2}}]}')),
    ("question of an analysis", "/v1/analysis",
     _w('{"groups": @WELLS, "question": {"planned": true, "planned": false}}')),
]


@pytest.mark.parametrize(("case", "path", "content"), DUPLICATES, ids=[d[0] for d in DUPLICATES])
def test_duplicate_keys(client, case, path, content) -> None:
    problem = assert_problem(client.post(path, content=content, headers=JSON), 400, "duplicate-key")
    assert "appears twice" in problem["detail"]


# --------------------------------------------------------------------------
# shapes
# --------------------------------------------------------------------------

SHAPES = [
    ("null", "null", "model_type", ""),
    ("array", "[]", "model_type", ""),
    ("number", "42", "model_type", ""),
    ("string", '"groups"', "model_type", ""),
    ("groups null", '{"groups": null}', "list_type", "/groups"),
    ("groups an object", '{"groups": {"well A": [1, 2]}}', "list_type", "/groups"),
    ("label a number", '{"groups": [{"label": 5, "values": [1, 2]}, {"label": "b", "values": [1, 3]}]}',
     "string_type", "/groups/0/label"),
    ("unknown field", _w('{"groups": @WELLS, "alhpa": 0.05}'), "extra_forbidden", "/alhpa"),
]


@pytest.mark.parametrize(("case", "content", "rule", "pointer"), SHAPES, ids=[s[0] for s in SHAPES])
def test_bodies_of_the_wrong_shape(client, case, content, rule, pointer) -> None:
    problem = assert_problem(client.post("/v1/omnibus", content=content, headers=JSON), 422, rule)
    assert problem["pointer"] == pointer

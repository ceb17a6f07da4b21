"""Properties of the service's answers, through the HTTP API (issue 8), checked with hypothesis.

The same properties as tests/unit/test_properties.py, end to end: requests
are written as JSON text with the decimals exactly as drawn, so that what the
service ingests is exactly the shifted, scaled or reordered data.

* A shift of every value leaves every follow-up family's answer identical
  (bit for bit: the service computes from exact deviations, in which the
  shift cancels) and moves the omnibus group means by the shift.
* A positive scale factor leaves statistics and p-values unchanged (relative
  tolerance 1e-9, see the unit file's docstring for why: the scaled values
  are rounded afresh to double precision, a difference of 1e-16 relative
  which the arithmetic amplifies to at most about 1e-13) and scales
  estimates and intervals by the factor.
* Reordering groups or values changes nothing but the order.
* Every p-value in any answer lies in [0, 1]; every interval contains its
  estimate; adjusted p-values are never below the unadjusted ones.
* The omnibus answer is the same bytes for JSON and CSV bodies (long and
  wide layouts).

Data are invented: small groups of two-decimal numbers drawn by hypothesis.
"""

from __future__ import annotations

import json
import math
import os
import random
from decimal import Decimal
from typing import Any

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

EXAMPLES = int(os.environ.get("FAMILYWISE_PROPERTY_EXAMPLES", "50"))
PROPERTY = settings(max_examples=EXAMPLES, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])

RTOL = 1e-9
P_FLOOR = 1e-290
P_FIELDS = ("p_value", "unadjusted_p_value", "p_lower", "p_upper")
#: Relative accuracy of the distribution-based p-values where they meet the unadjusted ones (one comparison,
#: or p near 1): the studentized-range and many-to-one codes agree with the t distribution to about 1e-9
#: there (for three identical groups Dunnett's p is 0.9999999989525179 where the t test's is 1).
DISTRIBUTION_RTOL = 1e-8
ARITHMETIC = {"lsd", "bonferroni", "sidak", "holm", "benjamini_hochberg", "dunn", "none", "tost", "bonferroni_tost"}

ALPHAS = (0.001, 0.01, 0.05, 0.1, 0.25, 0.5)

#: (path, extra request fields) of the operations under test; "{first}" and "{last}" are group labels.
OPERATIONS = [
    ("/v1/followup/pairwise", {"method": m}) for m in
    ("tukey_kramer", "lsd", "bonferroni", "sidak", "holm", "games_howell", "benjamini_hochberg", "dunn")
] + [
    ("/v1/followup/control", {"control": "{first}", "method": m, "alternative": a})
    for m in ("dunnett", "dunnett_stepdown") for a in ("two_sided", "greater", "less")
] + [
    ("/v1/followup/best", {"best": b}) for b in ("highest", "lowest")
] + [
    ("/v1/followup/contrasts", {"contrasts": "{helmert}", "adjustment": a})
    for a in ("none", "bonferroni", "sidak", "holm", "benjamini_hochberg", "multivariate_t", "scheffe")
] + [
    ("/v1/followup/equivalence", {"reference": "{last}", "margin": {"relative": Decimal("0.05")}, "kind": k,
                                  "method": m})
    for k in ("equivalence", "non_inferiority", "non_superiority") for m in ("dunnett_tost", "bonferroni_tost", "tost")
] + [
    ("/v1/analysis", {}),
    ("/v1/analysis", {"question": {"reference": "control", "control": "{first}"}}),
]
#: The operations whose answers do not depend on location (the relative equivalence margin does).
SHIFT_FREE = [op for op in OPERATIONS if op[0] != "/v1/followup/equivalence"]


def accepted(path: str, alpha: float) -> bool:
    """Equivalence refuses alpha >= 0.5 (a 422 of its own, tested in test_equivalence_endpoint.py)."""
    return not (path == "/v1/followup/equivalence" and alpha >= 0.5)


# --------------------------------------------------------------------------
# request building
# --------------------------------------------------------------------------

def dumps(obj: Any) -> str:
    """JSON text with every Decimal written exactly as it is (the json module cannot)."""
    if isinstance(obj, dict):
        return "{" + ", ".join(f"{json.dumps(k)}: {dumps(v)}" for k, v in obj.items()) + "}"
    if isinstance(obj, list | tuple):
        return "[" + ", ".join(dumps(v) for v in obj) + "]"
    if isinstance(obj, Decimal):
        return str(obj)
    return json.dumps(obj)


@st.composite
def layouts(draw, min_groups: int = 2, max_groups: int = 5, min_size: int = 2, max_size: int = 6):
    """Labelled groups of two-decimal values, distinct within each group."""
    k = draw(st.integers(min_groups, max_groups))
    groups = []
    for i in range(k):
        offset = draw(st.integers(-3000, 3000))
        cents = draw(st.lists(st.integers(-2000, 2000), min_size=min_size, max_size=max_size, unique=True))
        groups.append({"label": f"well {chr(65 + i)}", "values": [Decimal(offset + c).scaleb(-2) for c in cents]})
    return groups


shifts = st.integers(-10**9, 10**9).map(lambda i: Decimal(i).scaleb(-3))
factors = st.one_of(st.integers(-4, 4).map(lambda e: Decimal(1).scaleb(e)),
                    st.integers(1, 99_999).map(lambda i: Decimal(i).scaleb(-3)))


def helmert(labels: list[str]) -> list[dict]:
    """Helmert contrasts with integer coefficients: each group against the groups before it."""
    return [{"name": f"{labels[j]} vs earlier",
             "coefficients": {**{labels[i]: Decimal(-1) for i in range(j)}, labels[j]: Decimal(j)}}
            for j in range(1, len(labels))]


def body(groups: list[dict], extra: dict, alpha: float, labels: list[str] | None = None) -> dict:
    """The request: groups, alpha and the operation's fields, placeholders filled from ``labels`` (the
    original group order, so that reordered requests keep the same control, reference and contrasts)."""
    labels = labels or [g["label"] for g in groups]
    fill = {"{first}": labels[0], "{last}": labels[-1]}

    def resolve(value):
        if value == "{helmert}":
            return helmert(labels)
        if isinstance(value, str):
            return fill.get(value, value)
        if isinstance(value, dict):
            return {k: resolve(v) for k, v in value.items()}
        return value

    return {"groups": groups, "alpha": Decimal(repr(alpha)), **{k: resolve(v) for k, v in extra.items()}}


def post(client, path: str, request: dict) -> dict:
    response = client.post(path, content=dumps(request), headers={"content-type": "application/json"})
    assert response.status_code == 200, (path, response.text)
    return response.json()


def transformed(groups, shift=Decimal(0), factor=Decimal(1)) -> list[dict]:
    return [{"label": g["label"], "values": [v * factor + shift for v in g["values"]]} for g in groups]


def without_provenance(answer: dict) -> dict:
    return {k: v for k, v in answer.items() if k != "provenance"}


def families(answer: dict) -> list[dict]:
    """The family results in an answer (itself, or the follow-up of an analysis)."""
    if "comparisons" in answer:
        return [answer]
    if isinstance(answer.get("followup"), dict):
        return [answer["followup"]]
    return []


def groups_of(answer: dict) -> list[dict]:
    if isinstance(answer.get("omnibus"), dict):
        return answer["omnibus"]["groups"]
    return answer.get("groups", []) if isinstance(answer.get("groups"), list) else []


# --------------------------------------------------------------------------
# numeric comparison of two answers
# --------------------------------------------------------------------------

def _walk(a: Any, b: Any, path: str, compare) -> None:
    if isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), path
        for key in a:
            _walk(a[key], b[key], f"{path}/{key}", compare)
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _walk(x, y, f"{path}/{i}", compare)
    elif isinstance(a, float) and not isinstance(a, bool) and isinstance(b, int | float):
        compare(path, a, float(b))
    elif isinstance(a, int) and not isinstance(a, bool) and isinstance(b, float):
        compare(path, float(a), b)
    else:
        compare(path, a, b)


UNIT_FIELDS = {"difference", "se", "ci_low", "ci_high", "pooled_sd", "margin"}
SQUARED_FIELDS = {"ss"}
TEXT_FIELDS = {"summary", "notes", "report", "conclusion", "letters_note", "reasons", "cautions", "when",
               "provenance"}


def _interval_scale(row: dict) -> float:
    width = 0.0
    if isinstance(row.get("ci_low"), float) and isinstance(row.get("ci_high"), float):
        width = row["ci_high"] - row["ci_low"]
    return abs(row.get("difference") or 0.0) + 10 * (row.get("se") or 0.0) + width + abs(row.get("ci_low") or 0.0)


def assert_family_scaled(f0: dict, f1: dict, factor: float, alpha: float) -> None:
    """f1 is f0 computed on the data times ``factor``."""
    assert len(f0["comparisons"]) == len(f1["comparisons"])
    mc = 2.0 * max(f0.get("probability_error") or 0.0, f1.get("probability_error") or 0.0)
    for r0, r1 in zip(f0["comparisons"], f1["comparisons"], strict=True):
        scale = _interval_scale(r0)
        for field, v0 in r0.items():
            v1 = r1[field]
            if field in TEXT_FIELDS:
                continue
            if isinstance(v0, bool):  # decisions: equal unless the p-value sits on alpha
                if abs(r0["p_value"] - alpha) > 1e-7 * alpha + mc:
                    assert v0 == v1, (field, r0, r1)
                continue
            if isinstance(v0, str) or v0 is None:
                assert v0 == v1, (field, v0, v1)
                continue
            if field in P_FIELDS:
                assert abs(v0 - v1) <= RTOL * max(v0, v1) + P_FLOOR + mc, (field, v0, v1)
            elif field in UNIT_FIELDS:
                assert abs(v0 * factor - v1) <= RTOL * scale * factor * (1e6 if mc else 1), (field, v0, v1)
            elif field in SQUARED_FIELDS:
                assert abs(v0 * factor**2 - v1) <= RTOL * (scale * factor) ** 2, (field, v0, v1)
            else:
                assert abs(v0 - v1) <= RTOL * max(abs(v0), 1.0) * (1e6 if mc else 1), (field, v0, v1)
    if f0.get("critical_value") is not None:
        assert f1["critical_value"] == pytest.approx(f0["critical_value"], rel=1e-3 if mc else RTOL)


# --------------------------------------------------------------------------
# the properties
# --------------------------------------------------------------------------

@PROPERTY
@given(groups=layouts(), shift=shifts, alpha=st.sampled_from(ALPHAS), operation=st.sampled_from(SHIFT_FREE))
def test_shift_changes_only_the_location(client, groups, shift, alpha, operation) -> None:
    path, extra = operation
    assume(accepted(path, alpha))
    a0 = post(client, path, body(groups, extra, alpha))
    a1 = post(client, path, body(transformed(groups, shift=shift), extra, alpha))
    for f0, f1 in zip(families(a0), families(a1), strict=True):
        assert f0["comparisons"] == f1["comparisons"]
        assert (f0["critical_value"], f0.get("letters"), f0["pooled_sd"]) == (
            f1["critical_value"], f1.get("letters"), f1["pooled_sd"])
    c = float(shift)
    for g0, g1 in zip(groups_of(a0), groups_of(a1), strict=True):
        assert (g0["label"], g0["n"], g0["sd"]) == (g1["label"], g1["n"], g1["sd"])
        scale = abs(g0["mean"]) + abs(c) + (g0["ci_high"] - g0["ci_low"])
        for field in ("mean", "median", "minimum", "maximum", "ci_low", "ci_high"):
            assert abs(g1[field] - (g0[field] + c)) <= 8 * 2.0**-52 * scale, (field, g0, g1)


@PROPERTY
@given(groups=layouts(), factor=factors, alpha=st.sampled_from(ALPHAS), operation=st.sampled_from(OPERATIONS))
def test_positive_scale_changes_only_the_units(client, groups, factor, alpha, operation) -> None:
    path, extra = operation
    assume(accepted(path, alpha))
    a0 = post(client, path, body(groups, extra, alpha))
    a1 = post(client, path, body(transformed(groups, factor=factor), extra, alpha))
    for f0, f1 in zip(families(a0), families(a1), strict=True):
        assert_family_scaled(f0, f1, float(factor), alpha)


@PROPERTY
@given(groups=layouts(), factor=factors, alpha=st.sampled_from(ALPHAS))
def test_omnibus_under_scaling(client, groups, factor, alpha) -> None:
    a0 = post(client, "/v1/omnibus", body(groups, {}, alpha))
    a1 = post(client, "/v1/omnibus", body(transformed(groups, factor=factor), {}, alpha))
    a = float(factor)
    for key in ("f", "p_value", "r_squared"):
        assert a1["anova"][key] == pytest.approx(a0["anova"][key], rel=RTOL, abs=P_FLOOR if key == "p_value" else 1e-12)
    assert a1["anova"]["residual_sd"] == pytest.approx(a0["anova"]["residual_sd"] * a, rel=RTOL)
    for test in ("welch", "brown_forsythe", "kruskal_wallis", "shapiro_wilk", "levene"):
        t0, t1 = a0[test], a1[test]
        assert (t0["p_value"] is None) == (t1["p_value"] is None), test
        if t0["p_value"] is not None:
            assert t1["p_value"] == pytest.approx(t0["p_value"], rel=RTOL, abs=P_FLOOR), test
            assert t1["statistic"] == pytest.approx(t0["statistic"], rel=RTOL, abs=1e-15), test
    for g0, g1 in zip(a0["groups"], a1["groups"], strict=True):
        spread = (abs(g0["mean"]) + 10 * g0["sd"]) * a
        for field in ("mean", "sd", "se", "ci_low", "ci_high", "median", "minimum", "maximum"):
            assert abs(g1[field] - g0[field] * a) <= RTOL * spread, (field, g0, g1)


def _row_key(row: dict):
    if row.get("name") is not None:
        return row["name"]
    if row["second"] == "best of others":
        return row["first"]
    return frozenset((row["first"], row["second"]))


def _oriented(row: dict, first: str) -> dict:
    """A pairwise row seen with ``first`` first: a swapped pair negates the estimate and mirrors the interval."""
    if row["first"] == first:
        return row
    flipped = dict(row, first=row["second"], second=row["first"], difference=-row["difference"],
                   statistic=-row["statistic"])
    flipped["ci_low"] = None if row["ci_high"] is None else -row["ci_high"]
    flipped["ci_high"] = None if row["ci_low"] is None else -row["ci_low"]
    if row.get("rank_difference") is not None:
        flipped["rank_difference"] = -row["rank_difference"]
    return flipped


REORDER_OPERATIONS = [op for op in OPERATIONS if op[0] in ("/v1/followup/pairwise", "/v1/followup/control",
                                                          "/v1/followup/contrasts", "/v1/followup/equivalence")]


@PROPERTY
@given(groups=layouts(min_groups=3), seed=st.integers(0, 2**32 - 1), alpha=st.sampled_from(ALPHAS),
       operation=st.sampled_from(REORDER_OPERATIONS))
def test_reordering_groups_or_values_changes_only_the_order(client, groups, seed, alpha, operation) -> None:
    path, extra = operation
    assume(accepted(path, alpha))
    rng = random.Random(seed)
    labels = [g["label"] for g in groups]
    shuffled = [{"label": g["label"], "values": rng.sample(g["values"], len(g["values"]))} for g in groups]
    rng.shuffle(shuffled)
    f0 = post(client, path, body(groups, extra, alpha))
    f1 = post(client, path, body(shuffled, extra, alpha, labels=labels))
    mc = 2.0 * max(f0.get("probability_error") or 0.0, f1.get("probability_error") or 0.0)
    rows1 = {_row_key(r): r for r in f1["comparisons"]}
    assert len(rows1) == len(f0["comparisons"])
    step_down = extra.get("method") == "dunnett_stepdown"
    for r0 in f0["comparisons"]:
        r1 = _oriented(rows1[_row_key(r0)], r0["first"]) if r0["first"] else rows1[_row_key(r0)]
        scale = _interval_scale(r0) * (1e6 if mc else 1.0)
        for field in ("difference", "se", "statistic", "df", "ci_low", "ci_high", *P_FIELDS):
            v0, v1 = r0.get(field), r1.get(field)
            assert (v0 is None) == (v1 is None), field
            if v0 is None:
                continue
            if field in P_FIELDS:
                assert abs(v0 - v1) <= RTOL * max(v0, v1) + P_FLOOR + mc, (field, r0, r1)
            elif field in ("statistic", "df"):
                assert v1 == pytest.approx(v0, rel=RTOL, abs=1e-12), (field, r0, r1)
            else:
                assert abs(v0 - v1) <= RTOL * scale, (field, r0, r1)
        if abs(r0["p_value"] - alpha) > 1e-7 * alpha + mc:
            assert r0["significant"] == r1["significant"], (r0, r1)
        if not step_down and r0.get("critical_value") is not None:
            assert r1["critical_value"] == pytest.approx(r0["critical_value"], rel=RTOL)
    if f0.get("letters") is not None and all(abs(r["p_value"] - alpha) > 1e-7 * alpha for r in f0["comparisons"]):
        assert _sharing(f0["letters"]) == _sharing(f1["letters"])


def _sharing(letters: dict[str, str]) -> set[frozenset[str]]:
    labels = sorted(letters)
    return {frozenset((a, b)) for i, a in enumerate(labels) for b in labels[i + 1:]
            if set(letters[a]) & set(letters[b])}


@PROPERTY
@given(groups=layouts(min_groups=3), seed=st.integers(0, 2**32 - 1), alpha=st.sampled_from(ALPHAS))
def test_omnibus_under_reordering(client, groups, seed, alpha) -> None:
    rng = random.Random(seed)
    shuffled = [{"label": g["label"], "values": rng.sample(g["values"], len(g["values"]))} for g in groups]
    rng.shuffle(shuffled)
    a0 = post(client, "/v1/omnibus", body(groups, {}, alpha))
    a1 = post(client, "/v1/omnibus", body(shuffled, {}, alpha))
    assert [g["label"] for g in a1["groups"]] == [g["label"] for g in shuffled]
    by_label = {g["label"]: g for g in a1["groups"]}
    for g0 in a0["groups"]:
        g1 = by_label[g0["label"]]
        assert (g0["n"], g0["mean"], g0["median"], g0["minimum"], g0["maximum"]) == (
            g1["n"], g1["mean"], g1["median"], g1["minimum"], g1["maximum"])
        assert g1["sd"] == pytest.approx(g0["sd"], rel=RTOL)
    for key in ("f", "p_value", "r_squared"):
        assert a1["anova"][key] == pytest.approx(a0["anova"][key], rel=RTOL, abs=1e-12)
    for test in ("welch", "brown_forsythe", "kruskal_wallis", "shapiro_wilk"):
        if a0[test]["p_value"] is not None:
            assert a1[test]["p_value"] == pytest.approx(a0[test]["p_value"], rel=RTOL, abs=P_FLOOR), test


def _p_values(obj: Any, path: str = ""):
    if isinstance(obj, dict):
        for key, value in obj.items():
            if key in P_FIELDS and isinstance(value, float | int) and not isinstance(value, bool):
                yield f"{path}/{key}", float(value)
            else:
                yield from _p_values(value, f"{path}/{key}")
    elif isinstance(obj, list):
        for i, value in enumerate(obj):
            yield from _p_values(value, f"{path}/{i}")


@PROPERTY
@given(groups=layouts(), alpha=st.sampled_from(ALPHAS), operation=st.sampled_from(OPERATIONS))
def test_p_values_intervals_and_adjustments(client, groups, alpha, operation) -> None:
    path, extra = operation
    assume(accepted(path, alpha))
    answer = post(client, path, body(groups, extra, alpha))
    for where, p in _p_values(without_provenance(answer)):
        assert 0.0 <= p <= 1.0, (where, p)
    for family in families(answer):
        method = family["method"]
        for row in family["comparisons"]:
            if row["ci_low"] is not None:
                assert row["ci_low"] <= row["difference"], row
            if row["ci_high"] is not None:
                assert row["difference"] <= row["ci_high"], row
            if row.get("unadjusted_p_value") is not None:
                raw = row["unadjusted_p_value"]
                if method in ARITHMETIC:
                    slack = 0.0
                else:
                    slack = DISTRIBUTION_RTOL * raw + P_FLOOR + (family.get("probability_error") or 0.0)
                assert row["p_value"] >= raw - slack, (method, row)
    for g in groups_of(answer):
        assert g["ci_low"] <= g["mean"] <= g["ci_high"], g


def _csv_long(groups: list[dict]) -> str:
    return "group,value\n" + "".join(f"{g['label']},{v}\n" for g in groups for v in g["values"])


def _csv_wide(groups: list[dict]) -> str:
    longest = max(len(g["values"]) for g in groups)
    lines = [",".join(g["label"] for g in groups)]
    for i in range(longest):
        lines.append(",".join(str(g["values"][i]) if i < len(g["values"]) else "" for g in groups))
    return "\n".join(lines) + "\n"


@PROPERTY
@given(groups=layouts(), alpha=st.sampled_from(ALPHAS), layout=st.sampled_from(["long", "wide"]))
def test_omnibus_is_the_same_for_json_and_csv(client, groups, alpha, layout) -> None:
    as_json = client.post("/v1/omnibus", content=dumps(body(groups, {}, alpha)),
                          headers={"content-type": "application/json"})
    text = _csv_long(groups) if layout == "long" else _csv_wide(groups)
    as_csv = client.post(f"/v1/omnibus?layout={layout}&alpha={alpha!r}", content=text,
                         headers={"content-type": "text/csv"})
    assert as_json.status_code == as_csv.status_code == 200, (as_json.text, as_csv.text)
    assert as_json.content == as_csv.content  # the same bytes, provenance (input hash) included


def test_scaled_answers_are_finite_numbers(client) -> None:
    """A fixed case beside the generated ones: values times 1e-4 and 1e4 still give finite JSON numbers."""
    groups = [{"label": "well A", "values": [Decimal("41.2"), Decimal("43.8"), Decimal("42.5")]},
              {"label": "well B", "values": [Decimal("48.7"), Decimal("50.2"), Decimal("49.5")]}]
    for factor in (Decimal("1e-4"), Decimal("1e4")):
        answer = post(client, "/v1/followup/pairwise", body(transformed(groups, factor=factor), {}, 0.05))
        row = answer["comparisons"][0]
        exact = (Decimal("127.5") - Decimal("148.4")) / 3 * factor  # mean(well A) - mean(well B), in decimal
        assert math.isfinite(row["difference"])
        assert row["difference"] == float(exact)  # correctly rounded from the exact decimals

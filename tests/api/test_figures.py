"""POST /v1/figures/means and /v1/figures/differences end to end.

The figures are checked by parsing the SVG (xml.etree.ElementTree): one
interval mark (an SVG group with id interval-<row>) per group or comparison,
their lengths against the intervals the JSON endpoints report for the same
request (this service's own /v1/omnibus and /v1/followup/* responses), the
filled or open estimate marks against the rows' decisions, and one-sided
intervals reaching the edge of the plotting area. The PNG signature and the
IHDR layout are from the PNG specification (ISO/IEC 15948, sections 5.2 and
11.2.2). Data are the invented plate-assay examples.
"""

from __future__ import annotations

import re
import struct
import xml.etree.ElementTree as ET

import pytest

from familywise import figures
from familywise.api import examples
from familywise.stats.data import OneWayData
from familywise.stats.families import pairwise

MEANS = "/v1/figures/means"
DIFFERENCES = "/v1/figures/differences"
SVG = "image/svg+xml"
PNG = "image/png"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
NUMBER = re.compile(r"-?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def _root(response) -> ET.Element:
    assert response.status_code == 200, response.text
    assert response.headers["content-type"] == SVG
    return ET.fromstring(response.content)  # raises on anything that is not well-formed XML


def _marks(root: ET.Element, prefix: str) -> dict[int, ET.Element]:
    pattern = re.compile(rf"^{prefix}-(\d+)$")
    found = {}
    for element in root.iter():
        match = pattern.match(element.get("id") or "")
        if match:
            assert int(match.group(1)) not in found, f"duplicate id {element.get('id')}"
            found[int(match.group(1))] = element
    return found


def _x_extent(element: ET.Element) -> tuple[float, float]:
    """Smallest and largest x of the element's paths (SVG path data come in x y pairs)."""
    xs = []
    for path in element.iter("{http://www.w3.org/2000/svg}path"):
        numbers = [float(n) for n in NUMBER.findall(path.get("d", ""))]
        xs += numbers[0::2]
    assert xs, ET.tostring(element)
    return min(xs), max(xs)


def _fill(element: ET.Element) -> str:
    use = next(element.iter("{http://www.w3.org/2000/svg}use"))
    return re.search(r"fill: (#[0-9a-f]{6})", use.get("style", "")).group(1)


def _texts(root: ET.Element) -> list[str]:
    return [t.text or "" for t in root.iter("{http://www.w3.org/2000/svg}text")]


def _png_chunks(content: bytes) -> list[tuple[bytes, bytes]]:
    chunks, pos = [], len(PNG_SIGNATURE)
    while pos < len(content):
        length, kind = struct.unpack(">I4s", content[pos:pos + 8])
        chunks.append((kind, content[pos + 8:pos + 8 + length]))
        pos += 12 + length
    return chunks


# --------------------------------------------------------------------------
# the means figure
# --------------------------------------------------------------------------


def test_means_svg_has_one_interval_per_group_sized_like_the_group_intervals(client) -> None:
    response = client.post(MEANS, json=examples.FIGURE_MEANS)
    root = _root(response)
    k = len(examples.BUFFER_PLATE["groups"])
    intervals = _marks(root, "interval")
    assert sorted(intervals) == list(range(k))
    assert len(_marks(root, "mean")) == k and len(_marks(root, "values")) == k
    # bar lengths (SVG units) are proportional to the CI widths /v1/omnibus reports (own-SD t intervals)
    groups = client.post("/v1/omnibus", json=examples.BUFFER_PLATE).json()["groups"]
    widths = [hi - lo for lo, hi in (_x_extent(intervals[i]) for i in range(k))]
    ci = [g["ci_high"] - g["ci_low"] for g in groups]
    for i in range(1, k):
        assert widths[i] / widths[0] == pytest.approx(ci[i] / ci[0], rel=1e-4)
    assert response.headers["content-disposition"] == 'inline; filename="familywise-means.svg"'
    assert response.headers["vary"] == "Accept"


def test_means_letters_are_those_of_the_pairwise_endpoint(client) -> None:
    root = _root(client.post(MEANS, json=examples.FIGURE_MEANS))
    letters = _marks(root, "letters")
    expected = client.post("/v1/followup/pairwise", json=examples.BUFFER_PLATE).json()["letters"]
    labels = [g["label"] for g in examples.BUFFER_PLATE["groups"]]
    drawn = {labels[i]: "".join(letters[i].itertext()).replace("\u2007", "").strip() for i in letters}
    assert drawn == expected
    assert any("Tukey-Kramer, familywise α = 0.05" in t for t in _texts(root))


def test_pooled_intervals_are_equally_wide_for_equal_sizes(client) -> None:
    """Pooled SD and equal n: every bar has the same length; own SDs: they differ."""
    pooled = _marks(_root(client.post(MEANS, json={**examples.FIGURE_MEANS, "interval": "pooled"})), "interval")
    own = _marks(_root(client.post(MEANS, json=examples.FIGURE_MEANS)), "interval")
    pooled_widths = [hi - lo for lo, hi in map(_x_extent, pooled.values())]
    own_widths = [hi - lo for lo, hi in map(_x_extent, own.values())]
    assert max(pooled_widths) - min(pooled_widths) < 1e-4 * max(pooled_widths)
    assert max(own_widths) - min(own_widths) > 0.05 * max(own_widths)


def test_a_group_of_one_keeps_its_mark_and_says_it_has_no_interval(client) -> None:
    groups = [dict(g) for g in examples.BUFFER_PLATE["groups"]]
    groups[1] = {"label": groups[1]["label"], "values": [45.0]}
    root = _root(client.post(MEANS, json={"groups": groups}))
    intervals = _marks(root, "interval")
    assert len(intervals) == len(groups)
    assert "no interval (n = 1)" in "".join(intervals[1].itertext())
    # with the pooled SD the single value gets an interval like the others
    root = _root(client.post(MEANS, json={"groups": groups, "interval": "pooled"}))
    assert "no interval" not in "".join(_marks(root, "interval")[1].itertext())


def test_means_png_on_accept_image_png(client) -> None:
    response = client.post(MEANS, json=examples.FIGURE_MEANS, headers={"Accept": PNG})
    assert response.status_code == 200 and response.headers["content-type"] == PNG
    assert response.content.startswith(PNG_SIGNATURE)
    chunks = _png_chunks(response.content)
    width, height = struct.unpack(">II", chunks[0][1][:8])
    assert chunks[0][0] == b"IHDR" and width == figures.WIDTH_INCHES * figures.PNG_DPI and height > 0
    assert chunks[-1][0] == b"IEND"
    texts = [data for kind, data in chunks if kind in (b"tEXt", b"iTXt")]
    assert not any(t.startswith(b"Software") for t in texts)  # no library version in the file


# --------------------------------------------------------------------------
# the differences figure
# --------------------------------------------------------------------------


@pytest.mark.parametrize(("figure", "followup"), [
    (examples.FIGURE_DIFFERENCES_PAIRWISE, "/v1/followup/pairwise"),
    ({**examples.BUFFER_PLATE, "family": "pairwise", "method": "games_howell"}, "/v1/followup/pairwise"),
    ({**examples.UNBALANCED_PLATE, "family": "control", "control": "reference buffer"}, "/v1/followup/control"),
    ({**examples.UNBALANCED_PLATE, "family": "best"}, "/v1/followup/best"),
    ({**examples.CONTRASTS_BALANCED, "family": "contrasts", "adjustment": "scheffe"}, "/v1/followup/contrasts"),
    ({**examples.CONTRASTS_BALANCED, "family": "contrasts"}, "/v1/followup/contrasts"),
])
def test_one_interval_mark_per_comparison_with_its_decision(client, figure, followup) -> None:
    root = _root(client.post(DIFFERENCES, json=figure))
    body = {k: v for k, v in figure.items() if k not in ("family", "title", "value_label")}
    rows = client.post(followup, json=body).json()["comparisons"]
    intervals, estimates = _marks(root, "interval"), _marks(root, "estimate")
    assert sorted(intervals) == list(range(len(rows))) and len(estimates) == len(rows)
    assert len(_marks(root, "p")) == len(rows)
    # filled mark for a significant row, open (white) otherwise
    assert [_fill(estimates[i]) != "#ffffff" for i in range(len(rows))] == [r["significant"] for r in rows]
    # lengths proportional to the endpoint's interval widths
    widths = [hi - lo for lo, hi in (_x_extent(intervals[i]) for i in range(len(rows)))]
    reference = [r["ci_high"] - r["ci_low"] for r in rows]
    for i in range(1, len(rows)):
        assert widths[i] / widths[0] == pytest.approx(reference[i] / reference[0], rel=1e-4)
    assert any(e.get("id") == "zero-line" for e in root.iter())


@pytest.mark.parametrize(("alternative", "edge"), [("greater", "right"), ("less", "left")])
def test_one_sided_intervals_run_to_the_edge_of_the_plot(client, alternative, edge) -> None:
    request = {**examples.FIGURE_DIFFERENCES_CONTROL, "alternative": alternative}
    root = _root(client.post(DIFFERENCES, json=request))
    intervals = _marks(root, "interval")
    assert len(intervals) == len(examples.UNBALANCED_PLATE["groups"]) - 1
    area = next(e for e in root.iter() if e.get("id") == "plot-area")
    left, right = _x_extent(area)
    rows = client.post("/v1/followup/control", json={
        k: v for k, v in request.items() if k not in ("family", "title", "value_label")}).json()["comparisons"]
    assert all((r["ci_high"] is None) == (alternative == "greater") for r in rows)
    for mark in intervals.values():
        low, high = _x_extent(mark)
        # the open end is at the edge: matplotlib sets the arrowhead's path back by about a line
        # width so that its stroked tip lands on the end point (hence the tolerance of 2.5 units)
        assert (high if edge == "right" else low) == pytest.approx(right if edge == "right" else left, abs=2.5)
        assert left - 1e-3 <= low < high <= right + 1e-3
        assert high - low > 0.1 * (right - left)
    texts = " ".join(_texts(root))
    assert "one-sided intervals (Dunnett)" in texts and "no bound on this side" in texts


def test_two_sided_intervals_stay_inside_the_plot(client) -> None:
    root = _root(client.post(DIFFERENCES, json=examples.FIGURE_DIFFERENCES_PAIRWISE))
    left, right = _x_extent(next(e for e in root.iter() if e.get("id") == "plot-area"))
    for mark in _marks(root, "interval").values():
        low, high = _x_extent(mark)
        assert left + 1.0 < low < high < right - 1.0
    assert "no bound on this side" not in " ".join(_texts(root))


def test_differences_png(client) -> None:
    response = client.post(DIFFERENCES, json=examples.FIGURE_DIFFERENCES_CONTROL, headers={"Accept": PNG})
    assert response.status_code == 200 and response.headers["content-type"] == PNG
    assert response.content.startswith(PNG_SIGNATURE)
    assert response.headers["content-disposition"] == 'inline; filename="familywise-differences-control.png"'


@pytest.mark.parametrize(("request_fields", "pointer"), [
    ({"family": "pairwise", "method": "holm"}, "/method"),
    ({"family": "pairwise", "method": "benjamini_hochberg"}, "/method"),
    ({"family": "pairwise", "method": "dunn"}, "/method"),
    ({"family": "control", "control": "reference buffer", "method": "dunnett_stepdown"}, "/method"),
    ({"family": "contrasts", "contrasts": examples.PLANNED_CONTRASTS, "adjustment": "holm"}, "/adjustment"),
])
def test_stepwise_methods_are_refused_not_drawn_empty(client, request_fields, pointer) -> None:
    response = client.post(DIFFERENCES, json={**examples.BUFFER_PLATE, **request_fields})
    assert response.status_code == 422
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert problem["pointer"] == pointer and problem["rule"] == "figure-needs-intervals"
    assert "gives decisions, not intervals" in problem["detail"] and "choose " in problem["detail"]


def test_protected_lsd_without_a_significant_f_has_nothing_to_draw(client) -> None:
    """Fisher's protected LSD declares nothing, and gives no intervals, when the omnibus F test is not
    significant: the figure is refused with the reason, not drawn empty. (Invented wells whose means
    differ by far less than their spread.)"""
    flat = {"groups": [{"label": "well A", "values": [40.1, 43.9, 41.7, 42.8]},
                       {"label": "well B", "values": [41.5, 42.2, 43.6, 40.4]},
                       {"label": "well C", "values": [42.9, 40.7, 41.1, 43.3]}]}
    response = client.post(DIFFERENCES, json={**flat, "family": "pairwise", "method": "lsd", "protected": True})
    assert response.status_code == 422, response.text
    problem = response.json()
    assert problem["rule"] == "figure-needs-intervals" and problem["pointer"] == "/method"
    assert "not significant" in problem["detail"]


def test_the_family_options_are_the_follow_up_endpoints_own(client) -> None:
    plate = examples.BUFFER_PLATE
    foreign = client.post(DIFFERENCES, json={**plate, "family": "best", "method": "tukey_kramer"}).json()
    assert foreign["pointer"] == "/method" and foreign["rule"] == "not_an_option_of_family"
    missing = client.post(DIFFERENCES, json={**plate, "family": "control"}).json()
    assert missing["pointer"] == "/control" and missing["rule"] == "missing"
    wrong = client.post(DIFFERENCES, json={**plate, "family": "control", "control": "reference buffer",
                                           "method": "tukey_kramer"}).json()
    assert wrong["pointer"] == "/method" and wrong["rule"] == "literal_error"
    unknown = client.post(DIFFERENCES, json={**plate, "family": "control", "control": "no such buffer"})
    assert unknown.status_code == 422 and unknown.json()["pointer"] == "/control"


def test_figures_with_too_many_rows_are_refused(client) -> None:
    def groups(k):
        return [{"label": f"well set {i}", "values": [40.0 + i, 41.5 + i, 39.2 + i]} for i in range(k)]

    assert 11 * 10 // 2 <= figures.MAX_ROWS < 12 * 11 // 2
    refused = client.post(DIFFERENCES, json={"groups": groups(12), "family": "pairwise"})
    assert refused.status_code == 422 and refused.json()["rule"] == "figure_max_rows"
    root = _root(client.post(DIFFERENCES, json={"groups": groups(11), "family": "pairwise"}))
    assert len(_marks(root, "interval")) == 55


# --------------------------------------------------------------------------
# content negotiation
# --------------------------------------------------------------------------


@pytest.mark.parametrize(("accept", "expected"), [
    (None, SVG),
    ("*/*", SVG),
    ("image/*", SVG),
    (SVG, SVG),
    (PNG, PNG),
    ("image/png, */*;q=0.1", PNG),
    ("image/svg+xml, image/png", PNG),
    ("image/png;q=0.5, image/svg+xml", SVG),
    ("image/svg+xml;q=0.2, image/png", PNG),
    ("text/html, application/xhtml+xml, */*;q=0.8", SVG),
    ("image/png;q=0, */*", SVG),
    ("application/json", None),
    ("image/gif, text/plain", None),
    ("image/png;q=0", None),
])
def test_accept_header_chooses_the_format(client, accept, expected) -> None:
    headers = {} if accept is None else {"Accept": accept}
    response = client.post(MEANS, json=examples.BUFFER_PLATE, headers=headers)
    if expected is None:
        assert response.status_code == 406
        assert response.headers["content-type"] == "application/problem+json"
        assert response.json()["type"] == "/problems/not-acceptable"
        assert "image/svg+xml" in response.json()["detail"] and "image/png" in response.json()["detail"]
    else:
        assert response.status_code == 200 and response.headers["content-type"] == expected
        assert response.content.startswith(PNG_SIGNATURE) == (expected == PNG)


def test_the_format_reaches_requests_computed_in_a_worker_thread(client) -> None:
    """More than INLINE_GROUPS groups run in a worker thread under the time limit (routing.is_large);
    the negotiated format must still reach the drawing there."""
    from familywise.api.routing import INLINE_GROUPS

    k = INLINE_GROUPS + 5
    groups = [{"label": f"buffer lot {i}", "values": [40.0 + i % 7, 41.3 + i % 5, 39.6 + i % 3]} for i in range(k)]
    png = client.post(MEANS, json={"groups": groups, "letters_method": None}, headers={"Accept": PNG})
    assert png.status_code == 200 and png.content.startswith(PNG_SIGNATURE)
    root = _root(client.post(MEANS, json={"groups": groups, "letters_method": None}))
    assert len(_marks(root, "interval")) == k


def test_unacceptable_accept_is_refused_before_the_body_is_read(client) -> None:
    response = client.post(DIFFERENCES, content=b"not json", headers={"Accept": "application/json",
                                                                       "Content-Type": "application/json"})
    assert response.status_code == 406


# --------------------------------------------------------------------------
# determinism, labels, provenance
# --------------------------------------------------------------------------


@pytest.mark.parametrize("accept", [SVG, PNG])
@pytest.mark.parametrize(("path", "body"), [(MEANS, examples.FIGURE_MEANS),
                                            (DIFFERENCES, examples.FIGURE_DIFFERENCES_CONTROL)])
def test_the_same_request_gives_the_same_bytes(client, path, body, accept) -> None:
    first = client.post(path, json=body, headers={"Accept": accept}).content
    second = client.post(path, json=body, headers={"Accept": accept}).content
    assert first == second
    other = client.post(path, json={**body, "title": "another title"}, headers={"Accept": accept}).content
    assert other != first
    if accept == SVG:
        assert b"<dc:date>" not in first and b"Matplotlib v" not in first
        description = ET.fromstring(first).find(".//{http://purl.org/dc/elements/1.1/}description").text
        assert re.search(r"input SHA-256 [0-9a-f]{64}$", description)


UNICODE_LABELS = [
    "β-galactosidase in Tris–HCl pH 8.0 with 150 mM NaCl and 1 mM MgCl₂, fresh lot from the cold room",
    "緩衝液 A (ünïcödé) costs $5 <&> -- not $math$",
    "Ω" * 200,
    "tab\tand\x01control",
    "short",
]


@pytest.mark.parametrize("accept", [SVG, PNG])
def test_long_and_unicode_labels_are_drawn(client, accept) -> None:
    groups = [{"label": label, "values": g["values"]}
              for label, g in zip(UNICODE_LABELS, examples.BUFFER_PLATE["groups"], strict=True)]
    body = {"groups": groups, "value_label": "Aktivität (µmol·min⁻¹·mg⁻¹) in $", "title": "Prüfung — 試験"}
    for path, extra, rows in [(MEANS, {}, 5), (DIFFERENCES, {"family": "pairwise"}, 10)]:
        response = client.post(path, json={**body, **extra}, headers={"Accept": accept})
        assert response.status_code == 200, response.text
        if accept == PNG:
            assert response.content.startswith(PNG_SIGNATURE)
            continue
        root = _root(response)
        assert len(_marks(root, "interval")) == rows
        texts = _texts(root)
        assert "Aktivität (µmol·min⁻¹·mg⁻¹) in $" in " ".join(texts)  # no mathtext, text kept as text
        assert any("緩衝液 A (ünïcödé) costs $5 <&> --" in t for t in texts)
        assert any("tab and\ufffdcontrol" in t for t in texts)  # control character replaced, valid XML
        first_lines = [t for t in texts if t.startswith("β-galactosidase")]  # long labels wrapped
        assert first_lines and all(len(t) <= figures.LABEL_WIDTH for t in first_lines)
        assert not any(UNICODE_LABELS[0] in t for t in texts)
        omega = [t for t in texts if t.startswith("Ω")]
        assert omega and all(len(t) <= figures.LABEL_WIDTH for t in omega) and omega[-1].endswith("…")


def test_the_drawing_refuses_a_family_without_intervals() -> None:
    plate = examples.BUFFER_PLATE["groups"]
    data = OneWayData.from_arrays([g["label"] for g in plate], [g["values"] for g in plate])
    with pytest.raises(figures.NoIntervals):
        figures.differences_figure(pairwise(data, "holm"), text=figures.FigureText())


def test_the_schema_documents_both_formats_and_406(client) -> None:
    document = client.get("/openapi.json").json()
    for path in (MEANS, DIFFERENCES):
        responses = document["paths"][path]["post"]["responses"]
        assert set(responses["200"]["content"]) == {SVG, PNG}
        assert responses["200"]["content"][PNG]["schema"] == {"type": "string", "format": "binary"}
        assert "application/problem+json" in responses["406"]["content"]
        assert {"400", "413", "415", "422"} <= set(responses)
        examples_given = document["paths"][path]["post"]["requestBody"]["content"]["application/json"]
        assert examples_given["examples"]

"""The README's API tour: one real request and response per endpoint.

``python -m docs.tour`` rewrites the part of README.md between the tour
markers from the running code; ``tests/api/test_readme.py`` fails when the
README and the code disagree. Responses are trimmed to their telling fields
(the trimming is stated under each response); every value shown is real.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

from familywise.api import examples

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
START, END = "<!-- tour:start -->", "<!-- tour:end -->"


def _pick(obj: dict, *keys: str) -> dict:
    return {k: obj[k] for k in keys if k in obj}


def _rows(rows: list[dict], count: int, *keys: str) -> list[dict]:
    return [_pick(r, *keys) for r in rows[:count]]


ROW = ("first", "second", "difference", "se", "statistic", "df", "p_value", "ci_low", "ci_high", "significant")

TOUR: list[dict[str, Any]] = [
    {
        "title": "Omnibus analysis", "path": "/v1/omnibus", "body": examples.BUFFER_PLATE,
        "text": "Group summaries, the ANOVA table, Welch's and Brown-Forsythe's tests of equal means, "
                "Kruskal-Wallis, Levene (median) and Shapiro-Wilk diagnostics with notes, and effect sizes.",
        "trim": "Shown: the first group, the ANOVA table, Welch's test, the effect sizes and the diagnostics.",
        "excerpt": lambda r: {"groups": r["groups"][:1], "anova": r["anova"], "welch": r["welch"],
                              "effect_sizes": r["effect_sizes"], "diagnostics": r["diagnostics"]},
    },
    {
        "title": "Checking planned contrasts (balanced plate)", "path": "/v1/contrasts/validate",
        "body": examples.CONTRASTS_BALANCED,
        "text": "Before any test: are the planned contrasts valid, orthogonal for the actual group sizes, "
                "complete? With six wells per buffer this set is orthogonal.",
        "trim": "Shown: the verdict, the set summary and the consequences.",
        "excerpt": lambda r: {**_pick(r, "verdict"), "set": r["set"], **_pick(r, "consequences")},
    },
    {
        "title": "Checking planned contrasts (wells lost)", "path": "/v1/contrasts/validate",
        "body": examples.CONTRASTS_UNBALANCED,
        "text": "The same contrasts on the unbalanced plate: orthogonal on paper, not for these group sizes.",
        "trim": "Shown: the verdict, one pair of contrasts and the consequences.",
        "excerpt": lambda r: {**_pick(r, "verdict"), "pairs": r["pairs"][:1], **_pick(r, "consequences")},
    },
    {
        "title": "All pairs", "path": "/v1/followup/pairwise",
        "body": examples.with_fields(examples.BUFFER_PLATE, method="tukey_kramer"),
        "text": "Every pair by the chosen method, with the compact letter display.",
        "trim": "Shown: the family fields, two of the ten pairs, and the letters.",
        "excerpt": lambda r: {**_pick(r, "family", "method", "alpha", "error_rate", "critical_value"),
                              "comparisons": _rows(r["comparisons"], 2, *ROW),
                              **_pick(r, "letters", "summary")},
    },
    {
        "title": "Each group against a control", "path": "/v1/followup/control",
        "body": examples.with_fields(examples.UNBALANCED_PLATE, control="reference buffer", method="dunnett"),
        "text": "Dunnett's comparisons with a control, exact for unequal group sizes.",
        "trim": "Shown: the family fields and two of the four comparisons.",
        "excerpt": lambda r: {**_pick(r, "family", "method", "error_rate", "critical_value"),
                              "comparisons": _rows(r["comparisons"], 2, *ROW), **_pick(r, "summary")},
    },
    {
        "title": "Each group against the best", "path": "/v1/followup/best",
        "body": examples.with_fields(examples.UNBALANCED_PLATE, best="highest"),
        "text": "Hsu's multiple comparisons with the best: constrained intervals and the set that may be best.",
        "trim": "Shown: two of the five groups, the best set and the summary.",
        "excerpt": lambda r: {**_pick(r, "family", "method"),
                              "comparisons": _rows(r["comparisons"], 2, *ROW, "critical_value", "may_be_best"),
                              **_pick(r, "best_set", "summary")},
    },
    {
        "title": "Planned contrasts", "path": "/v1/followup/contrasts",
        "body": examples.with_fields(examples.BUFFER_PLATE, adjustment="multivariate_t",
                                     contrasts=examples.PLANNED_CONTRASTS),
        "text": "Contrasts keyed by group label, with the chosen adjustment.",
        "trim": "Shown: the family fields and both contrasts (without the unadjusted p-values).",
        "excerpt": lambda r: {**_pick(r, "family", "method", "error_rate", "critical_value"),
                              "comparisons": _rows(r["comparisons"], 2, "name", "difference", "se", "statistic",
                                                   "p_value", "ci_low", "ci_high", "significant", "ss", "f")},
    },
    {
        "title": "Equivalence to a reference", "path": "/v1/followup/equivalence",
        "body": examples.with_fields(examples.BUFFER_PLATE, reference="reference buffer", margin=2.0),
        "text": "Two one-sided tests per candidate, simultaneous over the candidates (dunnett_tost).",
        "trim": "Shown: the family fields and two of the four candidates.",
        "excerpt": lambda r: {**_pick(r, "family", "method", "error_rate", "critical_value"),
                              "comparisons": _rows(r["comparisons"], 2, "first", "difference", "ci_low",
                                                   "ci_high", "p_lower", "p_upper", "equivalent", "conclusion"),
                              **_pick(r, "summary")},
    },
    {
        "title": "Which family fits", "path": "/v1/recommendation",
        "body": {**examples.UNBALANCED_PLATE, "question": {"planned": True, "reference": "control",
                                                           "control": "reference buffer"}},
        "text": "The family and method for the question (and the data), with reasons, cautions and alternatives.",
        "trim": "Shown: everything but the provenance.",
        "excerpt": lambda r: {k: v for k, v in r.items() if k != "provenance"},
    },
    {
        "title": "The whole job in one call", "path": "/v1/analysis",
        "body": {**examples.BUFFER_PLATE, "question": {"reference": "control", "control": "reference buffer"}},
        "text": "Omnibus, recommendation, the recommended follow-up and a short report.",
        "trim": "Shown: the report and the follow-up's summary (the parts equal the single endpoints' results).",
        "excerpt": lambda r: {"followup_source": r["followup_source"],
                              "followup": _pick(r["followup"], "family", "method", "summary"),
                              "report": r["report"]},
    },
    {
        "title": "Planning the next experiment", "path": "/v1/plan",
        "body": {"k": 4, "alpha": 0.05, "power": 0.8, "effect": {"cohens_f": 0.4}},
        "text": "Replicates per group for the omnibus F test or a follow-up family.",
        "trim": "Shown: everything but the provenance.",
        "excerpt": lambda r: {k: v for k, v in r.items() if k != "provenance"},
    },
    {
        "title": "Many analyses at once", "path": "/v1/batch",
        "body": {"items": [
            {"id": "plate 7 / lactate", "operation": "pairwise", "request": examples.BUFFER_PLATE},
            {"id": "plate 7 / glucose", "operation": "control",
             "request": {**examples.UNBALANCED_PLATE, "control": "no such buffer"}}]},
        "text": "Each item answered by its own result or its own problem; one bad item never fails the others.",
        "trim": "Shown: each item's id and status, the first item's summary, the second item's problem.",
        "excerpt": lambda r: {"results": [
            {"id": r["results"][0]["id"], "status": r["results"][0]["status"],
             "result": _pick(r["results"][0]["result"], "summary")},
            {k: r["results"][1][k] for k in ("id", "status", "problem")}]},
    },
]


def _plate_export(plate: dict) -> str:
    """The plate as a reader's long-format export: one line per well."""
    lines = ["buffer,activity"] + [f"{g['label']},{v}" for g in plate["groups"] for v in g["values"]]
    return "\n".join(lines) + "\n"


#: The same unbalanced plate as a CSV file from the instrument (the "Input from instruments" section).
CSV_EXAMPLE = {
    "title": "The same from an instrument's CSV export", "path": "/v1/followup/control",
    "file": "plate-0412.csv", "csv": _plate_export(examples.UNBALANCED_PLATE),
    "query": "?group_column=buffer&value_column=activity&control=reference%20buffer",
    "text": "A CSV body (long format: a group column and a value column, named in the query string with "
            "the other request fields), here the unbalanced plate's export, `plate-0412.csv`:",
    "trim": "Shown: the family fields and the summary (the same answer as the JSON request above).",
    "excerpt": lambda r: _pick(r, "family", "method", "error_rate", "critical_value", "summary"),
}


def _render_csv(client, entry: dict) -> str:
    response = client.post(entry["path"] + entry["query"], content=entry["csv"].encode(),
                           headers={"content-type": "text/csv"})
    if response.status_code != 200:
        raise RuntimeError(f"{entry['path']} (CSV): {response.status_code} {response.text}")
    excerpt = entry["excerpt"](response.json())
    shown = entry["csv"].splitlines()
    file_text = "\n".join([*shown[:4], "...", *shown[-2:]])
    return (
        f"### {entry['title']}: `POST {entry['path']}`\n\n{entry['text']}\n\n"
        f"```text\n{file_text}\n```\n\n"
        f"```sh\ncurl -s -X POST 'http://127.0.0.1:8000{entry['path']}{entry['query']}' "
        f"-H 'content-type: text/csv' --data-binary @{entry['file']}\n```\n\n"
        f"{entry['trim']}\n\n```json\n{json.dumps(excerpt, indent=2, ensure_ascii=False)}\n```\n"
    )


def render(client) -> str:
    parts = []
    for entry in TOUR:
        response = client.post(entry["path"], json=entry["body"])
        if response.status_code != 200:
            raise RuntimeError(f"{entry['path']}: {response.status_code} {response.text}")
        excerpt = entry["excerpt"](response.json())
        body = json.dumps(entry["body"], ensure_ascii=False)
        parts.append(
            f"### {entry['title']}: `POST {entry['path']}`\n\n{entry['text']}\n\n"
            f"```sh\ncurl -s -X POST http://127.0.0.1:8000{entry['path']} "
            f"-H 'content-type: application/json' -d '{body}'\n```\n\n"
            f"{entry['trim']}\n\n```json\n{json.dumps(excerpt, indent=2, ensure_ascii=False)}\n```\n"
        )
        if entry["path"] == CSV_EXAMPLE["path"]:
            parts.append(_render_csv(client, CSV_EXAMPLE))
    return "\n".join(parts)


def rewritten(readme: str, tour: str) -> str:
    head, rest = readme.split(START, 1)
    _, tail = rest.split(END, 1)
    return f"{head}{START}\n{tour}\n{END}{tail}"


def main() -> int:
    from fastapi.testclient import TestClient

    from familywise.api.app import create_app
    from familywise.api.settings import Settings

    client = TestClient(create_app(Settings(warm_up=False)))
    README.write_text(rewritten(README.read_text(encoding="utf-8"), render(client)), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())

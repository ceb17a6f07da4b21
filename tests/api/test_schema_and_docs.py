"""The committed OpenAPI document matches the app, and the docs page works offline."""

from __future__ import annotations

import json
import re
from pathlib import Path

from familywise.cli import openapi_document

ROOT = Path(__file__).resolve().parents[2]


def test_committed_openapi_matches_the_app() -> None:
    committed = json.loads((ROOT / "openapi" / "openapi.json").read_text(encoding="utf-8"))
    assert committed == openapi_document(), (
        "openapi/openapi.json is out of date: run `make openapi` and commit the result")


def test_every_operation_has_a_worked_example() -> None:
    document = openapi_document()
    for path, operations in document["paths"].items():
        for method, operation in operations.items():
            if method != "post":
                continue
            content = operation["requestBody"]["content"]["application/json"]
            assert content.get("examples") or content.get("example"), (method, path)


def test_every_refusal_is_documented_as_problem_json() -> None:
    document = openapi_document()
    assert "Problem" in document["components"]["schemas"]
    for path, operations in document["paths"].items():
        for method, operation in operations.items():
            if method == "post":
                for status in ("400", "413", "415", "422"):
                    media = operation["responses"][status]["content"]
                    assert "application/problem+json" in media, (path, status)


def test_docs_page_needs_no_internet(client) -> None:
    page = client.get("/docs")
    assert page.status_code == 200
    urls = re.findall(r"""(?:src|href)=["']([^"']+)["']""", page.text)
    urls += re.findall(r"url:\\s*'([^']+)'", page.text)
    assert urls, page.text
    for url in urls:
        assert not url.startswith(("http:", "https:", "//")), url
    for asset in ("/static/docs/swagger-ui-bundle.js", "/static/docs/swagger-ui.css"):
        response = client.get(asset)
        assert response.status_code == 200 and len(response.content) > 10_000


def test_problem_types_are_described(client) -> None:
    response = client.get("/problems/invalid-input")
    assert response.status_code == 200 and "Invalid input" in response.text
    assert client.get("/problems/nonsense").status_code == 404

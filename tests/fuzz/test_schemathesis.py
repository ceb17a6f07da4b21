"""Schema-driven fuzzing of the live service (issue 8).

A real server (``familywise serve``, one worker) is started on a free
loopback port for the session; schemathesis generates requests for every
operation of the service's OpenAPI document (generated from the app, the
document the server serves and openapi/openapi.json must equal; a test below
checks that every operation of the committed file is fuzzed), valid and
invalid, from the documented examples, the coverage phase's boundary cases
and random fuzzing, and checks each response:

* ``not_a_server_error``: no 5xx, ever (a 503 from the computation time
  limit would also count; the generated requests are far too small for it);
* ``response_schema_conformance``: the body matches the documented schema of
  its status code;
* ``problem_details_for_refusals`` (ours): every 4xx is
  ``application/problem+json`` with the RFC 9457 members.

The budget is ``FAMILYWISE_FUZZ_EXAMPLES`` random examples per operation
(default 12; with the examples and the coverage phase, about 2,400 requests
and about a minute on two cores); ``make fuzz`` sets 5000. The seed is fixed
(``FAMILYWISE_FUZZ_SEED``, default 8) and no example database is used, so
that ``make test`` always sends the same requests.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterator
from pathlib import Path
from types import SimpleNamespace

import pytest
import schemathesis
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import response_schema_conformance

from familywise.cli import openapi_document
from tests.load import LiveServer

ROOT = Path(__file__).resolve().parents[2]
COMMITTED_SCHEMA = ROOT / "openapi" / "openapi.json"

EXAMPLES = int(os.environ.get("FAMILYWISE_FUZZ_EXAMPLES", "12"))
SEED = int(os.environ.get("FAMILYWISE_FUZZ_SEED", "8"))

PROBLEM_MEMBERS = ("type", "title", "status", "detail")

#: Bugs this fuzzing found and the service has not fixed yet: a predicate on
#: the generated case and the reason. Matching cases are not sent (so that the
#: run keeps looking for other bugs); each bug needs a minimal reproduction in
#: the test suite, marked xfail(strict=True), that fails loudly once the service
#: is fixed. (Empty: the smallest-subnormal alpha it found is refused now, see
#: tests/api/test_hostile_input.py.)
KNOWN_BUGS: list = []


def problem_details_for_refusals(ctx, response, case) -> bool | None:
    """Every 4xx answer is an RFC 9457 problem document."""
    if not 400 <= response.status_code < 500:
        return None
    media_type = response.headers.get("content-type", [""])[0].split(";", 1)[0].strip().lower()
    assert media_type == "application/problem+json", (
        f"{response.status_code} answered with content type {media_type!r}, not application/problem+json")
    document = json.loads(response.content)
    missing = [member for member in PROBLEM_MEMBERS if member not in document]
    assert not missing, f"the problem document lacks {missing}"
    assert document["status"] == response.status_code, "the problem's status differs from the HTTP status"
    return None


CHECKS = [not_a_server_error, response_schema_conformance, problem_details_for_refusals]


def fuzz_config() -> schemathesis.Config:
    return schemathesis.Config.from_dict({
        "seed": SEED,
        "generation": {"max-examples": EXAMPLES, "mode": "all", "database": "none"},
        "phases": {"examples": {"enabled": True}, "coverage": {"enabled": True}, "fuzzing": {"enabled": True},
                   "stateful": {"enabled": False}},
        "request-timeout": 60,
    })


@pytest.fixture(scope="session")
def live_service() -> Iterator[LiveServer]:
    with LiveServer(workers=1, log_level="warning") as server:
        yield server


schema = schemathesis.openapi.from_dict(openapi_document(), config=fuzz_config())


@schema.parametrize()
def test_every_operation(case, live_service: LiveServer) -> None:
    if any(matches(case) for matches, _ in KNOWN_BUGS):
        return
    case.call_and_validate(base_url=live_service.url, checks=CHECKS)


def test_fuzzed_schema_covers_the_committed_document() -> None:
    """Every operation of openapi/openapi.json is among those fuzzed (the live
    document is the one fuzzed, so that operations still landing are covered too)."""
    committed = json.loads(COMMITTED_SCHEMA.read_text(encoding="utf-8"))
    wanted = {(method.upper(), path) for path, item in committed["paths"].items() for method in item}
    served = {(op.method.upper(), op.path) for op in (r.ok() for r in schema.get_all_operations())}
    assert wanted, "the committed document has no operations"
    assert wanted <= served, f"operations documented but not served: {sorted(wanted - served)}"


def test_the_refusal_check_rejects_a_plain_4xx() -> None:
    """The custom check itself: a 4xx in plain JSON, or a problem without its members, fails it."""
    def answer(status: int, media_type: str, body: dict):
        return SimpleNamespace(status_code=status, headers={"content-type": [media_type]},
                               content=json.dumps(body).encode())

    good = {"type": "/problems/invalid-input", "title": "Invalid input", "status": 422, "detail": "alpha"}
    assert problem_details_for_refusals(None, answer(422, "application/problem+json", good), None) is None
    assert problem_details_for_refusals(None, answer(500, "text/plain", {}), None) is None  # not a 4xx
    with pytest.raises(AssertionError, match="content type"):
        problem_details_for_refusals(None, answer(422, "application/json", good), None)
    with pytest.raises(AssertionError, match="lacks"):
        problem_details_for_refusals(None, answer(422, "application/problem+json", {"status": 422}), None)
    with pytest.raises(AssertionError, match="status"):
        problem_details_for_refusals(None, answer(400, "application/problem+json", good), None)

"""Refusals become FamilywiseError with the service's problem; retries happen where, and only where, they should.

The live server provides the real problem documents; a scripted fake server
(client_test_support.ScriptedServer) provides 503s, dropped connections and
slow answers on demand. Backoffs are set to milliseconds so that every test
is bounded to a second or two.
"""

from __future__ import annotations

import asyncio
import pickle
import threading
import time
from typing import Any

import httpx
import pytest
from client_test_support import LiveServer, ScriptedServer, Step, free_port
from pydantic import ValidationError

from familywise_client import AsyncClient, Client, FamilywiseConnectionError, FamilywiseError, RetryPolicy, models
from familywise_client._retry import retry_after

PLATE = {"reference buffer": [52.1, 50.8, 53.4], "MOPS pH 7.0": [58.4, 59.9, 57.6]}
PLAN = {"k": 3, "power": 0.8, "effect": {"cohens_f": 0.5}}
#: A PlanResponse as the fake server answers it (invented numbers; only its shape matters here).
PLAN_ANSWER = {
    "target": "omnibus", "method": "anova_f", "k": 3, "alpha": 0.05, "power": 0.8, "n_per_group": 14,
    "total_n": 42, "achieved_power": 0.81, "cohens_f": 0.5, "difference": None, "sd": None,
    "unrounded_total_n": 41.1, "power_standard_error": None, "method_note": "invented", "rounding": "invented",
    "provenance": {"service": "fake", "version": "0", "input_sha256": "0" * 64, "libraries": {}},
}
UNAVAILABLE = {"type": "/problems/computation-timeout", "title": "Computation took too long", "status": 503,
               "detail": "try again"}
#: A 503 that says nothing about the request itself (a proxy or load balancer with no healthy replica):
#: the same request may well succeed later.
OVERLOADED = {"type": "/problems/overloaded", "title": "No replica free", "status": 503, "detail": "try again"}
FAST = {"backoff": 0.01, "max_backoff": 0.02}


def call(kind: str, base_url: str, method: str, /, client_options: dict[str, Any] | None = None,
         **fields: Any) -> Any:
    """``method`` on a fresh Client or AsyncClient (``kind``), closed afterwards."""
    options = {**FAST, **(client_options or {})}
    if kind == "sync":
        with Client(base_url, **options) as client:
            return getattr(client, method)(**fields)

    async def run() -> Any:
        async with AsyncClient(base_url, **options) as client:
            return await getattr(client, method)(**fields)

    return asyncio.run(run())


KINDS = ["sync", "async"]


# --------------------------------------------------------------------------
# problem documents from the live server
# --------------------------------------------------------------------------


@pytest.mark.parametrize("kind", KINDS)
def test_a_refusal_carries_the_problem_and_its_pointer(kind: str, live_server: LiveServer) -> None:
    body = {"groups": [{"label": "reference buffer", "values": [52.1, 50.8]},
                       {"label": "reference buffer", "values": [58.4, 59.9]}]}
    with pytest.raises(FamilywiseError) as caught:
        call(kind, live_server.base_url, "pairwise", {"api_key": live_server.api_key}, **body)
    error = caught.value
    with live_server.raw() as raw:
        document = raw.post("/v1/followup/pairwise", json=body).json()
    assert (error.status, error.pointer, error.rule) == (422, "/groups/1/label", "label-duplicate")
    assert (error.title, error.detail, error.problem_type) == (
        document["title"], document["detail"], "/problems/unanalysable-data")
    assert error.problem == document
    assert error.request_id and len(error.request_id) == 32
    assert "/groups/1/label" in str(error) and "422" in str(error)


def test_the_error_survives_pickling(client: Client) -> None:
    with pytest.raises(FamilywiseError) as caught:
        client.control(groups=PLATE, control="no such buffer")
    copy = pickle.loads(pickle.dumps(caught.value))
    assert type(copy) is FamilywiseError and str(copy) == str(caught.value)
    assert (copy.status, copy.pointer, copy.rule, copy.problem) == (
        422, "/control", "unknown-group", caught.value.problem)
    refused = pickle.loads(pickle.dumps(FamilywiseConnectionError(httpx.ConnectError("refused"), 4)))
    assert (type(refused), refused.status, refused.attempts) == (FamilywiseConnectionError, None, 4)


def test_every_offending_field_is_listed(client: Client) -> None:
    with pytest.raises(FamilywiseError) as caught:
        client.control(groups=PLATE, control="reference buffer", alpha=0.9)  # ranges are the service's to check
    error = caught.value
    assert (error.status, error.pointer, error.problem_type) == (422, "/alpha", "/problems/invalid-input")
    assert [(e.pointer, e.rule) for e in error.errors] == [("/alpha", "alpha_range")]
    assert all(isinstance(e, models.FieldError) for e in error.errors)


def test_the_api_key_is_sent_and_needed(live_server: LiveServer) -> None:
    with Client(live_server.base_url, api_key=live_server.api_key) as client:
        assert client.plan(**PLAN).n_per_group > 1
    with Client(live_server.base_url) as anonymous, pytest.raises(FamilywiseError) as caught:
        anonymous.plan(**PLAN)
    assert (caught.value.status, caught.value.problem_type) == (401, "/problems/unauthorized")
    with ScriptedServer([Step(body=PLAN_ANSWER)]) as fake, Client(fake.base_url, api_key="s3cret") as client:
        client.plan(**PLAN)
    assert fake.received[0].headers["authorization"] == "Bearer s3cret"


def test_mistakes_in_python_are_caught_before_sending(client: Client) -> None:
    with pytest.raises(ValidationError, match="method"):
        client.pairwise(groups=PLATE, method="tukey")  # not a method the schema names
    with pytest.raises(ValidationError, match="not a boolean"):
        client.omnibus(groups={"a": [True, 2.0], "b": [1.0, 2.0]})
    with pytest.raises(ValidationError, match="Extra inputs"):
        client.omnibus(groups=PLATE, colour="blue")
    with pytest.raises(TypeError, match="takes a ControlRequest"):
        client.control(models.PlanRequest(**PLAN))
    with pytest.raises(TypeError, match="needs a"):
        client.omnibus()
    with pytest.raises(ValueError, match="request_id"):
        client.plan(**PLAN, request_id="no spaces allowed")
    with pytest.raises(ValueError, match="image_format"):
        client.figure_means(groups=PLATE, image_format="gif")


# --------------------------------------------------------------------------
# retries, against the fake server
# --------------------------------------------------------------------------


@pytest.mark.parametrize("kind", KINDS)
def test_503_is_retried_with_the_same_body_and_request_id(kind: str) -> None:
    script = [Step(503, OVERLOADED), Step(503, OVERLOADED), Step(body=PLAN_ANSWER)]
    with ScriptedServer(script) as fake:
        started = time.monotonic()
        answer = call(kind, fake.base_url, "plan", **PLAN)
        elapsed = time.monotonic() - started
    assert isinstance(answer, models.PlanResponse) and answer.n_per_group == 14
    assert len(fake.received) == 3
    assert len({r.body for r in fake.received}) == 1
    assert len({r.headers["x-request-id"] for r in fake.received}) == 1
    assert elapsed < 2.0


@pytest.mark.parametrize("status", [502, 504])
def test_gateway_errors_are_retried(status: int) -> None:
    with ScriptedServer([Step(status, UNAVAILABLE), Step(body=PLAN_ANSWER)]) as fake:
        call("sync", fake.base_url, "plan", **PLAN)
    assert len(fake.received) == 2


@pytest.mark.parametrize("status", [400, 401, 413, 422, 500])
def test_other_errors_are_final_at_once(status: int) -> None:
    problem = {"type": "/problems/x", "title": "Refused", "status": status, "detail": "no", "pointer": "/k"}
    with (ScriptedServer([Step(status, problem), Step(body=PLAN_ANSWER)]) as fake,
          pytest.raises(FamilywiseError) as caught):
        call("sync", fake.base_url, "plan", **PLAN)
    assert len(fake.received) == 1
    assert (caught.value.status, caught.value.pointer) == (status, "/k")


@pytest.mark.parametrize("kind", KINDS)
def test_after_the_last_retry_the_503_is_raised(kind: str) -> None:
    with ScriptedServer([Step(503, OVERLOADED)]) as fake, pytest.raises(FamilywiseError) as caught:
        call(kind, fake.base_url, "plan", {"retries": 2}, **PLAN)
    assert len(fake.received) == 3
    assert (caught.value.status, caught.value.problem_type) == (503, "/problems/overloaded")
    assert not isinstance(caught.value, FamilywiseConnectionError)


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("problem_type", ["/problems/computation-timeout",
                                          "https://familywise.example/problems/computation-timeout"])
def test_a_computation_timeout_is_final_at_once(kind: str, problem_type: str) -> None:
    """The service's own 503 for a computation over its time limit: the same body would take as long
    again, so the client neither retries it nor waits the Retry-After the service sends with it."""
    script = [Step(503, {**UNAVAILABLE, "type": problem_type}, headers={"Retry-After": "30"}),
              Step(body=PLAN_ANSWER)]
    started = time.monotonic()
    with ScriptedServer(script) as fake, pytest.raises(FamilywiseError) as caught:
        call(kind, fake.base_url, "plan", {"max_retry_after": 30.0}, **PLAN)
    elapsed = time.monotonic() - started
    assert len(fake.received) == 1
    assert elapsed < 5.0  # not the 30 s of Retry-After
    assert (caught.value.status, caught.value.problem_type) == (503, problem_type)
    assert not isinstance(caught.value, FamilywiseConnectionError)


@pytest.mark.parametrize(("body", "content_type"), [
    (b"Service Unavailable", "text/plain"),  # a proxy's own page
    (b"<html><body>503</body></html>", "text/html"),
    ({"title": "Service Unavailable", "status": 503}, None),  # a problem without a type
    (dict(UNAVAILABLE, type="/problems/computation-timeout-elsewhere"), None),
    ({"type": 17, "title": "odd", "status": 503}, None),
    (b"{not json", "application/problem+json"),
])
def test_other_503s_are_still_retried(body: Any, content_type: str | None) -> None:
    with ScriptedServer([Step(503, body, content_type=content_type), Step(body=PLAN_ANSWER)]) as fake:
        answer = call("sync", fake.base_url, "plan", **PLAN)
    assert answer.n_per_group == 14
    assert len(fake.received) == 2


def test_retry_after_is_honoured() -> None:
    with ScriptedServer([Step(503, OVERLOADED, headers={"Retry-After": "1"}), Step(body=PLAN_ANSWER)]) as fake:
        started = time.monotonic()
        call("sync", fake.base_url, "plan", **PLAN)
        elapsed = time.monotonic() - started
    assert len(fake.received) == 2
    assert 0.95 <= elapsed < 3.0


def test_retry_after_is_capped() -> None:
    with ScriptedServer([Step(503, OVERLOADED, headers={"Retry-After": "3600"}), Step(body=PLAN_ANSWER)]) as fake:
        started = time.monotonic()
        call("sync", fake.base_url, "plan", {"max_retry_after": 0.05}, **PLAN)
        elapsed = time.monotonic() - started
    assert len(fake.received) == 2
    assert elapsed < 1.0


@pytest.mark.parametrize("kind", KINDS)
def test_connection_refused_is_retried_then_raised_with_no_status(kind: str) -> None:
    port = free_port()  # nothing listens there
    started = time.monotonic()
    with pytest.raises(FamilywiseConnectionError) as caught:
        call(kind, f"http://127.0.0.1:{port}", "plan", {"retries": 2}, **PLAN)
    assert time.monotonic() - started < 2.0
    error = caught.value
    assert isinstance(error, FamilywiseError)
    assert (error.status, error.attempts, error.title) == (None, 3, "Service unreachable")
    assert isinstance(error.__cause__, httpx.ConnectError)


def test_a_server_that_comes_up_during_the_retries_answers() -> None:
    port = free_port()
    fake = ScriptedServer([Step(body=PLAN_ANSWER)], port=port)
    # refused for about 0.3 s, then the server listens on that port
    starter = threading.Timer(0.3, fake.__enter__)
    starter.start()
    try:
        answer = call("sync", f"http://127.0.0.1:{port}", "plan", {"retries": 8, "backoff": 0.1, "max_backoff": 0.2},
                      **PLAN)
    finally:
        starter.join()
        fake.__exit__()
    assert answer.n_per_group == 14 and len(fake.received) == 1


@pytest.mark.parametrize("kind", KINDS)
def test_a_dropped_connection_is_retried(kind: str) -> None:
    with ScriptedServer([Step(drop=True), Step(body=PLAN_ANSWER)]) as fake:
        answer = call(kind, fake.base_url, "plan", **PLAN)
    assert answer.n_per_group == 14 and len(fake.received) == 2


def test_a_timeout_is_retried_and_then_raised() -> None:
    with ScriptedServer([Step(delay=0.5, body=PLAN_ANSWER), Step(body=PLAN_ANSWER)]) as fake:
        assert call("sync", fake.base_url, "plan", {"timeout": 0.2}, **PLAN).n_per_group == 14
    assert len(fake.received) == 2
    with (ScriptedServer([Step(delay=0.5, body=PLAN_ANSWER)]) as fake,
          pytest.raises(FamilywiseConnectionError) as caught):
        call("sync", fake.base_url, "plan", {"timeout": 0.2, "retries": 1}, **PLAN)
    assert caught.value.title == "No answer in time" and caught.value.attempts == 2


def test_an_answer_that_is_not_a_problem_document_still_raises_with_its_status() -> None:
    step = Step(502, b"<html>bad gateway</html>", content_type="text/html")
    with ScriptedServer([step]) as fake, pytest.raises(FamilywiseError) as caught:
        call("sync", fake.base_url, "plan", {"retries": 0}, **PLAN)
    assert (caught.value.status, caught.value.problem_type, caught.value.pointer) == (502, "about:blank", None)
    assert "bad gateway" in caught.value.detail


# --------------------------------------------------------------------------
# the retry rules on their own
# --------------------------------------------------------------------------


def _response(status: int, **headers: str) -> httpx.Response:
    return httpx.Response(status, headers=headers)


def test_backoff_grows_exponentially_with_jitter_and_a_ceiling() -> None:
    policy = RetryPolicy(retries=10, backoff=0.5, max_backoff=4.0)
    refused = httpx.ConnectError("refused")
    for attempt, ceiling in [(1, 0.5), (2, 1.0), (3, 2.0), (4, 4.0), (8, 4.0)]:
        waits = [policy.wait(attempt, refused) for _ in range(200)]
        assert all(ceiling / 2 <= w <= ceiling for w in waits)
        assert len(set(waits)) > 1  # jittered
    assert policy.wait(11, refused) is None


def test_which_outcomes_are_retried() -> None:
    policy = RetryPolicy(retries=3, max_retry_after=30.0)
    assert policy.wait(1, _response(503, **{"Retry-After": "7"})) == 7.0
    assert policy.wait(1, _response(503, **{"Retry-After": "120"})) == 30.0
    assert policy.wait(1, _response(504)) is not None
    for status in (200, 400, 404, 409, 422, 429, 500):
        assert policy.wait(1, _response(status)) is None
    assert policy.wait(1, httpx.ReadTimeout("slow")) is not None
    assert policy.wait(1, httpx.RemoteProtocolError("dropped")) is not None
    assert policy.wait(1, httpx.UnsupportedProtocol("ftp")) is None  # the same request cannot succeed


def test_retry_after_reads_seconds_and_dates() -> None:
    assert retry_after("12") == 12.0
    assert retry_after(None) is None
    assert retry_after("soon") is None
    in_a_minute = time.strftime("%a, %d %b %Y %H:%M:%S GMT", time.gmtime(time.time() + 60))
    assert 55.0 <= retry_after(in_a_minute) <= 60.0
    assert retry_after("Mon, 01 Jan 2001 00:00:00 GMT") == 0.0


"""Graceful shutdown (issue 8): a request in flight when the server gets SIGTERM is answered in full.

A real server (``familywise serve``) is started on a free loopback port; a
slow request is sent (Games-Howell over 90 groups: 4005 pairs, each with its
own Welch df and studentized-range quantile, a second or more of work);
SIGTERM arrives while it is computing; the response must still arrive,
complete, with 200, and the process must exit within the grace period.
Both the single-process server and a two-worker one are checked.
"""

from __future__ import annotations

import contextlib
import functools
import os
import signal
import threading
import time
from dataclasses import dataclass

import httpx
import pytest

from tests.load import LiveServer

GRACE_SECONDS = 15
GROUPS = 90
SLOW = {"groups": [{"label": f"well {i + 1}", "values": [40.0 + 0.01 * i + 0.5 * j * (1 + i % 4) for j in range(4)]}
                   for i in range(GROUPS)], "method": "games_howell"}
IN_FLIGHT_AFTER = 0.5  # seconds between sending the request and SIGTERM


@dataclass(frozen=True)
class Outcome:
    status: int | None
    body: dict | None
    error: str | None
    exit_status: int | None
    exit_seconds: float
    answered_after_sigterm: bool
    log: str


@functools.cache
def shutdown_during_request(workers: int) -> Outcome:
    server = LiveServer(workers=workers, graceful_seconds=GRACE_SECONDS)
    server.start()
    done: dict = {}

    def send() -> None:
        try:
            with httpx.Client(timeout=120) as client:
                response = client.post(f"{server.url}/v1/followup/pairwise", json=SLOW)
            done["status"], done["body"] = response.status_code, response.json()
        except Exception as exc:  # reported in the outcome, asserted by the tests
            done["error"] = f"{type(exc).__name__}: {exc}"
        done["at"] = time.monotonic()

    thread = threading.Thread(target=send)
    thread.start()
    time.sleep(IN_FLIGHT_AFTER)
    signalled = time.monotonic()
    server.terminate()
    try:
        exit_status = server.process.wait(GRACE_SECONDS + 15)
    except Exception:
        exit_status = None
        server.stop(timeout=1)
    exit_seconds = time.monotonic() - signalled
    thread.join(120)
    log = server.log_text()
    server.discard_log()
    return Outcome(done.get("status"), done.get("body"), done.get("error"), exit_status, exit_seconds,
                   done.get("at", 0.0) > signalled, log)


@pytest.mark.parametrize("workers", [1, 2])
def test_a_request_in_flight_at_sigterm_is_answered_in_full(workers: int) -> None:
    outcome = shutdown_during_request(workers)
    assert outcome.error is None, outcome.error + "\n" + outcome.log[-3000:]
    assert outcome.answered_after_sigterm, "the request finished before SIGTERM: make it slower"
    assert outcome.status == 200, outcome.body
    rows = outcome.body["comparisons"]
    assert len(rows) == GROUPS * (GROUPS - 1) // 2
    assert all(0.0 <= row["p_value"] <= 1.0 for row in rows)
    assert outcome.body["provenance"]["input_sha256"]


@pytest.mark.parametrize("workers", [1, 2])
def test_the_server_exits_within_the_grace_period(workers: int) -> None:
    outcome = shutdown_during_request(workers)
    assert outcome.exit_status is not None, "the server did not exit"
    assert outcome.exit_seconds < GRACE_SECONDS, outcome.exit_seconds
    assert "Application shutdown complete" in outcome.log


@pytest.mark.parametrize("workers", [1, 2])
def test_the_server_exits_with_status_zero(workers: int) -> None:
    assert shutdown_during_request(workers).exit_status == 0


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as handle:
            return handle.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


def test_batch_pool_processes_end_with_the_server() -> None:
    """One batch of 64 items (enough for the process pool), then SIGTERM: the pool's processes end with the
    server, none is left behind."""
    items = [{"id": f"analyte {i}", "operation": "omnibus",
              "request": {"groups": [{"label": "well A", "values": [41.2, 43.8, 42.5]},
                                     {"label": "well B", "values": [48.7, 50.2, 49.5]}]}} for i in range(64)]
    server = LiveServer(workers=1, graceful_seconds=GRACE_SECONDS).start()
    left: list[int] = []
    try:
        assert httpx.post(f"{server.url}/v1/batch", json={"items": items}, timeout=60).status_code == 200
        family = server.processes()[1:]
        assert family, "the batch did not start a process pool"
        server.stop(reap=False)
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline and any(_alive(pid) for pid in family):
            time.sleep(0.1)
        left = [pid for pid in family if _alive(pid)]
        assert not left, f"processes left running after the server exited: {left}"
    finally:
        server.stop()
        server.discard_log()
        for pid in left:  # the orphans this test made
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)

"""docker/compose.yaml sizes the /v1/batch pool by the container's CPU limit.

The service's default FAMILYWISE_BATCH_WORKERS=0 means "the CPUs this process
may run on" (os.sched_getaffinity), and a CPU limit (CFS quota, compose's
deploy.resources.limits.cpus) does not narrow the affinity mask: in a
container limited to 2 CPUs on a 64-CPU host, each server worker would start
64 pool processes. So compose sets the pool's size to its CPU limit. Source for
the affinity/quota distinction: the Linux sched_setaffinity(2) and cgroup v2
"cpu.max" documentation (from memory); the compose keys are the Compose
specification's.

No Docker engine runs here: the file is read as YAML.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

from familywise.api import batch
from familywise.api.settings import Settings

COMPOSE = Path(__file__).resolve().parents[2] / "docker" / "compose.yaml"


@pytest.fixture(scope="module")
def service() -> dict:
    yaml = pytest.importorskip("yaml", reason="PyYAML is not installed, so compose.yaml cannot be parsed")
    (service,) = yaml.safe_load(COMPOSE.read_text(encoding="utf-8"))["services"].values()
    return service


def _default(service: dict, name: str) -> str:
    match = re.fullmatch(r"\$\{(\w+):-([^}]*)\}", str(service["environment"][name]))
    assert match and match.group(1) == name
    return match.group(2)


def test_the_batch_pool_matches_the_cpu_limit(service, monkeypatch) -> None:
    cpus = float(service["deploy"]["resources"]["limits"]["cpus"])
    workers = _default(service, "FAMILYWISE_BATCH_WORKERS")
    assert cpus == int(cpus) and int(workers) == int(cpus), (workers, cpus)
    # and the service takes that number as it is, not the CPUs it can see
    monkeypatch.setenv("FAMILYWISE_BATCH_WORKERS", workers)
    configured = Settings.from_env().batch_workers
    assert configured == int(cpus)
    assert batch._workers(configured) == int(cpus)


def test_the_reason_is_written_beside_it() -> None:
    text = COMPOSE.read_text(encoding="utf-8")
    line = next(i for i, ln in enumerate(text.splitlines()) if "FAMILYWISE_BATCH_WORKERS:" in ln)
    comment = " ".join(ln.strip() for ln in text.splitlines()[max(0, line - 6):line] if ln.strip().startswith("#"))
    assert "CPU limit" in comment, comment


def test_the_default_would_follow_the_host_not_the_limit() -> None:
    """Why compose must set it: with 0, the pool's size is the affinity mask's, whatever the quota."""
    if not hasattr(os, "sched_getaffinity"):
        pytest.skip("no sched_getaffinity on this platform")
    assert batch._workers(0) == len(os.sched_getaffinity(0))

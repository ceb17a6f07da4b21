"""Shared fixtures: an in-process client of the app, and data helpers."""

from __future__ import annotations

import os

import numpy as np
import pytest
from fastapi.testclient import TestClient
from hypothesis import settings

from familywise.api.app import create_app
from familywise.api.settings import Settings

# Property tests draw the same examples on every run of `make test` (a fresh checkout in CI must not
# pass or fail by chance); FAMILYWISE_HYPOTHESIS_PROFILE=explore draws new ones each run, to look for
# bugs (with FAMILYWISE_PROPERTY_EXAMPLES for more of them).
settings.register_profile("repeatable", derandomize=True, database=None)
settings.register_profile("explore", derandomize=False)
settings.load_profile(os.environ.get("FAMILYWISE_HYPOTHESIS_PROFILE", "repeatable"))


@pytest.fixture(scope="session")
def client() -> TestClient:
    """The app with default limits, warm-up skipped (tests compile on demand)."""
    return TestClient(create_app(Settings(warm_up=False)))


def make_groups(rng: np.random.Generator, sizes, means=None, sds=None, decimals: int = 3) -> list[dict]:
    """Random groups as request JSON (values rounded to `decimals`)."""
    k = len(sizes)
    means = means if means is not None else rng.normal(50.0, 3.0, k)
    sds = sds if sds is not None else np.ones(k)
    return [
        {"label": f"group {i + 1}", "values": [round(float(v), decimals) for v in rng.normal(m, s, n)]}
        for i, (n, m, s) in enumerate(zip(sizes, means, sds, strict=True))
    ]


def arrays(groups: list[dict]) -> list[np.ndarray]:
    return [np.array(g["values"], dtype=float) for g in groups]

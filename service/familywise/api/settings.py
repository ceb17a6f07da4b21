"""Service configuration, read once from the environment.

Every setting has an environment variable (documented in the README) and a
default that suits a single lab deployment.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field


def _int(name: str, default: int) -> int:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    value = int(raw)
    if value <= 0:
        raise ValueError(f"{name} must be a positive integer")
    return value


def _float(name: str, default: float) -> float:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    value = float(raw)
    if not value > 0:
        raise ValueError(f"{name} must be positive")
    return value


def _keys() -> frozenset[str]:
    keys = {k.strip() for k in os.environ.get("FAMILYWISE_API_KEYS", "").split(",") if k.strip()}
    path = os.environ.get("FAMILYWISE_API_KEY_FILE")
    if path:
        with open(path, encoding="utf-8") as handle:
            stripped = (line.strip() for line in handle)
            keys |= {line for line in stripped if line and not line.startswith("#")}
    return frozenset(keys)


@dataclass(frozen=True)
class Settings:
    max_body_bytes: int = 8 * 1024 * 1024
    max_groups: int = 500
    max_values: int = 200_000
    max_contrasts: int = 200
    max_batch_items: int = 2000
    compute_timeout_seconds: float = 20.0
    api_keys: frozenset[str] = field(default_factory=frozenset)
    cors_origins: tuple[str, ...] = ()
    batch_workers: int = 0  # 0: use the CPUs the process may run on
    warm_up: bool = True

    @classmethod
    def from_env(cls) -> Settings:
        origins = tuple(
            o.strip() for o in os.environ.get("FAMILYWISE_CORS_ORIGINS", "").split(",") if o.strip()
        )
        return cls(
            max_body_bytes=_int("FAMILYWISE_MAX_BODY_BYTES", cls.max_body_bytes),
            max_groups=_int("FAMILYWISE_MAX_GROUPS", cls.max_groups),
            max_values=_int("FAMILYWISE_MAX_VALUES", cls.max_values),
            max_contrasts=_int("FAMILYWISE_MAX_CONTRASTS", cls.max_contrasts),
            max_batch_items=_int("FAMILYWISE_MAX_BATCH_ITEMS", cls.max_batch_items),
            compute_timeout_seconds=_float(
                "FAMILYWISE_COMPUTE_TIMEOUT_SECONDS", cls.compute_timeout_seconds
            ),
            api_keys=_keys(),
            cors_origins=origins,
            batch_workers=int(os.environ.get("FAMILYWISE_BATCH_WORKERS", "0") or 0),
            warm_up=os.environ.get("FAMILYWISE_WARM_UP", "1") != "0",
        )

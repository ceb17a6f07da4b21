"""Structured logs: one JSON object per line, on standard error.

The access log (logger ``familywise.access``) already writes JSON messages;
other records (uvicorn, warnings, errors with tracebacks) are wrapped into
the same shape. No record carries request bodies or API keys.
"""

from __future__ import annotations

import json
import logging
import time


class JsonFormatter(logging.Formatter):
    def format(self, record: logging.LogRecord) -> str:
        message = record.getMessage()
        if record.name == "familywise.access" and message.startswith("{"):
            body = json.loads(message)
        else:
            body = {"event": "log", "message": message}
        body = {"time": time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(record.created))
                + f".{int(record.msecs):03d}Z", "level": record.levelname.lower(), "logger": record.name,
                **body}
        if record.exc_info:
            body["exception"] = self.formatException(record.exc_info)
        return json.dumps(body, ensure_ascii=False)


def config(level: str = "info") -> dict:
    """A logging.config dictionary for uvicorn and the service."""
    level = level.upper()
    return {
        "version": 1,
        "disable_existing_loggers": False,
        "formatters": {"json": {"()": "familywise.api.logs.JsonFormatter"}},
        "handlers": {"stderr": {"class": "logging.StreamHandler", "formatter": "json",
                                "stream": "ext://sys.stderr"}},
        "loggers": {
            "familywise": {"handlers": ["stderr"], "level": level, "propagate": False},
            "uvicorn": {"handlers": ["stderr"], "level": level, "propagate": False},
            "uvicorn.error": {"handlers": ["stderr"], "level": level, "propagate": False},
        },
    }

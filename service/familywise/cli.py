"""The ``familywise`` command: serve, validate, openapi."""

from __future__ import annotations

import argparse
import json
import os
import signal
import sys
import tempfile

DEMO_REQUEST = (
    "curl -s -X POST http://{host}:{port}/v1/followup/pairwise -H 'content-type: application/json' "
    "-d '{{\"groups\": [{{\"label\": \"reference buffer\", \"values\": [41.2, 43.8, 42.5, 40.9]}}, "
    "{{\"label\": \"HEPES pH 7.5\", \"values\": [48.7, 50.2, 49.5, 47.9]}}, "
    "{{\"label\": \"citrate pH 6.0\", \"values\": [38.4, 39.9, 37.6, 40.2]}}], "
    "\"method\": \"tukey_kramer\"}}'"
)


def _serve(args: argparse.Namespace) -> int:
    import uvicorn

    from familywise.api import logs
    from familywise.api.settings import Settings

    try:
        Settings.from_env()  # refuse bad settings here, not in every worker over and over
    except (ValueError, OSError) as exc:
        print(f"familywise: invalid configuration: {exc}", file=sys.stderr)
        return 2
    if args.workers > 1 and not os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        # Each worker writes its metrics here; /metrics aggregates them.
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = tempfile.mkdtemp(prefix="familywise-metrics-")
    if args.workers <= 1:
        # uvicorn, once it has shut down gracefully on SIGTERM, raises the signal
        # again for the handler it found: let that be one that exits with status
        # 0, as a clean shutdown should (with several workers the supervisor
        # does so already). Before uvicorn takes over, SIGTERM ends the start-up.
        signal.signal(signal.SIGTERM, lambda signum, frame: sys.exit(0))
    print(f"familywise: interactive API docs at http://{args.host}:{args.port}/docs", flush=True)
    print("familywise: try a request:", flush=True)
    print("  " + DEMO_REQUEST.format(host=args.host, port=args.port), flush=True)
    uvicorn.run(
        "familywise.api.app:create_app",
        factory=True,
        host=args.host,
        port=args.port,
        workers=args.workers,
        log_level=args.log_level,
        log_config=logs.config(args.log_level),
        access_log=False,
        timeout_graceful_shutdown=args.graceful_seconds,
    )
    return 0


def _validate(args: argparse.Namespace) -> int:
    from familywise import validation

    checks = validation.run()
    print(validation.report(checks))
    return 0 if all(c.passed for c in checks) else 1


def openapi_document() -> dict:
    from familywise.api.app import create_app
    from familywise.api.settings import Settings

    return create_app(Settings(warm_up=False)).openapi()


def _openapi(args: argparse.Namespace) -> int:
    text = json.dumps(openapi_document(), indent=2, ensure_ascii=False, sort_keys=False) + "\n"
    if args.output:
        with open(args.output, "w", encoding="utf-8") as handle:
            handle.write(text)
    else:
        sys.stdout.write(text)
    return 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="familywise",
        description="Follow-up comparisons for one-way experiments, as an HTTP service.",
    )
    commands = parser.add_subparsers(dest="command", required=True)

    serve = commands.add_parser("serve", help="start the HTTP service")
    serve.add_argument("--host", default="127.0.0.1")
    serve.add_argument("--port", type=int, default=8000)
    serve.add_argument("--workers", type=int, default=1, help="worker processes (default 1)")
    serve.add_argument("--log-level", default="info")
    serve.add_argument("--graceful-seconds", type=int, default=30,
                       help="how long in-flight requests may finish after SIGTERM")
    serve.set_defaults(run=_serve)

    validate = commands.add_parser("validate", help="run the NIST StRD validation and print the report")
    validate.set_defaults(run=_validate)

    openapi = commands.add_parser("openapi", help="print the OpenAPI schema")
    openapi.add_argument("--output", "-o", help="write to this file instead of standard output")
    openapi.set_defaults(run=_openapi)

    args = parser.parse_args(argv)
    return args.run(args)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

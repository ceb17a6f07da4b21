#!/bin/sh
# Entry point of the familywise image.
#
#   (no arguments) or "serve [extra options]"  start the HTTP service on port 8000
#   any other command                           run it as given, e.g. "familywise validate"
#
# Before starting, it copies the numba kernels compiled at build time into
# NUMBA_CACHE_DIR. numba only reads a cache from a directory it can also
# write to, and the root filesystem may be read-only, so the compiled
# kernels ship in the image as a seed and are copied into a writable
# directory (a tmpfs or an emptyDir at /tmp). Without the copy, each worker
# would compile for about a minute before /readyz turns 200.
set -eu

seed=/opt/familywise/numba-seed

if [ -n "${NUMBA_CACHE_DIR:-}" ]; then
    if ! mkdir -p "$NUMBA_CACHE_DIR" 2>/dev/null || [ ! -w "$NUMBA_CACHE_DIR" ]; then
        echo "familywise: NUMBA_CACHE_DIR=$NUMBA_CACHE_DIR is not writable;" \
             "mount a writable volume there (a tmpfs or an emptyDir at /tmp)" >&2
        exit 64
    fi
    if [ -d "$seed" ] && [ -z "$(ls -A "$NUMBA_CACHE_DIR")" ]; then
        cp -R "$seed"/. "$NUMBA_CACHE_DIR"/
    fi
fi

if [ "$#" -eq 0 ] || [ "$1" = serve ]; then
    if [ "$#" -gt 0 ]; then shift; fi
    workers="${FAMILYWISE_WORKERS:-2}"
    graceful="${FAMILYWISE_GRACEFUL_SECONDS:-30}"
    for pair in "FAMILYWISE_WORKERS=$workers" "FAMILYWISE_GRACEFUL_SECONDS=$graceful"; do
        case "${pair#*=}" in
            '' | *[!0-9]* | 0)
                echo "familywise: ${pair%%=*} must be a positive integer, not '${pair#*=}'" >&2
                exit 64
                ;;
        esac
    done
    # Read the FAMILYWISE_* settings once before starting: with several
    # workers, uvicorn would restart a worker that fails on a bad setting
    # (or a missing key file) over and over instead of stopping.
    python -c '
import sys
from familywise.api.settings import Settings
try:
    Settings.from_env()
except (ValueError, OSError) as exc:
    sys.exit(f"familywise: {exc}")
' || exit 64
    # Options given after "serve" come last, so they override these.
    exec familywise serve --host 0.0.0.0 --port 8000 \
        --workers "$workers" \
        --graceful-seconds "$graceful" \
        --log-level "${FAMILYWISE_LOG_LEVEL:-info}" \
        "$@"
fi

exec "$@"

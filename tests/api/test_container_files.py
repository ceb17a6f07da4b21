"""The container and scale-out files hold what a deployment relies on.

No Docker engine or cluster runs in the tests, so these read docker/Dockerfile,
docker/compose.yaml, docker/k8s/*.yaml and .dockerignore, check them against
each other and against the service (its settings, its package data), and run
the two pieces that can run without an engine: the container entry point
(with a stand-in ``familywise`` command) and the health-check commands
(against a local HTTP server).
"""

from __future__ import annotations

import http.server
import json
import os
import re
import shlex
import shutil
import subprocess
import sys
import threading
import tomllib
from collections.abc import Iterator
from pathlib import Path

import pytest

from familywise.api.settings import Settings

ROOT = Path(__file__).resolve().parents[2]
DOCKER = ROOT / "docker"
DOCKERFILE = DOCKER / "Dockerfile"
ENTRYPOINT = DOCKER / "entrypoint.sh"
COMPOSE = DOCKER / "compose.yaml"
K8S = DOCKER / "k8s"
SECRET_EXAMPLE = K8S / "secret-api-keys.example.yaml"

SECRET_NAME = re.compile(r"KEY|SECRET|TOKEN|PASSWORD|PASSWD|CREDENTIAL", re.IGNORECASE)


# --- reading a Dockerfile -------------------------------------------------

def _instructions(text: str) -> list[tuple[str, str]]:
    """(INSTRUCTION, arguments) pairs: continuation lines joined, comments dropped."""
    result: list[tuple[str, str]] = []
    pending = ""
    for line in text.splitlines():
        if line.strip().startswith("#"):
            continue  # comments (and parser directives), also inside a continuation
        if line.endswith("\\"):
            pending += line[:-1]
            continue
        pending += line
        if pending.strip():
            word, _, rest = pending.strip().partition(" ")
            result.append((word.upper(), rest.strip()))
        pending = ""
    return result


def _stages(text: str) -> list[list[tuple[str, str]]]:
    """The instructions of each build stage, in order (whatever precedes the first FROM is dropped)."""
    stages: list[list[tuple[str, str]]] = []
    for instruction in _instructions(text):
        if instruction[0] == "FROM":
            stages.append([])
        if stages:
            stages[-1].append(instruction)
    return stages


def _stage_name(stage: list[tuple[str, str]]) -> str | None:
    words = stage[0][1].split()
    return words[2] if len(words) == 3 and words[1].upper() == "AS" else None


def _assignments(instruction: str, args: str) -> dict[str, str | None]:
    """Names set by an ENV or ARG instruction, with their values (None: an ARG without default)."""
    words = shlex.split(args)
    if instruction == "ENV" and words and "=" not in words[0]:
        return {words[0]: " ".join(words[1:])}  # the old "ENV name value" form
    pairs: dict[str, str | None] = {}
    for word in words:
        name, sep, value = word.partition("=")
        pairs[name] = value if sep else None
    return pairs


def _env(stage: list[tuple[str, str]]) -> dict[str, str | None]:
    env: dict[str, str | None] = {}
    for instruction, args in stage:
        if instruction == "ENV":
            env.update(_assignments(instruction, args))
    return env


def _copies(stage: list[tuple[str, str]]) -> list[tuple[dict[str, str], list[str], str]]:
    """(flags, sources, destination) of each COPY."""
    result = []
    for instruction, args in stage:
        if instruction != "COPY":
            continue
        words = shlex.split(args)
        flags = dict(w[2:].partition("=")[::2] for w in words if w.startswith("--"))
        paths = [w for w in words if not w.startswith("--")]
        result.append((flags, paths[:-1], paths[-1]))
    return result


@pytest.fixture(scope="module")
def stages() -> list[list[tuple[str, str]]]:
    return _stages(DOCKERFILE.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def final(stages) -> list[tuple[str, str]]:
    return stages[-1]


def _only(stage: list[tuple[str, str]], name: str) -> str:
    found = [args for instruction, args in stage if instruction == name]
    assert len(found) == 1, f"expected one {name} in the runtime stage, found {len(found)}"
    return found[0]


def _image_user(final) -> str:
    users = [args for instruction, args in final if instruction == "USER"]
    assert users, "the runtime stage sets no USER, so the service would run as root"
    return users[-1].split(":")[0]


# --- the image ------------------------------------------------------------

def test_the_runtime_stage_is_built_from_an_earlier_stage(stages, final) -> None:
    assert len(stages) >= 2, "the Dockerfile should have a build stage and a runtime stage"
    earlier = {_stage_name(stage) for stage in stages[:-1]} - {None}
    sources = {flags["from"] for flags, _, _ in _copies(final) if "from" in flags}
    assert sources and sources <= earlier, (sources, earlier)
    build_runs = " ".join(args for stage in stages[:-1] for word, args in stage if word == "RUN")
    assert "pip wheel" in build_runs, "the build stage should build a wheel of the package"


def test_the_service_runs_as_a_numeric_non_root_user(final) -> None:
    user = _image_user(final)
    # Numeric, so that Kubernetes' runAsNonRoot can verify it without a passwd lookup.
    assert user.isdigit(), f"USER {user!r} should be a numeric uid"
    assert int(user) != 0


def test_the_healthcheck_probes_healthz_with_python_not_curl(final) -> None:
    args = _only(final, "HEALTHCHECK")
    options, _, command = args.partition("CMD")
    assert "--interval" in options and "--timeout" in options
    argv = json.loads(command)
    assert argv[0] == "python" and argv[1] == "-c", argv
    assert "http://127.0.0.1:8000/healthz" in argv[2]
    assert not re.search(r"\b(curl|wget)\b", args)


def test_no_secret_is_baked_into_the_image(stages) -> None:
    for stage in stages:
        for instruction, args in stage:
            if instruction not in ("ENV", "ARG"):
                continue
            for name, value in _assignments(instruction, args).items():
                if SECRET_NAME.search(name):
                    assert not value, f"{instruction} {name} is given a value in the Dockerfile"
        for _, sources, _ in _copies(stage):
            for source in sources:
                assert not re.search(r"key|secret|\.env|\.pem", source, re.IGNORECASE), source


def test_port_and_stop_signal(final) -> None:
    assert _only(final, "EXPOSE").split() == ["8000"]
    assert _only(final, "STOPSIGNAL") == "SIGTERM"
    assert "--port 8000" in ENTRYPOINT.read_text(encoding="utf-8")


def test_the_entry_point_is_the_script_of_this_directory(final) -> None:
    entrypoint = json.loads(_only(final, "ENTRYPOINT"))
    installed = {destination: sources for _, sources, destination in _copies(final)}
    assert installed.get(entrypoint[0]) == ["docker/entrypoint.sh"], (entrypoint, installed)
    assert json.loads(_only(final, "CMD")) == ["serve"]
    assert ENTRYPOINT.read_text(encoding="utf-8").startswith("#!/bin/sh\n")


def test_the_compiled_kernels_reach_the_runtime_stage_at_the_paths_numba_keys_them_on(stages, final) -> None:
    build = next(stage for stage in stages[:-1]
                 if any("warm_up()" in args for instruction, args in stage if instruction == "RUN"))
    build_env, runtime_env = _env(build), _env(final)
    seed = build_env["NUMBA_CACHE_DIR"]
    copies = {(flags.get("from"), tuple(sources), target) for flags, sources, target in _copies(final)}
    # The seed cache is copied unchanged, and the entry point copies it from there.
    assert (_stage_name(build), (seed,), seed) in copies
    assert f"seed={seed}\n" in ENTRYPOINT.read_text(encoding="utf-8")
    # numba keys its cache on the source files' directory and on the CPU name:
    # the virtual environment must not move, and the CPU name must not change.
    venvs = [c for c in copies if c[0] == _stage_name(build) and c[1][0].endswith("venv")]
    assert venvs and all(c[1] == (c[2],) for c in venvs), venvs
    assert build_env.get("NUMBA_CPU_NAME") == runtime_env.get("NUMBA_CPU_NAME") == "generic"
    # At run time the cache lives on the writable /tmp mount of compose and k8s.
    assert runtime_env["NUMBA_CACHE_DIR"].startswith("/tmp/")


def test_the_wheel_carries_every_vendored_static_file() -> None:
    pyproject = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = pyproject["tool"]["setuptools"]["package-data"]["familywise"]
    package = ROOT / "service" / "familywise"
    covered = {path for pattern in patterns for path in package.glob(pattern) if path.is_file()}
    vendored = {path for path in (package / "api" / "static").rglob("*") if path.is_file()}
    assert vendored, "no vendored static files found"
    missing = sorted(str(p.relative_to(package)) for p in vendored - covered)
    assert not missing, f"package-data in pyproject.toml misses {missing}"


def test_dockerignore_lets_in_only_what_the_build_copies(stages) -> None:
    lines = [line.strip() for line in (ROOT / ".dockerignore").read_text(encoding="utf-8").splitlines()]
    rules = [line for line in lines if line and not line.startswith("#")]
    assert rules[0] == "*", "the context should be an allow-list, so that no stray file reaches it"
    allowed = {rule[1:] for rule in rules if rule.startswith("!")}
    for stage in stages:
        for flags, sources, _ in _copies(stage):
            if "from" in flags:
                continue
            for source in sources:
                assert any(source == a or source.startswith(a + "/") for a in allowed), source
                # README.md is the package's readme (pyproject.toml): the wheel build reads it.
                assert (ROOT / source).exists() or source == "README.md", source
    for kept_out in (".git", ".venv", "tests", ".env"):
        assert kept_out not in allowed
    for cache in ("**/__pycache__", "**/*.nbi", "**/*.nbc"):
        index = rules.index(cache)
        assert index > max(rules.index("!" + a) for a in allowed), f"{cache} must come after the '!' rules"


# --- the entry point, run with a stand-in familywise command ---------------

@pytest.fixture
def run_entrypoint(tmp_path) -> Iterator:
    if shutil.which("sh") is None:
        pytest.skip("no POSIX shell on this machine to run docker/entrypoint.sh")
    bin_dir = tmp_path / "bin"
    bin_dir.mkdir()
    stand_in = bin_dir / "familywise"
    stand_in.write_text("#!/bin/sh\nprintf '%s\\n' \"$@\"\n", encoding="utf-8")
    stand_in.chmod(0o755)
    python = bin_dir / "python"  # the entry point reads the settings with it before the start
    python.write_text(f"#!/bin/sh\nexec {shlex.quote(sys.executable)} \"$@\"\n", encoding="utf-8")
    python.chmod(0o755)
    seed = tmp_path / "seed"
    (seed / "kernels").mkdir(parents=True)
    (seed / "kernels" / "index.nbi").write_text("compiled at build time", encoding="utf-8")
    text = ENTRYPOINT.read_text(encoding="utf-8")
    assert "/opt/familywise/numba-seed" in text
    script = tmp_path / "entrypoint.sh"
    script.write_text(text.replace("/opt/familywise/numba-seed", str(seed)), encoding="utf-8")

    def run(*args: str, **env: str) -> subprocess.CompletedProcess:
        environment = {"PATH": f"{bin_dir}{os.pathsep}/usr/bin{os.pathsep}/bin",
                       "NUMBA_CACHE_DIR": str(tmp_path / "cache"), **env}
        return subprocess.run(["sh", str(script), *args], env=environment, capture_output=True,
                              text=True, timeout=30, check=False)

    yield run


def _option(argv: list[str], name: str) -> str:
    """The value argparse takes for an option given more than once: the last."""
    index = len(argv) - 1 - argv[::-1].index(name)
    return argv[index + 1]


def test_the_worker_count_comes_from_the_environment(run_entrypoint, final) -> None:
    default = _env(final)["FAMILYWISE_WORKERS"]
    assert default == "2"
    argv = run_entrypoint().stdout.split()
    assert argv[0] == "serve" and _option(argv, "--workers") == "2"
    assert _option(argv, "--host") == "0.0.0.0" and _option(argv, "--port") == "8000"
    argv = run_entrypoint(FAMILYWISE_WORKERS="5", FAMILYWISE_GRACEFUL_SECONDS="12").stdout.split()
    assert _option(argv, "--workers") == "5" and _option(argv, "--graceful-seconds") == "12"
    # Options after "serve" come last and win.
    argv = run_entrypoint("serve", "--workers", "3", FAMILYWISE_WORKERS="5").stdout.split()
    assert _option(argv, "--workers") == "3"


@pytest.mark.parametrize("workers", ["0", "two", "-1", "2.5"])
def test_a_worker_count_that_is_not_a_positive_integer_stops_the_start(run_entrypoint, workers) -> None:
    result = run_entrypoint(FAMILYWISE_WORKERS=workers)
    assert result.returncode == 64
    assert "FAMILYWISE_WORKERS" in result.stderr and result.stdout == ""


@pytest.mark.parametrize(("name", "value"), [("FAMILYWISE_MAX_GROUPS", "0"),
                                           ("FAMILYWISE_COMPUTE_TIMEOUT_SECONDS", "soon"),
                                           ("FAMILYWISE_API_KEY_FILE", "/nonexistent/keys")])
def test_a_bad_service_setting_stops_the_start_instead_of_restarting_workers(run_entrypoint, name,
                                                                             value) -> None:
    result = run_entrypoint(**{name: value})
    assert result.returncode == 64 and result.stdout == ""
    assert result.stderr.startswith("familywise: ") and "Traceback" not in result.stderr
    assert run_entrypoint().returncode == 0, "the defaults should pass the same check"


def test_another_command_is_run_as_given(run_entrypoint) -> None:
    result = run_entrypoint("familywise", "validate")
    assert result.returncode == 0 and result.stdout.split() == ["validate"]


def test_the_entry_point_seeds_an_empty_cache_and_leaves_a_used_one_alone(run_entrypoint, tmp_path) -> None:
    assert run_entrypoint().returncode == 0
    seeded = tmp_path / "cache" / "kernels" / "index.nbi"
    assert seeded.read_text(encoding="utf-8") == "compiled at build time"
    seeded.write_text("compiled at run time", encoding="utf-8")
    assert run_entrypoint().returncode == 0
    assert seeded.read_text(encoding="utf-8") == "compiled at run time"


def test_an_unwritable_cache_directory_stops_the_start_with_a_reason(run_entrypoint, tmp_path) -> None:
    blocker = tmp_path / "a-file"
    blocker.write_text("", encoding="utf-8")
    result = run_entrypoint(NUMBA_CACHE_DIR=str(blocker / "cache"))
    assert result.returncode == 64
    assert "not writable" in result.stderr and result.stdout == ""


# --- the health-check commands, against a local server ---------------------

@pytest.fixture
def local_server() -> Iterator:
    """start(status_by_path) -> (port, paths requested); other paths answer 404."""
    servers: list[http.server.ThreadingHTTPServer] = []

    def start(statuses: dict[str, int]) -> tuple[int, list[str]]:
        requested: list[str] = []

        class Handler(http.server.BaseHTTPRequestHandler):
            def do_GET(self) -> None:
                requested.append(self.path)
                self.send_response(statuses.get(self.path, 404))
                self.send_header("content-length", "0")
                self.end_headers()

            def log_message(self, *args) -> None:
                pass

        server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        threading.Thread(target=server.serve_forever, daemon=True).start()
        servers.append(server)
        return server.server_address[1], requested

    yield start
    for server in servers:
        server.shutdown()
        server.server_close()


def _run_check(snippet: str, port: int) -> int:
    assert "127.0.0.1:8000" in snippet
    code = snippet.replace("127.0.0.1:8000", f"127.0.0.1:{port}")
    return subprocess.run([sys.executable, "-c", code], capture_output=True, timeout=30,
                          check=False).returncode


def test_the_image_healthcheck_passes_on_200_and_fails_otherwise(final, local_server) -> None:
    snippet = json.loads(_only(final, "HEALTHCHECK").partition("CMD")[2])[2]
    port, requested = local_server({"/healthz": 200})
    assert _run_check(snippet, port) == 0
    assert requested == ["/healthz"]
    port, _ = local_server({"/healthz": 503})
    assert _run_check(snippet, port) != 0


def test_the_compose_healthcheck_waits_for_readiness(compose, local_server) -> None:
    test = compose["healthcheck"]["test"]
    assert test[:3] == ["CMD", "python", "-c"]
    port, requested = local_server({"/readyz": 503, "/healthz": 200})
    assert _run_check(test[3], port) != 0, "a warming-up service should not count as healthy"
    assert requested == ["/readyz"]
    port, _ = local_server({"/readyz": 200})
    assert _run_check(test[3], port) == 0


# --- compose ----------------------------------------------------------------

@pytest.fixture(scope="module")
def yaml_module():
    # PyYAML comes in through the test extras' dependencies (schemathesis), not by name.
    return pytest.importorskip("yaml", reason="PyYAML is not installed, so the YAML files cannot be parsed")


@pytest.fixture(scope="module")
def compose(yaml_module) -> dict:
    document = yaml_module.safe_load(COMPOSE.read_text(encoding="utf-8"))
    (service,) = document["services"].values()
    return service


def _variables_read_by_the_service_and_the_entry_point() -> set[str]:
    settings = (ROOT / "service" / "familywise" / "api" / "settings.py").read_text(encoding="utf-8")
    names = set(re.findall(r'"(FAMILYWISE_[A-Z0-9_]+)"', settings))
    names |= set(re.findall(r"\$\{(FAMILYWISE_[A-Z0-9_]+)", ENTRYPOINT.read_text(encoding="utf-8")))
    assert "FAMILYWISE_MAX_GROUPS" in names and "FAMILYWISE_WORKERS" in names
    return names


def _compose_defaults(compose) -> dict[str, str]:
    defaults = {}
    for name, value in compose["environment"].items():
        match = re.fullmatch(r"\$\{(\w+):-([^}]*)\}", str(value))
        assert match and match.group(1) == name, f"{name}: {value!r} should read ${{{name}:-default}}"
        defaults[name] = match.group(2)
    return defaults


def test_compose_builds_this_image_and_publishes_port_8000(compose) -> None:
    context = (COMPOSE.parent / compose["build"]["context"]).resolve()
    assert context == ROOT
    assert (context / compose["build"]["dockerfile"]).resolve() == DOCKERFILE
    assert any(str(port).endswith(":8000") for port in compose["ports"]), compose["ports"]
    assert compose["restart"] in ("always", "unless-stopped", "on-failure")


def test_compose_runs_read_only_with_a_writable_tmp(compose, final) -> None:
    assert compose["read_only"] is True
    assert "/tmp" in [entry.split(":")[0] for entry in compose["tmpfs"]]
    assert _env(final)["NUMBA_CACHE_DIR"].startswith("/tmp/")
    grace = int(compose["stop_grace_period"].removesuffix("s"))
    assert grace > int(_compose_defaults(compose)["FAMILYWISE_GRACEFUL_SECONDS"])


def test_compose_documents_every_variable_with_the_service_defaults(compose, final, monkeypatch) -> None:
    defaults = _compose_defaults(compose)
    assert set(defaults) == _variables_read_by_the_service_and_the_entry_point()
    for name in list(os.environ):
        if name.startswith("FAMILYWISE_"):
            monkeypatch.delenv(name)
    for name, value in defaults.items():
        monkeypatch.setenv(name, value)
    # one deliberate difference, explained beside it in compose.yaml: the batch pool follows the
    # container's CPU limit (the service's default, 0, would follow the host's CPUs)
    assert Settings.from_env() == Settings(batch_workers=int(defaults["FAMILYWISE_BATCH_WORKERS"])), (
        "a default in compose.yaml differs from settings.py")
    entrypoint = ENTRYPOINT.read_text(encoding="utf-8")
    for name in ("FAMILYWISE_WORKERS", "FAMILYWISE_GRACEFUL_SECONDS", "FAMILYWISE_LOG_LEVEL"):
        assert f"${{{name}:-{defaults[name]}}}" in entrypoint, name
    assert _env(final)["FAMILYWISE_WORKERS"] == defaults["FAMILYWISE_WORKERS"]


def test_compose_holds_no_key(compose) -> None:
    for name, value in _compose_defaults(compose).items():
        if SECRET_NAME.search(name):
            assert value == "", f"{name} has a default in compose.yaml"


# --- Kubernetes ---------------------------------------------------------------

@pytest.fixture(scope="module")
def manifests(yaml_module) -> dict[str, list[dict]]:
    files = sorted(K8S.glob("*.yaml"))
    assert files
    return {path.name: [d for d in yaml_module.safe_load_all(path.read_text(encoding="utf-8")) if d]
            for path in files}


def _one(manifests, kind: str) -> dict:
    found = [d for docs in manifests.values() for d in docs if d.get("kind") == kind]
    assert len(found) == 1, f"expected one {kind}, found {len(found)}"
    return found[0]


@pytest.fixture(scope="module")
def deployment(manifests) -> dict:
    return _one(manifests, "Deployment")


@pytest.fixture(scope="module")
def container(deployment) -> dict:
    (container,) = deployment["spec"]["template"]["spec"]["containers"]
    return container


def _quantity(value) -> float:
    """A Kubernetes CPU or memory quantity as a number (cores, bytes)."""
    text = str(value)
    units = {"m": 1e-3, "Ki": 2**10, "Mi": 2**20, "Gi": 2**30, "K": 1e3, "M": 1e6, "G": 1e9}
    for suffix, factor in sorted(units.items(), key=lambda item: -len(item[0])):
        if text.endswith(suffix):
            return float(text[: -len(suffix)]) * factor
    return float(text)


def test_every_manifest_names_its_kind_and_version(manifests) -> None:
    for name, documents in manifests.items():
        assert documents, f"{name} is empty"
        for document in documents:
            assert document.get("apiVersion") and document.get("kind"), name


def test_the_probes_use_readyz_and_healthz_on_the_service_port(container) -> None:
    ports = {port["name"]: port["containerPort"] for port in container["ports"]}
    assert 8000 in ports.values()
    for probe, path in (("readinessProbe", "/readyz"), ("livenessProbe", "/healthz")):
        check = container[probe]["httpGet"]
        assert check["path"] == path
        assert ports.get(check["port"], check["port"]) == 8000


def test_the_container_has_resource_requests_within_limits(container) -> None:
    resources = container["resources"]
    for resource in ("cpu", "memory"):
        request = _quantity(resources["requests"][resource])
        limit = _quantity(resources["limits"][resource])
        assert 0 < request <= limit, resource
    env = {e["name"]: e.get("value") for e in container["env"]}
    assert int(env["FAMILYWISE_WORKERS"]) <= _quantity(resources["limits"]["cpu"])


def test_the_pod_runs_non_root_on_a_read_only_root_with_a_writable_tmp(deployment, container, final) -> None:
    pod = deployment["spec"]["template"]["spec"]
    assert pod["securityContext"]["runAsNonRoot"] is True
    assert str(pod["securityContext"]["runAsUser"]) == _image_user(final)
    security = container["securityContext"]
    assert security["readOnlyRootFilesystem"] is True
    assert security["allowPrivilegeEscalation"] is False
    mounts = {m["mountPath"]: m["name"] for m in container["volumeMounts"]}
    volumes = {v["name"]: v for v in pod["volumes"]}
    assert "emptyDir" in volumes[mounts["/tmp"]]
    env = {e["name"]: e.get("value") for e in container["env"]}
    assert env["NUMBA_CACHE_DIR"].startswith("/tmp/")


def test_the_grace_period_covers_the_drain_and_the_in_flight_requests(deployment, container) -> None:
    env = {e["name"]: e.get("value") for e in container["env"]}
    drain = container.get("lifecycle", {}).get("preStop", {}).get("exec", {}).get("command", [])
    pause = int(drain[1]) if drain[:1] == ["sleep"] else 0
    grace = deployment["spec"]["template"]["spec"]["terminationGracePeriodSeconds"]
    assert grace > pause + int(env["FAMILYWISE_GRACEFUL_SECONDS"])


def test_api_keys_come_only_from_a_secret(manifests, container) -> None:
    for entry in container["env"]:
        if SECRET_NAME.search(entry["name"]):
            assert "value" not in entry and "secretKeyRef" in entry["valueFrom"], entry
    secret = _one(manifests, "Secret")
    assert manifests[SECRET_EXAMPLE.name] == [secret], "the only Secret should be the example"
    values = {**secret.get("stringData", {}), **secret.get("data", {})}
    assert values and all(value in ("", None) for value in values.values()), "the example holds a key"
    assert "kubectl create secret" in SECRET_EXAMPLE.read_text(encoding="utf-8")
    keys = next(e for e in container["env"] if e["name"] == "FAMILYWISE_API_KEYS")
    keys = keys["valueFrom"]["secretKeyRef"]
    assert keys["name"] == secret["metadata"]["name"] and keys["key"] in values


def test_the_service_selects_the_pods_and_reaches_the_named_port(manifests, deployment, container) -> None:
    service = _one(manifests, "Service")
    labels = deployment["spec"]["template"]["metadata"]["labels"]
    assert service["spec"]["selector"].items() <= labels.items()
    assert deployment["spec"]["selector"]["matchLabels"].items() <= labels.items()
    names = {port["name"] for port in container["ports"]}
    assert all(port["targetPort"] in names for port in service["spec"]["ports"])


def test_the_autoscaler_scales_the_deployment_on_cpu(manifests, deployment) -> None:
    hpa = _one(manifests, "HorizontalPodAutoscaler")
    assert hpa["apiVersion"] == "autoscaling/v2"
    target = hpa["spec"]["scaleTargetRef"]
    assert (target["apiVersion"], target["kind"], target["name"]) == (
        deployment["apiVersion"], "Deployment", deployment["metadata"]["name"])
    (metric,) = hpa["spec"]["metrics"]
    assert metric["type"] == "Resource" and metric["resource"]["name"] == "cpu"
    assert metric["resource"]["target"]["type"] == "Utilization"
    assert 0 < metric["resource"]["target"]["averageUtilization"] <= 100
    assert 2 <= hpa["spec"]["minReplicas"] <= hpa["spec"]["maxReplicas"]
    # The HPA owns the replica count; a fixed one would be reset at each apply.
    assert "replicas" not in deployment["spec"]
    budget = _one(manifests, "PodDisruptionBudget")
    assert budget["spec"]["minAvailable"] < hpa["spec"]["minReplicas"], "a drain could never proceed"


def test_kustomization_lists_every_manifest_but_the_secret_example(yaml_module) -> None:
    kustomization = yaml_module.safe_load((K8S / "kustomization.yaml").read_text(encoding="utf-8"))
    listed = set(kustomization["resources"])
    present = {p.name for p in K8S.glob("*.yaml")} - {"kustomization.yaml", SECRET_EXAMPLE.name}
    assert listed == present

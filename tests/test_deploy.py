"""The nightly script picks the newest dump and passes widen train's exit code through."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path
from typing import Any

from tests.helpers import write_jsonl

ROOT = Path(__file__).resolve().parent.parent
SCRIPT = ROOT / "deploy" / "widen-nightly.sh"
WIDEN = Path(sys.executable).parent / "widen"


def _run(dumps: Path, store: Path, **extra: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, WIDEN_DUMPS=str(dumps), WIDEN_STORE=str(store), WIDEN_BIN=str(WIDEN), **extra)
    return subprocess.run(["bash", str(SCRIPT)], capture_output=True, text=True, env=env, check=False)


def test_nightly_trains_on_the_newest_dump(tmp_path: Path) -> None:
    dumps = tmp_path / "dumps"
    dumps.mkdir()
    # The older dump is unusable; if it were picked the run would exit 2.
    older = write_jsonl(dumps / "tollbridge-2026-11-29.jsonl", ["{broken"])
    os.utime(older, (1_700_000_000, 1_700_000_000))  # older than the next by its timestamp (2023)
    rows = [
        {"id": f"tvj-{i}", "title": f"Kitchen Porter {i % 7}", "description": "Wash pots in Hensby"} for i in range(60)
    ]
    write_jsonl(dumps / "tollbridge-2026-11-30.jsonl", rows)
    config = tmp_path / "c.toml"
    config.write_text("[embedding]\nmin_count = 1\nepochs = 1\n", encoding="utf-8")
    log = write_jsonl(tmp_path / "log.jsonl", [{"q": "kitchen porter 3"}, {"q": "kitchen porter hensby"}])
    done = _run(dumps, tmp_path / "store", WIDEN_CONFIG=str(config), WIDEN_QUERY_LOG=str(log))
    assert done.returncode == 0, done.stderr
    assert "tollbridge-2026-11-30.jsonl" in done.stdout
    # With the day's query log, the worklist's summary line follows the training's output.
    assert "worklist of " in done.stdout and "(no bundle before it)" in done.stdout


def test_nightly_with_no_dump_exits_2(tmp_path: Path) -> None:
    (tmp_path / "dumps").mkdir()
    done = _run(tmp_path / "dumps", tmp_path / "store")
    assert done.returncode == 2 and "no dump" in done.stderr


KUBERNETES = ROOT / "deploy" / "kubernetes"


def _manifests() -> dict[str, dict[str, object]]:
    import yaml

    return {p.stem: yaml.safe_load(p.read_text(encoding="utf-8")) for p in sorted(KUBERNETES.glob("*.yaml"))}


def test_every_manifest_validates_against_the_kubernetes_schemas() -> None:
    """kubernetes-validate (from PyPI) carries the Kubernetes OpenAPI schemas; strict mode also
    refuses fields the schema does not know. No cluster is needed."""
    import kubernetes_validate
    from kubernetes_validate.utils import latest_version

    manifests = _manifests()
    assert {"deployment", "service", "poddisruptionbudget", "cronjob", "configmap", "secret"} <= set(manifests)
    for manifest in manifests.values():
        kubernetes_validate.validate(manifest, latest_version(), strict=True)  # raises on any error


def _dig(data: Any, *path: object) -> Any:
    for key in path:
        data = data[key]
    return data


def test_the_manifests_name_only_what_the_code_serves_and_runs(trained_store: Path) -> None:
    """Every probe path, port, command and setting in the manifests is one the code has."""
    from fastapi.testclient import TestClient

    from service.app import create_app
    from service.settings import Settings
    from widen.cli.parser import build_parser

    m = _manifests()
    pod = _dig(m["deployment"], "spec", "template", "spec")
    container = _dig(pod, "containers", 0)
    assert _dig(m["deployment"], "spec", "replicas") >= 2
    # Probes: the routes exist and answer as the probes expect on a serving replica.
    with TestClient(create_app(Settings(store=trained_store, access_log=False))) as client:
        for probe, path in (("readinessProbe", "/readyz"), ("livenessProbe", "/healthz")):
            assert _dig(container, probe, "httpGet", "path") == path
            assert client.get(path).status_code == 200
    # Ports: the container port is the one the settings make widen listen on; the Service targets it.
    port = _dig(container, "ports", 0)
    settings = _dig(m["configmap"], "data")
    assert str(_dig(port, "containerPort")) == settings["WIDEN_PORT"]
    assert _dig(m["service"], "spec", "ports", 0, "targetPort") == _dig(port, "name")
    # Settings: every key of the ConfigMap and the Secret is a WIDEN_* setting the service reads.
    fields = {f"WIDEN_{name.upper()}" for name in Settings.model_fields}
    for source in ("configmap", "secret"):
        keys = set(_dig(m[source], "data" if source == "configmap" else "stringData"))
        assert keys <= fields, keys - fields
    # Commands: `serve` is a subcommand; the CronJob runs the nightly script the image installs.
    parser = build_parser()
    args = [str(a) for a in _dig(container, "args")]
    assert parser.parse_args([*args, "--store", "s"]).command == "serve"
    job = _dig(m["cronjob"], "spec", "jobTemplate", "spec", "template", "spec", "containers", 0)
    assert "widen-nightly" in " ".join(_dig(job, "command"))
    dockerfile = (ROOT / "deploy" / "Dockerfile").read_text(encoding="utf-8")
    assert "COPY deploy/widen-nightly.sh /usr/local/bin/widen-nightly" in dockerfile
    env = {e["name"]: e["value"] for e in _dig(job, "env")}
    assert {"WIDEN_DUMPS", "WIDEN_STORE"} <= set(env) and "WIDEN_DUMPS" in SCRIPT.read_text(encoding="utf-8")
    # A read-only root: the mirror and the temporary folder are emptyDir mounts.
    assert _dig(container, "securityContext", "readOnlyRootFilesystem") is True
    mounts = {v["mountPath"] for v in _dig(container, "volumeMounts")}
    assert any(settings["WIDEN_MIRROR"].startswith(path) for path in mounts) and "/tmp" in mounts
    assert all("emptyDir" in v for v in _dig(pod, "volumes"))


def test_the_container_build_is_two_stages_with_no_build_tools_and_a_user() -> None:
    text = (ROOT / "deploy" / "Dockerfile").read_text(encoding="utf-8")
    stages = text.split("\nFROM ")[1:]  # the text before the first FROM is comments
    final = stages[-1]
    assert len(stages) == 2
    assert "gcc" not in final and "apt-get" not in final  # the compiler stays in the build stage
    assert "\nUSER 10001" in final and "useradd" in final
    assert "pip wheel" in stages[0] and "--no-index --find-links /wheels widen" in final
    assert 'ENTRYPOINT ["widen"]' in final  # the console script pyproject.toml installs
    assert 'widen = "widen.cli:main"' in (ROOT / "pyproject.toml").read_text(encoding="utf-8")

"""The README's Kubernetes manifests are valid and match the service they deploy.

Offline: the manifests are taken from the README's "Several replicas" section and validated
with kubernetes-validate (PyPI), which carries the Kubernetes JSON schemas (strict: unknown
fields are errors). Then the parts that only this service can confirm: every ``FIRSTCYCLE_*``
setting is listed with its default, the probes point at the health endpoints the app serves, the
Service reaches the container's port, the memory request covers what a warmed worker was
measured to hold.
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

import kubernetes_validate
import pytest
import yaml

from service.app import create_app
from service.settings import Settings

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
KUBERNETES = "1.37.0"  # the newest schema set kubernetes-validate 1.37 carries


def _section() -> str:
    m = re.search(r"^### Several replicas \(Kubernetes\)\n(.*?)^#{2,3} ", README, re.M | re.S)
    assert m, "README section 'Several replicas (Kubernetes)' not found"
    return m.group(1)


def _manifests() -> list[dict[str, Any]]:
    blocks = re.findall(r"```yaml\n(.*?)```", _section(), re.S)
    assert len(blocks) == 1
    return [d for d in yaml.safe_load_all(blocks[0]) if d]


def _kind(kind: str) -> dict[str, Any]:
    found = [m for m in _manifests() if m["kind"] == kind]
    assert len(found) == 1, kind
    return found[0]


def _mebibytes(quantity: str) -> float:
    units = {"Mi": 1.0, "Gi": 1024.0}
    m = re.fullmatch(r"([0-9.]+)(Mi|Gi)", quantity)
    assert m, quantity
    return float(m.group(1)) * units[m.group(2)]


@pytest.mark.parametrize(
    "kind", ["Deployment", "Service", "HorizontalPodAutoscaler", "PodDisruptionBudget"]
)
def test_manifest_is_valid_kubernetes(kind: str) -> None:
    kubernetes_validate.validate(_kind(kind), KUBERNETES, strict=True)


def test_validator_rejects_a_broken_manifest() -> None:
    # the check can fail: a probe with a misspelt field is refused by the strict schema
    broken = json.loads(json.dumps(_kind("Deployment")))
    broken["spec"]["template"]["spec"]["containers"][0]["readinessProbe"]["httpGett"] = {}
    with pytest.raises(kubernetes_validate.ValidationError):
        kubernetes_validate.validate(broken, KUBERNETES, strict=True)


def _container() -> dict[str, Any]:
    containers = _kind("Deployment")["spec"]["template"]["spec"]["containers"]
    assert len(containers) == 1
    container: dict[str, Any] = containers[0]
    return container


def test_every_setting_is_listed_with_its_default() -> None:
    env = {e["name"]: e for e in _container()["env"]}
    listed = {n.removeprefix("FIRSTCYCLE_").lower() for n in env if n.startswith("FIRSTCYCLE_")}
    cli_only = {"workers", "host", "port"}  # read by `firstcycle serve`, not by Settings
    # the key file is described beside the manifests: a set but missing file stops the service
    assert listed - cli_only | {"api_key_file"} == set(Settings.model_fields)
    for name, e in env.items():
        field = name.removeprefix("FIRSTCYCLE_").lower()
        if not name.startswith("FIRSTCYCLE_") or "value" not in e or field in cli_only:
            continue
        # the field's own default, not Settings(): the test session sets some in its environment
        info = Settings.model_fields[field]
        default = info.default_factory() if info.default_factory else info.default
        assert json.loads(e["value"]) == default, name
    assert env["OMP_NUM_THREADS"]["value"] == "1"
    assert env["FIRSTCYCLE_API_KEYS"]["valueFrom"]["secretKeyRef"]["optional"] is True


def test_probes_use_the_health_endpoints_the_app_serves() -> None:
    paths = {getattr(r, "path", None) for r in create_app().routes}
    c = _container()
    assert c["readinessProbe"]["httpGet"]["path"] == "/readyz"
    assert c["livenessProbe"]["httpGet"]["path"] == "/healthz"
    assert {"/readyz", "/healthz"} <= paths
    port = c["ports"][0]
    assert port["containerPort"] == int(c["args"][c["args"].index("--port") + 1])
    assert _kind("Service")["spec"]["ports"][0]["targetPort"] == port["name"]
    labels = _kind("Deployment")["spec"]["template"]["metadata"]["labels"]
    assert _kind("Service")["spec"]["selector"] == labels
    assert _kind("PodDisruptionBudget")["spec"]["selector"]["matchLabels"] == labels


def test_resources_cover_the_measured_worker() -> None:
    # measured here with `firstcycle serve` (README, this section): 341 MiB after one of each
    # demo request from a warm numba cache, about 484 MiB while compiling at start
    res = _container()["resources"]
    assert _mebibytes(res["requests"]["memory"]) >= 341
    assert _mebibytes(res["limits"]["memory"]) >= 484 * 1.5
    for number in ("282 MiB", "341 MiB", "484 MiB"):
        assert number in _section()
    hpa = _kind("HorizontalPodAutoscaler")["spec"]
    assert hpa["scaleTargetRef"]["name"] == _kind("Deployment")["metadata"]["name"]
    assert hpa["metrics"][0]["resource"]["name"] == "cpu"
    assert hpa["minReplicas"] >= 2  # the disruption budget keeps one while a node drains

"""A client generated from the committed contract works against the live server, every operation.

A design-automation system generates its client from ``openapi/v1/openapi.json``; this test does
the same with openapi-python-client (PyPI) into a temporary directory, imports it and calls
every operation of the contract on the live uvicorn server with the demo requests. The answers
must come out as the generated models, equal to the committed golden examples: the request
unions (transformer or circuit, the source kinds, fuse / relay / breaker devices) must
round-trip through the generated models, problem documents must parse as ``Problem`` with the
offending field, and the batch's per-item problems as the item's ``problem``.

What the generator cannot do with our contract (openapi-python-client 0.29):

* ``image/svg+xml`` responses (the figure operations) are left unparsed: the operation is
  generated, and ``sync_detailed(...).content`` holds the SVG bytes. That is the workaround, and
  the generation's warnings are checked to be about nothing else.
* The cross-field rules under ``allOf`` that named a field at their top level made it drop the
  clearance, generator-dip and mitigation request models (it merges ``allOf`` members'
  properties into the model); the contract now publishes those rules inside a one-member
  ``anyOf``, the same constraint (service/models/common.py ``_schema_rules``).

Generated code stays in the temporary directory, never in the repository.
"""

from __future__ import annotations

import enum
import importlib
import json
import math
import subprocess
import sys
import types
import typing
import urllib.parse
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from service.examples import (
    CLEARANCE_REQUESTS,
    DIP_REQUESTS,
    ENVELOPE_REQUESTS,
    MITIGATION_REQUESTS,
    NETWORK_REQUESTS,
    NETWORK_STATISTICS_REQUESTS,
    PEAK_BATCH_REQUESTS,
    PEAK_REQUESTS,
    SHEET_REQUESTS,
    STATISTICS_REQUESTS,
)

ROOT = Path(__file__).resolve().parents[2]
CONTRACT = ROOT / "openapi" / "v1" / "openapi.json"
EXAMPLES = ROOT / "openapi" / "v1" / "examples"
PACKAGE = "firstcycle_generated_client"


@pytest.fixture(scope="module")
def gen(tmp_path_factory: pytest.TempPathFactory) -> Iterator[types.ModuleType]:
    out = tmp_path_factory.mktemp("client")
    run = subprocess.run(
        [sys.executable, "-m", "openapi_python_client", "generate", "--path", str(CONTRACT),
         "--output-path", str(out / PACKAGE), "--meta", "none"],
        capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    log = run.stdout + run.stderr
    assert run.returncode == 0, log
    assert "Unable to process schema" not in log, log
    assert "will not be generated" not in log, log
    for warning in log.split("WARNING parsing ")[1:]:
        assert "Unsupported content_type image/svg+xml" in warning, warning
    sys.path.insert(0, str(out))
    try:
        yield importlib.import_module(PACKAGE)
    finally:
        sys.path.remove(str(out))
        for name in [m for m in sys.modules if m.split(".")[0] == PACKAGE]:
            del sys.modules[name]


def _mod(name: str) -> Any:
    return importlib.import_module(f"{PACKAGE}.{name}")


def _golden(name: str) -> dict[str, Any]:
    data: dict[str, Any] = json.loads((EXAMPLES / f"{name}.json").read_text(encoding="utf-8"))
    return data


def _close(got: Any, want: Any, path: str = "") -> None:
    """Equal structure, numbers to 1e-9 relative (as tests/contract/test_contract.py)."""
    if isinstance(want, dict):
        assert isinstance(got, dict), path
        assert set(got) == set(want), path
        for k in want:
            _close(got[k], want[k], f"{path}.{k}")
    elif isinstance(want, list):
        assert isinstance(got, list), path
        assert len(got) == len(want), path
        for i, (g, w) in enumerate(zip(got, want, strict=True)):
            _close(g, w, f"{path}[{i}]")
    elif isinstance(want, float) and not isinstance(want, bool):
        assert math.isclose(got, want, rel_tol=1e-9, abs_tol=1e-12), (path, got, want)
    else:
        assert got == want, (path, got, want)


def _model(gen_name: str, data: dict[str, Any]) -> Any:
    """The generated request model of ``data``; it must give back exactly what it was given."""
    module = _mod("models")
    model = getattr(module, gen_name).from_dict(data)
    assert model.to_dict() == data, f"{gen_name} does not round-trip"
    return model


def _json_op(client: Any, api: str, model: str, request: dict[str, Any], golden: str) -> Any:
    op = _mod(f"api.{api}")
    answer = op.sync(client=client, body=_model(model, request))
    assert type(answer).__name__ != "Problem", answer
    _close(answer.to_dict(), _golden(golden)["response"])
    return answer


def _query_args(func: Any, query: str) -> dict[str, Any]:
    """A query string as the generated function's typed keyword arguments (enums, floats)."""
    hints = typing.get_type_hints(func)
    args: dict[str, Any] = {}
    for key, value in urllib.parse.parse_qsl(query, keep_blank_values=True):
        kinds = typing.get_args(hints[key]) or (hints[key],)
        for kind in kinds:
            if isinstance(kind, type) and issubclass(kind, enum.Enum):
                args[key] = kind(int(value) if key == "phases" else value)
                break
            if kind is float:
                args[key] = float(value)
                break
            if kind is str:
                args[key] = value
                break
        else:
            raise AssertionError(f"no type for {key}: {hints[key]}")
    return args


def test_generated_client_runs_every_operation(gen: types.ModuleType, live_server: str) -> None:
    timeout = _mod("client").httpx.Timeout(600.0)
    with gen.Client(base_url=live_server, timeout=timeout) as client:
        _every_operation(client)


def _every_operation(client: Any) -> None:
    contract = json.loads(CONTRACT.read_text(encoding="utf-8"))
    ops = {op["operationId"] for item in contract["paths"].values() for op in item.values()}
    called: set[str] = set()

    # operations
    health = _mod("api.operations.healthz").sync(client=client)
    assert health.to_dict()["status"] == "ok"
    ready = _mod("api.operations.readyz").sync(client=client)
    assert ready.to_dict()["status"] == "ready"
    assert "firstcycle_requests_total" in _mod("api.operations.metrics").sync(client=client)
    called |= {"healthz", "readyz", "metrics"}

    # the JSON operations, with every demo request, against the golden answers
    for name, body in PEAK_REQUESTS.items():
        _json_op(client, "inrush.inrush_peak", "PeakRequest", body, f"inrush_peak.{name}")
    for name, body in ENVELOPE_REQUESTS.items():
        _json_op(
            client, "inrush.inrush_envelope", "EnvelopeRequest", body, f"inrush_envelope.{name}"
        )
    for name, body in CLEARANCE_REQUESTS.items():
        answer = _json_op(
            client, "clearance.clearance", "ClearanceRequest", body, f"clearance.{name}"
        )
        assert all(d.ride_through.margin_ratio > 0 for d in answer.devices)
    for name, body in DIP_REQUESTS.items():
        answer = _json_op(
            client, "generator_dip.generator_dip", "GeneratorDipRequest", body,
            f"generator_dip.{name}",
        )  # fmt: skip
        assert answer.sizing.rating_kva > 0
    for name, body in STATISTICS_REQUESTS.items():
        _json_op(
            client, "inrush.inrush_statistics", "StatisticsRequest", body,
            f"inrush_statistics.{name}",
        )  # fmt: skip
    for name, body in MITIGATION_REQUESTS.items():
        _json_op(client, "mitigation.mitigation", "MitigationRequest", body, f"mitigation.{name}")
    for name, body in NETWORK_REQUESTS.items():
        net = _json_op(
            client, "network.network_energization", "NetworkRequest", body,
            f"network_energization.{name}",
        )  # fmt: skip
        assert net.source.first_peak_a > 0
    for name, body in NETWORK_STATISTICS_REQUESTS.items():
        odds = _json_op(
            client, "network.network_energization_statistics", "NetworkStatisticsRequest", body,
            f"network_energization_statistics.{name}",
        )  # fmt: skip
        assert odds.source.p99_a > 0
    called |= {"inrush_peak", "inrush_envelope", "clearance", "generator_dip"}
    called |= {"inrush_statistics", "mitigation", "network_energization"}
    called.add("network_energization_statistics")

    # the figures: generated, left unparsed (image/svg+xml); the bytes are the SVG
    for api, model, body in (
        ("clearance.clearance_figure", "ClearanceRequest", CLEARANCE_REQUESTS),
        ("generator_dip.generator_dip_figure", "GeneratorDipRequest", DIP_REQUESTS),
        (
            "clearance.clearance_differential_figure",
            "ClearanceRequest",
            {"diff": CLEARANCE_REQUESTS["northgate_main_unit_differential"]},
        ),
        ("network.network_energization_figure", "NetworkRequest", NETWORK_REQUESTS),
    ):
        first = next(iter(body.values()))
        r = _mod(f"api.{api}").sync_detailed(client=client, body=_model(model, first))
        assert r.status_code == 200
        assert r.headers["content-type"].startswith("image/svg+xml")
        assert b"<svg" in r.content
        called.add(api.split(".")[1])

    # the batch: results and the per-item problem come out as the item's own models
    batch = _json_op(
        client, "inrush.inrush_peak_batch", "PeakBatchRequest",
        PEAK_BATCH_REQUESTS["northgate_sizing_loop"], "inrush_peak_batch.northgate_sizing_loop",
    )  # fmt: skip
    items = {i.index: i for i in batch.results}
    assert type(items[0].result).__name__ == "PeakResponse"
    bad = items[3]
    assert bad.status == 422
    assert type(bad.problem).__name__ == "Problem"
    assert bad.problem.errors[0].field == "transformer.impedance_percent"
    called.add("inrush_peak_batch")

    # a problem document of a JSON operation parses as Problem, naming the field
    wrong = json.loads(json.dumps(PEAK_REQUESTS["northgate_main_unit"]))
    wrong["transformer"]["impedance_percent"] = 55
    problem = _mod("api.inrush.inrush_peak").sync(client=client, body=_model("PeakRequest", wrong))
    assert type(problem).__name__ == "Problem"
    assert problem.status == 422
    assert problem.errors[0].field == "transformer.impedance_percent"

    # the spreadsheet operations, with typed arguments, against the golden texts
    for name, (op, url) in SHEET_REQUESTS.items():
        module = _mod(f"api.spreadsheet.{op}")
        text = module.sync(client=client, **_query_args(module.sync, url.split("?", 1)[1]))
        want = _golden(f"{op}.{name}")["response_text"]
        if op.endswith(("_envelope", "_table")):
            assert text.splitlines()[0] == want.splitlines()[0]
            got_rows = [[float(x) for x in r.split(",")] for r in text.splitlines()[1:]]
            want_rows = [[float(x) for x in r.split(",")] for r in want.splitlines()[1:]]
            _close(got_rows, want_rows)
        elif want[:1].isdigit():
            _close(float(text), float(want))
        else:  # a verdict word
            assert text == want
        called.add(op)
    problem = _mod("api.spreadsheet.sheet_inrush_peak").sync(
        client=client,
        **_query_args(
            _mod("api.spreadsheet.sheet_inrush_peak").sync,
            "quantity=first_peak_a&rating_kva=2500&voltage_kv=13.8&position=outer"
            "&impedance_percent=55&x_over_r=7",
        ),
    )
    assert type(problem).__name__ == "Problem"
    assert problem.errors[0].field == "impedance_percent"

    assert called == ops, f"not called: {sorted(ops - called)}; unknown: {sorted(called - ops)}"

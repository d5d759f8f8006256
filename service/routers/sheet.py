"""``/v1/sheet``: spreadsheet access, one number per cell or a small CSV table, by GET.

Desktop spreadsheets' web-service function can only GET a URL of at most 2,048 characters and
shows no error detail, so these endpoints take flat query parameters whose names carry their
unit, and answer with a bare number (``text/plain``, ``.`` decimal, no thousands separator) or a
CSV table. Each call is converted into the same request model as the JSON operations and runs
the same computation; answers carry an ``ETag`` and ``Cache-Control`` (they are deterministic).
"""

from __future__ import annotations

import hashlib
import io
import math
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Depends, Query, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import Response
from pydantic import BaseModel, ConfigDict, Field, ValidationError

from service import compute
from service.models.inrush import EnvelopeRequest, PeakRequest
from service.problems import PROBLEM_RESPONSES
from service.routers.inrush import _envelope, _peak
from service.settings import Settings, settings_dependency
from service.version import API_VERSION

router = APIRouter(
    prefix="/v1/sheet",
    tags=["spreadsheet"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)
SettingsDep = Annotated[Settings, Depends(settings_dependency)]


class SheetCase(BaseModel):
    """Flat query parameters describing one energisation (nameplate mode)."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    rating_kva: float = Field(ge=0.1, le=2_000_000.0, description="Rated power [kVA]")
    phases: Literal[1, 3] = 3
    frequency_hz: float = Field(60.0, ge=10.0, le=400.0)
    voltage_kv: float = Field(ge=0.01, le=1000.0, description="Energised winding, line-to-line")
    connection: Literal["wye_grounded", "wye", "delta"] = "wye_grounded"
    position: Literal["inner", "outer"]
    impedance_percent: float = Field(ge=0.5, le=30.0)
    x_over_r: float = Field(ge=0.1, le=100.0)
    no_load_current_percent: float = Field(1.0, ge=0.01, le=20.0)
    material: Literal["grain_oriented", "amorphous"] = "grain_oriented"
    fault_mva: float | None = Field(
        None, ge=0.01, le=1e6, description="Source fault level; omit for an ideal source"
    )
    source_x_over_r: float = Field(
        10.0, ge=0.1, le=100.0, description="Source X/R (with fault_mva)"
    )
    closing_angle_deg: float = Field(0.0, ge=-360.0, le=360.0)
    residual_flux_pu: str | None = Field(
        None,
        max_length=64,
        pattern=r"^-?[0-9]{1,3}(\.[0-9]{1,6})?(,-?[0-9]{1,3}(\.[0-9]{1,6})?){0,2}$",
        description="Residual flux per winding, comma-separated, e.g. 0.8,-0.4,-0.4",
    )

    def study(self) -> dict[str, Any]:
        """The equivalent JSON request body."""
        body: dict[str, Any] = {
            "transformer": {
                "rating_kva": self.rating_kva,
                "phases": self.phases,
                "frequency_hz": self.frequency_hz,
                "energized_winding": {
                    "voltage_kv": self.voltage_kv,
                    "connection": self.connection,
                    "position": self.position,
                },
                "impedance_percent": self.impedance_percent,
                "x_over_r": self.x_over_r,
                "no_load_current_percent": self.no_load_current_percent,
                "core": {"material": self.material},
            },
            "switching": {"closing_angle_deg": self.closing_angle_deg},
        }
        if self.fault_mva is not None:
            body["source"] = {
                "kind": "fault_level",
                "fault_mva": self.fault_mva,
                "x_over_r": self.source_x_over_r,
            }
        if self.residual_flux_pu is not None:
            body["switching"]["residual_flux_pu"] = [
                float(x) for x in self.residual_flux_pu.split(",")
            ]
        return body


PeakQuantity = Literal[
    "first_peak_a",
    "first_peak_x_rated",
    "worst_peak_a",
    "worst_peak_x_rated",
    "worst_closing_angle_deg",
    "analytic_worst_peak_a",
    "analytic_worst_peak_x_rated",
    "rated_current_a",
]


class PeakQuery(SheetCase):
    """Query of ``peak.txt``."""

    quantity: PeakQuantity = Field(description="Which number to return")


class IeqQuery(SheetCase):
    """Query of ``ieq.txt``."""

    time_s: float = Field(0.1, ge=0.01, le=2.0, description="I_eq at this time [s]")
    line: Literal["A", "B", "C", "max"] = Field("max", description="Line, or the largest")
    unit: Literal["a", "x_rated"] = Field("x_rated", description="Amperes or x rated")
    duration_s: float = Field(1.0, gt=0.0, le=5.0, description="Simulated time [s]")


class TableQuery(SheetCase):
    """Query of the CSV tables."""

    duration_s: float = Field(1.0, gt=0.0, le=5.0, description="Simulated time [s]")


def _request(model: type[PeakRequest] | type[EnvelopeRequest], data: dict[str, Any]) -> Any:
    """Validate the JSON-equivalent body; its errors become the usual 422 problem."""
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        raise RequestValidationError(
            [{**e, "loc": ("query", *e["loc"])} for e in exc.errors(include_context=False)]
        ) from None


def _number(value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return ""
    return repr(float(value))  # shortest round-trip text, "." decimal, no grouping


def _cached(request: Request, text: str, media_type: str) -> Response:
    tag = '"' + hashlib.sha256((API_VERSION + text).encode()).hexdigest()[:32] + '"'
    headers = {"ETag": tag, "Cache-Control": "public, max-age=3600"}
    if request.headers.get("if-none-match") == tag:
        return Response(status_code=304, headers=headers)
    return Response(text, media_type=media_type, headers=headers)


@router.get(
    "/inrush/peak.txt",
    operation_id="sheet_inrush_peak",
    summary="One first-peak number as text/plain",
    response_class=Response,
    responses={200: {"content": {"text/plain": {"schema": {"type": "string"}}},
                     "description": "The number alone; empty when not defined"}},
)  # fmt: skip
async def peak_txt(
    request: Request, q: Annotated[PeakQuery, Query()], settings: SettingsDep
) -> Response:
    """First peak (simulated), worst case over closing angle, or the closed-form worst case."""
    method = "analytic" if q.quantity.startswith("analytic") else "both"
    body = _request(PeakRequest, {**q.study(), "method": method})
    res = await compute.run_heavy(settings, _peak, body, settings)
    values = {
        "first_peak_a": res.first_peak_a,
        "first_peak_x_rated": res.first_peak_x_rated,
        "worst_peak_a": res.worst_case_simulated.peak_a if res.worst_case_simulated else None,
        "worst_peak_x_rated": (
            res.worst_case_simulated.peak_x_rated if res.worst_case_simulated else None
        ),
        "worst_closing_angle_deg": (
            res.worst_case_simulated.closing_angle_deg if res.worst_case_simulated else None
        ),
        "analytic_worst_peak_a": res.worst_case_analytic.peak_a
        if res.worst_case_analytic
        else None,
        "analytic_worst_peak_x_rated": (
            res.worst_case_analytic.peak_x_rated if res.worst_case_analytic else None
        ),
        "rated_current_a": res.rated_current_a,
    }
    return _cached(request, _number(values[q.quantity]), "text/plain")


def _envelope_for(q: TableQuery | IeqQuery, settings: Settings) -> Any:
    body = _request(
        EnvelopeRequest,
        {**q.study(), "options": {"duration_s": q.duration_s, "samples_per_cycle": 64}},
    )
    return _envelope(body, settings)


@router.get(
    "/inrush/ieq.txt",
    operation_id="sheet_inrush_ieq",
    summary="Equivalent rms current I_eq(t) at one time, as text/plain",
    response_class=Response,
    responses={200: {"content": {"text/plain": {"schema": {"type": "string"}}},
                     "description": "The number alone; empty when not defined"}},
)  # fmt: skip
async def ieq_txt(
    request: Request, q: Annotated[IeqQuery, Query()], settings: SettingsDep
) -> Response:
    """I_eq(t) = sqrt((1/t) * integral of i^2) from the closing instant to ``time_s``."""
    res = await compute.run_heavy(settings, _envelope_for, q.model_copy(update={"duration_s": max(
        q.duration_s, q.time_s)}), settings)  # fmt: skip
    times = res.equivalent_rms_times_s
    values: list[float] = []
    for line in res.lines:
        if q.line not in ("max", line.line):
            continue
        series = line.equivalent_rms_a if q.unit == "a" else (line.equivalent_rms_x_rated or [])
        v = _interp_log(times, series, q.time_s)
        if v is not None:
            values.append(v)
    return _cached(request, _number(max(values) if values else None), "text/plain")


def _interp_log(times: list[float], values: list[float], t: float) -> float | None:
    """Value of a tabulated I_eq(t) at t, linear in log(t) between table times."""
    if not times or t < times[0] or t > times[-1]:
        return None
    for k in range(len(times) - 1):
        if times[k] <= t <= times[k + 1]:
            w = math.log(t / times[k]) / math.log(times[k + 1] / times[k])
            return values[k] + w * (values[k + 1] - values[k])
    return values[-1]


@router.get(
    "/inrush/envelope.csv",
    operation_id="sheet_inrush_envelope",
    summary="Per-cycle peaks per line as a CSV table",
    response_class=Response,
    responses={200: {"content": {"text/csv": {"schema": {"type": "string"}}},
                     "description": "cycle,time_s,peak_a_A[,peak_a_B,peak_a_C]"}},
)  # fmt: skip
async def envelope_csv(
    request: Request, q: Annotated[TableQuery, Query()], settings: SettingsDep
) -> Response:
    """One row per cycle: cycle number, its start time, and each line's peak [A]."""
    res = await compute.run_heavy(settings, _envelope_for, q, settings)
    out = io.StringIO()
    out.write("cycle,time_s," + ",".join(f"peak_a_{ln.line}" for ln in res.lines) + "\r\n")
    n = len(res.lines[0].cycle_peaks_a)
    for k in range(n):
        row = [str(k), _number(k / res.frequency_hz)]
        row += [_number(ln.cycle_peaks_a[k]) for ln in res.lines]
        out.write(",".join(row) + "\r\n")
    return _cached(request, out.getvalue(), "text/csv")


@router.get(
    "/inrush/ieq.csv",
    operation_id="sheet_inrush_ieq_table",
    summary="Equivalent rms current I_eq(t) table as CSV",
    response_class=Response,
    responses={200: {"content": {"text/csv": {"schema": {"type": "string"}}},
                     "description": "time_s,ieq_a_A[,ieq_a_B,ieq_a_C]"}},
)  # fmt: skip
async def ieq_csv(
    request: Request, q: Annotated[TableQuery, Query()], settings: SettingsDep
) -> Response:
    """One row per standard time: the time and each line's I_eq [A]."""
    res = await compute.run_heavy(settings, _envelope_for, q, settings)
    out = io.StringIO()
    out.write("time_s," + ",".join(f"ieq_a_{ln.line}" for ln in res.lines) + "\r\n")
    for k, t in enumerate(res.equivalent_rms_times_s):
        out.write(",".join([_number(t)] + [_number(ln.equivalent_rms_a[k]) for ln in res.lines]))
        out.write("\r\n")
    return _cached(request, out.getvalue(), "text/csv")

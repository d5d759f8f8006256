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

from fastapi import APIRouter, Query, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import Response
from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError

from service import compute
from service.deps import SettingsDep
from service.models.inrush import EnvelopeRequest, PeakRequest
from service.problems import PROBLEM_RESPONSES
from service.routers.inrush import _envelope, _peak
from service.settings import Settings, default_limit
from service.version import API_VERSION

router = APIRouter(
    prefix="/v1/sheet",
    tags=["spreadsheet"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)


def _integer_text(value: Any) -> Any:
    """A query value is text: "3" is the integer 3 (an integer literal would reject "3")."""
    if isinstance(value, str) and value.strip().isdigit():
        return int(value.strip())
    return value


class SheetCase(BaseModel):
    """Flat query parameters describing one energisation (nameplate mode)."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    rating_kva: float = Field(ge=0.1, le=2_000_000.0, description="Rated power [kVA]")
    phases: Annotated[Literal[1, 3], BeforeValidator(_integer_text)] = Field(
        3, description="Number of phases"
    )
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

    quantity: PeakQuantity = Field(
        description="Which number to return; the *_x_rated ones are the instantaneous peak "
        "divided by the rated rms line current S/(sqrt(3)*V_LL) (S/V for one phase)"
    )


class IeqQuery(SheetCase):
    """Query of ``ieq.txt``."""

    time_s: float = Field(
        0.1,
        ge=0.01,
        le=2.0,
        description="I_eq at this time [s]; at most duration_s when duration_s is given",
    )
    line: Literal["A", "B", "C", "max"] = Field("max", description="Line, or the largest")
    unit: Literal["a", "x_rated"] = Field(
        "x_rated",
        description="Amperes, or x_rated: I_eq divided by the rated rms line current "
        "S/(sqrt(3)*V_LL) (S/V for one phase)",
    )
    duration_s: float = Field(
        1.0,
        gt=0.0,
        le=default_limit("max_duration_s"),
        description="Simulated time [s]; when left out, 1 s or time_s if later. I_eq(time_s) "
        "does not depend on it (the simulation runs at least to the tabulated time at or after "
        "time_s), but a given duration shorter than time_s is a contradiction and gets a 422",
    )


class TableQuery(SheetCase):
    """Query of the CSV tables."""

    duration_s: float = Field(
        1.0, gt=0.0, le=default_limit("max_duration_s"), description="Simulated time [s]"
    )


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


def _envelope_for(
    q: TableQuery | IeqQuery, settings: Settings, ieq_times_s: tuple[float, ...] | None = None
) -> Any:
    # the JSON operation's own request with its default options but the duration: the same
    # simulation, sampling and reading, so a cell and the JSON answer are one computation
    body = _request(EnvelopeRequest, {**q.study(), "options": {"duration_s": q.duration_s}})
    return _envelope(body, settings, ieq_times_s)


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
    """I_eq(t) = sqrt((1/t) * integral of i^2) from the closing instant to ``time_s``, computed at
    that time by the same core call as the JSON envelope (not interpolated in its table)."""
    if "duration_s" in q.model_fields_set and q.time_s > q.duration_s:
        raise RequestValidationError(
            [
                {
                    "type": "less_than_equal",
                    "loc": ("query", "time_s"),
                    "msg": f"time_s is beyond the simulated duration_s of {q.duration_s:g} s; "
                    "give a time within it or a longer duration_s",
                    "input": q.time_s,
                    "ctx": {"ge": 0.01, "le": q.duration_s},
                }
            ]
        )
    case = q.model_copy(update={"duration_s": max(q.duration_s, q.time_s)})
    res = await compute.run_heavy(settings, _envelope_for, case, settings, (q.time_s,))
    values: list[float] = []
    for line in res.lines:
        if q.line not in ("max", line.line):
            continue
        series = line.equivalent_rms_a if q.unit == "a" else (line.equivalent_rms_x_rated or [])
        values.extend(series[:1])
    return _cached(request, _number(max(values) if values else None), "text/plain")


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

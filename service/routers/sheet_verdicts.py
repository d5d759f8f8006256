"""``/v1/sheet``: verdicts in cells, by GET: a device's ride-through, the generator dip.

The questions a spreadsheet owner asks most after the peak: does the fuse (or the relay) ride
through the inrush, with what margin; how deep is the dip when the generator energises the unit,
how long the recovery, and which generator would pass. Like the other sheet endpoints: flat query
parameters named with their units, one bare number or word per call (``text/plain``), an
``ETag``. Each call is turned into the JSON operation's own request (``POST /v1/clearance``,
``POST /v1/generator-dip``) and runs that operation's computation, work budget included, so a
cell holds the JSON answer's number. Errors name the query parameter.

Fuse curves travel in one parameter each, as ``current_a:time_s`` pairs separated by commas
(``180:1000,300:20,1000:0.35``), at most 16 points, at most 480 characters: with every other
parameter given too, the longest URL stays within the 2,048 characters desktop spreadsheets
allow in a web-service call (Excel's limit, from memory).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Query, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import Response
from pydantic import BaseModel, Field, ValidationError

from core.errors import LimitError, ParameterError
from service import compute
from service.deps import SettingsDep
from service.models.clearance import ClearanceRequest, RelayCurve
from service.models.dip import GeneratorDipRequest
from service.problems import PROBLEM_RESPONSES
from service.routers import clearance as clearance_router
from service.routers import dip as dip_router
from service.routers.sheet import SheetCase, _cached, _number
from service.settings import Settings, default_limit

router = APIRouter(
    prefix="/v1/sheet",
    tags=["spreadsheet"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)

_NUMBER = r"[0-9]{1,7}(\.[0-9]{1,6})?"
_POINTS = rf"^{_NUMBER}:{_NUMBER}(,{_NUMBER}:{_NUMBER}){{1,15}}$"
POINTS_MAX_CHARS = 480
TEXT_200: dict[int | str, dict[str, Any]] = {
    200: {
        "content": {"text/plain": {"schema": {"type": "string"}}},
        "description": "The number (or verdict word) alone; empty when not defined",
    }
}


def _points_field(description: str) -> Any:
    return Field(
        None,
        max_length=POINTS_MAX_CHARS,
        pattern=_POINTS,
        description=description + ": current_a:time_s pairs separated by commas, current "
        "increasing, 2 to 16 points, e.g. 180:1000,300:20,1000:0.35 (rms current [A], time [s])",
    )


def _pairs(text: str) -> list[dict[str, float]]:
    out = []
    for pair in text.split(","):
        current, time = pair.split(":")
        out.append({"current_a": float(current), "time_s": float(time)})
    return out


def _query_name(loc: tuple[Any, ...], names: Mapping[str, str], fields: set[str]) -> str:
    """The query parameter behind a JSON request location, as well as it is known: the path's
    own entry in ``names``, else the innermost part that is a query parameter's name, else the
    longest entry of ``names`` the path starts with, else the path itself."""
    path = ".".join(str(x) for x in loc)
    if path in names:
        return names[path]
    for part in reversed(loc):
        if isinstance(part, str) and part in fields:
            return part
    for prefix in sorted(names, key=len, reverse=True):
        if prefix and path.startswith(prefix + "."):
            return names[prefix]
    return path or "query"


def _validated(
    model: type[BaseModel], data: dict[str, Any], names: Mapping[str, str], q: BaseModel
) -> Any:
    """The JSON operation's request; its errors name the query parameters and their values."""
    fields = set(type(q).model_fields)
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        errors = []
        for e in exc.errors(include_context=False):
            name = _query_name(tuple(e["loc"]), names, fields)
            value = getattr(q, name) if name in fields else e.get("input")
            errors.append({**e, "loc": ("query", name), "input": value})
        raise RequestValidationError(errors) from None


def _renamed(exc: Exception, names: Mapping[str, str], fields: set[str]) -> Exception:
    """A core or budget error with its JSON paths replaced by the query parameters."""

    def name(path: str) -> str:
        return _query_name(tuple(path.split(".")), names, fields)

    if isinstance(exc, LimitError):
        return LimitError(
            name(exc.parameter),
            exc.value,
            exc.limit,
            knobs=tuple((name(f), a) for f, a in exc.knobs),
            detail=exc.detail,
        )
    if isinstance(exc, ParameterError):
        return ParameterError(name(exc.parameter), exc.value, exc.allowed)
    return exc


# --------------------------------------------------------------------------- ride-through

RideQuantity = Literal[
    "margin_ratio",
    "verdict",
    "trip_time_s",
    "margin_time_s",
    "protection_margin_ratio",
    "protection_status",
    "suitable",
    "first_peak_a",
]


class RideThroughQuery(SheetCase):
    """Query of ``ride-through.txt``: the unit (as for peak.txt) and one device."""

    quantity: RideQuantity = Field(
        "margin_ratio",
        description="margin_ratio: the factor by which the device's operating times could "
        "shrink before it operates on the inrush (> 1 rides through); verdict: rides_through "
        "or trips; trip_time_s: its earliest operation (empty when it rides through); "
        "margin_time_s: where the margin is tightest; protection_margin_ratio and "
        "protection_status: against the IEEE C57.109 through-fault limit; suitable: yes or "
        "no (rides through and protects); first_peak_a",
    )
    device: Literal["fuse", "relay"] = Field(description="The device: a fuse or a relay")
    melt_points: str | None = _points_field("Fuse: minimum-melting curve")
    clearing_points: str | None = _points_field(
        "Fuse: total-clearing curve (for the protection check; optional)"
    )
    melt_current_factor: float | None = Field(
        None,
        ge=0.5,
        le=1.0,
        description="Fuse: derating of the melt curve's current for preload and ageing; "
        "default 0.8 (common practice range 0.75-0.9)",
    )
    relay_standard: Literal["ieee_c37_112", "iec_60255_151"] | None = Field(
        None, description="Relay: the curve's standard"
    )
    relay_curve: RelayCurve | None = Field(None, description="Relay: curve of that standard")
    pickup_a: float | None = Field(None, gt=0.01, le=1e6, description="Relay pickup [A]")
    time_dial: float | None = Field(
        None, gt=0.005, le=20.0, description="Relay time dial (IEEE) or TMS (IEC)"
    )
    instantaneous_pickup_a: float | None = Field(
        None, gt=0.01, le=1e7, description="Relay instantaneous pickup [A] (optional)"
    )
    relay_reset: Literal["curve", "hold", "instantaneous"] = Field(
        "curve", description="Relay reset below pickup"
    )
    closing: Literal["worst", "given"] = Field(
        "worst",
        description="Judge at the worst closing angle for the residual flux, or at "
        "closing_angle_deg",
    )
    duration_s: float = Field(
        2.0, gt=0.1, le=default_limit("max_duration_s"), description="Simulated inrush [s]"
    )
    insulation: Literal["liquid", "dry"] = Field("liquid", description="Liquid or dry type")


_FUSE_ONLY = ("melt_points", "clearing_points", "melt_current_factor")
_RELAY_ONLY = ("relay_standard", "relay_curve", "pickup_a", "time_dial", "instantaneous_pickup_a")
_RIDE_NAMES = {
    "devices.0.minimum_melt": "melt_points",
    "devices.0.total_clearing": "clearing_points",
    "devices.0.melt_current_factor": "melt_current_factor",
    "devices.0.standard": "relay_standard",
    "devices.0.curve": "relay_curve",
    "devices.0.pickup_a": "pickup_a",
    "devices.0.time_dial": "time_dial",
    "devices.0.instantaneous_pickup_a": "instantaneous_pickup_a",
    "devices.0.reset": "relay_reset",
    "devices.0.relay": "relay_curve",  # the curve-of-standard check of the relay model
    "devices.0.fuse.minimum_melt": "melt_points",
    "devices.0.fuse.total_clearing": "clearing_points",
    "devices.0.fuse.melt_current_factor": "melt_current_factor",
    "devices.0.relay.standard": "relay_standard",
    "devices.0.relay.reset": "relay_reset",
    "options.duration_s": "duration_s",
    "options.closing": "closing",
    "options.insulation": "insulation",
}
_RIDE_FIELDS = set(RideThroughQuery.model_fields)


def _query_error(name: str, why: str) -> RequestValidationError:
    return RequestValidationError(
        [{"type": "value_error", "loc": ("query", name), "msg": why, "input": None}]
    )


def _ride_request(q: RideThroughQuery) -> ClearanceRequest:
    """The clearance request of one device (no time-dial window search: not asked here)."""
    given = q.model_fields_set
    if q.device == "fuse":
        stray = [n for n in _RELAY_ONLY if n in given]
        if stray:
            raise _query_error(stray[0], f"{stray[0]} is a relay parameter; device is fuse")
        if q.melt_points is None:
            raise _query_error("melt_points", "a fuse needs its minimum-melting curve")
        device: dict[str, Any] = {
            "kind": "fuse",
            "name": "fuse",
            "minimum_melt": _pairs(q.melt_points),
        }
        if q.clearing_points is not None:
            device["total_clearing"] = _pairs(q.clearing_points)
        if q.melt_current_factor is not None:
            device["melt_current_factor"] = q.melt_current_factor
    else:
        stray = [n for n in _FUSE_ONLY if n in given]
        if stray:
            raise _query_error(stray[0], f"{stray[0]} is a fuse parameter; device is relay")
        for name in ("relay_standard", "relay_curve", "pickup_a", "time_dial"):
            if getattr(q, name) is None:
                raise _query_error(name, f"a relay needs {name}")
        device = {
            "kind": "relay",
            "name": "relay",
            "standard": q.relay_standard,
            "curve": q.relay_curve,
            "pickup_a": q.pickup_a,
            "time_dial": q.time_dial,
            "reset": q.relay_reset,
        }
        if q.instantaneous_pickup_a is not None:
            device["instantaneous_pickup_a"] = q.instantaneous_pickup_a
    body = {
        **q.study(),
        "devices": [device],
        "options": {
            "closing": q.closing,
            "duration_s": q.duration_s,
            "insulation": q.insulation,
            "coordination_window": False,
        },
    }
    request: ClearanceRequest = _validated(ClearanceRequest, body, _RIDE_NAMES, q)
    return request


def _ride_values(body: ClearanceRequest, settings: Settings) -> dict[str, float | str | None]:
    res = clearance_router._response(*clearance_router._study(body, settings))
    dev = res.devices[0]
    rt = dev.ride_through
    pr = dev.protection
    return {
        "margin_ratio": rt.margin_ratio,
        "verdict": "trips" if rt.trips else "rides_through",
        "trip_time_s": rt.trip_time_s,
        "margin_time_s": rt.margin_time_s,
        "protection_margin_ratio": pr.margin_ratio if pr is not None else None,
        "protection_status": pr.status if pr is not None else None,
        "suitable": "yes" if dev.suitable else "no",
        "first_peak_a": res.first_peak_a,
    }


def _cell(value: float | str | None) -> str:
    if isinstance(value, str):
        return value
    return _number(value)


@router.get(
    "/clearance/ride-through.txt",
    operation_id="sheet_clearance_ride_through",
    summary="Does one fuse or relay ride through the inrush? Margin or verdict as text/plain",
    response_class=Response,
    responses=TEXT_200,
)
async def ride_through_txt(
    request: Request, q: Annotated[RideThroughQuery, Query()], settings: SettingsDep
) -> Response:
    """One device against the unit's inrush, computed as ``POST /v1/clearance`` does for the
    same transformer, source and device (``coordination_window`` off: the time-dial window is
    not a cell's question and does not change the margins)."""
    body = _ride_request(q)
    try:
        values = await compute.run_heavy(settings, _ride_values, body, settings)
    except (LimitError, ParameterError) as exc:
        raise _renamed(exc, _RIDE_NAMES, _RIDE_FIELDS) from None
    return _cached(request, _cell(values[q.quantity]), "text/plain")


# --------------------------------------------------------------------------- generator dip

DipQuantity = Literal[
    "dip_percent",
    "recovery_time_s",
    "min_voltage_pu",
    "verdict",
    "smallest_generator_kva",
    "hand_method_dip_percent",
    "inrush_peak_a",
]


class DipQuery(SheetCase):
    """Query of ``dip.txt``: the unit, and the generator (or the feeder by fault_mva)."""

    quantity: DipQuantity = Field(
        "dip_percent",
        description="dip_percent: the deepest rms voltage dip [%]; recovery_time_s: back "
        "into the recovery band for good (empty: not within duration_s); min_voltage_pu; "
        "verdict: pass, fail, or empty when the limit gives none; smallest_generator_kva: "
        "the smallest generator with the same per-unit data that meets the limit (empty "
        "when none in the searched range does); hand_method_dip_percent: the subtransient "
        "voltage-divider estimate; inrush_peak_a",
    )
    generator_kva: float | None = Field(
        None,
        ge=1.0,
        le=2_000_000.0,
        description="Generator rating [kVA]; give it with x_d2_pu, x_d1_pu, x_d_pu, t_d2_s "
        "and t_d1_s (or t_d1o_s), or leave it out and give the feeder by fault_mva",
    )
    x_d2_pu: float | None = Field(None, gt=0.01, le=1.0, description="X''d [pu]")
    x_d1_pu: float | None = Field(None, gt=0.01, le=2.0, description="X'd [pu]")
    x_d_pu: float | None = Field(None, gt=0.05, le=5.0, description="Xd [pu]")
    t_d2_s: float | None = Field(None, gt=0.001, le=1.0, description="T''d [s]")
    t_d1_s: float | None = Field(None, gt=0.01, le=20.0, description="T'd [s] (or t_d1o_s)")
    t_d1o_s: float | None = Field(None, gt=0.05, le=50.0, description="T'do [s] (or t_d1_s)")
    excitation: Literal["unknown", "constant_field"] = Field(
        "unknown",
        description="unknown: a first-order regulator set for the machine (see POST "
        "/v1/generator-dip); constant_field: no regulator",
    )
    bus_load_kw: float | None = Field(None, ge=0.0, le=1e7, description="Load on the bus [kW]")
    bus_load_kvar: float = Field(0.0, ge=0.0, le=1e7, description="Its lagging [kvar]")
    limit: Literal["G1", "G2", "G3", "custom"] = Field(
        "G2",
        description="The limit the verdict and the sizing use: an ISO 8528-5 class (values "
        "from memory), or custom with max_dip_percent (and max_recovery_s)",
    )
    max_dip_percent: float | None = Field(
        None, gt=0.0, le=100.0, description="Custom limit: largest dip [%]"
    )
    max_recovery_s: float | None = Field(
        None, gt=0.0, le=600.0, description="Custom limit: longest recovery [s]"
    )
    duration_s: float = Field(10.0, gt=0.5, le=30.0, description="Simulated time [s]")
    recovery_band_percent: float = Field(3.0, gt=0.1, le=20.0, description="[%]")
    voltage_measure: Literal["worst", "line", "phase"] = Field(
        "worst", description="Dip from the deeper of phase and line voltages, or one of them"
    )


_DIP_NAMES = {
    "": "phases",  # the request's own checks: only the three-phase one can fail here
    "supply.generator.rating_kva": "generator_kva",
    "supply.generator": "x_d1_pu",  # the reactance order x_d2_pu < x_d1_pu < x_d_pu
    "supply": "generator_kva",
    "source": "fault_mva",
    "bus_load.active_kw": "bus_load_kw",
    "bus_load.reactive_kvar": "bus_load_kvar",
    "options.limits.max_dip_percent": "max_dip_percent",
    "options.limits.max_recovery_s": "max_recovery_s",
    "options.limits": "limit",
    "options.size_for": "quantity",  # sizing runs only for smallest_generator_kva
    "options.duration_s": "duration_s",
    "options.recovery_band_percent": "recovery_band_percent",
    "options.voltage_measure": "voltage_measure",
    "excitation": "excitation",
    "transformer.phases": "phases",
}
_DIP_FIELDS = set(DipQuery.model_fields)
_MACHINE = ("x_d2_pu", "x_d1_pu", "x_d_pu", "t_d2_s", "t_d1_s", "t_d1o_s")


def _dip_request(q: DipQuery) -> GeneratorDipRequest:
    given = q.model_fields_set
    body: dict[str, Any] = q.study()
    if q.generator_kva is not None:
        for name in ("x_d2_pu", "x_d1_pu", "x_d_pu", "t_d2_s"):
            if getattr(q, name) is None:
                raise _query_error(name, f"a generator needs {name}")
        if q.fault_mva is not None:
            raise _query_error(
                "fault_mva", "give generator_kva (a generator) or fault_mva (a feeder), not both"
            )
        supply: dict[str, Any] = {"kind": "generator", "rating_kva": q.generator_kva}
        for name in _MACHINE:
            if getattr(q, name) is not None:
                supply[name] = getattr(q, name)
        body["supply"] = supply
        if q.t_d1_s is None and q.t_d1o_s is None:
            raise _query_error("t_d1_s", "a generator needs t_d1_s or t_d1o_s")
    else:
        stray = [n for n in _MACHINE if n in given]
        if stray:
            raise _query_error(
                "generator_kva", f"{stray[0]} describes a generator: give its rating"
            )
        if q.fault_mva is None:
            raise _query_error(
                "generator_kva", "give the generator (generator_kva ...) or fault_mva"
            )
    body["excitation"] = {"kind": q.excitation}
    if q.bus_load_kw is not None:
        body["bus_load"] = {"active_kw": q.bus_load_kw, "reactive_kvar": q.bus_load_kvar}
    options: dict[str, Any] = {
        "limits": "iso_8528_5",
        "duration_s": q.duration_s,
        "recovery_band_percent": q.recovery_band_percent,
        "voltage_measure": q.voltage_measure,
        "size_for": None,
    }
    if q.limit == "custom":
        if q.max_dip_percent is None:
            raise _query_error("max_dip_percent", "limit custom needs max_dip_percent")
        options["limits"] = {"name": "custom", "max_dip_percent": q.max_dip_percent}
        if q.max_recovery_s is not None:
            options["limits"]["max_recovery_s"] = q.max_recovery_s
    elif "max_dip_percent" in given or "max_recovery_s" in given:
        name = "max_dip_percent" if "max_dip_percent" in given else "max_recovery_s"
        raise _query_error("limit", f"{name} is a custom limit's: give limit=custom")
    # the sizing sweep is the costly part: run it only when its answer is asked for
    if q.quantity == "smallest_generator_kva":
        if q.generator_kva is None:
            raise _query_error("generator_kva", "sizing needs a generator to scale")
        options["size_for"] = q.limit
    body["options"] = options
    request: GeneratorDipRequest = _validated(GeneratorDipRequest, body, _DIP_NAMES, q)
    return request


def _dip_values(body: GeneratorDipRequest, limit: str) -> dict[str, float | str | None]:
    res = dip_router._response(*dip_router._report(body))
    verdicts = [v for v in res.verdicts if v.limit == limit or limit == "custom"]
    passed = verdicts[0].passed if verdicts else None
    return {
        "dip_percent": res.dip_percent,
        "recovery_time_s": res.recovery_time_s,
        "min_voltage_pu": res.min_voltage_pu,
        "verdict": None if passed is None else ("pass" if passed else "fail"),
        "smallest_generator_kva": res.sizing.rating_kva if res.sizing is not None else None,
        "hand_method_dip_percent": res.hand_method_dip_percent,
        "inrush_peak_a": res.inrush_peak_a,
    }


@router.get(
    "/generator-dip/dip.txt",
    operation_id="sheet_generator_dip",
    summary="Voltage dip, recovery, verdict or the smallest generator, as text/plain",
    response_class=Response,
    responses=TEXT_200,
)
async def dip_txt(
    request: Request, q: Annotated[DipQuery, Query()], settings: SettingsDep
) -> Response:
    """The unit energised from the generator (or the feeder), computed as
    ``POST /v1/generator-dip`` does for the same case; the sizing search runs only when
    ``quantity=smallest_generator_kva``."""
    body = _dip_request(q)
    try:
        dip_router._check(body, settings)
        values = await compute.run_heavy(settings, _dip_values, body, q.limit)
    except (LimitError, ParameterError) as exc:
        raise _renamed(exc, _DIP_NAMES, _DIP_FIELDS) from None
    return _cached(request, _cell(values[q.quantity]), "text/plain")

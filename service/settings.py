"""Service settings, read once from the environment (prefix ``FIRSTCYCLE_``).

Compute limits bound the work any single request can cause: the work budget
(``max_request_steps``, estimated by core/cost.py before anything runs) keeps the heaviest legal
request within 2 to 4 s of CPU on a 2-core machine (tests/benchmarks/bench_heaviest.py); the
deadline and the per-worker slots bound what runs at once (service/compute.py).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from pydantic import Field, model_validator
from pydantic_settings import BaseSettings, SettingsConfigDict
from starlette.requests import Request


class Settings(BaseSettings):
    """All settings; each can be set as ``FIRSTCYCLE_<NAME>`` in the environment."""

    model_config = SettingsConfigDict(env_prefix="FIRSTCYCLE_", extra="ignore")

    max_duration_s: float = Field(5.0, gt=0, description="Longest simulated time per request [s]")
    max_samples_per_cycle: int = Field(1024, ge=16, description="Most output samples per cycle")
    max_total_samples: int = Field(
        4_000_000,
        ge=10_000,
        description="Most samples (lines x samples) simulated per request, a memory bound",
    )
    max_total_steps: int = Field(
        30_000_000,
        ge=100_000,
        description="Most integration steps (cases x windings x steps) per simulation call, a "
        "CPU-time bound",
    )
    max_request_steps: float = Field(
        40_000_000,
        ge=10_000,
        description="Work budget of one request, in winding-steps (core/cost.py estimates it "
        "before any simulation, every kind of work weighed in them; about 100 ns of CPU each on "
        "a 2-core reference machine, the heaviest legal request 2 to 4 s); over it the request "
        "is refused with 422 naming the fields to reduce",
    )
    request_deadline_s: float = Field(
        30.0,
        gt=0,
        description="A simulating request still computing after this many seconds gets 503 "
        "(deadline-exceeded); its job stops at its next chunk [s]",
    )
    max_concurrent_simulations: int = Field(
        2,
        ge=1,
        description="Simulating requests computed at once per worker process; a further one gets "
        "503 (busy) with Retry-After at once",
    )
    busy_retry_after_s: int = Field(
        2, ge=1, description="Retry-After of a 503 answer (busy or deadline) [s]"
    )
    max_waveform_points: int = Field(20_000, ge=100, description="Most waveform points per line")
    max_statistics_samples: int = Field(
        20_000, ge=100, description="Most Monte Carlo samples in one statistics request"
    )
    max_event_checks: int = Field(
        4000,
        ge=10,
        description="Most device judgements (events x devices) and generator-dip events in one "
        "statistics request, a CPU-time bound",
    )
    max_cases: int = Field(1000, ge=1, description="Most cases in one batch request")
    max_body_bytes: int = Field(1_048_576, ge=1024, description="Largest request body [bytes]")
    body_timeout_s: float = Field(
        10.0,
        gt=0,
        le=600,
        description="Longest time to receive a request body, from its first byte; later: 408 "
        "and the connection closed [s]",
    )
    header_timeout_s: float = Field(
        10.0,
        gt=0,
        le=600,
        description="Longest time to receive a request's line and headers, from the "
        "connection or the request's first byte (firstcycle serve); later: 408, closed [s]",
    )
    cors_origins: list[str] = Field(default_factory=list, description="Allowed CORS origins")
    api_keys: list[str] = Field(
        default_factory=list,
        description="API keys accepted on /v1 (JSON list); unset with no key file: no "
        "authentication; set but with no non-empty key: the service refuses to start",
    )
    api_key_file: str | None = Field(
        None,
        description="File with one API key per line (e.g. a mounted secret); set but empty or "
        "unreadable: the service refuses to start",
    )

    warmup: bool = Field(
        True,
        description="Compile the kernels and warm the first-request paths at start, before "
        "/readyz answers ready (off: ready at once, the first requests compile)",
    )

    @model_validator(mode="after")
    def _within_contract(self) -> Settings:
        for name in CONTRACT_MAXIMA:
            value, published = getattr(self, name), default_limit(name)
            if value > published:
                raise ValueError(
                    f"FIRSTCYCLE_{name.upper()}={value} is above {published}, the maximum the "
                    "API contract publishes for its request field (requests beyond it are "
                    "invalid input whatever this setting says); set it at most that high"
                )
        return self

    def keys(self) -> list[str]:
        """Every configured key: the list plus the lines of the key file.

        Fails closed: a key source that is set but yields no key (an empty or all-blank list,
        an empty or unreadable file) raises :class:`KeySourceError` naming the setting, so the
        service refuses to start instead of serving without authentication.
        """
        keys = [k for k in self.api_keys if k]
        if "api_keys" in self.model_fields_set and not keys:
            raise KeySourceError(
                "FIRSTCYCLE_API_KEYS is set but holds no non-empty key; set at least one key, "
                "or unset it to run without authentication"
            )
        if "api_key_file" in self.model_fields_set:
            path = self.api_key_file or ""
            try:
                with open(path, encoding="utf-8") as fh:
                    from_file = [line.strip() for line in fh if line.strip()]
            except (OSError, UnicodeDecodeError) as exc:
                raise KeySourceError(
                    f"FIRSTCYCLE_API_KEY_FILE={path!r} cannot be read ({exc.__class__.__name__}: "
                    f"{exc}); fix the path or unset it to run without authentication"
                ) from exc
            if not from_file:
                raise KeySourceError(
                    f"FIRSTCYCLE_API_KEY_FILE={path!r} holds no key (one key per line expected)"
                )
            keys += from_file
        return keys


#: Limits whose defaults are also the maxima the contract publishes for the request fields they
#: bound (options.duration_s, options.samples_per_cycle, options.samples, cases): an operator
#: may lower them (a request over a lowered limit gets a 422 limit-exceeded naming the field),
#: not raise them past what the contract promises.
CONTRACT_MAXIMA = (
    "max_duration_s",
    "max_samples_per_cycle",
    "max_statistics_samples",
    "max_cases",
)


def default_limit(name: str) -> Any:
    """The default of a limit setting, which the contract publishes as its field's maximum."""
    return Settings.model_fields[name].default


#: The compute limits a request is held to; an operator may lower any of them.
WORK_LIMITS = (
    "max_duration_s",
    "max_samples_per_cycle",
    "max_total_samples",
    "max_total_steps",
    "max_request_steps",
    "max_waveform_points",
    "max_statistics_samples",
    "max_event_checks",
    "max_cases",
)
#: Key of the ASGI scope the warm-up (service/warmup.py) sets on its own in-process requests; a
#: client cannot set it (the server builds the scope of a request from the network).
WARMUP_SCOPE_KEY = "firstcycle.warmup"


def _warmup_settings(settings: Settings) -> Settings:
    return settings.model_copy(
        update={n: max(getattr(settings, n), default_limit(n)) for n in WORK_LIMITS}
    )


class KeySourceError(ValueError):
    """An API-key setting is present but yields no usable key."""


@lru_cache
def get_settings() -> Settings:
    """The process-wide settings (cached; tests clear the cache to change them)."""
    return Settings()


async def settings_dependency(request: Request) -> Settings:
    """FastAPI dependency (async, so it costs no thread-pool hop per request).

    The warm-up's own requests (their scope carries WARMUP_SCOPE_KEY) are held to the default
    compute limits where the operator lowered them: its fixed demo requests fit the defaults,
    and a process whose warm-up is refused by a lowered limit would never become ready.
    """
    settings = get_settings()
    if request.scope.get(WARMUP_SCOPE_KEY) is True:
        return _warmup_settings(settings)
    return settings

"""Service settings, read once from the environment (prefix ``FIRSTCYCLE_``).

Compute limits bound the work any single request can cause; the defaults keep one request
well under a second of CPU and a few tens of MB on a 2-core machine.
"""

from __future__ import annotations

from functools import lru_cache

from pydantic import Field
from pydantic_settings import BaseSettings, SettingsConfigDict


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


class KeySourceError(ValueError):
    """An API-key setting is present but yields no usable key."""


@lru_cache
def get_settings() -> Settings:
    """The process-wide settings (cached; tests clear the cache to change them)."""
    return Settings()


async def settings_dependency() -> Settings:
    """FastAPI dependency (async, so it costs no thread-pool hop per request)."""
    return get_settings()

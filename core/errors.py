"""Domain errors raised by the compute core.

Every error names the offending parameter, the value received and what would have been valid, so
the HTTP layer can turn it into an RFC 9457 problem document without parsing messages.
"""

from __future__ import annotations


class CoreError(Exception):
    """Base class of every error the core raises on purpose."""


class ParameterError(CoreError, ValueError):
    """A parameter is outside the range the model accepts.

    Parameters
    ----------
    parameter : str
        Name of the parameter as the core knows it (dotted for nested values).
    value : object
        The value received.
    allowed : str
        Human-readable statement of the valid range or set.
    """

    def __init__(self, parameter: str, value: object, allowed: str) -> None:
        self.parameter = parameter
        self.value = value
        self.allowed = allowed
        super().__init__(f"{parameter}={value!r} is not allowed: {allowed}")


class LimitError(CoreError):
    """The requested work exceeds a configured compute limit.

    Parameters
    ----------
    parameter : str
        The quantity that is over its limit.
    value : float
        The requested amount.
    limit : float
        The configured maximum.
    knobs : tuple of (str, str)
        Fields that would bring the work within the limit, each with the value that would
        (``("options.samples", "<= 4000")``); empty when not known.
    detail : str
        Further explanation (where the work goes, what to do).
    """

    def __init__(
        self,
        parameter: str,
        value: float,
        limit: float,
        *,
        knobs: tuple[tuple[str, str], ...] = (),
        detail: str = "",
    ) -> None:
        self.parameter = parameter
        self.value = value
        self.limit = limit
        self.knobs = knobs
        self.detail = detail
        text = f"{parameter}={value:g} exceeds the limit of {limit:g}"
        super().__init__(f"{text}; {detail}" if detail else text)

"""One network model: a three-phase source, a bus with its load, and transformers on breakers.

:func:`simulate_network` is the public entry; :mod:`core.network.solver` holds the equations
and the references, :mod:`core.network.kernel` the compiled integration,
:mod:`core.network.machine` the synchronous machine as source.
"""

from core.network.machine import Machine, Regulator
from core.network.solver import (
    Breaker,
    BusLoad,
    NetworkResult,
    Source,
    Unit,
    insertion_substeps,
    phases_decoupled,
    run_single_unit,
    simulate_network,
    step_plan,
    step_rule,
)

__all__ = [
    "Breaker",
    "BusLoad",
    "Machine",
    "NetworkResult",
    "Regulator",
    "Source",
    "Unit",
    "insertion_substeps",
    "phases_decoupled",
    "run_single_unit",
    "simulate_network",
    "step_plan",
    "step_rule",
]

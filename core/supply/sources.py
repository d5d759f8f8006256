"""Sources that energise a transformer: a synchronous generator, or a weak utility feeder.

Data models with validation and the provenance of every default, the conservative excitation
data used when the regulator is not known, and the closed-form first dip (the subtransient
voltage divider). The coupled time-domain simulation that uses them is :mod:`core.supply.dip`; the
limits a dip is judged against are in :mod:`core.supply.dip_limits`.

Machine data are the usual per-unit d-axis quantities on the machine rating: X''_d, X'_d, X_d
(unsaturated), the short-circuit time constants T''_d and T'_d (or the open-circuit T'_do), and
the armature resistance R_a. The open-circuit time constants the d-axis model integrates with
are T'_do = T'_d*X_d/X'_d and T''_do = T''_d*X'_d/X''_d.

References
----------
P. Kundur, "Power System Stability and Control", McGraw-Hill, 1994: ch. 3 (phasor diagram),
ch. 4 (standard parameters and the time-constant relations), ch. 8 (excitation) -- from memory.
IEEE Std 421.5, excitation system models (regulator gain, time constant, limits, transducer
time constant) -- from memory.
IEEE Std 399-1997, ch. 9 (motor-starting voltage dip by the subtransient voltage divider) --
from memory.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import scipy.optimize
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.errors import ParameterError
from core.supply.dip_cases import SourceParameters
from core.transformer.circuit_model import Assumption
from core.transformer.circuit_model import Source as CircuitSource

FloatArray = NDArray[np.float64]

__all__ = [
    "ARMATURE_RESISTANCE_PU",
    "POOR_DAMPING_RATIO",
    "BusLoad",
    "Excitation",
    "ExcitationSpec",
    "Generator",
    "Source",
    "UtilitySource",
    "first_dip_voltage_divider",
    "regulator_damping_ratio",
    "regulator_gain_for_margin",
    "source_assumptions",
    "source_parameters",
    "subtransient_source",
    "unknown_excitation",
]

# Armature resistance default: from memory, typical 0.005-0.03 pu for low-voltage machines of
# 0.1-5 MVA; 0.01 pu is towards the low end (less damping of the inrush: a slightly deeper and
# longer dip, so conservative).
ARMATURE_RESISTANCE_PU = 0.01
# "unknown" excitation (see unknown_excitation): from memory, first-order equivalents of a
# brushless exciter with its regulator have time constants of a few tenths of a second to about a
# second; the slow end is taken (slower recovery: conservative). The gain is not one number: an
# AVR's stability setting is chosen for the machine it regulates (common practice), so the gain
# is set for a 60 degree phase margin of this machine's open-circuit loop (a margin of 45-60
# degrees is the usual design target, about 0.5-0.6 damping ratio, from memory: G. F. Franklin,
# J. D. Powell, A. Emami-Naeini, "Feedback Control of Dynamic Systems", ch. 6, PM ~ 100*zeta).
# A fixed K_A = 50 with T_A = 0.5 s, the earlier default, leaves that loop undamped for a machine
# with T'_do = 1.68 s, T''_do = 0.025 s (damping ratio 0.004): a sustained 1.2 Hz swing.
UNKNOWN_TIME_CONSTANT_S = 0.5
UNKNOWN_PHASE_MARGIN_DEG = 60.0
# upper bound on the tuned gain: from memory, K_A of IEEE Std 421.5 sample data is at most a few
# hundred (e.g. 400 for the AC1A sample); a machine with a very long T'_do would otherwise get more.
UNKNOWN_GAIN_MAX_PU = 400.0
# a closed regulator loop whose least-damped mode has a damping ratio below this is "poorly
# damped": from memory, 0.05-0.1 is the usual least acceptable damping of an electromechanical or
# control mode in planning criteria (Kundur 1994, ch. 12); the top of that range is taken.
POOR_DAMPING_RATIO = 0.1
# ceiling 1.5 x the rated-load field voltage: from memory, ceilings are about 1.5-2 x rated
# field; the low end is conservative.
UNKNOWN_CEILING_FACTOR = 1.5
# rated power factor of a generator set for the rated-load field: 0.8 lagging (common practice;
# from memory also the rating basis of ISO 8528-1).
RATED_POWER_FACTOR = 0.8
# voltage transducer lag: from memory, 0-0.02 s in IEEE Std 421.5 sample data; the slow end.
UNKNOWN_SENSING_S = 0.02


@dataclass(frozen=True)
class Generator:
    """Synchronous generator data, reactances in per unit on the machine rating.

    Attributes
    ----------
    rating_va : float
        Rated apparent power [VA].
    line_voltage_v : float
        Rated line-to-line voltage [V].
    frequency_hz : float
        Rated frequency [Hz].
    x_d2_pu, x_d1_pu, x_d_pu : float
        X''_d, X'_d and X_d, unsaturated [pu on rating]; X''_d < X'_d < X_d.
    t_d2_s : float
        Short-circuit subtransient time constant T''_d [s].
    t_d1_s : float or None
        Short-circuit transient time constant T'_d [s]; give this or ``t_d1o_s``.
    t_d1o_s : float or None
        Open-circuit transient time constant T'_do [s]; T'_d = T'_do*X'_d/X_d.
    armature_resistance_pu : float
        R_a [pu on rating]; default :data:`ARMATURE_RESISTANCE_PU` (from memory).
    provenance : mapping of str to str
        Where values not given by the caller came from (field -> text).

    Raises
    ------
    ParameterError
        On a non-positive rating, the reactances out of order, non-positive time constants or
        T''_d >= T'_d, naming the field.
    """

    rating_va: float
    line_voltage_v: float
    frequency_hz: float
    x_d2_pu: float
    x_d1_pu: float
    x_d_pu: float
    t_d2_s: float
    t_d1_s: float | None = None
    t_d1o_s: float | None = None
    armature_resistance_pu: float = ARMATURE_RESISTANCE_PU
    provenance: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        checks.in_range("rating_va", self.rating_va, 0.0, 1e10)
        checks.in_range("line_voltage_v", self.line_voltage_v, 0.0, 2e6)
        checks.in_range("frequency_hz", self.frequency_hz, 1.0, 1000.0)
        x2 = checks.in_range("x_d2_pu", self.x_d2_pu, 0.0, 10.0)
        x1 = checks.in_range("x_d1_pu", self.x_d1_pu, 0.0, 10.0)
        xd = checks.in_range("x_d_pu", self.x_d_pu, 0.0, 10.0)
        if not x2 < x1:
            raise ParameterError("x_d2_pu", x2, f"below X'_d = {x1:g} pu")
        if not x1 < xd:
            raise ParameterError("x_d1_pu", x1, f"below X_d = {xd:g} pu")
        t2 = checks.in_range("t_d2_s", self.t_d2_s, 0.0, 1e4)
        if (self.t_d1_s is None) == (self.t_d1o_s is None):
            raise ParameterError("t_d1_s", self.t_d1_s, "exactly one of t_d1_s and t_d1o_s")
        if self.t_d1_s is not None:
            t1 = checks.in_range("t_d1_s", self.t_d1_s, 0.0, 1e4)
        else:
            t1 = checks.in_range("t_d1o_s", float(self.t_d1o_s or 0.0), 0.0, 1e5) * x1 / xd
        if not t2 < t1:
            raise ParameterError("t_d2_s", t2, f"below T'_d = {t1:g} s")
        if not t2 * x1 / x2 < t1 * xd / x1:
            raise ParameterError("t_d2_s", t2, "T''_do = T''_d*X'_d/X''_d below T'_do")
        checks.in_range(
            "armature_resistance_pu", self.armature_resistance_pu, 0.0, 1.0, open_low=False
        )

    @property
    def t_d1_short_s(self) -> float:
        """T'_d [s], given or from T'_do*X'_d/X_d."""
        if self.t_d1_s is not None:
            return float(self.t_d1_s)
        return float(self.t_d1o_s or 0.0) * self.x_d1_pu / self.x_d_pu

    @property
    def t_d1o_open_s(self) -> float:
        """T'_do = T'_d*X_d/X'_d [s] (Kundur 1994, ch. 4, from memory)."""
        return self.t_d1_short_s * self.x_d_pu / self.x_d1_pu

    @property
    def t_d2o_open_s(self) -> float:
        """T''_do = T''_d*X'_d/X''_d [s] (Kundur 1994, ch. 4, from memory)."""
        return self.t_d2_s * self.x_d1_pu / self.x_d2_pu

    @property
    def base_impedance_ohm(self) -> float:
        """Z_b = V_LL^2/S [ohm]."""
        return self.line_voltage_v**2 / self.rating_va


@dataclass(frozen=True)
class Excitation:
    """First-order voltage regulator acting on the field voltage E_fd.

    Attributes
    ----------
    gain_pu : float
        K_A [pu field voltage per pu terminal voltage].
    time_constant_s : float
        T_A [s].
    ceiling_pu : float
        Largest E_fd [pu of the field voltage giving rated voltage on the air-gap line].
    floor_pu : float
        Smallest E_fd [pu]; 0 for an exciter that cannot reverse the field (common practice
        for rotating exciters).
    sensing_time_constant_s : float
        Voltage transducer lag T_R [s]; 0 for none.
    provenance : mapping of str to str
        Source of each value (field -> text).
    """

    gain_pu: float
    time_constant_s: float
    ceiling_pu: float
    floor_pu: float = 0.0
    sensing_time_constant_s: float = 0.0
    provenance: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        checks.in_range("excitation.gain_pu", self.gain_pu, 0.0, 1e5)
        checks.in_range("excitation.time_constant_s", self.time_constant_s, 0.0, 100.0)
        ceiling = checks.in_range("excitation.ceiling_pu", self.ceiling_pu, 0.0, 100.0)
        floor = checks.in_range("excitation.floor_pu", self.floor_pu, -100.0, 100.0, open_low=False)
        if not floor < ceiling:
            raise ParameterError("excitation.floor_pu", floor, f"below the ceiling {ceiling:g}")
        checks.in_range(
            "excitation.sensing_time_constant_s",
            self.sensing_time_constant_s,
            0.0,
            10.0,
            open_low=False,
        )


def regulator_gain_for_margin(
    generator: Generator,
    time_constant_s: float,
    sensing_time_constant_s: float = 0.0,
    phase_margin_deg: float = UNKNOWN_PHASE_MARGIN_DEG,
) -> float:
    """Regulator gain giving the machine's open-circuit voltage loop a chosen phase margin.

    Parameters
    ----------
    generator : Generator
        The machine (its T'_do and T''_do) [-].
    time_constant_s : float
        Regulator time constant T_A, > 0 [s].
    sensing_time_constant_s : float
        Voltage transducer lag T_R, >= 0 [s].
    phase_margin_deg : float
        Phase margin wanted, in (0, 90) [deg].

    Returns
    -------
    float
        K_A [pu field voltage per pu terminal voltage].

    Raises
    ------
    ParameterError
        On a time constant or margin out of range, naming it.

    Notes
    -----
    On open circuit the terminal voltage is E''_q, and the d-axis equations of
    :mod:`core.supply.dip` give E''_q = E_fd/((1 + sT'_do)(1 + sT''_do)); with the regulator and the
    transducer the loop is L(s) = K_A/((1 + sT'_do)(1 + sT''_do)(1 + sT_A)(1 + sT_R)). Its phase,
    -sum(atan(omega*T_i)), falls monotonically from 0 to -360 deg (-270 without T_R); the
    crossover omega_c is where it is -(180 - PM) (found by Brent's method), and
    K_A = prod abs(1 + j*omega_c*T_i) puts the gain crossover, abs(L) = 1, there (loop shaping,
    Franklin, Powell and Emami-Naeini, ch. 6, from memory). Load on the machine shortens its
    effective field time constant; open circuit, the state the voltage returns to after an
    inrush, is the least damped (Kundur 1994, ch. 8, from memory).
    """
    ta = checks.in_range("excitation.time_constant_s", time_constant_s, 0.0, 100.0)
    tr = checks.in_range(
        "excitation.sensing_time_constant_s", sensing_time_constant_s, 0.0, 10.0, open_low=False
    )
    pm = checks.in_range("phase_margin_deg", phase_margin_deg, 0.0, 90.0)
    if pm >= 90.0:
        raise ParameterError("phase_margin_deg", phase_margin_deg, "in (0, 90)")
    lags = (generator.t_d1o_open_s, generator.t_d2o_open_s, ta, tr)
    target = math.radians(180.0 - pm)

    def excess(log_w: float) -> float:
        w = math.exp(log_w)
        return sum(math.atan(w * t) for t in lags) - target

    # the phase passes -(180 - PM) between omega = 1e-3/max(T) and 1e3/min(T > 0)
    lo = math.log(1e-3 / max(lags))
    hi = math.log(1e3 / min(t for t in lags if t > 0.0))
    w = math.exp(scipy.optimize.brentq(excess, lo, hi, xtol=1e-12))
    return math.prod(abs(complex(1.0, w * t)) for t in lags)


def regulator_damping_ratio(
    generator: Generator, excitation: Excitation, bus_load: BusLoad | None = None
) -> float:
    """Damping ratio of the least-damped mode of the machine's linearised voltage loop.

    Parameters
    ----------
    generator : Generator
        The machine [-].
    excitation : Excitation
        Its regulator [-].
    bus_load : BusLoad or None
        Constant-impedance load left on the machine (the state after the inrush); None for
        open circuit [-].

    Returns
    -------
    float
        min over the eigenvalues lambda of -Re(lambda)/abs(lambda) [-]: 1 for a real decaying
        mode, -1 for a real growing one; below 0 the loop is unstable.

    Notes
    -----
    States E''_q, E'_q, E_fd, V_s about the steady state, the d-axis equations of
    :mod:`core.supply.dip` with the stator quasi-static (the stator and load transients are far
    faster than the loop), the transformer's magnetising current neglected (about 1 % of its rating
    once the inrush has decayed), the field within its ceiling and floor::

        T''_do dE''_q/dt = E'_q - E''_q - (X'_d - X''_d)*b*E''_q
        T'_do  dE'_q/dt  = E_fd - E'_q - (X_d - X'_d)*b*E''_q
        T_A    dE_fd/dt  = -K_A*V_s - E_fd
        T_R    dV_s/dt   = c*E''_q - V_s        (V_s = c*E''_q when T_R = 0)

    with the load z_L = S/(P - jQ) [pu on the machine], Z_t = z_L + R_a + jX''_d,
    b = Im(Z_t)/abs(Z_t)^2 (the lagging current per unit EMF) and c = abs(z_L)/abs(Z_t)
    (the terminal voltage per unit EMF); open circuit b = 0, c = 1. Damping ratio of a mode
    lambda = -zeta*omega_n + j*omega_n*sqrt(1 - zeta^2) (Kundur 1994, ch. 12, from memory).
    """
    g = generator
    b, c = 0.0, 1.0
    if bus_load is not None:
        z_l = g.rating_va / complex(bus_load.active_power_w, -bus_load.reactive_power_var)
        z_t = z_l + complex(g.armature_resistance_pu, g.x_d2_pu)
        b = z_t.imag / abs(z_t) ** 2
        c = abs(z_l) / abs(z_t)
    t2, t1, ta, tr = (
        g.t_d2o_open_s,
        g.t_d1o_open_s,
        excitation.time_constant_s,
        excitation.sensing_time_constant_s,
    )
    k = excitation.gain_pu
    a = np.zeros((4, 4))
    a[0, :2] = (-(1.0 + (g.x_d1_pu - g.x_d2_pu) * b) / t2, 1.0 / t2)
    a[1, :3] = (-(g.x_d_pu - g.x_d1_pu) * b / t1, -1.0 / t1, 1.0 / t1)
    if tr > 0.0:
        a[2, 2:] = (-1.0 / ta, -k / ta)
        a[3, 0], a[3, 3] = c / tr, -1.0 / tr
    else:
        a = a[:3, :3]
        a[2, 0], a[2, 2] = -k * c / ta, -1.0 / ta
    lam = np.linalg.eigvals(a)
    zeta = [
        -z.real / abs(z) if abs(z.imag) > 1e-12 * abs(z) else (1.0 if z.real < 0.0 else -1.0)
        for z in lam
    ]
    return float(min(zeta))


def unknown_excitation(generator: Generator) -> Excitation:
    """Regulator data, tuned to the machine, when the excitation system is not known.

    Parameters
    ----------
    generator : Generator
        The machine (its X_d sets the rated-load field voltage; T'_do and T''_do the gain) [-].

    Returns
    -------
    Excitation
        T_A = 0.5 s, T_R = 0.02 s, K_A from :func:`regulator_gain_for_margin` for a 60 deg
        phase margin of the open-circuit loop (at most 400), ceiling 1.5 x the rated-load
        field, floor 0, each with its provenance.

    Notes
    -----
    Rated-load field of a round-rotor machine at rated current and 0.8 pf lagging, unsaturated:
    E_fd = |1 + jX_d*(0.8 - j0.6)| (phasor diagram, Kundur 1994 ch. 3, from memory).

    A fixed gain cannot suit every machine: the open-circuit loop of
    :func:`regulator_gain_for_margin` crosses over near (K_A/(T'_do*T_A))^0.5 when T_A and
    T'_do are long, and K_A = 50, T_A = 0.5 s on a machine with T'_do = 1.68 s leaves a
    1.2 Hz mode with a damping ratio of 0.004. A real AVR is set up for its machine (common
    practice); this default is set for a 60 deg margin (damping ratio about 0.5 on open
    circuit, more under load). The slow T_A and the first-order form keep the recovery on the
    slow side.
    """
    s = math.sqrt(1.0 - RATED_POWER_FACTOR**2)
    xd = generator.x_d_pu
    e_rated = abs(complex(1.0 + xd * s, xd * RATED_POWER_FACTOR))
    tuned = regulator_gain_for_margin(generator, UNKNOWN_TIME_CONSTANT_S, UNKNOWN_SENSING_S)
    gain = min(tuned, UNKNOWN_GAIN_MAX_PU)
    cap = " (capped at 400, the top of IEEE Std 421.5 sample data, from memory)"
    return Excitation(
        gain_pu=gain,
        time_constant_s=UNKNOWN_TIME_CONSTANT_S,
        ceiling_pu=UNKNOWN_CEILING_FACTOR * e_rated,
        floor_pu=0.0,
        sensing_time_constant_s=UNKNOWN_SENSING_S,
        provenance={
            "gain_pu": "default: set for this machine, a 60 deg phase margin of its open-circuit "
            "loop K_A/((1+sT'do)(1+sT''do)(1+sT_A)(1+sT_R)) (an AVR is set up for its machine, "
            "common practice; 45-60 deg is the usual target, from memory)"
            + (cap if tuned > gain else ""),
            "time_constant_s": "default: slow end of 0.1-1 s for a brushless exciter with its "
            "regulator (from memory)",
            "ceiling_pu": f"default: 1.5 x the rated-load field {e_rated:.3g} pu at 0.8 pf "
            "(typical 1.5-2 x, from memory)",
            "floor_pu": "default: 0, a rotating exciter cannot reverse the field (common practice)",
            "sensing_time_constant_s": "default: 0.02 s, slow end of IEEE Std 421.5 sample "
            "data (from memory)",
        },
    )


@dataclass(frozen=True)
class BusLoad:
    """Load already on the bus, constant impedance drawing these powers at rated voltage.

    Attributes
    ----------
    active_power_w : float
        Three-phase active power at rated voltage [W], >= 0.
    reactive_power_var : float
        Three-phase reactive power at rated voltage, lagging [var], >= 0.

    Notes
    -----
    Modelled as a series R-L per phase, Z = V^2/S* per phase at rated voltage (common
    practice). A nearly resistive load behind the source inductance has the loop time constant
    (L_L + L_s)/(R_L + R_s), which can be far shorter than a cycle; the simulation raises the
    step count for it and refuses loads beyond its step limit.
    """

    active_power_w: float
    reactive_power_var: float = 0.0

    def __post_init__(self) -> None:
        p = checks.in_range(
            "bus_load.active_power_w", self.active_power_w, 0.0, 1e10, open_low=False
        )
        q = checks.in_range(
            "bus_load.reactive_power_var", self.reactive_power_var, 0.0, 1e10, open_low=False
        )
        if p + q <= 0.0:
            raise ParameterError("bus_load.active_power_w", p, "a load with P + Q > 0")


@dataclass(frozen=True)
class UtilitySource:
    """Utility supply at the transformer terminals: constant EMF behind its impedance.

    Attributes
    ----------
    fault_level_va : float
        Three-phase short-circuit power at the terminals [VA].
    x_over_r : float
        Source X/R [-].
    line_voltage_v : float
        Rated line-to-line voltage [V].
    frequency_hz : float
        [Hz].
    provenance : mapping of str to str
        Where ``fault_level_va`` and ``x_over_r`` came from when not given as such (field ->
        text), e.g. from a source impedance.
    """

    fault_level_va: float
    x_over_r: float
    line_voltage_v: float
    frequency_hz: float
    provenance: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        checks.in_range("fault_level_va", self.fault_level_va, 0.0, 1e13)
        checks.in_range("x_over_r", self.x_over_r, 0.0, 1e4)
        checks.in_range("line_voltage_v", self.line_voltage_v, 0.0, 2e6)
        checks.in_range("frequency_hz", self.frequency_hz, 1.0, 1000.0)


Source = Generator | UtilitySource
ExcitationSpec = Excitation | Literal["unknown", "constant_field"]


def first_dip_voltage_divider(
    reactance_pu: ArrayLike, source_rating_va: ArrayLike, load_va: ArrayLike
) -> FloatArray:
    """First voltage dip by the subtransient voltage divider (hand method).

    Parameters
    ----------
    reactance_pu : array_like
        Source reactance, X''_d for a generator; for a utility source 1 with the fault level as
        the rating [pu on source_rating_va].
    source_rating_va : array_like
        Generator rating, or fault level [VA].
    load_va : array_like
        Load switched on at rated voltage, here the first-cycle rms inrush [VA].

    Returns
    -------
    ndarray
        Dip Delta V = X*S/(S_gen + X*S) [% of the pre-event voltage].

    Notes
    -----
    With the load as a reactance X_L = S_gen/S [pu] behind the constant EMF E'' = V_0:
    V = V_0*X_L/(X''_d + X_L), so Delta V/V_0 = X''_d*S/(S_gen + X''_d*S). Reactances only,
    load and source resistance neglected.

    References
    ----------
    IEEE Std 399-1997, ch. 9, motor-starting studies (from memory).
    """
    x = np.asarray(reactance_pu, dtype=float)
    s_gen = np.asarray(source_rating_va, dtype=float)
    s = np.asarray(load_va, dtype=float)
    if np.any(~np.isfinite(x)) or np.any(x <= 0.0):
        raise ParameterError("reactance_pu", x.tolist(), "finite values > 0")
    if np.any(~np.isfinite(s_gen)) or np.any(s_gen <= 0.0):
        raise ParameterError("source_rating_va", s_gen.tolist(), "finite values > 0")
    if np.any(~np.isfinite(s)) or np.any(s < 0.0):
        raise ParameterError("load_va", s.tolist(), "finite values >= 0")
    out: FloatArray = 100.0 * x * s / (s_gen + x * s)
    return out


def source_parameters(
    source: Source, excitation: ExcitationSpec = "unknown", omega: float | None = None
) -> SourceParameters:
    """Reduce a source and its excitation to the numbers the solver uses.

    Parameters
    ----------
    source : Generator or UtilitySource
        The supply [-].
    excitation : Excitation, "unknown" or "constant_field"
        Regulator of a generator; ignored for a utility source [-].
    omega : float or None
        Angular frequency; the source's rated frequency when None [rad/s].

    Returns
    -------
    SourceParameters

    Notes
    -----
    Generator: R = R_a*Z_b, L = X''_d*Z_b/omega with Z_b = V_LL^2/S. Utility source (common
    practice): Z = V_LL^2/S_sc, R = Z/sqrt(1 + (X/R)^2), X = R*(X/R).
    """
    w = 2.0 * math.pi * source.frequency_hz if omega is None else omega
    if isinstance(source, UtilitySource):
        z = source.line_voltage_v**2 / source.fault_level_va
        r = z / math.sqrt(1.0 + source.x_over_r**2)
        return SourceParameters(
            source.line_voltage_v, r, r * source.x_over_r / w, source.fault_level_va
        )
    if not isinstance(source, Generator):
        raise ParameterError("source", type(source).__name__, "a Generator or UtilitySource")
    g = source
    zb = g.base_impedance_ohm
    exc = unknown_excitation(g) if excitation == "unknown" else excitation
    regulator = None
    if isinstance(exc, Excitation):
        regulator = (
            exc.gain_pu,
            exc.time_constant_s,
            exc.ceiling_pu,
            exc.floor_pu,
            exc.sensing_time_constant_s,
        )
    elif excitation != "constant_field":
        raise ParameterError("excitation", excitation, "an Excitation, unknown or constant_field")
    machine = (
        g.x_d2_pu,
        g.x_d1_pu,
        g.x_d_pu,
        g.t_d2o_open_s,
        g.t_d1o_open_s,
        g.armature_resistance_pu,
    )
    return SourceParameters(
        g.line_voltage_v,
        g.armature_resistance_pu * zb,
        g.x_d2_pu * zb / w,
        g.rating_va,
        machine,
        regulator,
    )


def subtransient_source(generator: Generator) -> CircuitSource:
    """The machine as a fixed impedance for the inrush solver: R_a + jX''_d behind its EMF.

    Parameters
    ----------
    generator : Generator
        The machine [-].

    Returns
    -------
    core.transformer.circuit_model.Source
        ``"impedance"`` with R = R_a*Z_b and X = X''_d*Z_b per phase [ohm].

    Notes
    -----
    The first cycles of a transformer inrush see the machine through its subtransient
    reactance; holding it there (no rise towards X'_d, no regulator) keeps the first peak and
    slightly overstates the later ones (the voltage-behind-reactance view of IEEE Std 399,
    ch. 9, from memory). :mod:`core.supply.dip` simulates the machine's dynamics instead.
    """
    z_b = generator.base_impedance_ohm
    return CircuitSource(
        "impedance",
        resistance_ohm=generator.armature_resistance_pu * z_b,
        reactance_ohm=generator.x_d2_pu * z_b,
    )


def source_assumptions(
    source: Source, excitation: ExcitationSpec, bus_load: BusLoad | None, v0: float
) -> tuple[Assumption, ...]:
    """Every source parameter used, with its provenance (given, or the default's source).

    Parameters
    ----------
    source : Generator or UtilitySource
        The source whose parameters are listed [-].
    excitation : Excitation, "unknown" or "constant_field"
        Its regulator, or the preset [-].
    bus_load : BusLoad or None
        Load on the bus before the event [-].
    v0 : float
        Pre-event voltage [pu].

    Returns
    -------
    tuple of Assumption
    """
    out: list[Assumption] = []
    if isinstance(source, Generator):
        prov = source.provenance
        for name, unit in (
            ("rating_va", "VA"),
            ("line_voltage_v", "V"),
            ("frequency_hz", "Hz"),
            ("x_d2_pu", "pu"),
            ("x_d1_pu", "pu"),
            ("x_d_pu", "pu"),
            ("t_d2_s", "s"),
        ):
            out.append(
                Assumption(name, float(getattr(source, name)), unit, prov.get(name, "given"))
            )
        t1 = "given" if source.t_d1_s is not None else "from t_d1o_s as T'_do*X'_d/X_d"
        out.append(Assumption("t_d1_s", source.t_d1_short_s, "s", prov.get("t_d1_s", t1)))
        out.append(
            Assumption(
                "armature_resistance_pu",
                source.armature_resistance_pu,
                "pu",
                prov.get(
                    "armature_resistance_pu",
                    "given or default 0.01 pu (typical 0.005-0.03 pu, from memory)",
                ),
            )
        )
        exc = unknown_excitation(source) if excitation == "unknown" else excitation
        if isinstance(exc, Excitation):
            for name in (
                "gain_pu",
                "time_constant_s",
                "ceiling_pu",
                "floor_pu",
                "sensing_time_constant_s",
            ):
                out.append(
                    Assumption(
                        "excitation." + name,
                        float(getattr(exc, name)),
                        "s" if name.endswith("_s") else "pu",
                        exc.provenance.get(name, "given"),
                    )
                )
        else:
            out.append(Assumption("excitation", "constant_field", "-", "given"))
    else:
        prov = source.provenance
        out.append(
            Assumption(
                "fault_level_va", source.fault_level_va, "VA", prov.get("fault_level_va", "given")
            )
        )
        out.append(Assumption("x_over_r", source.x_over_r, "-", prov.get("x_over_r", "given")))
    out.append(Assumption("pre_event_voltage_pu", v0, "pu", "given or default 1.0"))
    if bus_load is not None:
        out.append(Assumption("bus_load.active_power_w", bus_load.active_power_w, "W", "given"))
        out.append(
            Assumption("bus_load.reactive_power_var", bus_load.reactive_power_var, "var", "given")
        )
    return tuple(out)

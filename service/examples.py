"""Demo requests: the invented "Northgate Cold Storage" plant.

A refrigerated warehouse on a 13.8 kV utility feeder (250 MVA, X/R 12). Main unit 2500 kVA,
13.8 kV delta - 480Y/277 V, Z 5.75 %, X/R 7, no-load current 0.8 %, grain-oriented core. A
1250 kVA standby generator (X''d 0.15 pu) on the 480 V bus back-feeds the unit from its
low-voltage (inner) winding. A 112.5 kVA 480 - 208Y/120 V dry-type lighting transformer sits
behind a fused disconnect. All of it is fictional; the values are for demonstration only.

These dictionaries feed the OpenAPI examples and ``openapi/v1/examples/`` (request/response
pairs that a test keeps equal to what the service returns).
"""

from __future__ import annotations

from typing import Any

MAIN_UNIT: dict[str, Any] = {
    "rating_kva": 2500,
    "phases": 3,
    "frequency_hz": 60,
    "energized_winding": {"voltage_kv": 13.8, "connection": "delta", "position": "outer"},
    "impedance_percent": 5.75,
    "x_over_r": 7,
    "no_load_current_percent": 0.8,
    "core": {"material": "grain_oriented"},
}
UTILITY: dict[str, Any] = {"kind": "fault_level", "fault_mva": 250, "x_over_r": 12}

BACKFEED_UNIT: dict[str, Any] = {
    **MAIN_UNIT,
    "energized_winding": {"voltage_kv": 0.48, "connection": "wye_grounded", "position": "inner"},
}
# 1250 kVA generator, X''d 0.15 pu on 480 V: X = 0.15 * 0.48^2 / 1.25 = 0.02765 ohm; R taken as
# X/20 (invented demo value). A subtransient-reactance stand-in for the machine.
GENERATOR_SUBTRANSIENT: dict[str, Any] = {
    "kind": "impedance",
    "resistance_ohm": 0.00138,
    "reactance_ohm": 0.02765,
}

LIGHTING_UNIT: dict[str, Any] = {
    "rating_kva": 112.5,
    "phases": 3,
    "frequency_hz": 60,
    "energized_winding": {"voltage_kv": 0.48, "connection": "delta", "position": "outer"},
    "impedance_percent": 4.0,
    "x_over_r": 2.5,
    "no_load_current_percent": 2.0,
    "core": {"material": "grain_oriented"},
}
BUS_480: dict[str, Any] = {"kind": "fault_level", "fault_mva": 38, "x_over_r": 6}

# Single-phase SI circuit of one low-voltage winding of the main unit (values rounded from the
# nameplate-derived circuit), for cross-checking with any circuit simulator.
CIRCUIT: dict[str, Any] = {
    "voltage_rms_v": 277.0,
    "frequency_hz": 60,
    "resistance_ohm": 0.000374,
    "inductance_h": 0.0,
    "magnetizing": {
        "kind": "two_slope",
        "unsaturated_inductance_h": 0.0306,
        "knee_flux_wb": 1.2406,
        "saturated_inductance_h": 2.09e-5,
    },
    "rated_current_a": 3007.0,
}

# Three-phase SI circuit of the main unit's 13.8 kV delta winding on the utility feeder (values
# rounded from the nameplate-derived circuit and the 250 MVA, X/R 12 source), for rebuilding the
# case in any circuit simulator.
CIRCUIT_THREE_PHASE: dict[str, Any] = {
    "connection": "delta",
    "frequency_hz": 60,
    "winding_voltage_v": 13800.0,
    "winding_resistance_ohm": 0.929,
    "magnetizing": {
        "kind": "two_slope",
        "unsaturated_inductance_h": 75.77,
        "knee_flux_wb": 61.82,
        "saturated_inductance_h": 0.1035,
    },
    "rated_current_a": 104.6,
    "source_resistance_ohm": 0.0633,
    "source_inductance_h": 0.002014,
}

PEAK_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_main_unit": {
        "transformer": MAIN_UNIT,
        "source": UTILITY,
        "switching": {"closing_angle_deg": 0.0},
        "method": "both",
    },
    "northgate_backfeed": {
        "transformer": BACKFEED_UNIT,
        "source": GENERATOR_SUBTRANSIENT,
        "switching": {"closing_angle_deg": 0.0, "residual_flux_pu": [0.8, -0.4, -0.4]},
        "method": "both",
    },
    "northgate_lighting": {
        "transformer": LIGHTING_UNIT,
        "source": BUS_480,
        "method": "both",
    },
    "circuit_mode": {
        "circuit": CIRCUIT,
        "switching": {"closing_angle_deg": 0.0, "residual_flux_wb": [0.83]},
        "method": "both",
    },
    "circuit_three_phase_mode": {
        "circuit_three_phase": CIRCUIT_THREE_PHASE,
        "switching": {"closing_angle_deg": 0.0},
        "method": "both",
    },
}
ENVELOPE_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_main_unit": {
        "transformer": MAIN_UNIT,
        "source": UTILITY,
        "switching": {"closing_angle_deg": 0.0},
        "options": {"duration_s": 1.0, "samples_per_cycle": 64},
    },
    "northgate_backfeed": {
        "transformer": BACKFEED_UNIT,
        "source": GENERATOR_SUBTRANSIENT,
        "options": {"duration_s": 2.0, "samples_per_cycle": 64, "below_x_rated": 1.0},
    },
    "northgate_lighting": {
        "transformer": LIGHTING_UNIT,
        "source": BUS_480,
        "options": {"duration_s": 1.0, "samples_per_cycle": 64},
    },
}

_SUMMARIES = {
    "northgate_main_unit": "Demo: 2500 kVA main unit energised from the 13.8 kV utility feeder",
    "northgate_backfeed": "Demo: the same unit back-fed from the standby generator at 480 V",
    "northgate_lighting": "Demo: 112.5 kVA dry-type lighting transformer on the 480 V bus",
    "circuit_mode": "Demo: SI equivalent circuit of one low-voltage winding",
    "circuit_three_phase_mode": "Demo: three-phase SI circuit of the main unit's 13.8 kV delta",
}


def _openapi(requests: dict[str, dict[str, Any]]) -> dict[str, dict[str, Any]]:
    return {k: {"summary": _SUMMARIES[k], "value": v} for k, v in requests.items()}


PEAK_EXAMPLES = _openapi(PEAK_REQUESTS)
ENVELOPE_EXAMPLES = _openapi(ENVELOPE_REQUESTS)

_SHEET_CASE = (
    "rating_kva=2500&voltage_kv=13.8&connection=delta&position=outer&impedance_percent=5.75"
    "&x_over_r=7&no_load_current_percent=0.8&fault_mva=250&source_x_over_r=12"
)
# Spreadsheet GET calls of the demo main unit (path with query string).
SHEET_REQUESTS: dict[str, tuple[str, str]] = {
    "northgate_main_unit": (
        "sheet_inrush_peak",
        "/v1/sheet/inrush/peak.txt?quantity=worst_peak_x_rated&" + _SHEET_CASE,
    ),
    "northgate_main_unit_ieq": (
        "sheet_inrush_ieq",
        "/v1/sheet/inrush/ieq.txt?time_s=0.1&" + _SHEET_CASE,
    ),
    "northgate_main_unit_envelope": (
        "sheet_inrush_envelope",
        "/v1/sheet/inrush/envelope.csv?" + _SHEET_CASE,
    ),
    "northgate_main_unit_ieq_table": (
        "sheet_inrush_ieq_table",
        "/v1/sheet/inrush/ieq.csv?" + _SHEET_CASE,
    ),
}

PEAK_BATCH_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_sizing_loop": {
        "cases": [
            {**PEAK_REQUESTS["northgate_main_unit"], "method": "analytic"},
            {**PEAK_REQUESTS["northgate_lighting"], "method": "analytic"},
            {**PEAK_REQUESTS["northgate_backfeed"], "method": "analytic"},
            {"transformer": {**MAIN_UNIT, "impedance_percent": 55}, "method": "analytic"},
        ]
    }
}
_SUMMARIES["northgate_sizing_loop"] = (
    "Demo: three plant units and one deliberately invalid case, answered item by item"
)
PEAK_BATCH_EXAMPLES = _openapi(PEAK_BATCH_REQUESTS)

# Invented device data for the demo (no manufacturer's curves): a 13.8 kV power fuse in the
# main unit's fused switch, the feeder relay upstream, and the lighting transformer's fuse.
MAIN_FUSE: dict[str, Any] = {
    "kind": "fuse",
    "name": "F-main 13.8 kV",
    "minimum_melt": [
        {"current_a": 180, "time_s": 1000}, {"current_a": 209, "time_s": 150},
        {"current_a": 300, "time_s": 20}, {"current_a": 400, "time_s": 6},
        {"current_a": 600, "time_s": 1.5}, {"current_a": 1000, "time_s": 0.35},
        {"current_a": 1500, "time_s": 0.12}, {"current_a": 2500, "time_s": 0.035},
        {"current_a": 4000, "time_s": 0.012},
    ],
    "total_clearing": [
        {"current_a": 180, "time_s": 1500}, {"current_a": 209, "time_s": 220},
        {"current_a": 300, "time_s": 30}, {"current_a": 400, "time_s": 9},
        {"current_a": 600, "time_s": 2.2}, {"current_a": 1000, "time_s": 0.55},
        {"current_a": 1500, "time_s": 0.2}, {"current_a": 2500, "time_s": 0.06},
        {"current_a": 4000, "time_s": 0.022},
    ],
}  # fmt: skip
FEEDER_RELAY: dict[str, Any] = {
    "kind": "relay",
    "name": "51 feeder",
    "standard": "ieee_c37_112",
    "curve": "very_inverse",
    "pickup_a": 150,
    "time_dial": 2.0,
    "instantaneous_pickup_a": 2000,
}
LIGHTING_FUSE: dict[str, Any] = {
    "kind": "fuse",
    "name": "F-lighting 480 V",
    "minimum_melt": [
        {"current_a": 230, "time_s": 1000}, {"current_a": 271, "time_s": 150},
        {"current_a": 400, "time_s": 12}, {"current_a": 600, "time_s": 2},
        {"current_a": 1000, "time_s": 0.4}, {"current_a": 2000, "time_s": 0.06},
        {"current_a": 4000, "time_s": 0.012},
    ],
    "total_clearing": [
        {"current_a": 230, "time_s": 1500}, {"current_a": 271, "time_s": 220},
        {"current_a": 400, "time_s": 18}, {"current_a": 600, "time_s": 3},
        {"current_a": 1000, "time_s": 0.6}, {"current_a": 2000, "time_s": 0.1},
        {"current_a": 4000, "time_s": 0.025},
    ],
}  # fmt: skip
# The main unit's own differential relay (invented settings): 13.8 kV delta - 480Y/277 V is
# Dyn1, energised from the 13.8 kV side; CTs 150/5, tap 3.5 A (1 pu = 105 A primary); slopes,
# minimum operate and 15 % second-harmonic blocking at their common-practice defaults.
MAIN_DIFFERENTIAL: dict[str, Any] = {
    "kind": "differential",
    "name": "87T main unit",
    "vector_group": "Dyn1",
    "energized_side": "high",
    "ct_primary_a": 150,
    "ct_secondary_a": 5,
    "tap_a": 3.5,
    "second_harmonic_percent": 15,
    "harmonic_logic": "own_phase",
}
CLEARANCE_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_main_unit": {
        "transformer": MAIN_UNIT,
        "source": UTILITY,
        "devices": [MAIN_FUSE, FEEDER_RELAY],
        "options": {"closing": "worst", "duration_s": 2.0},
    },
    "northgate_lighting": {
        "transformer": LIGHTING_UNIT,
        "source": BUS_480,
        "devices": [LIGHTING_FUSE],
        "options": {"closing": "worst", "duration_s": 1.0, "insulation": "dry"},
    },
    "northgate_main_unit_differential": {
        "transformer": MAIN_UNIT,
        "source": UTILITY,
        "devices": [MAIN_DIFFERENTIAL],
        "options": {"closing": "worst", "duration_s": 1.0},
    },
}
CLEARANCE_EXAMPLES = {
    "northgate_main_unit": {
        "summary": "Demo: the main unit's fused switch and the feeder relay (invented curves)",
        "value": CLEARANCE_REQUESTS["northgate_main_unit"],
    },
    "northgate_lighting": {
        "summary": "Demo: the dry-type lighting transformer's fuse (invented curve)",
        "value": CLEARANCE_REQUESTS["northgate_lighting"],
    },
    "northgate_main_unit_differential": {
        "summary": "Demo: the main unit's own differential relay through its energisation "
        "(invented settings): per-cycle harmonic ratios and the verdict under each logic",
        "value": CLEARANCE_REQUESTS["northgate_main_unit_differential"],
    },
}

# The standby generator of the demo: X''d and X'd from the scenario; Xd, T''d and T'd are
# invented demo values (typical magnitudes), not a manufacturer's data.
STANDBY_GENERATOR: dict[str, Any] = {
    "kind": "generator",
    "rating_kva": 1250,
    "x_d2_pu": 0.15,
    "x_d1_pu": 0.25,
    "x_d_pu": 2.0,
    "t_d2_s": 0.03,
    "t_d1_s": 0.8,
}
DIP_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_backfeed": {
        "transformer": BACKFEED_UNIT,
        "supply": STANDBY_GENERATOR,
        "switching": {"closing_angle_deg": 0.0, "residual_flux_pu": [0.8, -0.4, -0.4]},
        "options": {"limits": "iso_8528_5", "size_for": "G2", "duration_s": 10.0},
    },
}


def _sheet_points(points: list[dict[str, float]]) -> str:
    return ",".join(f"{p['current_a']:g}:{p['time_s']:g}" for p in points)


# The same demo cases as spreadsheet cells: the fused switch's fuse and the feeder relay against
# the main unit's inrush, and the standby generator's dip (the JSON examples above, by GET).
SHEET_REQUESTS["northgate_main_fuse"] = (
    "sheet_clearance_ride_through",
    "/v1/sheet/clearance/ride-through.txt?quantity=margin_ratio&device=fuse&melt_points="
    + _sheet_points(MAIN_FUSE["minimum_melt"])
    + "&clearing_points="
    + _sheet_points(MAIN_FUSE["total_clearing"])
    + "&"
    + _SHEET_CASE,
)
SHEET_REQUESTS["northgate_feeder_relay"] = (
    "sheet_clearance_ride_through",
    "/v1/sheet/clearance/ride-through.txt?quantity=verdict&device=relay"
    "&relay_standard=ieee_c37_112&relay_curve=very_inverse&pickup_a=150&time_dial=2"
    "&instantaneous_pickup_a=2000&" + _SHEET_CASE,
)
_SHEET_BACKFEED = (
    "rating_kva=2500&voltage_kv=0.48&connection=wye_grounded&position=inner"
    "&impedance_percent=5.75&x_over_r=7&no_load_current_percent=0.8&residual_flux_pu=0.8,-0.4,-0.4"
    "&generator_kva=1250&x_d2_pu=0.15&x_d1_pu=0.25&x_d_pu=2&t_d2_s=0.03&t_d1_s=0.8"
)
SHEET_REQUESTS["northgate_backfeed_dip"] = (
    "sheet_generator_dip",
    "/v1/sheet/generator-dip/dip.txt?quantity=dip_percent&limit=G2&" + _SHEET_BACKFEED,
)
SHEET_REQUESTS["northgate_backfeed_generator_size"] = (
    "sheet_generator_dip",
    "/v1/sheet/generator-dip/dip.txt?quantity=smallest_generator_kva&limit=G2&" + _SHEET_BACKFEED,
)

DIP_EXAMPLES = {
    "northgate_backfeed": {
        "summary": "Demo: the 1250 kVA standby generator back-feeds the 2500 kVA unit at 480 V",
        "value": DIP_REQUESTS["northgate_backfeed"],
    }
}

STATISTICS_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_backfeed": {
        "transformer": BACKFEED_UNIT,
        "source": GENERATOR_SUBTRANSIENT,
        "options": {"samples": 10000, "random_state": 1, "threshold_a": 15000},
    },
}
STATISTICS_REQUESTS["northgate_backfeed_generator"] = {
    "transformer": BACKFEED_UNIT,
    "supply": STANDBY_GENERATOR,
    "dip_limit": "G2",
    "options": {"samples": 10000, "random_state": 1, "check_events": 60},
}
STATISTICS_EXAMPLES = {
    "northgate_backfeed": {
        "summary": "Demo: P99 of the back-feed peak over random closing and residual flux",
        "value": STATISTICS_REQUESTS["northgate_backfeed"],
    },
    "northgate_backfeed_generator": {
        "summary": "Demo: the same from the generator itself, with the odds of a dip beyond G2",
        "value": STATISTICS_REQUESTS["northgate_backfeed_generator"],
    },
}

MITIGATION_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_backfeed": {
        "transformer": BACKFEED_UNIT,
        "supply": STANDBY_GENERATOR,
        "switching": {"residual_flux_pu": [0.8, -0.4, -0.4]},
        "dip_limit": "G2",
        # the options that act on the closing itself, each judged on a 2 s dip record: within
        # the default work budget (2 to 4 s of CPU)
        "options": [
            {"kind": "controlled_closing"},
            {"kind": "pre_insertion_resistor"},
            {"kind": "demagnetize"},
            {"kind": "pre_magnetize"},
            {"kind": "ramp"},
        ],
        "dip_duration_s": 2.0,
    },
    "northgate_main_unit": {
        "transformer": MAIN_UNIT,
        "source": UTILITY,
        "switching": {"residual_flux_pu": [0.8, -0.4, -0.4]},
        "target_peak_x_rated": 6.0,
        "devices": CLEARANCE_REQUESTS["northgate_main_unit"]["devices"],
        "options": [
            {"kind": "controlled_closing"},
            {"kind": "pre_insertion_resistor"},
            {"kind": "demagnetize"},
            {"kind": "pre_magnetize"},
            {"kind": "tap", "turns_percent": 5.0},
            {"kind": "core_material"},
            {"kind": "rating"},
            {
                "kind": "other_winding",
                "voltage_kv": 0.48,
                "connection": "wye_grounded",
                "source": GENERATOR_SUBTRANSIENT,
            },
        ],
    },
}
MITIGATION_EXAMPLES = {
    "northgate_backfeed": {
        "summary": "Demo: what keeps the standby generator's dip within G2 on the back-feed",
        "value": MITIGATION_REQUESTS["northgate_backfeed"],
    },
    "northgate_main_unit": {
        "summary": "Demo: the main unit from the utility, its fuse and relay, a 6 x target",
        "value": MITIGATION_REQUESTS["northgate_main_unit"],
    },
}


# The plant's 13.8 kV ring (invented): three pad-mount units with grounded-wye primaries, fed
# from the same 250 MVA utility bus, and the ring's own feeder relay (invented settings).
def _pad_mount(kva: float, x_over_r: float) -> dict[str, Any]:
    return {
        "rating_kva": kva,
        "phases": 3,
        "frequency_hz": 60,
        "energized_winding": {
            "voltage_kv": 13.8,
            "connection": "wye_grounded",
            "position": "outer",
        },
        "impedance_percent": 5.75,
        "x_over_r": x_over_r,
        "no_load_current_percent": 1.0,
        "core": {"material": "grain_oriented"},
    }


# The ring's far end, fed through the tie cable (invented demo value): a weak, resistive supply,
# where the sympathetic interaction shows.
RING_FAR_END: dict[str, Any] = {"kind": "fault_level", "fault_mva": 40, "x_over_r": 3}
RING_RELAY: dict[str, Any] = {
    "kind": "relay",
    "name": "51 ring",
    "standard": "ieee_c37_112",
    "curve": "very_inverse",
    "pickup_a": 300,
    "time_dial": 2.0,
    "instantaneous_pickup_a": 2000,
}
# The in-service 1000 kVA pad's own differential relay (invented settings): a grounded-wye -
# grounded-wye pad-mount unit is YNyn0; rated 41.8 A at 13.8 kV, CTs 50/5, tap 4.2 A (1 pu = 42 A
# primary); slopes and minimum operate at their defaults, 15 % second-harmonic blocking.
PAD_DIFFERENTIAL: dict[str, Any] = {
    "kind": "differential",
    "name": "87T pad 2",
    "vector_group": "YNyn0",
    "energized_side": "high",
    "ct_primary_a": 50,
    "ct_secondary_a": 5,
    "tap_a": 4.2,
    "second_harmonic_percent": 15,
    "harmonic_logic": "own_phase",
}
NETWORK_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_ring_reclose": {
        "bus_voltage_kv": 13.8,
        "frequency_hz": 60,
        "source": UTILITY,
        "closing_angle_deg": 0.0,
        "units": [
            {"name": "pad 1 (1500 kVA)", "transformer": _pad_mount(1500, 6)},
            {"name": "pad 2 (1000 kVA)", "transformer": _pad_mount(1000, 5)},
            {"name": "pad 3 (750 kVA)", "transformer": _pad_mount(750, 4)},
        ],
        "devices": [RING_RELAY],
        "options": {"duration_s": 1.0},
    },
    "northgate_ring_sympathetic": {
        "bus_voltage_kv": 13.8,
        "frequency_hz": 60,
        "source": RING_FAR_END,
        "closing_angle_deg": 0.0,
        "units": [
            {"name": "pad 1 (1500 kVA)", "transformer": _pad_mount(1500, 6)},
            {
                "name": "pad 2 (1000 kVA)",
                "transformer": _pad_mount(1000, 5),
                "state": "in_service",
                "differential": PAD_DIFFERENTIAL,
            },
        ],
        "options": {"duration_s": 2.0},
    },
}
NETWORK_EXAMPLES = {
    "northgate_ring_reclose": {
        "summary": "Demo: three pad-mount units on the 13.8 kV ring picked up together after "
        "a reclose",
        "value": NETWORK_REQUESTS["northgate_ring_reclose"],
    },
    "northgate_ring_sympathetic": {
        "summary": "Demo: the 1500 kVA unit energised beside the 1000 kVA unit in service, at "
        "the ring's far end",
        "value": NETWORK_REQUESTS["northgate_ring_sympathetic"],
    },
}

# The ring's reclose drawn at random: the three pad-mount units picked up together with random
# closing instants and residual flux, their feeder relay judged on the first events (a sample
# sized to answer in well under a second; a study takes 10 000 samples or more).
NETWORK_STATISTICS_REQUESTS: dict[str, dict[str, Any]] = {
    "northgate_ring_reclose": {
        **NETWORK_REQUESTS["northgate_ring_reclose"],
        "options": {"duration_s": 0.5},
        "sampling": {"samples": 400, "random_state": 1, "check_events": 20},
    },
}
NETWORK_STATISTICS_EXAMPLES = {
    "northgate_ring_reclose": {
        "summary": "Demo: the ring's three pad-mount units picked up at random instants, and how "
        "often the ring relay operates",
        "value": NETWORK_STATISTICS_REQUESTS["northgate_ring_reclose"],
    },
}

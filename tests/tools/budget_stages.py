"""Random op-amp channels (one or two stages) as plain design data, for the noise and DC-error cross-checks."""

from __future__ import annotations

import random
from typing import Any

import yaml


def _e96(rng: random.Random, lo: float, hi: float) -> float:
    return float(f"{rng.uniform(lo, hi):.3g}")


def random_part(rng: random.Random, white: bool = True) -> dict[str, Any]:
    """An op-amp model with every parameter declared (1/f corners zero when ``white``)."""
    return {
        "gbw": _e96(rng, 1e5, 5e7), "open_loop_gain": _e96(rng, 1e4, 1e6), "second_pole": _e96(rng, 5e7, 5e8),
        "output_resistance": _e96(rng, 10, 200), "input_resistance_diff": _e96(rng, 1e6, 1e12),
        "input_resistance_cm": _e96(rng, 1e8, 1e12), "input_capacitance_diff": 2e-12, "input_capacitance_cm": 3e-12,
        "bias_current": _e96(rng, 1e-12, 1e-7), "offset_current": _e96(rng, 1e-13, 1e-8),
        "offset_voltage": _e96(rng, 1e-5, 3e-3), "offset_drift": _e96(rng, 1e-7, 1e-5),
        "voltage_noise": _e96(rng, 2e-9, 50e-9), "voltage_noise_corner": 0.0 if white else _e96(rng, 1, 500),
        "current_noise": _e96(rng, 1e-15, 3e-12), "current_noise_corner": 0.0 if white else _e96(rng, 1, 500),
        "cmrr": 1e5, "input_cm_low": -0.1, "input_cm_high": 1.5, "output_drop_low": 0.05, "output_drop_high": 0.05,
        "output_sat_resistance": 30, "output_current_limit": 0.03, "slew_rate": 1e6,
    }


def random_channel(seed: int, white: bool = True, second: bool | None = None) -> tuple[dict[str, Any], str]:
    """A design: a signal with source resistance, a first stage (non-inverting, inverting or RC-filtered follower),
    sometimes a second inverting stage, with feedback capacitors sometimes; split ±5 V rails."""
    rng = random.Random(seed)
    comps: dict[str, Any] = {}
    first = rng.choice(["non-inverting", "inverting", "follower-rc"])
    rf, rg = _e96(rng, 1e3, 1e6), _e96(rng, 1e2, 1e5)
    if first == "non-inverting":
        comps["U1"] = {"kind": "opamp", "part": "P1", "pins": {"in+": "IN", "in-": "FB1", "out": "A", "v+": "VP",
                                                               "v-": "VN"}}
        comps["R1"] = {"kind": "resistor", "value": rf, "pins": {1: "A", 2: "FB1"}}
        comps["R2"] = {"kind": "resistor", "value": rg, "pins": {1: "FB1", 2: "GND"}}
    elif first == "inverting":
        comps["U1"] = {"kind": "opamp", "part": "P1", "pins": {"in+": "GND", "in-": "FB1", "out": "A", "v+": "VP",
                                                               "v-": "VN"}}
        comps["R1"] = {"kind": "resistor", "value": rf, "pins": {1: "A", 2: "FB1"}}
        comps["R2"] = {"kind": "resistor", "value": rg, "pins": {1: "IN", 2: "FB1"}}
    else:
        comps["R2"] = {"kind": "resistor", "value": rg, "pins": {1: "IN", 2: "F1"}}
        comps["C2"] = {"kind": "capacitor", "value": _e96(rng, 1e-10, 1e-7), "pins": {1: "F1", 2: "GND"}}
        comps["U1"] = {"kind": "opamp", "part": "P1", "pins": {"in+": "F1", "in-": "A", "out": "A", "v+": "VP",
                                                               "v-": "VN"}}
    if first != "follower-rc" and rng.random() < 0.5:
        comps["C1"] = {"kind": "capacitor", "value": _e96(rng, 1e-12, 1e-9), "pins": {1: "A", 2: "FB1"}}
    out = "A"
    if (rng.random() < 0.5) if second is None else second:
        comps["U2"] = {"kind": "opamp", "part": "P2", "pins": {"in+": "GND", "in-": "FB2", "out": "B", "v+": "VP",
                                                               "v-": "VN"}}
        comps["R3"] = {"kind": "resistor", "value": _e96(rng, 1e3, 1e5), "pins": {1: "A", 2: "FB2"}}
        comps["R4"] = {"kind": "resistor", "value": _e96(rng, 1e3, 1e5), "pins": {1: "FB2", 2: "B"}}
        out = "B"
    for c in comps.values():
        if c["kind"] == "resistor":
            c["tolerance"] = rng.choice(["0.1%", "1%"])
            c["tempco"] = rng.choice(["25 ppm/K", "100 ppm/K"])
    lo = _e96(rng, 0.1, 10.0)
    return {
        "afecheck": 1, "name": f"random channel {seed}", "ground": "GND",
        "parts": {"P1": random_part(rng, white), "P2": random_part(rng, white)},
        "rails": {"VP": {"voltage": 5.0, "tolerance": "1%"}, "VN": {"voltage": -5.0, "tolerance": "1%"}},
        "components": comps,
        "signals": {"IN": {"dc": [-0.01, 0.01], "ac_amplitude": 0.001, "band": [lo, lo * 10 ** rng.choice([2, 3, 4])],
                           "source_resistance": _e96(rng, 10, 1e5)}},
        "operating_temperature": [rng.choice([-40, 0]), rng.choice([27, 50, 85])],
        "loads": {out: {"resistance": _e96(rng, 2e3, 1e5), "capacitance": 1e-11}},
        "budgets": {out: {"noise": 1e-3}},
    }, out


def write_channel(tmp_path, seed: int, white: bool = True, second: bool | None = None):  # noqa: ANN001, ANN201
    """Write the channel to a YAML file; return (path, output net)."""
    data, out = random_channel(seed, white, second)
    path = tmp_path / f"channel_{seed}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path, out

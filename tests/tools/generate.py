"""Generate realistic N-channel front-end designs in the exchange format, for scale tests and the benchmark.

Each channel is a sensor with its divider or bias network, a non-inverting gain stage, a unity-gain
Sallen-Key low-pass and an isolation resistor into a 12-bit ADC input: 12 parts a channel. Even
channels read an NTC divider (temperature), odd channels a low-impedance voltage sensor with a
pull-down for open-sensor detection. Every value is an E96 resistor or E24 capacitor, signals stay
inside the rails and the converter's full scale, so the design is meant to be clean.

Usable as a script::

    python tests/tools/generate.py 1000 -o /tmp/afe1000.json
    python tests/tools/generate.py 1000 --vary -o /tmp/afe1000v.json   # every channel its own values

Without ``--vary`` the channels are identical apart from their names, which flatters any sharing of work between
repeated circuits; with it, each channel's gain and filter resistors are other E96 values, chosen from the channel
number (deterministic), so no two channels of the same kind are the same circuit (up to 12 000 channels).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

import yaml

PARTS_PER_CHANNEL = 12

# A generic precision archetype written inline, every parameter declared, so the benchmark does not
# depend on the shipped library and no finding rests on assumed defaults.
BENCH_PART: dict[str, Any] = {
    "description": "generic precision dual, bench archetype",
    "gbw": "1.5 MHz",
    "open_loop_gain": "120 dB",
    "second_pole": "6 MHz",
    "min_stable_gain": 1,
    "output_resistance": 60,
    "input_resistance_diff": "10 G",
    "input_resistance_cm": "100 G",
    "input_capacitance_diff": "4 pF",
    "input_capacitance_cm": "3 pF",
    "bias_current": "100 pA",
    "offset_current": "50 pA",
    "offset_voltage": "25 uV",
    "offset_drift": "0.3 uV/K",
    "voltage_noise": "9 nV/rtHz",
    "voltage_noise_corner": "10 Hz",
    "current_noise": "0.2 pA/rtHz",
    "current_noise_corner": "10 Hz",
    "slew_rate": "0.6 V/us",
    "cmrr": "120 dB",
    "input_cm_low": "-0.1 V",
    "input_cm_high": "1.5 V",
    "output_drop_low": "50 mV",
    "output_drop_high": "120 mV",
    "output_sat_resistance": 40,
    "output_current_limit": "20 mA",
    "supply_min": "2.7 V",
    "supply_max": "36 V",
    "max_capacitive_load": "1 nF",
    "input_stage": "single-pair",
}
PART_NAME = "BENCH-PREC2"


def e96(lo: float, hi: float) -> list[float]:
    """E96 values from ``lo`` to ``hi`` (IEC 60063: 10^(i/96) rounded to three significant figures)."""
    out = []
    for decade in range(-1, 8):
        for i in range(96):
            v = round(10 ** (i / 96), 2) * 10.0**decade
            if lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9):
                out.append(v)
    return out


def _ohms(v: float) -> str:
    """An E96 resistance written as the format reads it: 3.01k, 100k, 1.00M."""
    for scale, suffix in ((1e6, "M"), (1e3, "k"), (1.0, "")):
        if v >= scale:
            return f"{v / scale:.3g}{suffix}"
    return f"{v:.3g}"


def _pick(index: int, *choices: list[float]) -> list[str]:
    """One value from each list, by ``index`` written in mixed radix: distinct indices give distinct picks
    (while ``index`` is below the product of the lists' lengths)."""
    picked = []
    for values in choices:
        index, k = divmod(index, len(values))
        picked.append(_ohms(values[k]))
    return picked


def _ntc_channel(c: int, vary: bool = False) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any]]:
    """Channel ``c``: NTC divider from the reference, gain 1.301, 10.7 Hz filter, sampled at 1 kHz (varied: gain
    1.16..1.31 and filter resistors 90.9k..110k)."""
    b, n = c * 100, f"CH{c}_"
    r_gain, r_gnd, r_fa, r_fb = _pick(c // 2, e96(1.65e3, 3.01e3), e96(9.76e3, 10.2e3), e96(90.9e3, 110e3),
                                      e96(90.9e3, 110e3)) if vary else ("3.01k", "10.0k", "100k", "100k")
    comps = {
        f"R{b + 1}": {"kind": "resistor", "value": "10.0k", "tolerance": "0.1%", "pins": {1: "VREF", 2: n + "TH"}},
        f"RT{b + 1}": {"kind": "ntc", "r25": "10k", "beta": "3950 K", "temperature": ["-30 °C", "10 °C"],
                       "tolerance": "1%", "pins": {1: n + "TH", 2: "GND"}},
        f"U{b + 1}": {"kind": "opamp", "part": PART_NAME,
                      "pins": {"in+": n + "TH", "in-": n + "FB", "out": n + "AMP", "v+": "VCC", "v-": "GND"}},
        f"R{b + 2}": {"kind": "resistor", "value": r_gain, "tolerance": "0.1%", "pins": {1: n + "AMP", 2: n + "FB"}},
        f"R{b + 3}": {"kind": "resistor", "value": r_gnd, "tolerance": "0.1%", "pins": {1: n + "FB", 2: "GND"}},
    }
    comps.update(_filter(b, n, r_fa, r_fb))
    adc = {"capacitance": "20 pF", "adc": {"full_scale": "3.3 V", "bits": 12, "sample_rate": "1 kHz"}}
    return comps, {}, {n + "ADC": adc}


def _sensor_channel(c: int, vary: bool = False) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any]]:
    """Channel ``c``: 0.5..1.5 V sensor (1 kΩ) with a 1 MΩ pull-down, gain 2, 32 Hz filter, 10 kHz sampling
    (varied: gain 1.62..2 and filter resistors 30.1k..36.5k)."""
    b, n = c * 100, f"CH{c}_"
    r_fb, r_gnd, r_fa, r_fb2 = _pick(c // 2, e96(7.5e3, 10e3), e96(10e3, 12.1e3), e96(30.1e3, 36.5e3),
                                     e96(30.1e3, 36.5e3)) if vary else ("10.0k", "10.0k", "33.2k", "33.2k")
    comps = {
        f"S{b + 1}": {"kind": "signal_source", "dc": ["0.5 V", "1.5 V"], "ac_amplitude": "10 mV",
                      "band": ["0.1 Hz", "10 Hz"], "source_resistance": "1k", "pins": {"p": n + "SENS", "n": "GND"}},
        f"R{b + 1}": {"kind": "resistor", "value": "1.00M", "tolerance": "1%", "pins": {1: n + "SENS", 2: "GND"}},
        f"U{b + 1}": {"kind": "opamp", "part": PART_NAME,
                      "pins": {"in+": n + "SENS", "in-": n + "FB", "out": n + "AMP", "v+": "VCC", "v-": "GND"}},
        f"R{b + 2}": {"kind": "resistor", "value": r_fb, "tolerance": "0.1%", "pins": {1: n + "AMP", 2: n + "FB"}},
        f"R{b + 3}": {"kind": "resistor", "value": r_gnd, "tolerance": "0.1%", "pins": {1: n + "FB", 2: "GND"}},
    }
    comps.update(_filter(b, n, r_fa, r_fb2))
    adc = {"capacitance": "20 pF", "adc": {"full_scale": "3.3 V", "bits": 12, "sample_rate": "10 kHz"}}
    return comps, {}, {n + "ADC": adc}


def _filter(b: int, n: str, r: str, r2: str) -> dict[str, Any]:
    """Unity-gain Sallen-Key low-pass (Q ≈ 0.74), its op-amp's decoupling, and a 100 Ω ADC isolation resistor."""
    return {
        f"R{b + 4}": {"kind": "resistor", "value": r, "tolerance": "0.1%", "pins": {1: n + "AMP", 2: n + "SK1"}},
        f"R{b + 5}": {"kind": "resistor", "value": r2, "tolerance": "0.1%", "pins": {1: n + "SK1", 2: n + "SK2"}},
        f"C{b + 1}": {"kind": "capacitor", "value": "220n", "tolerance": "5%", "dielectric": "film",
                      "pins": {1: n + "SK1", 2: n + "OUT"}},
        f"C{b + 2}": {"kind": "capacitor", "value": "100n", "tolerance": "5%", "dielectric": "film",
                      "pins": {1: n + "SK2", 2: "GND"}},
        f"U{b + 2}": {"kind": "opamp", "part": PART_NAME,
                      "pins": {"in+": n + "SK2", "in-": n + "OUT", "out": n + "OUT", "v+": "VCC", "v-": "GND"}},
        f"C{b + 3}": {"kind": "capacitor", "value": "100n", "tolerance": "10%", "dielectric": "X7R",
                      "pins": {1: "VCC", 2: "GND"}},
        f"R{b + 6}": {"kind": "resistor", "value": "100", "tolerance": "1%", "pins": {1: n + "OUT", 2: n + "ADC"}},
    }


def generate_design(channels: int, name: str | None = None, vary: bool = False) -> dict[str, Any]:
    """A plain-data design (ready for JSON or YAML) with ``channels`` channels, 12 parts each (``vary``: each
    channel with its own resistor values)."""
    if channels < 1:
        raise ValueError("channels must be at least 1")
    components: dict[str, Any] = {}
    signals: dict[str, Any] = {}
    loads: dict[str, Any] = {}
    for c in range(1, channels + 1):
        comps, sigs, lds = (_ntc_channel if c % 2 else _sensor_channel)(c, vary)
        components.update(comps)
        signals.update(sigs)
        loads.update(lds)
    return {
        "afecheck": 1,
        "name": name or f"data-acquisition rack, {channels} channels",
        "description": "generated: sensor, gain stage, Sallen-Key anti-alias filter and ADC input per channel",
        "ground": "GND",
        "parts": {PART_NAME: dict(BENCH_PART)},
        "rails": {
            "VCC": {"voltage": "5 V", "tolerance": "2%"},
            "VREF": {"voltage": "2.5 V", "tolerance": "0.1%"},
        },
        "components": components,
        "signals": signals,
        "loads": loads,
    }


def _jsonable(data: Any) -> Any:
    """JSON keys must be strings; pin numbers are written as YAML integers but as JSON strings."""
    if isinstance(data, dict):
        return {str(k): _jsonable(v) for k, v in data.items()}
    if isinstance(data, list):
        return [_jsonable(v) for v in data]
    return data


def write_design(path: str | Path, channels: int, vary: bool = False) -> Path:
    """Write a generated design to ``path``: JSON if it ends in .json, else YAML."""
    path = Path(path)
    data = generate_design(channels, vary=vary)
    if path.suffix == ".json":
        path.write_text(json.dumps(_jsonable(data), indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    else:
        path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True, width=120), encoding="utf-8")
    return path


def main(argv: list[str] | None = None) -> int:
    """Command line: ``generate.py N -o FILE`` (JSON or YAML from the suffix; stdout as YAML)."""
    p = argparse.ArgumentParser(description="Generate an N-channel analog front-end design.")
    p.add_argument("channels", type=int)
    p.add_argument("-o", "--output", help="output file (.json or .yaml); default: YAML on stdout")
    p.add_argument("--vary", action="store_true", help="give every channel its own resistor values")
    args = p.parse_args(argv)
    if args.channels < 1:
        p.error("channels must be at least 1")
    if args.output:
        write_design(args.output, args.channels, args.vary)
    else:
        sys.stdout.write(yaml.safe_dump(generate_design(args.channels, vary=args.vary), sort_keys=False,
                                        allow_unicode=True))
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Designs that crowd many parts onto one net, the shapes that once made a check grow quadratically.

``followers(n)``: n unity-gain followers all reading one signal net, each with its own load resistor.
``shared_return(n)``: a chain of n followers whose load resistors all return to one shared net.
``ladder(k, length)``: k gain stages, each driving an RC ladder of ``length`` sections (a large local circuit).
Invented scenarios; the op-amp is a shipped generic archetype.
"""

from __future__ import annotations

from typing import Any


def _design(comps: dict[str, Any]) -> dict[str, Any]:
    return {"afecheck": 1, "name": "crowded net", "rails": {"VCC": {"voltage": "5 V"}}, "components": comps,
            "signals": {"IN": {"dc": ["1 V", "2 V"], "source_resistance": "1k"}}}


def _follower(plus: str, out: str) -> dict[str, Any]:
    return {"kind": "opamp", "part": "AFE-GP1", "pins": {"in+": plus, "in-": out, "out": out, "v+": "VCC", "v-": "GND"}}


def followers(n: int) -> dict[str, Any]:
    comps: dict[str, Any] = {"RS": {"kind": "resistor", "value": "1k", "pins": {"1": "IN", "2": "GND"}}}
    for i in range(n):
        comps[f"U{i}"] = _follower("IN", f"O{i}")
        comps[f"R{i}"] = {"kind": "resistor", "value": "10k", "pins": {"1": f"O{i}", "2": "GND"}}
    return _design(comps)


def shared_return(n: int) -> dict[str, Any]:
    comps: dict[str, Any] = {"RS": {"kind": "resistor", "value": "1k", "pins": {"1": "SH", "2": "GND"}}}
    for i in range(n):
        comps[f"U{i}"] = _follower("IN" if i == 0 else f"O{i - 1}", f"O{i}")
        comps[f"R{i}"] = {"kind": "resistor", "value": "10k", "pins": {"1": f"O{i}", "2": "SH"}}
    return _design(comps)


def ladder(k: int, length: int) -> dict[str, Any]:
    comps: dict[str, Any] = {}
    for c in range(k):
        comps[f"U{c}"] = {"kind": "opamp", "part": "AFE-GP1",
                          "pins": {"in+": "IN", "in-": f"M{c}", "out": f"L{c}_0", "v+": "VCC", "v-": "GND"}}
        comps[f"RF{c}"] = {"kind": "resistor", "value": "10k", "pins": {"1": f"L{c}_0", "2": f"M{c}"}}
        comps[f"RG{c}"] = {"kind": "resistor", "value": "10k", "pins": {"1": f"M{c}", "2": "GND"}}
        for i in range(length):
            far = f"L{c}_{i + 1}" if i < length - 1 else "GND"
            comps[f"R{c}_{i}"] = {"kind": "resistor", "value": "1k", "pins": {"1": f"L{c}_{i}", "2": far}}
            comps[f"C{c}_{i}"] = {"kind": "capacitor", "value": "1n", "pins": {"1": f"L{c}_{i}", "2": "GND"}}
    return _design(comps)


SHAPES = {"followers": followers, "shared_return": shared_return}

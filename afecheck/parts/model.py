"""The op-amp macromodel: the parameters the analysis and the rules read, with assumed defaults.

A part file may leave any optional parameter out. :meth:`OpAmpModel.get` then returns the generic
default from :data:`ASSUMED_DEFAULTS` and says so, so that every finding resting on it can be
marked "estimated" and list what was assumed (RULES-REFERENCE 0.3: missing data is never a pass).
"""

from __future__ import annotations

import math
from typing import Annotated, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, WithJsonSchema

from afecheck.model.units import parse_quantity


def _q(unit: str):
    return Annotated[
        float,
        BeforeValidator(lambda v: parse_quantity(v, unit)),
        WithJsonSchema({"anyOf": [{"type": "number"}, {"type": "string", "minLength": 1, "maxLength": 100}],
                        "description": f"in {unit}: a number, or a string with SI prefix and unit"}),
    ]


InputStage = Literal["single-pair", "rail-to-rail-complementary", "zero-crossover"]

# Generic typical values used when a part model is silent (RULES-REFERENCE 0.3, from memory [FM]);
# every use is reported as an assumption.
ASSUMED_DEFAULTS: dict[str, float] = {
    "open_loop_gain": 1e5,
    "input_resistance_diff": 1e12,
    "input_resistance_cm": 1e12,
    "input_capacitance_diff": 3e-12,
    "input_capacitance_cm": 3e-12,
    "output_resistance": 100.0,
    "bias_current": 1e-9,
    "offset_current": 1e-10,
    "offset_voltage": 1e-3,
    "offset_drift": 5e-6,
    "voltage_noise": 20e-9,
    "voltage_noise_corner": 100.0,
    "current_noise": 1e-13,
    "current_noise_corner": 100.0,
    "cmrr": 10 ** (80 / 20),
    "input_cm_low": 0.0,
    "input_cm_high": 1.5,
    "output_drop_low": 0.1,
    "output_drop_high": 0.1,
    "output_sat_resistance": 50.0,
    "output_current_limit": 0.02,
    "transition_below_vplus": 1.3,
    "transition_width": 0.4,
    "transition_offset_step": 0.5e-3,
    "min_stable_gain": 1.0,
}


# Plausible ends of each parameter over op-amps in general, for the sensitivity test that decides whether an
# assumption matters to a finding (docs/CONFIDENCE.md). Orders of magnitude from memory across the archetypes in
# textbooks (Horowitz & Hill, The Art of Electronics, 3rd ed., tables 4.1, 5.4, 8.3): common practice.
PLAUSIBLE_RANGES: dict[str, tuple[float, float]] = {
    "open_loop_gain": (1e4, 1e7),
    "input_resistance_diff": (1e5, 1e13),
    "input_resistance_cm": (1e6, 1e14),
    "input_capacitance_diff": (0.5e-12, 20e-12),
    "input_capacitance_cm": (0.5e-12, 20e-12),
    "output_resistance": (10.0, 1e3),
    "bias_current": (1e-13, 1e-6),
    "offset_voltage": (1e-5, 1e-2),
    "offset_drift": (1e-7, 2e-5),
    "voltage_noise": (3e-9, 1e-7),
    "voltage_noise_corner": (1.0, 1e4),
    "current_noise": (1e-15, 1e-11),
    "current_noise_corner": (1.0, 1e4),
    "cmrr": (10 ** (60 / 20), 10 ** (130 / 20)),
    "input_cm_low": (-0.3, 3.0),
    "input_cm_high": (-0.3, 3.0),
    "output_drop_low": (0.005, 1.5),
    "output_drop_high": (0.005, 1.5),
    "output_sat_resistance": (5.0, 300.0),
    "output_current_limit": (5e-3, 0.1),
    "transition_below_vplus": (0.8, 2.0),
    "transition_width": (0.1, 0.8),
    "transition_offset_step": (0.05e-3, 2e-3),
    "min_stable_gain": (1.0, 10.0),
}
SECOND_POLE_SPREAD = (0.5, 3.0)
"""An unknown second pole lies between these multiples of its estimate from the minimum stable gain."""


class OpAmpModel(BaseModel):
    """Macromodel of one op-amp section (all quantities SI; headrooms are volts inside each rail)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    description: str | None = None
    archetype: str | None = None
    gbw: _q("Hz") = Field(gt=0, description="gain-bandwidth product")
    open_loop_gain: _q("1") | None = Field(default=None, gt=1, description="A0, V/V or '100 dB'")
    second_pole: _q("Hz") | None = Field(default=None, gt=0)
    min_stable_gain: _q("1") | None = Field(default=None, ge=1, description="minimum stable noise gain")
    output_resistance: _q("ohm") | None = Field(default=None, ge=0, description="open-loop output resistance")
    input_resistance_diff: _q("ohm") | None = Field(default=None, gt=0)
    input_resistance_cm: _q("ohm") | None = Field(default=None, gt=0)
    input_capacitance_diff: _q("F") | None = Field(default=None, ge=0)
    input_capacitance_cm: _q("F") | None = Field(default=None, ge=0)
    bias_current: _q("A") | None = Field(default=None, description="into each input pin")
    offset_current: _q("A") | None = None
    offset_voltage: _q("V") | None = None
    offset_drift: _q("V/K") | None = None
    voltage_noise: _q("V/rtHz") | None = Field(default=None, ge=0)
    voltage_noise_corner: _q("Hz") | None = Field(default=None, ge=0)
    current_noise: _q("A/rtHz") | None = Field(default=None, ge=0)
    current_noise_corner: _q("Hz") | None = Field(default=None, ge=0)
    slew_rate: _q("V/s") | None = Field(default=None, gt=0)
    cmrr: _q("1") | None = Field(default=None, gt=0, description="V/V or '90 dB'")
    input_cm_low: _q("V") | None = Field(default=None, description="lowest input CM above V- (negative: beyond)")
    input_cm_high: _q("V") | None = Field(default=None, description="highest input CM below V+ (negative: beyond)")
    output_drop_low: _q("V") | None = Field(default=None, ge=0, description="output swing limit above V-, light load")
    output_drop_high: _q("V") | None = Field(default=None, ge=0, description="output swing limit below V+, light load")
    output_sat_resistance: _q("ohm") | None = Field(default=None, ge=0, description="swing drop per ampere of load")
    output_current_limit: _q("A") | None = Field(default=None, gt=0)
    supply_min: _q("V") | None = Field(default=None, gt=0)
    supply_max: _q("V") | None = Field(default=None, gt=0)
    max_capacitive_load: _q("F") | None = Field(default=None, gt=0)
    input_current_limit: _q("A") | None = Field(
        default=None, gt=0, description="largest current an input pin may carry when driven beyond a rail")
    input_stage: InputStage = "single-pair"
    transition_below_vplus: _q("V") | None = None
    transition_width: _q("V") | None = Field(default=None, ge=0)
    transition_offset_step: _q("V") | None = None

    def get(self, name: str) -> tuple[float, bool]:
        """Return (value, assumed): the declared value, or the generic default flagged as assumed."""
        value = getattr(self, name)
        if value is not None:
            return float(value), False
        if name == "second_pole":
            return self.estimated_second_pole(), True
        if name == "offset_current" and self.bias_current is not None:
            # consistent with what was declared: an offset current never exceeds the bias current
            return min(ASSUMED_DEFAULTS[name], abs(float(self.bias_current))), True
        return ASSUMED_DEFAULTS[name], True

    def plausible_range(self, name: str) -> tuple[float, float]:
        """Ends of the plausible range of an undeclared parameter, consistent with what the part declares."""
        if name == "second_pole":
            f2 = self.estimated_second_pole()
            return f2 * SECOND_POLE_SPREAD[0], f2 * SECOND_POLE_SPREAD[1]
        if name == "offset_current":
            return 0.0, abs(self.value("bias_current"))
        return PLAUSIBLE_RANGES[name]

    def value(self, name: str) -> float:
        """The declared or assumed value of ``name`` (use :meth:`get` where the assumption must be reported)."""
        return self.get(name)[0]

    def estimated_second_pole(self) -> float:
        """Second pole from the minimum stable gain, assuming Gmin means 45° phase margin (RULES-REFERENCE R2).

        f2 = GBW/(√2·Gmin); for a unity-gain-stable part with no data, f2 = GBW·√2 (45° at unity gain).
        """
        gmin = self.min_stable_gain or 1.0
        return self.gbw / (math.sqrt(2.0) * gmin)

    def dominant_pole(self) -> float:
        """First pole fp1 = GBW / A0."""
        return self.gbw / self.value("open_loop_gain")

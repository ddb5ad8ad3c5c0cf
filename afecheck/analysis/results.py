"""Frozen analysis results: the numbers the rules read and `afecheck stages` prints.

All fields hold Python floats (never numpy scalars) in SI units; ``None`` means "not evaluated"
and the reason is in ``not_evaluated``; ``feedback`` is "not-evaluated" when the loop could not be solved.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    from afecheck.analysis.affine import SweptForm

Topology = Literal[
    "follower", "non-inverting", "inverting", "summing", "difference", "transimpedance", "integrator",
    "active-filter", "general", "charge-amplifier",
]
SourceKind = Literal["signal", "signal-source", "divider", "ntc-divider", "rail", "vsource", "stage-output", "unknown",
                     "current", "charge"]
GainUnit = Literal["V/V", "V/A", "V/C"]


@dataclass(frozen=True)
class SourceEquivalent:
    """Thevenin equivalent of what drives one stage input, over the declared range.

    For a ``current`` source (a photodiode) ``v_min``/``v_max`` hold its DC current range in amperes and
    ``r_min``/``r_max`` its shunt resistance (infinite when not declared), ``ac_amplitude`` its AC current; for a
    ``charge`` source ``r_min``/``r_max`` are its leakage resistance and ``ac_amplitude`` charge/capacitance volts.
    """

    net: str
    kind: SourceKind
    refs: tuple[str, ...]
    v_min: float
    v_max: float
    r_min: float
    r_max: float
    ac_amplitude: float = 0.0
    f_max: float = 0.0


@dataclass(frozen=True)
class StageInput:
    """One signal input of a stage: its source, the parts between it and the op-amp pin, gain and loading.

    ``gain`` is the DC gain to the op-amp output in ``gain_unit`` (V/V; V/A for a current source, the
    transimpedance; V/C for a charge source, taken as the largest |gain| over its band, or at 1 kHz without one);
    ``band_gain`` the largest |gain| over the source's band (its upper edge, a hundredth of it and their geometric
    mean) in the same unit, None when the source declares no band.
    """

    net: str
    pin: Literal["in+", "in-"]
    source: SourceEquivalent
    via: tuple[str, ...]
    gain: float
    ideal_gain: float
    input_resistance: float
    loading_error_min: float
    loading_error_max: float
    band_gain: float | None = None
    gain_unit: GainUnit = "V/V"


@dataclass(frozen=True)
class StageResult:
    """Everything computed for one op-amp stage (or one op-amp of a stage group solved together)."""

    opamp: str
    part: str
    topology: Topology
    refs: tuple[str, ...]
    in_plus: str
    in_minus: str
    out: str
    group: tuple[str, ...]
    inputs: tuple[StageInput, ...]
    noise_gain_dc: float | None
    noise_gain_at_crossover: float | None
    noise_gain_hf: float | None
    output_resistance: float | None
    vcm_min: float | None
    vcm_max: float | None
    vout_min: float | None
    vout_max: float | None
    vout_ac_peak: float
    f_max: float
    load_resistance: float | None
    load_capacitance: float
    iout_peak: float | None
    feedback: Literal["negative", "positive", "none", "not-evaluated"]
    loop_gain_dc: float | None
    crossover_hz: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    loop_gain_at_fmax: float | None
    required_slew_rate: float
    rail_plus: float
    rail_minus: float
    assumed: tuple[str, ...] = ()
    estimated: bool = False
    not_evaluated: tuple[str, ...] = ()
    feedback_capacitance_for_margin: float | None = None


@dataclass(frozen=True)
class NetSignal:
    """The signal a net carries: DC range, AC amplitude and highest frequency."""

    net: str
    dc_min: float
    dc_max: float
    ac_amplitude: float = 0.0
    f_max: float = 0.0


@dataclass(frozen=True)
class DesignAnalysis:
    """All stages, the signal on every net, and what could not be evaluated (refs, reason).

    ``forms`` holds each solved net's DC value as a :class:`~afecheck.analysis.affine.SweptForm` over the
    design's independent quantities (rails, signals, op-amp offsets, thermistor temperatures), and
    ``output_currents`` each op-amp's DC output current the same way: the ranges in ``nets`` are their extremes.
    """

    stages: tuple[StageResult, ...]
    nets: Mapping[str, NetSignal]
    not_evaluated: tuple[tuple[tuple[str, ...], str], ...] = field(default=())
    forms: Mapping[str, SweptForm] = field(default_factory=dict, compare=False, repr=False)
    output_currents: Mapping[str, SweptForm] = field(default_factory=dict, compare=False, repr=False)

"""The exchange format, version 1: pydantic models that YAML and JSON design files validate against.

Every quantity is stored in SI as a Python float (temperatures in °C); strings in the trade's
notation are read by :mod:`afecheck.model.units` on the way in. Models are frozen and refuse
unknown keys, so a typo in a design file is an input error, never a silently ignored field.
"""

from __future__ import annotations

import datetime
from typing import Annotated, Any, Literal, Union

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, WithJsonSchema, field_validator, model_validator

from afecheck.model.units import parse_quantity, parse_temperature_c, parse_tolerance, split_tolerance_code
from afecheck.parts.model import OpAmpModel

FORMAT_VERSION = 1


def _q(unit: str) -> BeforeValidator:
    return BeforeValidator(lambda v: parse_quantity(v, unit))


def _quantity_schema(unit: str) -> dict:
    what = "a plain number" if unit == "1" else f"a quantity in {unit}"
    return {"anyOf": [{"type": "number"}, {"type": "string", "minLength": 1, "maxLength": 100}],
            "description": f"{what}: a number, or a string with SI prefix and unit (see docs/FORMAT.md)"}


def Q(unit: str):  # noqa: N802 - reads like a unit annotation at the use site
    """Annotated float read from a number or a string in the given unit."""
    return Annotated[float, _q(unit), WithJsonSchema(_quantity_schema(unit))]


Ohm = Q("ohm")
Farad = Q("F")
Henry = Q("H")
Volt = Q("V")
Ampere = Q("A")
Hertz = Q("Hz")
Ratio = Q("1")
Tolerance = Annotated[float, BeforeValidator(parse_tolerance), WithJsonSchema(
    {"anyOf": [{"type": "number", "minimum": 0, "exclusiveMaximum": 1}, {"type": "string", "minLength": 1}],
     "description": "a tolerance: 1%, 50 ppm, a fraction, or an IEC 60062 letter (B C D F G J K M)"})]
Celsius = Annotated[float, BeforeValidator(parse_temperature_c), WithJsonSchema(
    {"anyOf": [{"type": "number"}, {"type": "string", "minLength": 1}],
     "description": "a temperature in °C (25, '25 °C') or kelvin ('298.15 K')"})]
NetName = Annotated[str, Field(min_length=1, max_length=200)]


def _tempco(value: object) -> object:
    """A temperature coefficient: ``50 ppm/K``, ``25 ppm/°C``, ``0.01 %/K`` or a fraction per kelvin."""
    if isinstance(value, str):
        text = value.strip()
        for suffix in ("/K", "/°C", "/degC"):
            if text.endswith(suffix):
                text = text[: -len(suffix)].strip()
                break
        return parse_tolerance(text)
    return parse_tolerance(value)


TempCo = Annotated[float, BeforeValidator(_tempco), WithJsonSchema(
    {"anyOf": [{"type": "number", "minimum": 0, "exclusiveMaximum": 1}, {"type": "string", "minLength": 1}],
     "description": "a temperature coefficient magnitude: 50 ppm/K, 0.01 %/K, or a fraction per kelvin"})]
Second = Q("s")


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)


def _pin_keys(v: object) -> object:
    """YAML reads pin ``1:`` as an integer key; pins are names, so keys become strings."""
    if isinstance(v, dict):
        return {str(k): val for k, val in v.items()}
    return v


Pins = Annotated[dict[str, NetName], BeforeValidator(_pin_keys)]

DIELECTRICS_CLASS1 = ("C0G", "NP0", "COG", "NPO", "film", "mica", "PP", "PPS", "PET", "PEN")
DIELECTRICS_CLASS2 = ("X7R", "X5R", "X6S", "X7S", "X8R", "X7T", "Y5V", "Z5U", "Y5U")
DIELECTRICS_OTHER = ("electrolytic", "tantalum", "unknown")


class InlineWaiver(_Strict):
    """A finding accepted in the design file itself: the rule (id or slug), why, who, and until when.

    On a component it accepts that rule's findings naming the component; at the top level, the findings
    naming every listed ref and net. The review policy (afecheck.policy) applies it; analysis ignores it.
    """

    rule: str = Field(min_length=1)
    refs: tuple[str, ...] = ()
    nets: tuple[NetName, ...] = ()
    justification: str = Field(min_length=1)
    accepted_by: str = Field(min_length=1, alias="accepted-by")
    expires: datetime.date | None = None


class _Component(_Strict):
    pins: Pins
    tolerance: Tolerance | None = None
    description: str | None = None
    waive: tuple[InlineWaiver, ...] = ()


def _split_code_tolerance(data: object, unit: str) -> object:
    """Move an IEC 60062 tolerance letter from the value code (``4K7J``) into ``tolerance``; refuse a clash."""
    if not isinstance(data, dict) or not isinstance(data.get("value"), str):
        return data
    split = split_tolerance_code(data["value"], unit)
    if split is None:
        return data
    code, tolerance = split
    given = data.get("tolerance")
    if given is not None and parse_tolerance(given) != tolerance:
        raise ValueError(
            f"value {data['value']!r} carries a ±{tolerance * 100:g} % tolerance letter but tolerance is {given!r}; "
            "keep one of them"
        )
    return {**data, "value": code, "tolerance": tolerance}


class Resistor(_Component):
    kind: Literal["resistor"]
    value: Ohm = Field(gt=0)
    tempco: TempCo | None = None

    @model_validator(mode="before")
    @classmethod
    def _code_tolerance(cls, data: object) -> object:
        return _split_code_tolerance(data, "ohm")


class Capacitor(_Component):
    kind: Literal["capacitor"]
    value: Farad = Field(gt=0)
    dielectric: str | None = None

    @model_validator(mode="before")
    @classmethod
    def _code_tolerance(cls, data: object) -> object:
        return _split_code_tolerance(data, "F")

    @field_validator("dielectric")
    @classmethod
    def _known_dielectric(cls, v: str | None) -> str | None:
        known = DIELECTRICS_CLASS1 + DIELECTRICS_CLASS2 + DIELECTRICS_OTHER
        if v is not None and v not in known:
            raise ValueError(f"unknown dielectric {v!r}; expected one of {', '.join(known)}")
        return v


class Inductor(_Component):
    """Inductor of ``value`` henries between pins 1 and 2, with its winding's ``series_resistance`` (a short at DC
    apart from that resistance; jωL over frequency)."""

    kind: Literal["inductor"]
    value: Henry = Field(gt=0)
    series_resistance: Ohm = Field(default=0.0, ge=0)


StageRole = Literal["amplifier", "comparator", "schmitt", "integrator"]


class OpAmp(_Component):
    """An op-amp section; ``role`` and ``intended_gain`` state what the stage is meant to do, so rules judge it
    against that intent (a declared comparator has no feedback on purpose; an intended gain may count a fixed
    source resistance)."""

    kind: Literal["opamp"]
    part: str = Field(min_length=1)
    role: StageRole | None = None
    intended_gain: Ratio | None = Field(
        default=None, description="DC gain (V/V, signed) from the stage's signal input to its output, counting "
                                  "any fixed source resistance")

    @field_validator("intended_gain")
    @classmethod
    def _nonzero_gain(cls, v: float | None) -> float | None:
        if v is not None and v == 0:
            raise ValueError("intended_gain must not be 0")
        return v


DISSIPATION_TEXT = ("dissipation constant δ in W/K: the excitation's power P heats the sensor by P/δ, judged "
                    "against its accuracy by rule dc-accuracy.sensor-self-heating")


class Ntc(_Component):
    """NTC thermistor over a declared temperature range: the Beta model R(T) = R25·exp(B·(1/T − 1/T25)), or
    Steinhart-Hart from its three coefficients or from three (temperature, resistance) points."""

    kind: Literal["ntc"]
    r25: Ohm | None = Field(default=None, gt=0)
    beta: Q("K") | None = Field(default=None, gt=0)
    steinhart_hart: tuple[float, float, float] | None = Field(
        default=None, description="Steinhart-Hart coefficients (a, b, c): 1/T = a + b·ln R + c·(ln R)³, T in K")
    points: tuple[tuple[Celsius, Ohm], tuple[Celsius, Ohm], tuple[Celsius, Ohm]] | None = Field(
        default=None, description="three (temperature, resistance) points the Steinhart-Hart curve passes through")
    temperature: tuple[Celsius, Celsius] = (25.0, 25.0)
    dissipation: Q("W/K") | None = Field(default=None, gt=0, description=DISSIPATION_TEXT)

    @model_validator(mode="after")
    def _one_model(self) -> Ntc:
        given = [name for name, v in (("r25/beta", self.r25 is not None or self.beta is not None),
                                      ("steinhart_hart", self.steinhart_hart), ("points", self.points)) if v]
        if len(given) != 1:
            raise ValueError("an ntc takes exactly one model: r25 with beta, steinhart_hart, or points; "
                             f"got {', '.join(given) or 'none'}")
        if given == ["r25/beta"] and (self.r25 is None or self.beta is None):
            raise ValueError("the Beta model needs both r25 and beta")
        return self


RtdWiring = Literal["2-wire", "3-wire", "4-wire"]


class Rtd(_Component):
    """Platinum RTD (Callendar-Van Dusen, IEC 60751 coefficients) of nominal ``r0`` at 0 °C over a temperature
    range, its tolerance class, connection and lead resistance (each lead), and dissipation constant."""

    kind: Literal["rtd"]
    r0: Ohm = Field(gt=0)
    temperature: tuple[Celsius, Celsius] = (0.0, 0.0)
    tolerance_class: Literal["AA", "A", "B", "C"] | None = Field(default=None, alias="class")
    wiring: RtdWiring = "4-wire"
    lead_resistance: Ohm = Field(default=0.0, ge=0, description="resistance of each lead wire")
    dissipation: Q("W/K") | None = Field(default=None, gt=0, description=DISSIPATION_TEXT)

    @field_validator("temperature")
    @classmethod
    def _in_cvd_range(cls, v: tuple[float, float]) -> tuple[float, float]:
        if not all(-200.0 <= t <= 850.0 for t in v):
            raise ValueError("the Callendar-Van Dusen equation covers -200 °C to 850 °C")
        return v


class Thermocouple(_Component):
    """Thermocouple (type E J K N T) between ``p`` and ``n``: a voltage source E(hot) − E(cold) over the hot- and
    cold-junction ranges (ITS-90 reference functions), behind its lead resistance. With ``compensated`` the
    reading is corrected for the cold junction to within ``cjc_accuracy`` °C (an error of cjc_accuracy × S(cold) at
    the terminals); without, it is short by E(cold) (rule dc-accuracy.cold-junction, the DC-error worksheet)."""

    kind: Literal["thermocouple"]
    type: Literal["E", "J", "K", "N", "T"]
    hot: tuple[Celsius, Celsius]
    cold: tuple[Celsius, Celsius] = (25.0, 25.0)
    compensated: bool = Field(default=True, description="the reading adds E(t_cold) back from a sensor at the "
                                                         "terminals; false: it reads the table as if they were at 0 °C")
    cjc_accuracy: Q("K") = Field(default=0.0, ge=0, description="cold-junction compensation error, ± °C at the "
                                                                "terminals (the compensation sensor's accuracy)")
    lead_resistance: Ohm = Field(default=0.0, ge=0, description="loop resistance of the thermocouple and leads")

    @model_validator(mode="after")
    def _in_range(self) -> Thermocouple:
        from afecheck.sensors.thermocouple import span_c

        lo, hi = span_c(self.type)
        if not all(lo <= t <= hi for t in (*self.hot, *self.cold)):
            raise ValueError(f"type {self.type} is defined from {lo:g} °C to {hi:g} °C")
        return self


class Bridge(_Component):
    """Resistive bridge (strain gauge, pressure cell) excited between ``exc+`` and ``exc-``, output between
    ``out+`` and ``out-``: arms of ``resistance``, ``sensitivity`` (output/excitation at full scale), the measurand
    range as a fraction of full scale, or in ``unit`` with its full-scale ``span``, and the zero offset."""

    kind: Literal["bridge"]
    arrangement: Literal["full", "half", "quarter"] = "full"
    resistance: Ohm = Field(gt=0)
    sensitivity: Ratio = Field(gt=0, lt=0.25, description="output per volt of excitation at full scale "
                                                              "('2 mV/V')")
    measurand: tuple[float, float] = (0.0, 1.0)
    unit: str | None = Field(default=None, description="the measurand's unit (kg, bar, µε); then span is needed")
    span: float | None = Field(default=None, gt=0, description="the full-scale measurand in ``unit``")
    zero_offset: Ratio = Field(default=0.0, description="output per volt of excitation at zero measurand")

    @model_validator(mode="after")
    def _unit_span(self) -> Bridge:
        if (self.unit is None) != (self.span is None):
            raise ValueError("a bridge's unit and span go together")
        return self

    @property
    def full_scale_fraction(self) -> tuple[float, float]:
        """The measurand range as fractions of full scale."""
        k = 1.0 if self.span is None else 1.0 / self.span
        return self.measurand[0] * k, self.measurand[1] * k


class BridgeArm(_Component):
    """One arm of a declared bridge (made by afecheck from a ``bridge``): R·(1 + x0 + k·m) at measurand fraction m."""

    kind: Literal["bridge_arm"]
    bridge: str
    r: Ohm = Field(gt=0)
    x0: float = 0.0
    k: float = 0.0
    measurand: tuple[float, float] = (0.0, 1.0)


class VoltageSource(_Component):
    """Ideal voltage source or reference between pins ``p`` (+) and ``n`` (−)."""

    kind: Literal["vsource"]
    value: Volt
    tempco: TempCo | None = None


class SignalSource(_Component):
    """Declared signal source between ``p`` and ``n``: DC range, AC amplitude, band, source resistance."""

    kind: Literal["signal_source"]
    dc: tuple[Volt, Volt] = (0.0, 0.0)
    ac_amplitude: Volt = Field(default=0.0, ge=0)
    band: tuple[Hertz, Hertz] | None = None
    source_resistance: Ohm = Field(default=0.0, ge=0)


Component = Annotated[
    Union[Resistor, Capacitor, OpAmp, Ntc, VoltageSource, SignalSource, Rtd, Thermocouple, Bridge, BridgeArm,
          Inductor],
    Field(discriminator="kind"),
]

PIN_NAMES: dict[str, tuple[str, ...]] = {
    "resistor": ("1", "2"),
    "capacitor": ("1", "2"),
    "ntc": ("1", "2"),
    "opamp": ("in+", "in-", "out", "v+", "v-"),
    "vsource": ("p", "n"),
    "signal_source": ("p", "n"),
    "rtd": ("1", "2"),
    "thermocouple": ("p", "n"),
    "bridge": ("exc+", "exc-", "out+", "out-"),
    "bridge_arm": ("1", "2"),
    "inductor": ("1", "2"),
}


class Rail(_Strict):
    """A supply or reference net held at ``voltage`` (relative to ground) within ``tolerance``."""

    voltage: Volt | None = None
    tolerance: Tolerance = 0.0
    tempco: TempCo | None = None
    description: str | None = None


SignalKind = Literal["voltage", "current", "charge"]
_KIND_FIELDS: dict[str, tuple[str, ...]] = {
    "voltage": ("dc", "ac_amplitude", "source_resistance"),
    "current": ("current", "ac_current", "capacitance", "shunt_resistance"),
    "charge": ("charge", "capacitance", "leakage_resistance"),
}


class Signal(_Strict):
    """A signal driven onto a net from outside the design, by kind.

    ``voltage`` (default): a Thevenin source (``dc`` range, ``ac_amplitude``, ``source_resistance``).
    ``current``: a current-output sensor such as a photodiode, from ground into the net: DC ``current`` range,
    ``ac_current`` amplitude, junction ``capacitance`` and ``shunt_resistance`` to ground.
    ``charge``: a charge-output sensor (piezo): ``charge`` amplitude per event or cycle, its ``capacitance``
    and ``leakage_resistance``, modelled as a voltage charge/capacitance behind that capacitance.
    """

    kind: SignalKind = "voltage"
    dc: tuple[Volt, Volt] = (0.0, 0.0)
    ac_amplitude: Volt = Field(default=0.0, ge=0)
    band: tuple[Hertz, Hertz] | None = None
    source_resistance: Ohm = Field(default=0.0, ge=0)
    current: tuple[Ampere, Ampere] = (0.0, 0.0)
    ac_current: Ampere = Field(default=0.0, ge=0)
    charge: Q("C") = Field(default=0.0, ge=0)
    capacitance: Farad = Field(default=0.0, ge=0)
    shunt_resistance: Ohm | None = Field(default=None, gt=0)
    leakage_resistance: Ohm | None = Field(default=None, gt=0)
    description: str | None = None

    @model_validator(mode="after")
    def _fields_of_kind(self) -> Signal:
        own = set(_KIND_FIELDS[self.kind])
        foreign = sorted({f for k, names in _KIND_FIELDS.items() if k != self.kind for f in names
                          if f not in own and f in self.model_fields_set})
        if foreign:
            raise ValueError(f"a {self.kind} signal takes no {', '.join(foreign)} "
                             f"(its fields are {', '.join(_KIND_FIELDS[self.kind])}, band, description)")
        if self.kind == "charge" and self.charge > 0 and self.capacitance <= 0:
            raise ValueError("a charge signal needs its sensor capacitance")
        return self

    @property
    def dc_range(self) -> tuple[float, float]:
        """The DC range in the signal's own unit (volts, or amperes for a current; a charge has none)."""
        if self.kind == "current":
            return float(self.current[0]), float(self.current[1])
        if self.kind == "charge":
            return 0.0, 0.0
        return float(self.dc[0]), float(self.dc[1])

    @property
    def ac_value(self) -> float:
        """AC amplitude at the model's source: volts, amperes, or charge/capacitance volts for a charge."""
        if self.kind == "current":
            return float(self.ac_current)
        if self.kind == "charge":
            return float(self.charge / self.capacitance) if self.capacitance > 0 else 0.0
        return float(self.ac_amplitude)


class Adc(_Strict):
    """An ADC input: full scale, resolution, sample rate; for drive checks its acquisition time and sampling capacitor.

    ``full_scale`` spans 0..full_scale (or ±full_scale/2 when ``bipolar``) from the load's ``reference`` (else ground).
    """

    full_scale: Volt = Field(gt=0)
    bits: int = Field(ge=1, le=32)
    sample_rate: Hertz = Field(gt=0)
    bipolar: bool = False
    acquisition_time: Second | None = Field(default=None, gt=0, description="time the sampling switch is closed")
    input_capacitance: Farad | None = Field(default=None, gt=0, description="sampling capacitor charged each sample")


class Load(_Strict):
    """What a net drives outside the drawn schematic: resistance and capacitance to ``reference``, or an ADC."""

    resistance: Ohm | None = Field(default=None, gt=0)
    capacitance: Farad | None = Field(default=None, ge=0)
    reference: NetName | None = None
    adc: Adc | None = None


class Budget(_Strict):
    """Error budget at a net, output-referred: gain error (fraction), offset (V), noise (V rms over the signal band),
    drift (V of output change over the declared operating temperature range), nonlinearity (fraction of span)."""

    gain_accuracy: Tolerance | None = None
    offset: Volt | None = Field(default=None, gt=0)
    noise: Volt | None = Field(default=None, gt=0)
    drift: Volt | None = Field(default=None, gt=0)
    nonlinearity: Tolerance | None = Field(
        default=None, description="end-point nonlinearity over the measurand or input range, a fraction of the "
                                  "output span")


Hazard = Literal["mains", "high-voltage", "patient-connected", "hazardous-area"]


class SubcircuitMap(_Strict):
    """How X instances of one SPICE subcircuit become op-amps: the part model, and an afecheck pin per port."""

    part: str = Field(min_length=1, description="part model name (built-in, --parts library)")
    pins: tuple[Literal["in+", "in-", "out", "v+", "v-"] | None, ...] | None = Field(
        default=None, description="afecheck pin of each subcircuit port in order (null: port not used); "
                                  "omit when the .subckt port names say what they are")


class NetlistMapBody(_Strict):
    """What a SPICE netlist cannot say: op-amp subcircuits, and refinements of its elements and rails."""

    subcircuits: dict[str, SubcircuitMap] = Field(default={}, description="subcircuit name or glob pattern -> op-amp")
    components: dict[str, dict[str, Any]] = Field(
        default={}, description="element name -> design fields added to it (tolerance, dielectric, kind: ntc ...)")
    rails: dict[NetName, dict[str, Any]] = Field(default={}, description="rail net -> fields added (tolerance ...)")


class NetlistMap(NetlistMapBody):
    """A map file for SPICE netlist input (``--map``)."""

    afecheck_map: Literal[1] = Field(alias="afecheck-map", description="map file format version")


class Intent(_Strict):
    """Design intent that may live in its own file keyed by net name."""

    afecheck_intent: Literal[1] = Field(alias="afecheck-intent", description="intent file format version")
    signals: dict[NetName, Signal] = {}
    loads: dict[NetName, Load] = {}
    budgets: dict[NetName, Budget] = {}
    operating_temperature: tuple[Celsius, Celsius] | None = Field(
        default=None, description="ambient range the circuit works over, when the design itself does not say")
    netlist: NetlistMapBody | None = Field(default=None, description="map for SPICE netlist input (as --map)")


class Design(_Strict):
    """A whole front-end design: rails, components, part models and design intent."""

    afecheck: Literal[1]
    name: str = "unnamed design"
    description: str | None = None
    ground: NetName = "GND"
    hazards: tuple[Hazard, ...] = ()
    part_libraries: tuple[str, ...] = ()
    intent: str | None = None
    parts: dict[str, OpAmpModel] = {}
    rails: dict[NetName, Rail] = {}
    components: dict[str, Component] = {}
    signals: dict[NetName, Signal] = {}
    loads: dict[NetName, Load] = {}
    budgets: dict[NetName, Budget] = {}
    operating_temperature: tuple[Celsius, Celsius] | None = Field(
        default=None, description="ambient range the circuit works over (noise at its top, drift across it)")
    waive: tuple[InlineWaiver, ...] = ()

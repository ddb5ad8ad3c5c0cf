"""Which part of afecheck reads each field of the design format: one registry, walked by a test.

Every field the format accepts (``afecheck schema``) must be read by something: an analysis module, a rule, the
loader, the policy or a reporter. A field no analysis or rule checks yet is registered with :data:`UNCHECKED`;
rule coverage.declared-not-checked then reports each such field a design declares ("declared, not checked"), so a
limit written into a
design is never silently ignored. A module that starts checking such a field registers itself here in place of
UNCHECKED, and the finding goes away. ``tests/test_declared_fields.py`` walks the pydantic models recursively and
fails for a field that is missing here, and checks that every named consumer exists and reads the field.

Keys are dotted paths from the design's top level: ``*`` for any key of a mapping, ``[]`` for any item of a list,
``<kind>`` for one kind of component and ``<*>`` for the fields every component kind shares. Values are a module
under ``afecheck`` (``analysis.sources``), a rule id (``loading.input-divider``), :data:`TEXT` for free text shown to
people,
:data:`BUDGET_DATA` for data only an unchecked budget would read, or :data:`UNCHECKED`.
"""

from __future__ import annotations

import typing
from collections.abc import Iterator
from typing import Any

from pydantic import AfterValidator, BeforeValidator, PlainValidator, WithJsonSchema, WrapValidator
from pydantic.fields import FieldInfo

UNCHECKED: None = None
TEXT = "text for people"
BUDGET_DATA = "data for a budget not checked yet"
"""Part or component data (tolerances, noise densities, drift) that only a budget analysis would read. It is no claim
by itself: the budget that would use it (``budgets.*.noise``, ``budgets.*.gain_accuracy``) is UNCHECKED and reported,
so these are not reported one by one."""

CONSUMERS: dict[str, str | None] = {
    # the file itself
    "afecheck": "model.load", "afecheck_intent": "model.schema", "name": "api", "description": TEXT,
    "ground": "graph.build", "hazards": "report.cautions", "part_libraries": "model.load", "intent": "model.load",
    "waive": "api", "waive[].rule": "api", "waive[].refs": "report.data", "waive[].nets": "report.data",
    "waive[].justification": "report.data", "waive[].accepted_by": "report.data", "waive[].expires": "policy.waivers",
    # part models
    "parts": "parts.library", "parts.*.description": TEXT, "parts.*.archetype": "distortion.impedance-balance",
    "parts.*.gbw": "analysis.macromodel", "parts.*.open_loop_gain": "analysis.macromodel",
    "parts.*.second_pole": "analysis.macromodel", "parts.*.min_stable_gain": "stability.min-stable-gain",
    "parts.*.output_resistance": "analysis.macromodel", "parts.*.input_resistance_diff": "analysis.macromodel",
    "parts.*.input_resistance_cm": "analysis.macromodel", "parts.*.input_capacitance_diff": "analysis.macromodel",
    "parts.*.input_capacitance_cm": "analysis.macromodel", "parts.*.bias_current": "dc-accuracy.bias-offset",
    "parts.*.offset_current": "dc-accuracy.bias-offset", "parts.*.offset_voltage": "dc-accuracy.bias-offset",
    "parts.*.offset_drift": "analysis.dc_error",
    "parts.*.voltage_noise": "analysis.noise", "parts.*.voltage_noise_corner": "analysis.noise",
    "parts.*.current_noise": "analysis.noise",
    "parts.*.current_noise_corner": "analysis.noise", "parts.*.slew_rate": "distortion.slew-rate",
    "parts.*.cmrr": "distortion.common-mode-error",
    "parts.*.input_cm_low": "headroom.input-common-mode", "parts.*.input_cm_high": "headroom.input-common-mode",
    "parts.*.output_drop_low": "headroom.output-swing",
    "parts.*.output_drop_high": "headroom.output-swing", "parts.*.output_sat_resistance": "headroom.output-swing",
    "parts.*.output_current_limit": "headroom.output-current", "parts.*.supply_min": "limits.supply-range",
    "parts.*.supply_max": "limits.supply-range",
    "parts.*.max_capacitive_load": "limits.capacitive-load",
    "parts.*.input_current_limit": "limits.input-current", "parts.*.input_stage": "distortion.input-pair-transition",
    "parts.*.transition_below_vplus": "distortion.input-pair-transition",
    "parts.*.transition_width": "distortion.input-pair-transition",
    "parts.*.transition_offset_step": "distortion.input-pair-transition",
    # rails
    "rails": "graph.build", "rails.*.voltage": "graph.build", "rails.*.tolerance": "analysis.sources",
    "rails.*.description": TEXT, "rails.*.tempco": "analysis.dc_error",
    # components: fields every kind shares
    "components": "graph.build", "components.*.<*>.pins": "graph.build", "components.*.<*>.kind": "graph.build",
    "components.*.<*>.description": TEXT, "components.*.<*>.waive": "api", "components.*.<*>.waive[].rule": "api",
    "components.*.<*>.waive[].refs": "report.data", "components.*.<*>.waive[].nets": "report.data",
    "components.*.<*>.waive[].justification": "report.data", "components.*.<*>.waive[].accepted_by": "report.data",
    "components.*.<*>.waive[].expires": "policy.waivers",
    # components: per kind
    "components.*.<resistor>.value": "analysis.netlist", "components.*.<resistor>.tolerance": "analysis.dc_error",
    "components.*.<resistor>.tempco": "analysis.dc_error",
    "components.*.<capacitor>.value": "analysis.netlist", "components.*.<capacitor>.tolerance": "loading.input-divider",
    "components.*.<capacitor>.dielectric": "distortion.class2-ceramic",
    "components.*.<inductor>.value": "analysis.netlist",
    "components.*.<inductor>.series_resistance": "analysis.netlist",
    "components.*.<inductor>.tolerance": UNCHECKED,
    "components.*.<opamp>.part": "model.load", "components.*.<opamp>.tolerance": BUDGET_DATA,
    "components.*.<opamp>.role": "checks.common", "components.*.<opamp>.intended_gain": "checks.common",
    "components.*.<ntc>.r25": "sensors.resistive", "components.*.<ntc>.beta": "sensors.resistive",
    "components.*.<ntc>.steinhart_hart": "sensors.resistive", "components.*.<ntc>.points": "sensors.resistive",
    "components.*.<rtd>.r0": "sensors.resistive", "components.*.<rtd>.temperature": "sensors.resistive",
    "components.*.<rtd>.wiring": "sensors.resistive", "components.*.<rtd>.lead_resistance": "sensors.resistive",
    "components.*.<rtd>.tolerance_class": "sensors.measurand", "components.*.<rtd>.tolerance": "sensors.measurand",
    "components.*.<rtd>.dissipation": "sensors.self_heating",
    "components.*.<thermocouple>.type": "sensors.expand", "components.*.<thermocouple>.hot": "sensors.expand",
    "components.*.<thermocouple>.cold": "sensors.expand",
    "components.*.<thermocouple>.lead_resistance": "sensors.expand",
    "components.*.<thermocouple>.compensated": "dc-accuracy.cold-junction",
    "components.*.<thermocouple>.cjc_accuracy": "dc-accuracy.cold-junction",
    "components.*.<thermocouple>.tolerance": BUDGET_DATA,
    "components.*.<bridge>.arrangement": "sensors.expand", "components.*.<bridge>.resistance": "sensors.expand",
    "components.*.<bridge>.sensitivity": "sensors.expand", "components.*.<bridge>.measurand": "sensors.expand",
    "components.*.<bridge>.unit": "sensors.expand", "components.*.<bridge>.span": "sensors.expand",
    "components.*.<bridge>.zero_offset": "sensors.expand", "components.*.<bridge>.tolerance": "sensors.expand",
    "components.*.<bridge_arm>.bridge": "sensors.resistive", "components.*.<bridge_arm>.r": "sensors.resistive",
    "components.*.<bridge_arm>.x0": "sensors.resistive", "components.*.<bridge_arm>.k": "sensors.resistive",
    "components.*.<bridge_arm>.measurand": "sensors.resistive",
    "components.*.<bridge_arm>.tolerance": "sensors.measurand",
    "components.*.<ntc>.temperature": "analysis.sources", "components.*.<ntc>.tolerance": "sensors.measurand",
    "components.*.<ntc>.dissipation": "sensors.self_heating",
    "components.*.<vsource>.value": "graph.build", "components.*.<vsource>.tolerance": "analysis.dc_error",
    "components.*.<vsource>.tempco": "analysis.dc_error",
    "components.*.<signal_source>.dc": "analysis.signals",
    "components.*.<signal_source>.ac_amplitude": "analysis.signals",
    "components.*.<signal_source>.band": "analysis.signals",
    "components.*.<signal_source>.source_resistance": "analysis.sources",
    "components.*.<signal_source>.tolerance": BUDGET_DATA,
    # intent: the map for SPICE netlist input
    "netlist": "model.netlist_map", "netlist.subcircuits": "model.netlist_map",
    "netlist.subcircuits.*.part": "model.netlist_map", "netlist.subcircuits.*.pins": "model.netlist_map",
    "netlist.components": "model.netlist_map", "netlist.rails": "model.netlist_map",
    # intent: signals, loads, budgets
    "signals": "graph.build", "signals.*.dc": "analysis.signals", "signals.*.ac_amplitude": "analysis.signals",
    "signals.*.band": "analysis.signals", "signals.*.source_resistance": "analysis.sources",
    "signals.*.description": TEXT, "signals.*.kind": "analysis.sources",
    "signals.*.current": "model.schema", "signals.*.ac_current": "model.schema", "signals.*.charge": "model.schema",
    "signals.*.capacitance": "analysis.netlist", "signals.*.shunt_resistance": "analysis.netlist",
    "signals.*.leakage_resistance": "analysis.netlist",
    "loads": "analysis.netlist", "loads.*.resistance": "analysis.netlist", "loads.*.capacitance": "analysis.netlist",
    "loads.*.reference": "analysis.netlist", "loads.*.adc": "distortion.common-mode-error",
    "loads.*.adc.full_scale": "distortion.common-mode-error",
    "loads.*.adc.bits": "distortion.common-mode-error", "loads.*.adc.sample_rate": "analysis.adc_drive",
    "loads.*.adc.bipolar": "analysis.adc_drive", "loads.*.adc.acquisition_time": "analysis.adc_drive",
    "loads.*.adc.input_capacitance": "analysis.adc_drive",
    "budgets": "analysis.worksheet", "budgets.*.offset": "budgets.offset",
    "budgets.*.gain_accuracy": "budgets.gain-error", "budgets.*.drift": "budgets.drift",
    "operating_temperature": "analysis.noise",
    "budgets.*.noise": "budgets.noise", "budgets.*.nonlinearity": "budgets.nonlinearity",
}


def pattern_of(path: tuple[str | int, ...], kind: str | None = None) -> str:
    """The registry key of a concrete key path (``("budgets", "OUT", "noise")`` -> ``budgets.*.noise``)."""
    out: list[str] = []
    for i, key in enumerate(path):
        if isinstance(key, int):
            out[-1] += "[]"
        elif i == 1 and path[0] in ("parts", "rails", "signals", "loads", "budgets", "components"):
            out.append("*" if path[0] != "components" else f"*.<{kind or '*'}>")
        else:
            out.append(str(key))
    return ".".join(out)


def consumer(pattern: str) -> str | None:
    """The registered consumer of a key pattern; KeyError when the pattern is not registered at all."""
    if pattern in CONSUMERS:
        return CONSUMERS[pattern]
    for kind_part in pattern.split("."):
        if kind_part.startswith("<") and kind_part != "<*>":
            shared = pattern.replace(kind_part, "<*>", 1)
            if shared in CONSUMERS:
                return CONSUMERS[shared]
    raise KeyError(pattern)


def declared_fields(data: Any, path: tuple[str | int, ...] = ()) -> Iterator[tuple[str | int, ...]]:
    """Key path of every field explicitly set in a validated model (and the models inside it), depth first."""
    found: list[tuple[str | int, ...]] = []
    _walk(data, path, found)
    yield from found


_LEAVES = (str, int, float, bool, type(None))


def may_hold_models(model: type) -> frozenset[str]:
    """Names of ``model``'s fields whose type can hold a pydantic model (or anything: ``Any``): only those need a
    walk below them, since a path is recorded for model fields alone (pins, values and bands are leaves)."""
    known = _MAY_HOLD.get(model)
    if known is None:
        fields = getattr(model, "model_fields", {})
        known = _MAY_HOLD[model] = frozenset(n for n, f in fields.items() if _can_hold_model(f.annotation))
    return known


_MAY_HOLD: dict[type, frozenset[str]] = {}


def _can_hold_model(ann: Any) -> bool:
    if ann is Any or ann is object or isinstance(ann, (str, typing.ForwardRef)):
        return True  # anything at all, or a type not resolved: walk it
    if isinstance(ann, type) and hasattr(ann, "model_fields_set"):
        return True
    if typing.get_origin(ann) is typing.Literal:
        return False
    return any(_can_hold_model(a) for a in typing.get_args(ann) if not isinstance(a, _METADATA))


_METADATA = (FieldInfo, BeforeValidator, AfterValidator, PlainValidator, WrapValidator, WithJsonSchema)


def _walk(data: Any, path: tuple[str | int, ...], found: list[tuple[str | int, ...]]) -> None:
    """Append the declared key paths under ``data`` to ``found`` (one call per node, no generator chain)."""
    if isinstance(data, _LEAVES):
        return
    fields = getattr(data, "model_fields_set", None)
    if fields is not None:
        deeper = may_hold_models(type(data))
        for name in sorted(fields):
            sub = (*path, name)
            found.append(sub)
            if name in deeper:
                _walk(getattr(data, name), sub, found)
    elif isinstance(data, dict):
        for key, value in data.items():
            _walk(value, (*path, str(key)), found)
    elif isinstance(data, (tuple, list)):
        for i, value in enumerate(data):
            _walk(value, (*path, i), found)

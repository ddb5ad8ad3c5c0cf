"""Rules agree with the analysis: every number a finding prints equals the analysis quantity it stands for.

Runs every rule over the rule catalogue's bad examples, the sample designs and the reference cases, and for each
finding compares its ``ctx`` numbers with the StageResult (or net signal) it was computed from, so a rule cannot
drift from the computation that tests/reference checks against ngspice.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from afecheck.analysis import analyse
from afecheck.api import check_design
from afecheck.checks.loading.bias_current_offset import bias_offset
from afecheck.checks.loading.sources import series_resistance
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parents[1]
DESIGNS = sorted((ROOT / "rules").glob("*/*/bad.yaml")) + sorted(
    p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml")
) + sorted((ROOT / "tests" / "reference" / "cases").glob("*.cir"))
# Rules whose printed numbers are not analysis quantities (a dielectric's coefficient, an impedance sum read from
# the parts) or that print none; coverage.rule-crashed/coverage.not-evaluated report what could not be done.
NO_ANALYSIS_NUMBER = {"coverage.rule-crashed", "coverage.not-evaluated", "distortion.class2-ceramic",
                      "distortion.impedance-balance", "distortion.common-mode-error",
                      # structural: a field nobody reads, a supply pin on no rail, an input with no DC path
                      "coverage.declared-not-checked", "headroom.supply-pin-off-rail", "headroom.no-bias-path"}
EXACT = {"rel": 1e-12, "abs": 1e-15}


def _stage(stages, finding):
    (opamp,) = [r for r in finding.location.refs if r in stages]
    return stages[opamp]


def _input(stage, net):
    (inp,) = [i for i in stage.inputs if i.net == net]
    return inp


def _check_whole_chain(finding, analysis, loaded) -> None:
    """Budget, ADC and limit rules print numbers of the whole-chain analyses (noise, DC error, ADC drive, supply)."""
    from afecheck.analysis.adc_drive import analyse_adc
    from afecheck.analysis.dc_error import analyse_dc_error
    from afecheck.analysis.noise import analyse_noise
    from afecheck.analysis.supply import analyse_supply

    c, rule = finding.ctx, finding.rule
    net = finding.location.nets[0] if finding.location.nets else None
    if rule == "budgets.noise":
        assert c["value"] == analyse_noise(loaded, [net]).nets[net].output_rms
    elif rule == "budgets.nonlinearity":
        nl = analyse_dc_error(loaded, [net]).nets[net].nonlinearity
        assert (c["value"], c["deviation"], c["span"]) == (nl.fraction, nl.worst, nl.span)
    elif rule.startswith("budgets."):
        e = analyse_dc_error(loaded, [net]).nets[net]
        field = {"budgets.offset": "offset_worst", "budgets.gain-error": "gain_error_worst",
                 "budgets.drift": "drift_worst"}[rule]
        assert c["value"] == getattr(e, field)
    elif rule.startswith("adc."):
        a = analyse_adc(loaded, analysis).nets[net]
        options = {"adc.range": (min(a.margin_low, a.margin_high), a.codes_used),
                   "adc.anti-alias": (a.attenuation_db,), "adc.settling": (a.settling_time,),
                   "adc.kick-back": (a.capacitor_ratio,)}[rule]
        assert c["value"] in options
    else:
        (ref,) = finding.location.refs[:1]
        s = analyse_supply(loaded, analysis).opamps[ref]
        options = {"limits.supply-range": (s.span_min, s.span_max),
                   "limits.input-current": tuple(d.current for d in s.inputs) + tuple(d.beyond_v for d in s.inputs),
                   "limits.capacitive-load": (s.load_capacitance,)}[rule]
        assert c["value"] in options


def _check_cold_junction(finding, loaded) -> None:
    """The thermocouple's cold-junction figures, and the term the DC-error analysis solved at the budgeted net."""
    from afecheck.analysis.dc_error import analyse_dc_error
    from afecheck.sensors.cold_junction import cold_junction_error

    c, ref = finding.ctx, finding.location.refs[0]
    cj = cold_junction_error(ref, loaded.sensors[ref])
    assert (c["emf_error_v"], c["hot_junction_c"], c["seebeck_hot_v_per_c"]) == (
        cj.emf_v, cj.at_hot_c, cj.seebeck_hot_v_per_c)
    if c["unit"] == "V":
        net = finding.location.nets[0]
        terms = analyse_dc_error(loaded, [net]).nets[net].terms
        (term,) = [t for t in terms if t.hot_junction_c is not None and t.refs == (ref,)]
        assert c["value"] == abs(term.offset)
    else:
        assert c["value"] == cj.at_hot_c


def _check(finding, stages, analysis, loaded) -> None:
    c, rule = finding.ctx, finding.rule
    if rule.split(".")[0] in ("budgets", "adc", "limits"):
        _check_whole_chain(finding, analysis, loaded)
        return
    if rule == "dc-accuracy.sensor-self-heating":
        from afecheck.sensors.self_heating import self_heating

        h = self_heating(loaded, finding.location.refs[0])
        assert (c["value"], c["power_w"], c["accuracy_k"]) == (h.rise_k, h.power_w, h.accuracy_k)
        return
    if rule == "dc-accuracy.cold-junction":
        _check_cold_junction(finding, loaded)
        return
    s = _stage(stages, finding)
    if rule == "loading.inverting-input":
        inp = _input(s, finding.location.nets[0])
        assert c["value"] == pytest.approx(inp.loading_error_max, **EXACT)
        assert c["error_min"] == pytest.approx(inp.loading_error_min, **EXACT)
        assert c["input_resistance"] == inp.input_resistance
        assert (c["source_resistance_min"], c["source_resistance_max"]) == (inp.source.r_min, inp.source.r_max)
    elif rule == "loading.input-divider":
        inp = _input(s, finding.location.nets[0])
        assert c["source_resistance"] == inp.source.r_max + series_resistance(loaded, inp.via)
        assert c["frequency"] == inp.source.f_max
    elif rule == "dc-accuracy.bias-offset":
        inp = _input(s, finding.location.nets[0])
        assert c["noise_gain"] == s.noise_gain_dc
        assert c["r_plus"] == inp.source.r_max + series_resistance(loaded, inp.via)
        assert c["value"] == pytest.approx(bias_offset(s.noise_gain_dc, c["bias_current"], c["offset_current"],
                                                       c["r_plus"], c["r_minus"]), **EXACT)
    elif rule == "stability.phase-margin":
        assert (c["value"], c["crossover_hz"]) == (s.phase_margin_deg, s.crossover_hz)
    elif rule == "stability.min-stable-gain":
        assert (c["value"], c["noise_gain_dc"], c["noise_gain_hf"]) == (
            s.noise_gain_at_crossover, s.noise_gain_dc, s.noise_gain_hf)
    elif rule == "stability.gain-margin":
        assert c["value"] == s.gain_margin_db
    elif rule == "stability.feedback-sense":
        assert c["feedback"] in ("no-dc-path", s.feedback)
        if c["feedback"] != "no-dc-path":
            assert c["value"] == (s.loop_gain_dc or 0.0)
    elif rule in ("headroom.input-common-mode", "distortion.input-pair-transition"):
        sig = analysis.nets.get(s.in_plus)
        ac = sig.ac_amplitude if sig is not None else 0.0
        assert (c["vcm_min"], c["vcm_max"]) == (s.vcm_min - ac, s.vcm_max + ac)
    elif rule in ("headroom.output-swing", "distortion.near-swing-limit"):
        assert c["value"] in (s.vout_min - s.vout_ac_peak, s.vout_max + s.vout_ac_peak)
    elif rule == "headroom.output-current":
        assert c["value"] == abs(s.iout_peak)
    elif rule == "distortion.loop-gain-at-fmax":
        assert c["value"] == pytest.approx(20 * math.log10(abs(s.loop_gain_at_fmax)), **EXACT)
        assert c["loop_gain"] == abs(s.loop_gain_at_fmax) and c["f_max"] == s.f_max
    elif rule == "distortion.slew-rate":
        assert c["required"] == max(s.required_slew_rate, 2 * math.pi * s.f_max * s.vout_ac_peak)
        assert (c["f_max"], c["vout_ac_peak"]) == (s.f_max, s.vout_ac_peak)
        assert c["value"] == loaded.part(s.opamp).slew_rate
    else:
        raise AssertionError(f"{rule}: no analysis comparison written for this rule; add one or list it as "
                             "NO_ANALYSIS_NUMBER with the reason")


def test_every_printed_number_equals_its_analysis_quantity() -> None:
    checked: dict[str, int] = {}
    for path in DESIGNS:
        loaded = load_design(path.with_suffix(".yaml"))
        analysis = analyse(loaded)
        stages = {s.opamp: s for s in analysis.stages}
        for f in check_design(loaded).findings:
            if f.rule in NO_ANALYSIS_NUMBER or f.confidence == "not-evaluated":
                continue
            try:
                _check(f, stages, analysis, loaded)
            except AssertionError as exc:
                raise AssertionError(f"{path.name}: {f.rule}: {f.message}\n{exc}") from None
            checked[f.rule] = checked.get(f.rule, 0) + 1
    # every rule with an analysis number was met at least once (the catalogue's bad examples trigger each)
    assert set(checked) == {
        "loading.inverting-input", "loading.input-divider", "dc-accuracy.bias-offset", "stability.phase-margin",
        "stability.min-stable-gain", "stability.gain-margin", "stability.feedback-sense", "headroom.input-common-mode",
        "headroom.output-swing", "headroom.output-current", "distortion.near-swing-limit",
        "distortion.input-pair-transition", "distortion.loop-gain-at-fmax", "distortion.slew-rate",
        "budgets.noise", "budgets.offset", "budgets.gain-error", "budgets.drift", "budgets.nonlinearity",
        "adc.range", "adc.anti-alias",
        "adc.settling", "adc.kick-back", "limits.supply-range", "limits.input-current",
        "limits.capacitive-load", "dc-accuracy.sensor-self-heating", "dc-accuracy.cold-junction"}, checked

"""The ADC rules at their exact limits, each figure compared with the ADC-drive analysis and a published formula.

Every rule reads one figure of ``analyse_adc`` (rules agree with the analysis) and compares it with a limit; the
rule pages say "below" or "more than", so a figure exactly on its limit passes and the next float past it is
flagged. The catalogue's bad examples give real channels (a pressure logger into a 12-bit converter).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.analysis.adc_drive import analyse_adc, ideal_snr_db
from afecheck.checks.adc import anti_alias, kickback, range_fill, settling
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

RULES = Path(__file__).resolve().parents[1] / "rules" / "adc"


def _example(topic: str, text_edit=None, tmp_path=None):
    path = RULES / topic / "bad.yaml"
    if text_edit is not None:
        edited = tmp_path / f"{topic}.yaml"
        edited.write_text(text_edit(path.read_text(encoding="utf-8")), encoding="utf-8")
        path = edited
    loaded = load_design(path)
    analysis = analyse(loaded)
    return loaded, analysis, analyse_adc(loaded, analysis).nets["ADC"]


def _run(module, loaded, analysis, params=None):
    return [f for f in kit.run(module, loaded, analysis.stages, nets=dict(analysis.nets), params=params)
            if f.confidence != "not-evaluated"]


def _exactly(target: float, base: float) -> float:
    """A parameter p with base + p == target in floating point (the rule adds it to a fixed figure)."""
    p = target - base
    for _ in range(8):
        if base + p == target:
            return p
        p = math.nextafter(p, math.inf if base + p < target else -math.inf)
    raise AssertionError("no exact parameter")


def test_anti_alias_limit_is_the_ideal_converters_snr_plus_the_margin_asked() -> None:
    # 6.02·N + 1.76 dB (Bennett, "Spectra of quantized signals", BSTJ 1948): 12 bits need 74.0 dB of attenuation
    loaded, analysis, a = _example("anti-alias")
    (f,) = _run(anti_alias, loaded, analysis)
    assert f.ctx["limit"] == pytest.approx(6.02 * 12 + 1.76, abs=0.01)
    assert f.ctx["value"] == a.attenuation_db and f.ctx["margin"] == a.attenuation_db - f.ctx["limit"]
    assert "resolves 74.0 dB" in f.message
    # the rule parameter adds to the ideal SNR: 6 dB more asked raises the limit to 80.0 dB
    (f,) = _run(anti_alias, loaded, analysis, {"extra_db": 6.0})
    assert f.ctx["limit"] == ideal_snr_db(12) + 6.0 and "resolves 80.0 dB" in f.message


def test_anti_alias_at_exactly_the_attenuation_passes() -> None:
    loaded, analysis, a = _example("anti-alias")
    extra = _exactly(a.attenuation_db, a.required_db)
    assert _run(anti_alias, loaded, analysis, {"extra_db": extra}) == []
    (f,) = _run(anti_alias, loaded, analysis, {"extra_db": math.nextafter(extra, math.inf)})
    assert f.severity is Severity.ERROR and f.ctx["margin"] < 0


def test_kick_back_ratio_and_charge_share_by_hand() -> None:
    # 220 pF against the converter's 20 pF sampling capacitor: ratio 11; each sample shares charge as
    # Cs/(C + Cs) = 20/240 = 8.33 % of the step it meets (charge conservation, common practice)
    loaded, analysis, a = _example("kick-back")
    (f,) = _run(kickback, loaded, analysis)
    assert f.ctx["value"] == pytest.approx(11.0) and f.ctx["limit"] == 20.0
    assert f.ctx["margin"] == pytest.approx(11.0 - 20.0)
    assert f.ctx["charge_share"] == pytest.approx(20.0 / 240.0, rel=1e-12)
    assert "8.33 %" in f.message and "ratio 11, limit 20" in f.message
    # exactly on the ratio passes, the next float above it is flagged
    assert _run(kickback, loaded, analysis, {"min_ratio": a.capacitor_ratio}) == []
    (f,) = _run(kickback, loaded, analysis, {"min_ratio": math.nextafter(a.capacitor_ratio, math.inf)})
    assert f.severity is Severity.WARNING


def test_settling_at_exactly_the_acquisition_time_passes(tmp_path) -> None:
    loaded, analysis, a = _example("settling")
    # (N + 1)·ln 2 − ln((C + Cs)/Cs) time constants (Kester (ed.), Data Conversion Handbook, ch. 6; the step met is
    # the charge shared, common practice) times τ = √(τ_RC² + τ_driver²)
    assert a.settling_time == pytest.approx(a.time_constants_needed * a.tau, rel=1e-15)
    (f,) = _run(settling, loaded, analysis)
    assert (f.ctx["value"], f.ctx["limit"]) == (a.settling_time, 1e-6)
    assert f.ctx["margin"] == 1e-6 - a.settling_time
    assert "(declared)" in f.message and "(declared)" in f.ctx["limit_source"] and f.confidence == "computed"
    # none declared: half the sample period (common practice), 1/(2·1 MHz) = 0.5 µs at 1 MS/s; the figure rests on
    # that assumption, so the finding is an estimate capped at warning and names it
    loaded2, analysis2, a2 = _example("settling", lambda text: text.replace(" acquisition_time: 1 us,", "").replace(
        "sample_rate: 10 kHz", "sample_rate: 1 MHz"), tmp_path)
    assert a2.acquisition_time == pytest.approx(0.5e-6, rel=1e-12) and a2.acquisition_assumed
    (g,) = _run(settling, loaded2, analysis2)
    assert "(assumed, half the sample period)" in g.message and g.confidence == "estimated"
    assert g.severity is Severity.WARNING and g.assumed == ("loads.ADC.adc.acquisition_time",)
    # the acquisition time declared as exactly the settling time passes; one float shorter is flagged
    for t_acq, flagged in ((a.settling_time, False), (math.nextafter(a.settling_time, 0.0), True)):
        loaded2, analysis2, a2 = _example(
            "settling", lambda text, t=t_acq: text.replace("acquisition_time: 1 us", f"acquisition_time: {t!r}"),
            tmp_path)
        assert a2.settling_time == a.settling_time and a2.acquisition_time == t_acq
        assert len(_run(settling, loaded2, analysis2)) == int(flagged)


def test_range_margin_limit_is_the_fraction_of_full_scale() -> None:
    # the range example: 0.2..0.5 V at gain 3 is 0.6..1.5 V in 0..4.096 V: margins 0.6 V low and 2.596 V high,
    # 0.9/4.096 = 22.0 % of the codes (hand calculation)
    loaded, analysis, a = _example("range")
    assert (a.margin_low, a.margin_high) == (pytest.approx(0.6, abs=1e-3), pytest.approx(2.596, abs=1e-3))
    (f,) = _run(range_fill, loaded, analysis)
    assert f.severity is Severity.WARNING and f.ctx["value"] == a.codes_used and f.ctx["limit"] == 0.25
    assert f.ctx["margin"] == a.codes_used - 0.25 and "(limit 25.0 %)" in f.message
    # min_margin 10 % of 4.096 V asks 0.4096 V: 0.6 V passes the error test; 20 % asks 0.8192 V: the low end fails
    (f,) = _run(range_fill, loaded, analysis, {"min_margin": 0.2})
    assert f.severity is Severity.ERROR and f.ctx["limit"] == pytest.approx(0.8192, rel=1e-12)
    assert f.ctx["value"] == a.margin_low and f.ctx["margin"] == a.margin_low - f.ctx["limit"]
    assert "at the low end" in f.message
    # exactly on each limit passes
    fs = a.input_high - a.input_low
    share = a.margin_low / fs
    while share * fs > a.margin_low:
        share = math.nextafter(share, 0.0)
    params = {"min_margin": share, "min_codes_used": a.codes_used}
    assert _run(range_fill, loaded, analysis, params) == []
    (f,) = _run(range_fill, loaded, analysis, {**params, "min_codes_used": math.nextafter(a.codes_used, 1.0)})
    assert f.severity is Severity.WARNING


def test_range_names_the_end_with_less_margin(tmp_path) -> None:
    # 3 V input range instead of 4.096 V and a 0.9..1.0 V signal (gain 3: 2.7..3.0 V): 0 V left at the top
    # (hand calculation), so the high end is named
    def edit(text: str) -> str:
        return text.replace("full_scale: 4.096 V", "full_scale: 3 V").replace("dc: [0.2 V, 0.5 V]",
                                                                             "dc: [0.9 V, 1.0 V]")
    loaded, analysis, a = _example("range", edit, tmp_path)
    assert a.margin_high == pytest.approx(0.0, abs=1e-3) and a.margin_low > a.margin_high
    (f,) = _run(range_fill, loaded, analysis, {"min_margin": 0.05})
    assert f.severity is Severity.ERROR and "at the high end" in f.message


def test_range_of_a_bipolar_converter_is_plus_minus_half_full_scale(tmp_path) -> None:
    # bipolar: ±FS/2 = ±2.048 V (docs/FORMAT.md); ±0.5 V at gain 1 + 2k/1k = 3 is ±1.5 V (plus the 0.1 mV offset
    # times 3, hand calculation), so both ends keep 2.048 − 1.5003 = 0.548 V; 20 % of the 4.096 V span asks 0.819 V
    def edit(text: str) -> str:
        return text.replace("dc: [0.2 V, 0.5 V]", "dc: [-0.5 V, 0.5 V]").replace(
            "full_scale: 4.096 V,", "full_scale: 4.096 V, bipolar: true,")
    loaded, analysis, a = _example("range", edit, tmp_path)
    assert (a.input_low, a.input_high) == (-2.048, 2.048)
    assert a.margin_low == a.margin_high == pytest.approx(2.048 - 1.5003, abs=1e-4)
    (f,) = _run(range_fill, loaded, analysis, {"min_margin": 0.2})
    assert f.ctx["limit"] == pytest.approx(0.2 * 4.096, rel=1e-12)
    # equal margins: the low end is the one named (the rule's documented tie order, its first end)
    assert "at the low end" in f.message and "-2.048..2.048 V range" in f.message


def test_a_short_margin_that_does_not_clip_gets_no_clipped_measurand_note() -> None:
    # the Pt1000 probe sample leaves 0.870 V at the top of its 4.096 V range; asking 30 % (1.23 V) of margin flags
    # it, but nothing clips, so no share of the sensor's range is said to be lost
    loaded = load_design(Path(__file__).resolve().parents[1] / "sample_designs" / "pt1000_process_probe.yaml")
    analysis = analyse(loaded)
    a = analyse_adc(loaded, analysis).nets["OUT"]
    assert 0.0 < a.margin_high < 1.0 and a.margin_high < a.margin_low
    (f,) = _run(range_fill, loaded, analysis, {"min_margin": 0.3})
    assert f.message.split(". Fix:")[0].endswith("readings clip there") and "measurand_value" not in f.ctx

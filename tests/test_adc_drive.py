"""ADC drive: the published formulas, the rules' figures, and the alias attenuation against ngspice's AC analysis."""

from __future__ import annotations

import math
import re

import pytest

from afecheck.analysis import analyse
from afecheck.analysis.adc_drive import analyse_adc, ideal_snr_db, settling_time_constants
from afecheck.analysis.channel import channel_netlist, find_channels
from afecheck.analysis.spice import spice_deck
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, run_ngspice

RULES = "rules/adc"


def test_ideal_converter_snr_is_6_02_n_plus_1_76():
    # W. R. Bennett, "Spectra of quantized signals", BSTJ 27 (1948); W. Kester (ed.), "Data Conversion Handbook"
    # (Analog Devices / Newnes, 2005), ch. 2: 12 bits -> 74.0 dB, 16 bits -> 98.1 dB
    assert ideal_snr_db(12) == pytest.approx(74.0, abs=0.01)
    assert ideal_snr_db(16) == pytest.approx(98.08, abs=0.01)


def test_settling_to_half_an_lsb_takes_n_plus_one_ln2_time_constants():
    # Kester (ed.), "Data Conversion Handbook" (2005), ch. 6 (from memory): 12 bits -> 9.0 τ, 16 bits -> 11.8 τ
    assert settling_time_constants(12) == pytest.approx(9.01, abs=0.01)
    assert settling_time_constants(16) == pytest.approx(11.78, abs=0.01)
    # the definition itself: e^-n = ½·2^-N
    assert math.exp(-settling_time_constants(10)) == pytest.approx(0.5 * 2.0**-10)


def test_worksheet_figures_of_the_kick_back_example():
    loaded = load_design(f"{RULES}/kick-back/bad.yaml")
    a = analyse_adc(loaded, analyse(loaded)).nets["ADC"]
    assert a.capacitor_ratio == pytest.approx(11.0)
    assert a.codes_used == pytest.approx(3.0 / 4.096, rel=1e-3)  # gain 3 of 0.1..1.1 V on a 4.096 V range
    # the step met is Cs/(C + Cs) = 20/240 of full scale: (N+1)·ln 2 − ln(240/20) time constants
    assert a.time_constants_needed == pytest.approx(13 * math.log(2) - math.log(12))


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("example", ["anti-alias/bad.yaml", "anti-alias/good.yaml"])
def test_alias_attenuation_matches_ngspice(example):
    loaded = load_design(f"{RULES}/{example}")
    a = analyse_adc(loaded, analyse(loaded)).nets["ADC"]
    netlist = channel_netlist(loaded, find_channels(loaded)["ADC"])
    deck = spice_deck(netlist)
    text = deck.text.replace(".end\n", "")
    src = deck.elements["PRESS#signal"]
    text = re.sub(rf"^({src} .*)$", r"\1 AC 1", text, flags=re.M)
    node = deck.nodes["ADC"]
    lines = [".control", "set numdgt=15"]
    for tag, f in (("pass", a.passband_hz), ("alias", a.alias_hz)):
        lines += [f"ac lin 1 {f!r} {f!r}", f"let {tag} = vm({node})", f"print {tag}"]
    out, _ = run_ngspice(text + "\n".join(lines + ["quit", ".endc", ".end"]) + "\n")
    vals = {k: float(v) for k, v in re.findall(r"^(pass|alias)\s*=\s*([-+0-9.eE]+)", out, flags=re.M)}
    assert a.attenuation_db == pytest.approx(20 * math.log10(vals["pass"] / vals["alias"]), abs=0.01)

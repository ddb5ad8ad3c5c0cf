"""The sample designs load, validate against the JSON Schema, and give exactly the findings their headers promise.

Each sample's header carries a machine-readable line ``# expect: loading.inverting-input`` (or ``# expect: none``).
The circuit facts each header states are checked here from the sample's own values with published
formulas, and the numbers behind the findings are checked against the same formulas.
"""

from __future__ import annotations

import io
import json
import math
import re
from pathlib import Path

import pytest
import yaml

from afecheck.analysis import analyse
from afecheck.cli import main
from afecheck.engine.rule import RULE_ID
from afecheck.model.load import load_design
from afecheck.model.units import parse_quantity

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))
EXPECT_RE = re.compile(r"^#\s*expect:\s*(.*?)\s*$", re.MULTILINE)


def expected_rules(path: Path) -> set[str]:
    """Rule ids from the sample's ``# expect:`` header line (empty set for ``none``)."""
    header = "".join(line for line in path.read_text(encoding="utf-8").splitlines(keepends=True)
                     if line.startswith("#"))
    found = EXPECT_RE.findall(header)
    assert len(found) == 1, f"{path.name}: needs exactly one '# expect:' line in its header"
    words = found[0].split()
    if words == ["none"]:
        return set()
    assert words and all(RULE_ID.fullmatch(w) for w in words), f"{path.name}: bad expect line {found[0]!r}"
    return set(words)


def _data(path: Path) -> dict:
    def keys(v):
        if isinstance(v, dict):
            return {str(k): keys(x) for k, x in v.items()}
        if isinstance(v, list):
            return [keys(x) for x in v]
        return v

    return keys(yaml.safe_load(path.read_text(encoding="utf-8")))


def _report(path: Path):
    from afecheck.api import check_file

    return check_file(path)


def _numbers(findings) -> list[float]:
    out: list[float] = []
    for f in findings:
        stack = list(f.ctx.values())
        while stack:
            v = stack.pop()
            if isinstance(v, (list, tuple)):
                stack.extend(v)
            elif isinstance(v, dict):
                stack.extend(v.values())
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                out.append(float(v))
    return out


def _finding_value(findings, rule: str, ref: str) -> float:
    """The ``ctx["value"]`` of the one finding of ``rule`` that names ``ref``."""
    (found,) = [f for f in findings if f.rule == rule and ref in f.location.refs]
    return float(found.ctx["value"])


def test_there_are_at_least_four_samples() -> None:
    assert len(SAMPLES) >= 4


def test_intent_files_validate_against_the_intent_model() -> None:
    from afecheck.model.schema import Intent

    intents = sorted((ROOT / "sample_designs").glob("*.intent.yaml"))
    assert intents
    for path in intents:
        Intent.model_validate(yaml.safe_load(path.read_text(encoding="utf-8")))


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_sample_header_has_an_expect_line(path: Path) -> None:
    expected_rules(path)


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_sample_loads_and_validates_against_the_json_schema(path: Path) -> None:
    jsonschema = pytest.importorskip("jsonschema")
    from afecheck.model.load import load_design

    load_design(path)
    jsonschema.validate(_data(path), _published_schema())


def _published_schema() -> dict:
    """The JSON Schema that ``afecheck schema`` prints."""
    out = io.StringIO()
    assert main(["schema"], stdout=out, stderr=io.StringIO()) == 0
    return json.loads(out.getvalue())


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_sample_findings_match_its_header(path: Path) -> None:
    expected = expected_rules(path)
    got = {f.rule for f in _report(path).findings}
    assert got == expected, f"{path.name}: header expects {sorted(expected)}, afecheck found {sorted(got)}"


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_sample_exit_status_matches_its_header(path: Path) -> None:
    rc = main(["check", "--fail-on", "info", str(path)], stdout=io.StringIO(), stderr=io.StringIO())
    assert rc == (1 if expected_rules(path) else 0)


# --- the circuit facts the headers state, from each sample's own values -------------------------

def _comp(path: Path, ref: str) -> dict:
    return _data(path)["components"][ref]


def _v(text, unit: str) -> float:
    return parse_quantity(text, unit)


def test_cold_store_divider_and_output_ranges() -> None:
    path = ROOT / "sample_designs" / "cold_store_logger.yaml"
    ntc, r1 = _comp(path, "RT1"), _v(_comp(path, "R1")["value"], "ohm")
    t_lo, t_hi = (float(str(t).split()[0]) for t in ntc["temperature"])

    def r_ntc(t_c: float) -> float:  # [IEC60539] Beta model
        return _v(ntc["r25"], "ohm") * math.exp(_v(ntc["beta"], "K") * (1 / (t_c + 273.15) - 1 / 298.15))

    v_cold = 2.5 * r_ntc(t_lo) / (r1 + r_ntc(t_lo))
    v_warm = 2.5 * r_ntc(t_hi) / (r1 + r_ntc(t_hi))
    assert (round(v_warm, 2), round(v_cold, 2)) == (1.67, 2.38)  # header: 1.67 V .. 2.38 V [DER]
    gain = 1 + _v(_comp(path, "R2")["value"], "ohm") / _v(_comp(path, "R3")["value"], "ohm")  # [FR]
    assert round(gain * v_warm, 2) == 2.17 and round(gain * v_cold, 2) == 3.10  # header [DER]
    # and afecheck computes the same ranges with the reference rail at its declared ±0.1 %: U1's in+ is the divider,
    # its output the gain times it (A0 = 1e5 and the bias currents move them by under 1e-4)
    tol = 1e-3
    u1 = {s.opamp: s for s in analyse(load_design(path)).stages}["U1"]
    assert (u1.vcm_min, u1.vcm_max) == pytest.approx((v_warm * (1 - tol), v_cold * (1 + tol)), rel=1e-4)
    assert (u1.vout_min, u1.vout_max) == pytest.approx((gain * v_warm * (1 - tol), gain * v_cold * (1 + tol)),
                                                       rel=1e-4)
    r, c1, c2 = 100e3, _v(_comp(path, "C1")["value"], "F"), _v(_comp(path, "C2")["value"], "F")
    f0 = 1 / (2 * math.pi * r * math.sqrt(c1 * c2))  # unity-gain Sallen-Key, equal R (common practice)
    assert round(f0, 1) == 10.7
    assert 40 * math.log10((1000 - 1) / f0) > 6.02 * 12 + 1.76  # R5j [JM][DER]: 78.8 dB > 74.0 dB


def test_soil_probe_loading_error_is_a_third() -> None:
    path = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    rs = _v(_comp(path, "S1")["source_resistance"], "ohm")
    ri = _v(_comp(path, "R1")["value"], "ohm")
    assert rs / (rs + ri) == pytest.approx(1 / 3, rel=1e-9)  # [FR] R1 inverting loading e = Rs/(Rs+Ri)
    # afecheck's loading.inverting-input value is the analysis's loading error; A0 = 1e5 at noise gain 3 moves it by
    # about 1e-5
    assert _finding_value(_report(path).findings, "loading.inverting-input", "R1") == pytest.approx(1 / 3, rel=1e-4)


def test_hydrophone_noise_gain_and_coupling_capacitor() -> None:
    path = ROOT / "sample_designs" / "hydrophone_preamp.yaml"
    ng = 1 + _v(_comp(path, "R2")["value"], "ohm") / _v(_comp(path, "R3")["value"], "ohm")
    assert ng == pytest.approx(3.128, abs=1e-3)  # [FR] NG = 1 + Rf/Rg, below the part's minimum of 5
    c = _v(_comp(path, "C1")["value"], "F")
    r = _v(_comp(path, "R1")["value"], "ohm")
    # R4f [DER]: series coupling C into R, k_C = 1/sqrt(1 + (2πfRC)²), relative to the signal at HYD, 10 Hz edge
    k_c = 1 / math.sqrt(1 + (2 * math.pi * 10 * r * c) ** 2)
    assert k_c == pytest.approx(0.1572, abs=2e-4)
    assert _finding_value(_report(path).findings, "distortion.class2-ceramic", "C1") == pytest.approx(k_c, rel=1e-9)


def test_vibration_follower_crosses_the_transition_window() -> None:
    path = ROOT / "sample_designs" / "vibration_follower.yaml"
    intent = ROOT / "sample_designs" / _data(path)["intent"]
    sig = _data(intent)["signals"]["VIB"]
    lo = _v(sig["dc"][0], "V") - _v(sig["ac_amplitude"], "V")
    hi = _v(sig["dc"][1], "V") + _v(sig["ac_amplitude"], "V")
    assert (lo, hi) == pytest.approx((1.05, 3.95))
    window = (5.0 - 1.3 - 0.4, 5.0 - 1.3 + 0.4)  # R3 default window for V+ = 5 V: [3.3 V, 4.1 V] [DER]
    assert lo < window[0] < hi
    assert not window[0] <= 2.5 <= window[1]  # channel B holds its common mode at 2.5 V

"""Sensor models against the published equations' own tables and an independent simulator.

Sources named beside each check: IEC 60751 (platinum RTD table), NIST Monograph 175 / ITS-90 reference tables
(thermocouples), Steinhart & Hart 1968 (thermistor curve), Kirchhoff's laws solved by ngspice (bridges).
"""

from __future__ import annotations

import math

import pytest
from ngspice_harness import needs_ngspice, parse_print, run_ngspice

from afecheck.sensors import bridge, rtd, thermistor, thermocouple

# IEC 60751 table for Pt100 (R0 = 100 Ω), printed to 0.01 Ω; values from memory of that table.
PT100_TABLE = {-200: 18.52, -100: 60.26, -50: 80.31, 0: 100.00, 50: 119.40, 100: 138.51, 200: 175.86,
               300: 212.05, 400: 247.09, 500: 280.98, 600: 313.71, 700: 345.28, 800: 375.70, 850: 390.48}


@pytest.mark.parametrize(("t", "r"), sorted(PT100_TABLE.items()))
def test_pt100_matches_the_iec_60751_table_to_its_printed_digit(t: float, r: float) -> None:
    assert rtd.resistance(100.0, t) == pytest.approx(r, abs=0.005)


def test_pt100_at_100_c_is_the_defining_value_to_a_milliohm() -> None:
    # IEC 60751: R(100 °C)/R0 = 1 + 100·A + 10⁴·B = 1.385055 by the standard's own coefficients.
    assert rtd.resistance(100.0, 100.0) == pytest.approx(138.5055, abs=0.001)
    assert rtd.resistance(1000.0, 100.0) == pytest.approx(1385.055, abs=0.001)  # Pt1000 scales with R0


@pytest.mark.parametrize("t", [-199.0, -120.5, -40.0, -0.5, 0.0, 0.5, 37.0, 250.0, 849.0])
def test_rtd_temperature_inverts_resistance(t: float) -> None:
    assert rtd.temperature(100.0, rtd.resistance(100.0, t)) == pytest.approx(t, abs=1e-7)


def test_rtd_tolerance_classes_and_lead_wiring() -> None:
    # IEC 60751 class A at 100 °C: ±(0.15 + 0.002·100) = ±0.35 °C; class B at -50 °C: ±0.55 °C.
    assert rtd.tolerance_c("A", 100.0) == pytest.approx(0.35)
    assert rtd.tolerance_c("B", -50.0) == pytest.approx(0.55)
    assert rtd.lead_error_ohm("2-wire", 0.5) == (1.0, 1.0)
    assert rtd.lead_error_ohm("3-wire", 0.5, 0.1) == (-0.05, 0.05)
    assert rtd.lead_error_ohm("4-wire", 0.5) == (0.0, 0.0)
    with pytest.raises(ValueError):
        rtd.resistance(100.0, 900.0)


# NIST Monograph 175 (ITS-90 thermocouple tables), mV with the reference junction at 0 °C, printed to 1 µV;
# values from memory of those tables.
TC_TABLE = {
    "K": {-200: -5.891, -100: -3.554, 100: 4.096, 200: 8.138, 300: 12.209, 400: 16.397, 500: 20.644,
          600: 24.905, 700: 29.129, 800: 33.275, 900: 37.326, 1000: 41.276, 1200: 48.838},
    "J": {-100: -4.633, 100: 5.269, 200: 10.779, 500: 27.393, 760: 42.919},
    "T": {-200: -5.603, -100: -3.379, 100: 4.279, 200: 9.288, 300: 14.862, 400: 20.872},
    "E": {-100: -5.237, 100: 6.319, 500: 37.005, 1000: 76.373},
    "N": {-100: -2.407, 100: 2.774, 500: 16.748, 1000: 36.256},
}
TC_CASES = [(k, t, e) for k, table in TC_TABLE.items() for t, e in table.items()]


@pytest.mark.parametrize(("kind", "t", "e"), TC_CASES, ids=[f"{k}{t}" for k, t, _ in TC_CASES])
def test_thermocouple_voltage_matches_the_its90_table_to_a_microvolt(kind: str, t: float, e: float) -> None:
    assert thermocouple.emf_mv(kind, t) == pytest.approx(e, abs=0.0005)


@pytest.mark.parametrize("kind", thermocouple.TYPES)
def test_thermocouple_is_zero_at_zero_and_inverts(kind: str) -> None:
    assert thermocouple.emf_mv(kind, 0.0) == pytest.approx(0.0, abs=1e-12)
    for t in (-150.0, 25.0, 123.4, 350.0):
        assert thermocouple.temperature_c(kind, thermocouple.emf_mv(kind, t)) == pytest.approx(t, abs=1e-6)


def test_cold_junction_subtracts_its_own_reference_voltage() -> None:
    # A kiln probe at 1000 °C read at 25 °C terminals: E(1000) − E(25) (ITS-90 type K table: 41.276 − 1.000 mV).
    assert thermocouple.measured_mv("K", 1000.0, 25.0) == pytest.approx(41.276 - 1.000, abs=0.001)
    # Seebeck coefficient of type K near room temperature is about 40 µV/°C (common practice figure).
    assert 39.0 < thermocouple.seebeck_uv_per_c("K", 25.0) < 41.5


def test_steinhart_hart_fit_reproduces_its_three_points_exactly() -> None:
    points = ((0.0, 32_650.0), (25.0, 10_000.0), (50.0, 3_603.0))
    coeffs = thermistor.sh_fit(points)
    for t, r in points:
        assert thermistor.sh_temperature_c(coeffs, r) == pytest.approx(t, abs=1e-9)
        assert thermistor.sh_resistance(coeffs, t) == pytest.approx(r, rel=1e-9)


def test_steinhart_hart_agrees_with_beta_where_both_apply() -> None:
    """A Beta curve sampled at 0, 25 and 50 °C: the fitted Steinhart-Hart curve follows it within 0.05 °C between
    (common practice: the two models differ by hundredths of a degree over a 50 °C span)."""
    beta = lambda t: thermistor.beta_resistance(10_000.0, 3950.0, t)  # noqa: E731
    coeffs = thermistor.sh_fit(tuple((t, beta(t)) for t in (0.0, 25.0, 50.0)))
    for t in range(0, 51, 5):
        assert thermistor.sh_temperature_c(coeffs, beta(t)) == pytest.approx(t, abs=0.05)


def test_widely_quoted_10k_coefficients_give_25_c_at_10_kohm() -> None:
    # The coefficients a = 1.129148e-3, b = 2.34125e-4, c = 8.76741e-8 are widely quoted for a 10 kΩ NTC (from memory).
    assert thermistor.sh_temperature_c((1.129148e-3, 2.34125e-4, 8.76741e-8), 10_000.0) == pytest.approx(25.0, abs=0.01)


def test_self_heating_is_power_over_dissipation_constant() -> None:
    # 1 mA through a Pt100 at 0 °C: 100 µW; with δ = 2 mW/K the sensor runs 0.05 K warm.
    assert rtd.self_heating_c(1e-3 ** 2 * 100.0, 2e-3) == pytest.approx(0.05)


@pytest.mark.parametrize("arrangement", bridge.ARRANGEMENTS)
def test_bridge_sensitivity_round_trips(arrangement: str) -> None:
    x = bridge.fractional_change(arrangement, 2e-3)
    assert bridge.output_v(arrangement, 350.0, x, 1.0) == pytest.approx(2e-3, rel=1e-12)


def test_quarter_bridge_is_nonlinear_and_full_bridge_is_not() -> None:
    # Wheatstone bridge, exact: full V·x, quarter V·x/(4 + 2x) (Hoffmann, strain-gauge measurements).
    assert bridge.output_v("full", 350.0, 0.01, 5.0) == pytest.approx(0.05, rel=1e-12)
    assert bridge.output_v("quarter", 350.0, 0.01, 5.0) == pytest.approx(5.0 * 0.01 / 4.02, rel=1e-12)
    assert bridge.output_resistance("full", 350.0, 0.0) == (175.0, 175.0)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("arrangement", bridge.ARRANGEMENTS)
@pytest.mark.parametrize("x", [-0.004, 0.0015, 0.02])
def test_bridge_output_matches_ngspice_operating_point(arrangement: str, x: float) -> None:
    tl, bl, tr, br = bridge.arm_resistances(arrangement, 350.0, x)
    deck = (f"bridge\nVEX top 0 DC 5\nRTL top outp {tl!r}\nRBL outp 0 {bl!r}\nRTR top outm {tr!r}\n"
            f"RBR outm 0 {br!r}\n.control\nset numdgt=15\nop\nprint v(outp) v(outm)\nquit\n.endc\n.end\n")
    text, _ = run_ngspice(deck)
    v = parse_print(text)
    assert bridge.output_v(arrangement, 350.0, x, 5.0) == pytest.approx(v["v(outp)"] - v["v(outm)"], abs=1e-12)
    assert not math.isnan(v["v(outp)"])

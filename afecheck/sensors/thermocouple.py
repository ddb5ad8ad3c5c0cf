"""Thermocouple voltages from the ITS-90 reference functions (types E, J, K, N, T), and their Seebeck coefficients.

E(t) = Σ c_i·t^i (+ a0·exp(a1·(t − a2)²) for type K above 0 °C), t in °C, E in mV. Coefficients are the
published reference-function coefficients of NIST Monograph 175 (1993), "Temperature-Electromotive Force Reference
Functions and Tables for the Letter-Designated Thermocouple Types Based on the ITS-90" (public-domain data),
the same functions IEC 60584-1 adopts.
"""

from __future__ import annotations

import math

# type -> ((t_low °C, t_high °C, (c0, c1, ...), (a0, a1, a2) or None), ...)
_FUNCTIONS: dict[str, tuple[tuple[float, float, tuple[float, ...], tuple[float, float, float] | None], ...]] = {
    "E": (
        (-270.0, 0.0, (
            0.000000000000E+00, 5.866550870800E-02, 4.541097712400E-05, -7.799804868600E-07, -2.580016084300E-08,
            -5.945258305700E-10, -9.321405866700E-12, -1.028760553400E-13, -8.037012362100E-16, -4.397949739100E-18,
            -1.641477635500E-20, -3.967361951600E-23, -5.582732872100E-26, -3.465784201300E-29,
        ),
        None),
        (0.0, 1000.0, (
            0.000000000000E+00, 5.866550871000E-02, 4.503227558200E-05, 2.890840721200E-08, -3.305689665200E-10,
            6.502440327000E-13, -1.919749550400E-16, -1.253660049700E-18, 2.148921756900E-21, -1.438804178200E-24,
            3.596089948100E-28,
        ),
        None),
    ),
    "J": (
        (-210.0, 760.0, (
            0.000000000000E+00, 5.038118781500E-02, 3.047583693000E-05, -8.568106572000E-08, 1.322819529500E-10,
            -1.705295833700E-13, 2.094809069700E-16, -1.253839533600E-19, 1.563172569700E-23,
        ),
        None),
        (760.0, 1200.0, (
            2.964562568100E+02, -1.497612778600E+00, 3.178710392400E-03, -3.184768670100E-06, 1.572081900400E-09,
            -3.069136905600E-13,
        ),
        None),
    ),
    "K": (
        (-270.0, 0.0, (
            0.000000000000E+00, 3.945012802500E-02, 2.362237359800E-05, -3.285890678400E-07, -4.990482877700E-09,
            -6.750905917300E-11, -5.741032742800E-13, -3.108887289400E-15, -1.045160936500E-17, -1.988926687800E-20,
            -1.632269748600E-23,
        ),
        None),
        (0.0, 1372.0, (
            -1.760041368600E-02, 3.892120497500E-02, 1.855877003200E-05, -9.945759287400E-08, 3.184094571900E-10,
            -5.607284488900E-13, 5.607505905900E-16, -3.202072000300E-19, 9.715114715200E-23, -1.210472127500E-26,
        ),
        (0.1185976, -0.0001183432, 126.9686)),
    ),
    "N": (
        (-270.0, 0.0, (
            0.000000000000E+00, 2.615910596200E-02, 1.095748422800E-05, -9.384111155400E-08, -4.641203975900E-11,
            -2.630335771600E-12, -2.265343800300E-14, -7.608930079100E-17, -9.341966783500E-20,
        ),
        None),
        (0.0, 1300.0, (
            0.000000000000E+00, 2.592939460100E-02, 1.571014188000E-05, 4.382562723700E-08, -2.526116979400E-10,
            6.431181933900E-13, -1.006347151900E-15, 9.974533899200E-19, -6.086324560700E-22, 2.084922933900E-25,
            -3.068219615100E-29,
        ),
        None),
    ),
    "T": (
        (-270.0, 0.0, (
            0.000000000000E+00, 3.874810636400E-02, 4.419443434700E-05, 1.184432310500E-07, 2.003297355400E-08,
            9.013801955900E-10, 2.265115659300E-11, 3.607115420500E-13, 3.849393988300E-15, 2.821352192500E-17,
            1.425159477900E-19, 4.876866228600E-22, 1.079553927000E-24, 1.394502706200E-27, 7.979515392700E-31,
        ),
        None),
        (0.0, 400.0, (
            0.000000000000E+00, 3.874810636400E-02, 3.329222788000E-05, 2.061824340400E-07, -2.188225684600E-09,
            1.099688092800E-11, -3.081575877200E-14, 4.547913529000E-17, -2.751290167300E-20,
        ),
        None),
    ),
}

TYPES: tuple[str, ...] = tuple(sorted(_FUNCTIONS))


def span_c(tc_type: str) -> tuple[float, float]:
    """The temperature range over which the reference function of ``tc_type`` is defined, in °C."""
    pieces = _FUNCTIONS[tc_type]
    return pieces[0][0], pieces[-1][1]


def _piece(tc_type: str, t_c: float) -> tuple[tuple[float, ...], tuple[float, float, float] | None]:
    """The coefficients and exponential term of the reference function's piece that holds ``t_c``."""
    pieces = _FUNCTIONS[tc_type]
    lo, hi = span_c(tc_type)
    if not lo <= t_c <= hi:
        raise ValueError(f"type {tc_type} is defined from {lo:g} °C to {hi:g} °C; {t_c:g} °C is outside")
    return next((c, g) for _, high, c, g in pieces if t_c <= high or high == hi)


def emf_mv(tc_type: str, t_c: float) -> float:
    """Thermoelectric voltage in mV of a ``tc_type`` thermocouple with its reference junction at 0 °C."""
    coeffs, gauss = _piece(tc_type, t_c)
    value = 0.0
    for c in reversed(coeffs):
        value = value * t_c + c
    if gauss is not None:
        a0, a1, a2 = gauss
        value += a0 * math.exp(a1 * (t_c - a2) ** 2)
    return value


def seebeck_uv_per_c(tc_type: str, t_c: float) -> float:
    """The Seebeck coefficient S = dE/dt in µV/°C at ``t_c``: the reference function differentiated term by term
    (Σ i·c_i·t^(i−1), plus 2·a1·(t − a2)·a0·exp(a1·(t − a2)²) for type K above 0 °C)."""
    coeffs, gauss = _piece(tc_type, t_c)
    value = 0.0
    for i in range(len(coeffs) - 1, 0, -1):
        value = value * t_c + i * coeffs[i]
    if gauss is not None:
        a0, a1, a2 = gauss
        value += 2.0 * a1 * (t_c - a2) * a0 * math.exp(a1 * (t_c - a2) ** 2)
    return value * 1000.0


def temperature_c(tc_type: str, e_mv: float) -> float:
    """The temperature whose reference-function voltage is ``e_mv`` (bisection: E(t) is monotonic on each range)."""
    lo, hi = span_c(tc_type)
    if tc_type in ("K", "T", "E", "N"):
        lo = max(lo, -200.0)  # below about -200 °C the functions flatten and stop being single-valued in practice
    a, b = lo, hi
    for _ in range(80):
        m = 0.5 * (a + b)
        if emf_mv(tc_type, m) < e_mv:
            a = m
        else:
            b = m
    return 0.5 * (a + b)


def measured_mv(tc_type: str, hot_c: float, cold_c: float) -> float:
    """Voltage at the copper terminals: E(hot) − E(cold), reference junction at the terminal temperature."""
    return emf_mv(tc_type, hot_c) - emf_mv(tc_type, cold_c)

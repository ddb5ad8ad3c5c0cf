"""Platinum resistance thermometers: the Callendar-Van Dusen equation with the IEC 60751 coefficients.

R(t) = R0·(1 + A·t + B·t²) for t ≥ 0 °C and R0·(1 + A·t + B·t² + C·(t − 100)·t³) below, with
A = 3.9083e-3 /°C, B = -5.775e-7 /°C², C = -4.183e-12 /°C⁴ (IEC 60751:2022, Industrial platinum resistance
thermometers and platinum temperature sensors). Tolerance classes as that standard gives them.
"""

from __future__ import annotations

import math

A = 3.9083e-3
B = -5.775e-7
C = -4.183e-12

# class -> (fixed part °C, part proportional to |t|), tolerance = ±(fixed + k·|t|) (IEC 60751)
TOLERANCE_CLASSES: dict[str, tuple[float, float]] = {
    "AA": (0.10, 0.0017), "A": (0.15, 0.002), "B": (0.30, 0.005), "C": (0.60, 0.01),
}
WIRING: tuple[str, ...] = ("2-wire", "3-wire", "4-wire")


def resistance(r0: float, t_c: float) -> float:
    """Resistance in Ω of a platinum sensor of nominal ``r0`` (Ω at 0 °C) at ``t_c`` °C."""
    if not -200.0 <= t_c <= 850.0:
        raise ValueError(f"the Callendar-Van Dusen equation covers -200 °C to 850 °C; {t_c:g} °C is outside")
    r = 1.0 + A * t_c + B * t_c * t_c
    if t_c < 0.0:
        r += C * (t_c - 100.0) * t_c ** 3
    return r0 * r


def temperature(r0: float, r: float) -> float:
    """Temperature in °C at which the sensor reads ``r`` Ω: closed form above 0 °C, Newton's method below."""
    ratio = r / r0
    if ratio >= 1.0:
        return (-A + math.sqrt(A * A - 4.0 * B * (1.0 - ratio))) / (2.0 * B)
    t = (ratio - 1.0) / A
    for _ in range(50):
        f = resistance(r0, max(t, -200.0)) / r0 - ratio
        d = A + 2.0 * B * t + C * (4.0 * t ** 3 - 300.0 * t * t)
        step = f / d
        t -= step
        if abs(step) < 1e-12:
            break
    return t


def tolerance_c(tolerance_class: str, t_c: float) -> float:
    """Permitted deviation ±°C of a sensor of ``tolerance_class`` at ``t_c`` (IEC 60751)."""
    fixed, k = TOLERANCE_CLASSES[tolerance_class]
    return fixed + k * abs(t_c)


def lead_error_ohm(wiring: str, lead_ohm: float, mismatch: float = 0.0) -> tuple[float, float]:
    """Range (low, high) of the resistance the leads add to the reading for each connection.

    2-wire: both leads in series (2·R_lead). 3-wire: the compensated connection leaves only the difference of two
    leads (± ``mismatch`` × R_lead). 4-wire: sensing carries no current, so nothing. Common practice of RTD wiring.
    """
    if wiring == "2-wire":
        return 2.0 * lead_ohm, 2.0 * lead_ohm
    if wiring == "3-wire":
        return -mismatch * lead_ohm, mismatch * lead_ohm
    if wiring == "4-wire":
        return 0.0, 0.0
    raise ValueError(f"wiring {wiring!r}; expected one of {', '.join(WIRING)}")


def self_heating_c(power_w: float, dissipation_w_per_k: float) -> float:
    """Temperature rise of a sensor dissipating ``power_w`` with dissipation constant δ: ΔT = P/δ."""
    return power_w / dissipation_w_per_k

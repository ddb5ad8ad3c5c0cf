"""NTC thermistors: the Beta model and the Steinhart-Hart equation, with a fit from three points and self-heating.

Beta: R(T) = R25·exp(B·(1/T − 1/T25)) (B-value as IEC 60539-1 defines it). Steinhart-Hart:
1/T = a + b·ln R + c·(ln R)³ (J. S. Steinhart, S. R. Hart, "Calibration curves for thermistors", Deep-Sea
Research 15 (1968) 497-503). Temperatures in °C at the interface, kelvin inside.
"""

from __future__ import annotations

import math

T0 = 273.15
T25 = 298.15


def beta_resistance(r25: float, beta: float, t_c: float) -> float:
    """R(T) of the Beta model."""
    return r25 * math.exp(beta * (1.0 / (t_c + T0) - 1.0 / T25))


def sh_temperature_c(coeffs: tuple[float, float, float], r: float) -> float:
    """Temperature in °C at resistance ``r`` from Steinhart-Hart coefficients (a, b, c)."""
    a, b, c = coeffs
    x = math.log(r)
    return 1.0 / (a + b * x + c * x ** 3) - T0


def sh_resistance(coeffs: tuple[float, float, float], t_c: float) -> float:
    """Resistance at ``t_c`` from Steinhart-Hart: the real root of c·x³ + b·x + (a − 1/T) = 0, x = ln R (Cardano)."""
    a, b, c = coeffs
    y = (a - 1.0 / (t_c + T0)) / c
    p = b / c
    root = math.sqrt((p / 3.0) ** 3 + (y / 2.0) ** 2)
    x = math.copysign(abs(-y / 2.0 + root) ** (1 / 3), -y / 2.0 + root) + \
        math.copysign(abs(-y / 2.0 - root) ** (1 / 3), -y / 2.0 - root)
    return math.exp(x)


def sh_fit(points: tuple[tuple[float, float], ...]) -> tuple[float, float, float]:
    """Steinhart-Hart (a, b, c) through three (t_c, R) points: a 3×3 linear solve in 1, ln R, (ln R)³."""
    if len(points) != 3:
        raise ValueError("a Steinhart-Hart fit takes exactly three (temperature, resistance) points")
    rows = [(1.0, math.log(r), math.log(r) ** 3, 1.0 / (t + T0)) for t, r in points]
    m = [list(row) for row in rows]
    for i in range(3):
        pivot = max(range(i, 3), key=lambda k: abs(m[k][i]))
        m[i], m[pivot] = m[pivot], m[i]
        if abs(m[i][i]) < 1e-300:
            raise ValueError("the three points do not determine a Steinhart-Hart curve (repeated resistances)")
        for k in range(3):
            if k != i:
                f = m[k][i] / m[i][i]
                m[k] = [x - f * y for x, y in zip(m[k], m[i], strict=True)]
    return (m[0][3] / m[0][0], m[1][3] / m[1][1], m[2][3] / m[2][2])


def self_heating_c(power_w: float, dissipation_w_per_k: float) -> float:
    """Temperature rise ΔT = P/δ of a thermistor dissipating ``power_w`` with dissipation constant δ."""
    return power_w / dissipation_w_per_k

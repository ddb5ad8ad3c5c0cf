"""Resistive bridges (strain gauges, pressure cells): output, output resistance and common mode.

Arms of nominal R change by x = ΔR/R (for a strain gauge x = GF·ε). With excitation V between the top and bottom
and the output taken between the two mid-points, the exact Wheatstone outputs are: full bridge (four active arms,
opposite signs in adjacent arms) V·x; half bridge (two active arms, one in each half, opposite signs) V·x/2;
quarter bridge (one active arm) V·x/(4 + 2x), which is nonlinear. Kirchhoff's laws on the bridge; the
arrangements as in K. Hoffmann, "An Introduction to Measurements using Strain Gages", HBM, 1989.
"""

from __future__ import annotations

ARRANGEMENTS: tuple[str, ...] = ("full", "half", "quarter")


def arm_resistances(arrangement: str, r: float, x: float) -> tuple[float, float, float, float]:
    """(top-left, bottom-left, top-right, bottom-right) arm values: left mid-point is out+, right mid-point out−."""
    if arrangement == "full":
        return r * (1 - x), r * (1 + x), r * (1 + x), r * (1 - x)
    if arrangement == "half":
        return r * (1 - x), r * (1 + x), r, r
    if arrangement == "quarter":
        return r, r * (1 + x), r, r
    raise ValueError(f"bridge arrangement {arrangement!r}; expected one of {', '.join(ARRANGEMENTS)}")


def output_v(arrangement: str, r: float, x: float, excitation_v: float) -> float:
    """Differential output out+ − out− of the unloaded bridge (two dividers, Kirchhoff)."""
    tl, bl, tr, br = arm_resistances(arrangement, r, x)
    return excitation_v * (bl / (tl + bl) - br / (tr + br))


def fractional_change(arrangement: str, sensitivity_v_per_v: float) -> float:
    """The x that gives ``sensitivity_v_per_v`` (output/excitation at full scale) for this arrangement."""
    s = sensitivity_v_per_v
    if arrangement == "full":
        return s
    if arrangement == "half":
        return 2.0 * s
    if arrangement == "quarter":
        return 4.0 * s / (1.0 - 2.0 * s)
    raise ValueError(f"bridge arrangement {arrangement!r}; expected one of {', '.join(ARRANGEMENTS)}")


def output_resistance(arrangement: str, r: float, x: float) -> tuple[float, float]:
    """Thevenin resistance at out+ and at out− (each mid-point sees its two arms in parallel)."""
    tl, bl, tr, br = arm_resistances(arrangement, r, x)
    return tl * bl / (tl + bl), tr * br / (tr + br)

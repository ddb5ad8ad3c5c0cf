"""Affine forms worked by hand: term and form extremes, the worst case, a swept form's grid, its parabola refinement,
and the grid strides, each against the arithmetic of the module's documented definitions."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis.affine import (
    BASE_POINTS,
    AffineForm,
    SweptForm,
    Term,
    constant_form,
    grid_coords,
    quantity_form,
    refined_max,
    rows_on,
    unit_step,
)


def test_term_extremes_follow_the_sign_of_the_gain():
    # gain·δ over δ ∈ [−1, 3]: gain 2 gives −2..6, gain −2 gives −6..2 (hand calculation); gain 0 gives 0..0
    assert Term(2.0, -1.0, 3.0).extremes() == (-2.0, 6.0)
    assert Term(-2.0, -1.0, 3.0).extremes() == (-6.0, 2.0)
    assert Term(0.0, -1.0, 3.0).extremes() == (0.0, 0.0)


def test_form_extremes_worst_case_and_contributions():
    # v = 1 + 2·x − 3·y, x ∈ [−1, 1], y ∈ [0, 0.5]: lowest 1 − 2 − 1.5 = −2.5, highest 1 + 2 + 0 = 3; worst case
    # |2|·1 + |−3|·0.5 = 3.5 (hand calculation: the linear sum of each term's largest departure)
    form = AffineForm(1.0, {"x": Term(2.0, -1.0, 1.0), "y": Term(-3.0, 0.0, 0.5)})
    assert form.extremes() == (pytest.approx(-2.5), pytest.approx(3.0))
    assert form.worst_case() == pytest.approx(3.5)
    assert form.contribution("y") == (-1.5, 0.0)
    assert form.contribution("z") == (0.0, 0.0)
    # an asymmetric range counts its larger side: 1·max(|−2|, |1|) = 2
    assert AffineForm(0.0, {"x": Term(1.0, -2.0, 1.0)}).worst_case() == pytest.approx(2.0)


def test_constant_and_single_quantity_forms():
    # a constant does not move; nominal 2 with δ ∈ [−0.5, 0.25] spans 1.5..2.25 (hand calculation)
    assert constant_form(3.0).extremes() == (3.0, 3.0)
    q = quantity_form("rail:VCC", 2.0, -0.5, 0.25)
    assert q.extremes() == (pytest.approx(1.5), pytest.approx(2.25))
    assert q.at().terms == {"rail:VCC": Term(1.0, -0.5, 0.25)} and q.points == 1


def _parabola_form(swept: tuple[str, ...]) -> SweptForm:
    """Nominal 5 − (p − 10.3)² over the 33 grid points, plus a quantity of gain 2·(p − 16) and δ ∈ [−0.1, 0.1]."""
    p = np.arange(BASE_POINTS, dtype=float)
    gains = (2.0 * (p - 16.0))[:, None]
    return SweptForm(("q",), np.array([-0.1]), np.array([0.1]), swept, 1, 5.0 - (p - 10.3) ** 2, gains)


def test_swept_form_at_a_point_and_at_mid_range():
    form = _parabola_form(("RT",))
    # the middle point P // 2 = 16 is the thermistor at mid-range; there the quantity's gain is 2·(16 − 16) = 0 and
    # a zero gain is left out of the form
    mid = form.at()
    assert mid.nominal == pytest.approx(5.0 - 5.7**2) and mid.terms == {}
    assert form.at(0).terms == {"q": Term(-32.0, -0.1, 0.1)}


def test_swept_form_bounds_and_refined_extremes():
    form = _parabola_form(("RT",))
    lo, hi = form.bounds()
    # at each point nominal ± |gain|·0.1 (hand calculation)
    p = np.arange(BASE_POINTS, dtype=float)
    assert np.allclose(hi, 5.0 - (p - 10.3) ** 2 + 0.2 * np.abs(p - 16.0))
    assert np.allclose(lo, 5.0 - (p - 10.3) ** 2 - 0.2 * np.abs(p - 16.0))
    # the highest value near p = 10: grid values hi[9], hi[10], hi[11] = 4.71, 6.11, 5.51; the parabola through
    # them peaks at y1 − (y2 − y0)²/(8·(y0 − 2y1 + y2)) = 6.11 + 0.64/16 = 6.15 (hand calculation); the lowest
    # is at the end p = 32: 5 − 21.7² − 3.2 = −469.09 (an end point is not refined)
    y0, y1, y2 = hi[9], hi[10], hi[11]
    vertex = y1 - 0.125 * (y2 - y0) ** 2 / (y0 - 2 * y1 + y2)
    assert vertex == pytest.approx(6.15, rel=1e-9)
    assert form.extremes() == (pytest.approx(5.0 - 21.7**2 - 3.2), pytest.approx(vertex))
    # with two swept thermistors the grid is not one curve: no refinement, the grid maximum itself
    assert _parabola_form(("RT1", "RT2")).extremes()[1] == pytest.approx(hi.max())


def test_refined_max_refines_only_an_interior_peak():
    # one point: itself; a peak at an end: the end; a valley (den > 0): the grid maximum, never a vertex below it
    assert refined_max(np.array([[2.0, -1.0]]), True).tolist() == [2.0, -1.0]
    assert refined_max(np.array([[0.0], [1.0], [3.0]]), True).tolist() == [3.0]
    assert refined_max(np.array([[3.0], [1.0], [2.0]]), True).tolist() == [3.0]
    # exactly symmetric peak: the vertex is the middle point itself
    assert refined_max(np.array([[1.0], [2.0], [1.0]]), True).tolist() == [2.0]
    # a peak at p = 1 of y = −(p − 1.25)²: −1.5625, −0.0625, −0.5625 → the vertex 0 exactly (a parabola)
    vals = -(np.arange(3.0) - 1.25) ** 2
    assert refined_max(vals[:, None], True)[0] == pytest.approx(0.0, abs=1e-12)
    assert refined_max(vals[:, None], False)[0] == pytest.approx(-0.0625)


@pytest.mark.parametrize(("dims", "max_points", "step"), [
    # 33 points a thermistor; a product grid of at most max_points: each halving of the density doubles the stride
    (1, 33, 1),    # 33 ≤ 33: every point (exact boundary)
    (1, 32, 2),    # 33 > 32: every 2nd point, 17
    (2, 289, 2),   # 17² = 289 ≤ 289 (exact boundary)
    (2, 288, 4),   # 17² > 288: 9² = 81
    (3, 1, 32),    # never below 2 points an axis: the stride stops at 32
])
def test_unit_step_at_its_boundaries(dims, max_points, step):
    assert unit_step(dims, max_points) == step


def test_grid_coordinates_are_row_major():
    assert grid_coords(0, 1).shape == (1, 0)
    one = grid_coords(1, 2)
    assert one.shape == (17, 1) and one[:, 0].tolist() == list(range(0, 33, 2))
    two = grid_coords(2, 16)
    assert two.tolist() == [[0, 0], [0, 16], [0, 32], [16, 0], [16, 16], [16, 32], [32, 0], [32, 16], [32, 32]]


def test_rows_on_a_wider_grid():
    # A form over RT2 alone on a stride-16 grid (3 points: rows 0, 1, 2) read on a grid over (RT1, RT2) of stride
    # 16: the row is RT2's coordinate / 16, whatever RT1 does; a form over both is row-major (RT1·3 + RT2).
    coords = grid_coords(2, 16)
    only = SweptForm((), np.zeros(0), np.zeros(0), ("RT2",), 16, np.zeros(3), np.zeros((3, 0)))
    assert rows_on(only, ("RT1", "RT2"), coords).tolist() == [0, 1, 2, 0, 1, 2, 0, 1, 2]
    both = SweptForm((), np.zeros(0), np.zeros(0), ("RT1", "RT2"), 16, np.zeros(9), np.zeros((9, 0)))
    assert rows_on(both, ("RT1", "RT2"), coords).tolist() == list(range(9))
    assert rows_on(constant_form(1.0), ("RT1", "RT2"), coords).tolist() == [0] * 9

"""The supply analysis at the capacitive-load rating: an isolation resistor is sized only for a load above it."""

from __future__ import annotations

import math

from test_kill_limits import _follower, _with_part

from afecheck.analysis.supply import analyse_supply


def test_a_load_equal_to_the_rating_is_given_no_isolation_resistor(tmp_path) -> None:
    # A rated maximum includes its own value (common practice for a datasheet maximum): 100 pF on an output
    # rated for exactly that load needs no isolation resistor; one float below the load, one is sized.
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", cl="100 pF")
    at = analyse_supply(loaded, analysis).opamps["U1"].load_capacitance
    assert math.isclose(at, 100e-12, rel_tol=1e-12)
    equal = analyse_supply(_with_part(loaded, max_capacitive_load=at), analysis).opamps["U1"]
    assert equal.isolation_resistance is None and equal.phase_margin_with_iso_deg is None and equal.notes == ()
    below = analyse_supply(_with_part(loaded, max_capacitive_load=math.nextafter(at, 0)), analysis).opamps["U1"]
    assert below.isolation_resistance is not None and below.phase_margin_with_iso_deg is not None

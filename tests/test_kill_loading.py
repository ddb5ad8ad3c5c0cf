"""Loading rules: the source-resistance bound of the input-divider rule against the divider's closed form."""

from __future__ import annotations

import pytest

from afecheck.checks.loading.input_divider_error import divider_error, max_source_resistance


def test_largest_source_resistance_at_dc_is_the_divider_solved_by_hand() -> None:
    # at DC the pin sees Rcm/(Rs + Rcm) (Ohm's law): a loss L allows Rs = Rcm·L/(1 − L);
    # 1 MΩ and 1 %: 1e6·0.01/0.99 = 10.101 kΩ
    assert max_source_resistance(1e6, 0.0, 0.0, 0.01) == pytest.approx(1e6 * 0.01 / 0.99, rel=1e-8)
    # exactly half the signal lost: Rs = Rcm itself, returned exactly (the search's upper end meets the loss)
    assert divider_error(1e6, 1e6, 0.0, 0.0) == 0.5
    assert max_source_resistance(1e6, 0.0, 0.0, 0.5) == 1e6

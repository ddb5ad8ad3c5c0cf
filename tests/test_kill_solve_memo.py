"""The solve memo's contract, checked through its public functions: equal keys for netlists equal up to names,
different keys for any different value or wiring, one computation per key, failures never kept, shared arrays
read-only, and a bounded number of results kept per design."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis.netlist import Netlist, Resistor, VoltageSource
from afecheck.analysis.solve_memo import MAX_KEPT, numeric_key, shared, unit_system


def _divider(a: str, b: str, r2: float = 1e3, src: str = "V1") -> Netlist:
    return Netlist((VoltageSource(src, a, "0", dc=1.0), Resistor("RA", a, b, 1e3), Resistor("RB", b, "0", r2)), {})


def test_keys_are_equal_up_to_names_and_differ_on_any_value_or_wiring():
    assert numeric_key(_divider("x", "y")) == numeric_key(_divider("p", "q", src="VX"))
    assert numeric_key(_divider("x", "y")) != numeric_key(_divider("x", "y", r2=2e3))
    # the same values wired differently: RB from the source node instead of the middle node
    other = Netlist((VoltageSource("V1", "x", "0", dc=1.0), Resistor("RA", "x", "y", 1e3),
                     Resistor("RB", "x", "0", 1e3)), {})
    assert numeric_key(other) != numeric_key(_divider("x", "y"))


def test_one_computation_per_key_and_failures_are_not_kept():
    cache: dict = {}
    calls = []

    def compute():
        calls.append(1)
        return np.arange(3.0)

    first = shared(cache, ("k",), compute)
    again = shared(cache, ("k",), compute)
    assert again is first and len(calls) == 1
    with pytest.raises(ValueError):
        first[0] = 5.0  # a shared array is read-only: no reader can change what the next one reads
    # without a cache or a key nothing is shared
    shared(None, ("k",), compute)
    shared(cache, None, compute)
    assert len(calls) == 3

    def fails():
        calls.append(1)
        raise ZeroDivisionError

    for _ in range(2):
        with pytest.raises(ZeroDivisionError):
            shared(cache, ("bad",), fails)
    assert len(calls) == 5 and ("bad",) not in cache


def test_results_kept_per_design_are_bounded():
    cache: dict = {}
    for k in range(MAX_KEPT + 5):
        shared(cache, ("n", k), lambda k=k: k)
    kept = [key for key in cache if isinstance(key, tuple) and key and key[0] == "n"]
    assert len(kept) == MAX_KEPT
    assert ("n", MAX_KEPT - 1) in cache and ("n", MAX_KEPT) not in cache


def test_systems_of_equal_keys_share_read_only_arrays_under_their_own_names():
    cache: dict = {}
    one, two = _divider("x", "y"), _divider("p", "q", src="VX")
    s1 = unit_system(one, numeric_key(one), cache)
    s2 = unit_system(two, numeric_key(two), cache)
    assert s2.g is s1.g and not s2.g.flags.writeable
    assert s2.node_index("q") == s1.node_index("y") and s2.branch_index("VX") == s1.branch_index("V1")

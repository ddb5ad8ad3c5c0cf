"""limits.capacitive-load when no isolation resistor could be computed: the finding says why instead of a value."""

from __future__ import annotations

from fixtures.rules import kit

from afecheck.analysis.supply import SupplyCheck, SupplyResult
from afecheck.checks.limits import capacitive_load
from afecheck.engine.context import Context


def _run(**changes):
    check = SupplyCheck(opamp="U1", part="KIT-AMP", span_min=5.0, span_max=5.0, plus_v=5.0, minus_v=0.0,
                        supply_min=None, supply_max=None, inputs=(), input_current_limit=0.01,
                        load_capacitance=1e-9, max_capacitive_load=100e-12, isolation_resistance=None,
                        phase_margin_with_iso_deg=None, **changes)
    ctx = Context(kit.design())
    ctx.memo("supply", lambda: SupplyResult(opamps={"U1": check}))
    return list(capacitive_load.check(ctx.for_rule(capacitive_load.META)))


def test_no_isolation_resistor_gives_the_analysis_reason() -> None:
    # 1 nF on an output rated for 100 pF (the part's max_capacitive_load): a warning either way
    (f,) = _run(notes=("no isolation resistor up to 100 kΩ restores a 60° phase margin",))
    assert f.message.endswith("limit; no isolation resistor up to 100 kΩ restores a 60° phase margin. Fix: "
                              + capacitive_load.META.fix)
    assert f.ctx["isolation_resistance"] == -1.0 and f.ctx["margin"] == 100e-12 - 1e-9
    (f,) = _run()
    assert "limit; no isolation resistor was computed" in f.message

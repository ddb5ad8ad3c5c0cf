"""budgets.noise grades by its own parameters: a warning past 80 % of the budget, an error past 100 %, on the
attenuator whose noise is worked by Johnson-Nyquist in test_kill_noise_input_referred."""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit
from test_kill_noise_input_referred import ATTENUATOR

from afecheck.analysis.noise import BOLTZMANN
from afecheck.checks.budgets import noise_over_budget
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

# √(4kT·5 kΩ) at 85 °C over 10 Hz..10 kHz at X (Johnson 1928; Nyquist 1928)
RMS = math.sqrt(4 * BOLTZMANN * (85.0 + 273.15) * 5e3 * (10e3 - 10.0))


@pytest.mark.parametrize(("share", "severity", "limit_share"), [
    (0.9, Severity.WARNING, 0.8),  # past the warning share (0.8, common practice), inside the budget
    (1.5, Severity.ERROR, 1.0),  # past the budget itself
])
def test_noise_budget_grades_by_its_own_shares(tmp_path, share, severity, limit_share) -> None:
    budget = RMS / share
    path = tmp_path / "d.yaml"
    path.write_text(ATTENUATOR + f"budgets:\n  X: {{noise: {budget!r}}}\n", encoding="utf-8")
    (f,) = [x for x in kit.run(noise_over_budget, load_design(path), ()) if x.confidence != "not-evaluated"]
    assert f.severity is severity
    assert f.ctx["value"] == pytest.approx(RMS, rel=1e-6)
    assert f.ctx["limit"] == pytest.approx(limit_share * budget, rel=1e-12)


def test_noise_inside_the_warning_share_passes(tmp_path) -> None:
    path = tmp_path / "d.yaml"
    path.write_text(ATTENUATOR + f"budgets:\n  X: {{noise: {RMS / 0.7!r}}}\n", encoding="utf-8")
    assert [x for x in kit.run(noise_over_budget, load_design(path), ()) if x.confidence != "not-evaluated"] == []

"""One-line summaries of a stage's numbers (phase margin, headroom margins), shared by the Markdown report and the
HTML page's text alternatives. Formatting only: every number comes from the stage view."""

from __future__ import annotations

from afecheck.model.units import format_si
from afecheck.report.data import Headroom, StageView


def si(value: float | None, unit: str, digits: int = 3) -> str:
    """``value`` with an SI prefix, or "n/a" when it was not evaluated."""
    return "n/a" if value is None else format_si(value, unit, digits)


def margin_text(margin: float | None) -> str:
    """A headroom margin in words: inside the limit, or beyond it."""
    if margin is None:
        return "no limit given"
    return f"{si(margin, 'V')} inside" if margin >= 0 else f"{si(-margin, 'V')} BEYOND"


def headroom_text(h: Headroom) -> str:
    """``output 0.180 V inside low, 0.054 V BEYOND high``."""
    return f"{h.label} {margin_text(h.margin_low)} low, {margin_text(h.margin_high)} high"


def loop_text(v: StageView) -> str:
    """``phase margin 70.6° at 577 kHz, gain margin 12.0 dB`` (``~`` marks an estimate)."""
    if v.feedback != "negative":
        return f"feedback {v.feedback}"
    if v.phase_margin_deg is None:
        return "phase margin not evaluated"
    mark = "~" if v.estimated else ""
    text = f"phase margin {mark}{v.phase_margin_deg:.1f}° at {si(v.crossover_hz, 'Hz')}"
    if v.gain_margin_db is not None:
        text += f", gain margin {v.gain_margin_db:.1f} dB"
    return text


def stage_line(v: StageView) -> str:
    """The whole stage on one line: loop first, then each headroom."""
    parts = [loop_text(v)] + [headroom_text(h) for h in v.headroom]
    return f"{v.opamp} ({v.topology}, {v.part}): " + "; ".join(parts)

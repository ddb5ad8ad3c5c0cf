"""The data every reporter renders: findings with their review status, per design, plus the rule catalogue.

Built by the policy layer and :mod:`afecheck.api`; reporters only read it. Nothing here computes circuits.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from afecheck.engine.finding import Finding, Severity

Status = Literal["open", "new", "unchanged", "waived", "fixed"]
ACTIVE: tuple[Status, ...] = ("open", "new")
STATUS_MEANING: dict[str, str] = {
    "open": "found, not waived (no baseline in use)",
    "new": "found, not waived, and not in the baseline",
    "unchanged": "found and already recorded in the baseline; does not fail the gate",
    "waived": "found and accepted by a waiver that has not expired; does not fail the gate",
    "fixed": "recorded in the baseline but no longer found",
}
FAIL_LEVELS: tuple[str, ...] = ("error", "warning", "info", "never")


@dataclass(frozen=True)
class WaiverNote:
    """An accepted finding as the waiver records it: fingerprint, why, who, until when, and where it is written."""

    fingerprint: str
    justification: str
    accepted_by: str
    expires: str | None = None
    rule: str | None = None
    file: str = ""
    line: int | None = None
    refs: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()

    @property
    def key(self) -> str:
        """Identity for bookkeeping: the fingerprint, or where an inline waiver is written."""
        return self.fingerprint or f"{self.file}:{self.line}:{self.rule}:{','.join(self.refs)}:{','.join(self.nets)}"

    @property
    def label(self) -> str:
        """How reports name the waiver: its fingerprint, or its rule and names for an inline waiver."""
        if self.fingerprint:
            return self.fingerprint
        names = ", ".join((*self.refs, *self.nets))
        return f"{self.rule} on {names}" if names else f"{self.rule}"

    def matches(self, finding: Finding) -> bool:
        """Fingerprint waivers match that fingerprint; inline ones match the rule and every listed name."""
        if self.fingerprint:
            return self.fingerprint == finding.fingerprint and self.rule in (None, finding.rule)
        loc = finding.location
        return (self.rule == finding.rule and set(self.refs) <= set(loc.refs) and set(self.nets) <= set(loc.nets))


@dataclass(frozen=True)
class Entry:
    """One finding with its status, the stage (op-amp refdes, or "" for design-wide) and any waiver behind it."""

    finding: Finding
    status: Status
    stage: str = ""
    waiver: WaiverNote | None = None
    expired_waiver: WaiverNote | None = None

    @property
    def active(self) -> bool:
        return self.status in ACTIVE


@dataclass(frozen=True)
class RuleInfo:
    """What a report says about a rule: identity, default level, one-line and full text, help from rule.md."""

    id: str
    slug: str
    severity: Severity
    summary: str
    family: str = ""
    description: str = ""
    help: str = ""
    fix: str = ""


@dataclass(frozen=True)
class Trace:
    """A frequency response as the analysis swept it: |H| in dB and phase in degrees on a log grid (Hz)."""

    label: str
    freqs_hz: tuple[float, ...]
    magnitude_db: tuple[float, ...]
    phase_deg: tuple[float, ...]


@dataclass(frozen=True)
class Headroom:
    """Where a signal sits between an op-amp's rails: the worst-case rails, the part's limits (common-mode range
    or output swing at the load) and the signal's extremes, all in volts; margins are inside-the-limit distances
    (negative: beyond the limit). A limit the part does not give is None."""

    label: str
    rail_low: float
    rail_high: float
    limit_low: float | None
    limit_high: float | None
    signal_low: float
    signal_high: float
    margin_low: float | None
    margin_high: float | None


@dataclass(frozen=True)
class NoiseShare:
    """One noise source's part of a net's noise: RMS at the net over the band, its share of the total power, and
    its output-referred density (V/√Hz) on the panel's grid."""

    name: str
    kind: str
    output_rms: float
    share: float
    density: tuple[float, ...]


@dataclass(frozen=True)
class NoisePanel:
    """Noise at one net as the noise analysis found it: band, temperature, total output density (V/√Hz) on a log
    grid (Hz), RMS totals, the contributors ranked, and the budget with the fraction of it used."""

    net: str
    band_hz: tuple[float, float]
    temperature_k: float
    freqs_hz: tuple[float, ...]
    output_density: tuple[float, ...]
    output_rms: float
    contributors: tuple[NoiseShare, ...]
    signal: str | None = None
    input_rms: float | None = None
    budget: float | None = None
    budget_used: float | None = None


@dataclass(frozen=True)
class ErrorTerm:
    """One DC-error quantity at a net: its limit (± in ``limit_unit``: % for a fraction, V, A, V/V), the
    output change at each signal end (V), and its offset (V) and gain-error (fraction) parts."""

    name: str
    kind: str
    limit: float
    limit_unit: str
    error_low: float
    error_high: float
    offset: float
    gain_error: float | None
    counted: bool = True
    """False for a sensor's own tolerance: listed, left out of the totals"""


@dataclass(frozen=True)
class ErrorTotal:
    """One worksheet line: worst case (linear sum) and statistical (RSS) total, its unit, budget and use of it."""

    label: str
    unit: str
    worst: float
    rss: float
    budget: float | None = None
    budget_used: float | None = None


@dataclass(frozen=True)
class DcErrorPanel:
    """The DC-error worksheet at one net: ideal outputs at the signal ends, every term, the totals (offset, gain
    error, drift) against their budgets, and the exact worst-case corners (V)."""

    net: str
    ideal_low: float
    ideal_high: float
    terms: tuple[ErrorTerm, ...]
    totals: tuple[ErrorTotal, ...]
    corner_low: float
    corner_high: float
    drift_terms: tuple[ErrorTerm, ...] = ()
    temperature_range: tuple[float, float] | None = None


@dataclass(frozen=True)
class NetBudget:
    """The noise and DC-error panels of one net a stage drives (its output, or a loaded or budgeted net after it),
    with the reason for each analysis that could not be done there."""

    net: str
    noise: NoisePanel | None = None
    dc_error: DcErrorPanel | None = None
    not_evaluated: tuple[str, ...] = ()


@dataclass(frozen=True)
class InputGain:
    """One signal input of a stage: its net and pin, the parts between, DC and in-band gain, loading."""

    net: str
    pin: str
    kind: str
    via: tuple[str, ...]
    gain: float
    ideal_gain: float
    band_gain: float | None
    input_resistance: float
    loading_error: float


@dataclass(frozen=True)
class StageView:
    """The numbers the rules stand on for one op-amp stage, the limits they were judged against, and (when the
    report draws plots) the frequency responses. Filled from the analysis; reporters only format it."""

    opamp: str
    part: str
    topology: str
    refs: tuple[str, ...]
    in_plus: str
    in_minus: str
    out: str
    group: tuple[str, ...]
    feedback: str
    inputs: tuple[InputGain, ...] = ()
    noise_gain_dc: float | None = None
    noise_gain_at_crossover: float | None = None
    loop_gain_dc: float | None = None
    crossover_hz: float | None = None
    phase_margin_deg: float | None = None
    gain_margin_db: float | None = None
    loop_gain_at_fmax: float | None = None
    f_max: float = 0.0
    vout_ac_peak: float = 0.0
    required_slew_rate: float = 0.0
    output_resistance: float | None = None
    load_resistance: float | None = None
    load_capacitance: float = 0.0
    iout_peak: float | None = None
    rail_minus: float = 0.0
    rail_plus: float = 0.0
    phase_margin_limits_deg: tuple[float, float] | None = None
    gain_margin_limits_db: tuple[float, float] | None = None
    headroom: tuple[Headroom, ...] = ()
    loop_gain: Trace | None = None
    noise_gain: Trace | None = None
    open_loop: Trace | None = None
    closed_loop: tuple[Trace, ...] = ()
    band_hz: tuple[float, float] | None = None
    budgets: tuple[NetBudget, ...] = ()
    estimated: bool = False
    assumed: tuple[str, ...] = ()
    not_evaluated: tuple[str, ...] = ()


@dataclass(frozen=True)
class DesignResult:
    """The reviewed findings of one design file, with the hazards it declares and the policy applied."""

    file: str
    name: str
    hazards: tuple[str, ...] = ()
    entries: tuple[Entry, ...] = ()
    stages: tuple[str, ...] = ()
    ruleset: str = "default"
    config: str | None = None
    rules_run: tuple[str, ...] = ()
    stage_views: tuple[StageView, ...] = ()


@dataclass(frozen=True)
class Report:
    """A whole run: every design, the rule catalogue, the fail level and the waiver/baseline bookkeeping."""

    designs: tuple[DesignResult, ...]
    rules: tuple[RuleInfo, ...] = ()
    fail_on: Severity | None = Severity.ERROR
    tool_version: str = ""
    baseline: str | None = None
    unused_waivers: tuple[WaiverNote, ...] = ()
    expired_waivers: tuple[WaiverNote, ...] = field(default=())
    notes: tuple[str, ...] = ()
    """One-line notes for the person running the check (e.g. an old baseline format), printed on stderr."""

    def entries(self) -> tuple[Entry, ...]:
        return tuple(e for d in self.designs for e in d.entries)

    def gating(self, entry: Entry) -> bool:
        """True when ``entry`` fails the gate: active and at or above the fail level."""
        return self.fail_on is not None and entry.active and entry.finding.severity >= self.fail_on

    def failed(self) -> bool:
        return any(self.gating(e) for e in self.entries())

    def hazards(self) -> tuple[str, ...]:
        return tuple(sorted({h for d in self.designs for h in d.hazards}))

    def rule(self, rule_id: str) -> RuleInfo | None:
        return next((r for r in self.rules if r.id == rule_id), None)

    def counts(self) -> dict[str, int]:
        """Active findings by severity, then the other statuses; keys in a fixed order."""
        out = {"error": 0, "warning": 0, "info": 0, "waived": 0, "unchanged": 0, "fixed": 0}
        for e in self.entries():
            if e.active:
                out[e.finding.severity.label] += 1
            else:
                out[e.status] += 1
        return out


def fail_level_label(level: Severity | None) -> str:
    return "never" if level is None else level.label


def parse_fail_level(text: str) -> Severity | None:
    """``error|warning|info|never`` -> Severity or None (never fail)."""
    if text.strip().lower() == "never":
        return None
    return Severity.parse(text)


def plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def summary_line(report: Report) -> str:
    """One line: counts and the verdict, shared by the text and Markdown reporters."""
    c = report.counts()
    n = len(report.designs)
    head = (f"{plural(n, 'design')}: {plural(c['error'], 'error')}, {plural(c['warning'], 'warning')}, "
            f"{c['info']} info")
    extra = [f"{c[k]} {k}" for k in ("waived", "unchanged", "fixed") if c[k]]
    if extra:
        head += " (" + ", ".join(extra) + ")"
    incomplete = not_evaluated_stages(report)
    if incomplete:
        why = "; ".join(f"{stage}: {reason}" for stage, reason in incomplete)
        head += f"; {plural(len(incomplete), 'stage')} not fully evaluated ({why})"
    if report.fail_on is None:
        return f"{head}; fail level never: gate not applied"
    verdict = "FAIL" if report.failed() else "PASS"
    return f"{head}; fail level {fail_level_label(report.fail_on)}: {verdict}"


INCOMPLETE_RULE = "coverage.not-evaluated"


def not_evaluated_stages(report: Report) -> tuple[tuple[str, str], ...]:
    """(stage, first reason) of every active analysis-incomplete finding, in report order, one per stage of each
    design; the stage is prefixed with its file when the report holds several designs."""
    seen: dict[tuple[str, str], tuple[str, str]] = {}
    several = len(report.designs) > 1
    for design in report.designs:
        for e in design.entries:
            f = e.finding
            if f.rule == INCOMPLETE_RULE and e.active:
                stage = e.stage or ", ".join(f.location.refs) or "design"
                reason = str(f.ctx.get("reason", f.message)).split("; ")[0]
                seen.setdefault((design.file, stage), (f"{design.file}:{stage}" if several else stage, reason))
    return tuple(seen.values())

"""Stage views for the reports: each stage's analysis numbers, the headroom limits the rules judge them against and,
when plots are asked for, its frequency responses, gathered into plain report data (report/data.py).

The headroom numbers come from the same functions the headroom rules use (checks/headroom/limits.py), so the bar a
reviewer sees is the comparison the rule made. Nothing here formats; the reporters only format.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from typing import TYPE_CHECKING, Any, Literal

from afecheck.model.loaded import LoadedDesign
from afecheck.report.data import (
    DcErrorPanel,
    ErrorTerm,
    ErrorTotal,
    Headroom,
    InputGain,
    NetBudget,
    NoisePanel,
    NoiseShare,
    StageView,
    Trace,
)

if TYPE_CHECKING:
    from afecheck.analysis.curves import Response, StageCurves
    from afecheck.analysis.dc_error import DcTerm, NetDcError
    from afecheck.analysis.noise import NetNoise
    from afecheck.analysis.results import DesignAnalysis, StageResult
    from afecheck.engine.context import Context

Detail = Literal["none", "stages", "curves"]
BUDGET_STAGES = 40
"""Stages (in order) whose nets get noise and DC-error panels: a page of thousands of channels keeps its other
numbers without a worksheet per channel (``afecheck stages`` gives every net's)."""


def analyse_for_views(loaded: LoadedDesign, detail: Detail) -> tuple[DesignAnalysis | None, dict[str, StageCurves]]:
    """The design analysis (and with ``detail == "curves"`` every stage's curves); (None, {}) when the analysis
    fails, so that the rules meet the failure themselves and report it as they always do."""
    try:
        if detail == "curves":
            from afecheck.analysis.curves import design_curves

            return design_curves(loaded)
        from afecheck.analysis import analyse

        return analyse(loaded), {}
    except Exception:  # noqa: BLE001 - the rules run the analysis again and report what failed
        return None, {}


def stage_views(loaded: LoadedDesign, analysis: DesignAnalysis, curves: Mapping[str, StageCurves] | None = None,
                params: Mapping[str, Mapping[str, float]] | None = None,
                rules_run: Collection[str] = (), budgets: bool = False) -> tuple[StageView, ...]:
    """One StageView per analysed stage; margin limit lines only for the stability rules that ran, at the
    parameters they ran with; with ``budgets``, the noise and DC-error panels of the nets each stage drives."""
    from afecheck.checks.stability import gain_margin, phase_margin
    from afecheck.engine.context import Context

    ctx = Context(loaded)
    ctx.memo("analysis", lambda: analysis)
    pm = _limits(phase_margin.META, params, rules_run, "warn_deg", "error_deg")
    gm = _limits(gain_margin.META, params, rules_run, "warn_db", "error_db")
    panels = _budget_panels(loaded, analysis, BUDGET_STAGES) if budgets else {}
    skipped = {s.opamp for s in analysis.stages[BUDGET_STAGES:]} if budgets else set()
    views = []
    for s in analysis.stages:
        c = (curves or {}).get(s.opamp)
        views.append(StageView(
            opamp=s.opamp, part=s.part, topology=s.topology, refs=s.refs, in_plus=s.in_plus, in_minus=s.in_minus,
            out=s.out, group=s.group, feedback=s.feedback, inputs=tuple(_input(i) for i in s.inputs),
            noise_gain_dc=s.noise_gain_dc, noise_gain_at_crossover=s.noise_gain_at_crossover,
            loop_gain_dc=s.loop_gain_dc, crossover_hz=s.crossover_hz, phase_margin_deg=s.phase_margin_deg,
            gain_margin_db=s.gain_margin_db, loop_gain_at_fmax=s.loop_gain_at_fmax, f_max=s.f_max,
            vout_ac_peak=s.vout_ac_peak, required_slew_rate=s.required_slew_rate,
            output_resistance=s.output_resistance, load_resistance=s.load_resistance,
            load_capacitance=s.load_capacitance, iout_peak=s.iout_peak, rail_minus=s.rail_minus,
            rail_plus=s.rail_plus, phase_margin_limits_deg=pm, gain_margin_limits_db=gm,
            headroom=_headroom(ctx, s),
            loop_gain=_trace(c.loop_gain if c else None), noise_gain=_trace(c.noise_gain if c else None),
            open_loop=_trace(c.open_loop if c else None),
            closed_loop=tuple(t for t in (_trace(r) for r in (c.closed_loop if c else ())) if t is not None),
            band_hz=c.band_hz if c else None, budgets=panels.get(s.opamp, ()),
            budgets_skipped=s.opamp in skipped, estimated=s.estimated, assumed=s.assumed,
            not_evaluated=s.not_evaluated + (c.not_evaluated if c else ()),
        ))
    return tuple(views)


def _limits(meta: Any, params: Mapping[str, Mapping[str, float]] | None, rules_run: Collection[str], warn: str,
            error: str) -> tuple[float, float] | None:
    """(warning, error) thresholds of a rule as configured, or None when the rule did not run."""
    if meta.id not in rules_run:
        return None
    mine = (params or {}).get(meta.id, {})
    return (float(mine.get(warn, meta.param(warn).default)), float(mine.get(error, meta.param(error).default)))


def _input(i: Any) -> InputGain:
    return InputGain(net=i.net, pin=i.pin, kind=i.source.kind, via=i.via, gain=i.gain, ideal_gain=i.ideal_gain,
                     band_gain=i.band_gain, input_resistance=i.input_resistance,
                     loading_error=max(abs(i.loading_error_min), abs(i.loading_error_max)))


def _headroom(ctx: Context, s: StageResult) -> tuple[Headroom, ...]:
    """Input common mode and output, each against the part's limits at the worst-case rails (as the rules judge)."""
    from afecheck.checks.common import part_value, rails_known
    from afecheck.checks.headroom.limits import cm_extremes, output_extremes, swing, worst_rails

    if not rails_known(ctx, s.opamp) or s.feedback != "negative":
        return ()
    low_rail, high_rail = worst_rails(ctx, s)
    out: list[Headroom] = []
    cm = cm_extremes(ctx, s)
    if cm is not None:
        d_lo, _ = part_value(ctx, s.opamp, "input_cm_low")
        d_hi, _ = part_value(ctx, s.opamp, "input_cm_high")
        lim_lo = None if d_lo is None else low_rail + d_lo
        lim_hi = None if d_hi is None else high_rail - d_hi
        out.append(_bar("input common mode", low_rail, high_rail, lim_lo, lim_hi, *cm))
    ext = output_extremes(s)
    if ext is not None:
        sw = swing(ctx, s)
        out.append(_bar("output", low_rail, high_rail, sw.low_limit if sw else None, sw.high_limit if sw else None,
                        *ext))
    return tuple(out)


def _bar(label: str, rail_low: float, rail_high: float, lim_lo: float | None, lim_hi: float | None, lo: float,
         hi: float) -> Headroom:
    return Headroom(label=label, rail_low=float(rail_low), rail_high=float(rail_high), limit_low=lim_lo,
                    limit_high=lim_hi, signal_low=float(lo), signal_high=float(hi),
                    margin_low=None if lim_lo is None else float(lo - lim_lo),
                    margin_high=None if lim_hi is None else float(lim_hi - hi))


def _trace(r: Response | None) -> Trace | None:
    if r is None:
        return None
    return Trace(label=r.label, freqs_hz=r.freqs_hz, magnitude_db=r.magnitude_db, phase_deg=r.phase_deg)


def _budget_panels(loaded: LoadedDesign, analysis: DesignAnalysis, limit: int) -> dict[str, tuple[NetBudget, ...]]:
    """Noise and DC error at the worksheet's nets, each net under the stage that drives it: its own output, or
    for a loaded or budgeted net after the last stage, the last stage of the same channel; for the first
    ``limit`` stages only."""
    from afecheck.analysis.channel import find_channels
    from afecheck.analysis.dc_error import analyse_dc_error
    from afecheck.analysis.noise import analyse_noise
    from afecheck.analysis.worksheet import worksheet_nets

    nets = worksheet_nets(loaded, analysis)
    if not nets:
        return {}
    channels = find_channels(loaded)
    owner: dict[str, str] = {}
    for s in analysis.stages:
        owner.setdefault(s.out, s.opamp)
    last_in_channel: dict[int, str] = {}
    for s in analysis.stages:
        if s.out in channels:
            last_in_channel[id(channels[s.out])] = s.opamp
    for net in nets:
        if net not in owner and net in channels and id(channels[net]) in last_in_channel:
            owner[net] = last_in_channel[id(channels[net])]
    first = {s.opamp for s in analysis.stages[:limit]}
    wanted = [n for n in nets if owner.get(n) in first]
    noise, dc = analyse_noise(loaded, wanted), analyse_dc_error(loaded, wanted)
    budgets = loaded.design.budgets
    out: dict[str, list[NetBudget]] = {}
    for net in wanted:
        b = budgets.get(net)
        reasons = tuple(f"{what}: {why[net]}" for what, why in (("noise", noise.not_evaluated),
                                                                ("DC error", dc.not_evaluated)) if net in why)
        nn, ee = noise.nets.get(net), dc.nets.get(net)
        out.setdefault(owner[net], []).append(NetBudget(
            net=net, noise=None if nn is None else _noise_panel(nn, b.noise if b else None),
            dc_error=None if ee is None else _dc_panel(ee, b), not_evaluated=reasons))
    return {k: tuple(v) for k, v in out.items()}


def _used(value: float | None, budget: float | None) -> float | None:
    return None if value is None or not budget else float(value / budget)


def _noise_panel(n: NetNoise, budget: float | None) -> NoisePanel:
    return NoisePanel(
        net=n.net, band_hz=n.band, temperature_k=n.temperature_k, freqs_hz=n.freqs, output_density=n.output_density,
        output_rms=n.output_rms, signal=n.signal, input_rms=n.input_rms, budget=budget,
        budget_used=_used(n.output_rms, budget),
        contributors=tuple(NoiseShare(name=c.name, kind=c.kind, output_rms=c.output_rms, share=c.share,
                                      density=c.output_density) for c in n.contributors))


_LIMIT_UNITS = (("tolerance", "%"), ("tempco", "%"), ("offset voltage", "V"), ("offset drift", "V"),
                ("current", "A"), ("open-loop gain", "V/V"), ("cold-junction compensation", "V"),
                ("cold junction, uncompensated", "V"))


def _term(t: DcTerm) -> ErrorTerm:
    unit = next((u for suffix, u in _LIMIT_UNITS if t.name.endswith(suffix)), "")
    return ErrorTerm(name=t.name, kind=t.kind, limit=t.limit, limit_unit=unit, error_low=t.error_low,
                     error_high=t.error_high, offset=t.offset, gain_error=t.gain_error, counted=t.kind != "sensor")


def _dc_panel(e: NetDcError, budget: Any) -> DcErrorPanel:
    def get(key: str) -> float | None:
        return None if budget is None else getattr(budget, key)

    totals = [ErrorTotal("offset", "V", e.offset_worst, e.offset_rss, get("offset"),
                         _used(e.offset_worst, get("offset")))]
    if e.gain_error_worst is not None:
        totals.append(ErrorTotal("gain error", "%", e.gain_error_worst, e.gain_error_rss or 0.0,
                                 get("gain_accuracy"), _used(e.gain_error_worst, get("gain_accuracy"))))
    if e.temperature_range is not None:
        totals.append(ErrorTotal("drift", "V", e.drift_worst, e.drift_rss, get("drift"),
                                 _used(e.drift_worst, get("drift"))))
    return DcErrorPanel(net=e.net, ideal_low=e.ideal_low, ideal_high=e.ideal_high,
                        terms=tuple(_term(t) for t in e.terms), totals=tuple(totals), corner_low=e.corner_low,
                        corner_high=e.corner_high, drift_terms=tuple(_term(t) for t in e.drift_terms),
                        temperature_range=e.temperature_range)

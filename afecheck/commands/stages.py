"""``afecheck stages FILE``: every op-amp stage with the numbers the rules stand on, as a table or as JSON."""

from __future__ import annotations

import argparse
import dataclasses
import json
import math
from typing import TYPE_CHECKING, TextIO

from afecheck.commands.netlist_options import add_netlist_arguments, netlist_options

if TYPE_CHECKING:
    from afecheck.analysis.curves import StageCurves
    from afecheck.analysis.results import DesignAnalysis, StageInput, StageResult

HELP = "print every op-amp stage with the numbers the rules stand on"
JSON_SCHEMA_VERSION = 1


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="design file (YAML, JSON or SPICE netlist)")
    p.add_argument("--json", action="store_true", help="print every field of every stage as JSON")
    p.add_argument("--curves", action="store_true",
                   help="with the JSON (implies --json), add each stage's frequency responses: loop gain, noise gain,"
                   " open-loop gain and the closed-loop response from each signal input (dB and degrees)")
    p.add_argument("--intent", help="design-intent file (signals, loads, budgets keyed by net)")
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file")
    add_netlist_arguments(p)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.analysis import analyse
    from afecheck.analysis.worksheet import build_worksheet
    from afecheck.model.load import load_design
    from afecheck.report.worksheet import render_worksheet

    loaded = load_design(args.file, intent=args.intent, libraries=tuple(args.parts), **netlist_options(args))
    for note in loaded.notes:
        print(f"note: {note}", file=stderr)
    if args.curves:
        from afecheck.analysis.curves import design_curves

        analysis, curves = design_curves(loaded)
        stdout.write(render_json(loaded.design.name, loaded.file, analysis, curves))
        return 0
    analysis = analyse(loaded)
    worksheet = build_worksheet(loaded, analysis)
    if args.json:
        stdout.write(render_json(loaded.design.name, loaded.file, analysis, worksheet=worksheet))
    else:
        stdout.write(render_text(loaded.design.name, analysis) + render_worksheet(worksheet))
    return 0


def _clean(value: object) -> object:
    """Plain JSON values: non-finite floats become null, tuples lists, mappings dicts."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def render_json(name: str, file: str, analysis: DesignAnalysis, curves: dict[str, StageCurves] | None = None,
                worksheet: object = None) -> str:
    """The whole analysis as JSON: every stage field, every net signal, what was not evaluated; with ``curves``,
    each stage also carries its frequency responses under ``curves``; with ``worksheet``, the budgets worksheet
    (noise, DC error and drift with every contributor, ADC drive, supply limits)."""
    stages = [dataclasses.asdict(s) for s in analysis.stages]
    if curves is not None:
        for s in stages:
            c = curves.get(s["opamp"])
            s["curves"] = None if c is None else {k: v for k, v in dataclasses.asdict(c).items() if k != "opamp"}
    data = {
        "schema_version": JSON_SCHEMA_VERSION,
        "design": name,
        "file": file,
        "stages": stages,
        "nets": {k: dataclasses.asdict(v) for k, v in analysis.nets.items()},
        "not_evaluated": [{"refs": list(refs), "reason": reason} for refs, reason in analysis.not_evaluated],
    }
    if worksheet is not None:
        data["worksheet"] = dataclasses.asdict(worksheet)  # type: ignore[call-overload]
    return json.dumps(_clean(data), indent=2, sort_keys=False) + "\n"


def _num(value: float | None, fmt: str = "{:.4g}") -> str:
    return "-" if value is None or not math.isfinite(value) else fmt.format(value)


def _span(lo: float | None, hi: float | None) -> str:
    if lo is None or hi is None:
        return "-"
    return f"{lo:.3f}..{hi:.3f}"


def _main_input(stage: StageResult) -> StageInput | None:
    """The input with the largest gain among the signal (non-rail) inputs."""
    signals = [i for i in stage.inputs if i.source.kind not in ("rail", "vsource")]
    return max(signals, key=lambda i: abs(i.gain), default=None)


def _gain(main: StageInput | None) -> str:
    """DC gain of the main input; for an AC-coupled input (no DC gain) its in-band gain, marked ``ac``."""
    if main is None:
        return "-"
    if main.gain == 0.0 and main.band_gain is not None:
        return f"{main.band_gain:.4g} ac"
    return _num(main.gain)


def render_text(name: str, analysis: DesignAnalysis) -> str:
    """One row per stage, then each stage's inputs, then what could not be evaluated."""
    from afecheck.model.units import format_si

    head = ("op-amp", "topology", "gain", "NG", "PM deg", "crossover", "Vcm V", "Vout V", "load err", "group")
    rows = []
    for s in analysis.stages:
        main = _main_input(s)
        err = None if main is None else max(abs(main.loading_error_min), abs(main.loading_error_max))
        fc = "-" if s.crossover_hz is None else format_si(s.crossover_hz, "Hz")
        pm = _num(s.phase_margin_deg, "{:.1f}") + ("~" if s.estimated and s.phase_margin_deg is not None else "")
        rows.append((
            s.opamp, s.topology, _gain(main), _num(s.noise_gain_dc), pm, fc,
            _span(s.vcm_min, s.vcm_max), _span(s.vout_min, s.vout_max),
            "-" if err is None else f"{100 * err:.3g}%", ",".join(s.group) if len(s.group) > 1 else "",
        ))
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(head)]
    lines = [f"{name}: {len(analysis.stages)} op-amp stage(s)", ""]
    lines.append("  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)).rstrip())
    for r in rows:
        lines.append("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    lines.append("")
    for s in analysis.stages:
        lines.append(f"{s.opamp} ({s.part}, {s.topology}): in+ {s.in_plus}, in- {s.in_minus}, out {s.out}; "
                     f"rails {s.rail_minus:g}/{s.rail_plus:g} V; feedback {s.feedback}")
        for i in s.inputs:
            src = i.source
            rs = format_si(src.r_min, "Ω") if src.r_min == src.r_max else (
                f"{format_si(src.r_min, 'Ω')}..{format_si(src.r_max, 'Ω')}")
            unit = {"current": "A", "charge": "C"}.get(src.kind, "V")
            lines.append(f"  {i.pin} <- {i.net} ({src.kind}, {src.v_min:.4g}..{src.v_max:.4g} {unit}, Rs {rs}): "
                         f"gain {i.gain:.5g} {i.gain_unit} (ideal {i.ideal_gain:.5g}"
                         + (f", in band {i.band_gain:.5g}" if i.band_gain is not None else "")
                         + f"), Rin {format_si(i.input_resistance, 'Ω')}, "
                         f"loading error {100 * i.loading_error_min:.3g}..{100 * i.loading_error_max:.3g}%")
        extra = []
        if s.output_resistance is not None:
            extra.append(f"Rout {format_si(s.output_resistance, 'Ω')}")
        if s.load_resistance is not None:
            extra.append(f"load {format_si(s.load_resistance, 'Ω')}")
        extra.append(f"CL {format_si(s.load_capacitance, 'F')}")
        if s.iout_peak is not None:
            extra.append(f"Iout {format_si(s.iout_peak, 'A')}")
        if s.gain_margin_db is not None:
            extra.append(f"GM {s.gain_margin_db:.1f} dB")
        if s.loop_gain_at_fmax is not None:
            extra.append(f"|T(fmax)| {s.loop_gain_at_fmax:.4g}")
        if s.required_slew_rate > 0:
            extra.append(f"SR needed {s.required_slew_rate * 1e-6:.3g} V/µs")
        lines.append("  " + ", ".join(extra))
        if s.assumed:
            lines.append(f"  assumed: {', '.join(s.assumed)}" + (" (phase margin estimated)" if s.estimated else ""))
        for reason in s.not_evaluated:
            lines.append(f"  not evaluated: {reason}")
    for refs, reason in analysis.not_evaluated:
        if len(refs) > 1 or not any(refs == (s.opamp,) for s in analysis.stages):
            lines.append(f"not evaluated ({', '.join(refs)}): {reason}")
    return "\n".join(lines).rstrip() + "\n"

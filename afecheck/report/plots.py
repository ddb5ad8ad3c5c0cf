"""The HTML page's plots as inline SVG drawn with matplotlib: loop gain and phase, closed-loop response, headroom,
noise density with its contributors.

Drawing only: every curve and number comes from the stage view. matplotlib is imported on first use (the check
path never loads it). Output is deterministic: a fixed hash salt per plot, no date, text kept as text, and every
SVG id prefixed with the plot's own id so that several SVGs live in one page without clashing ids.
"""

from __future__ import annotations

import io
import re
from typing import Any

from afecheck.report.data import Headroom, NoisePanel, StageView, Trace

# our own palette: dark enough for 4.5:1 contrast on white; every series also differs in line style or marker
INK = "#1a1a1a"
LOOP = "#0b5d7a"
PHASE = "#8c3b00"
LIMIT_WARN = "#7a5c00"
LIMIT_ERROR = "#a1141b"
GRID = "#c8c8c8"
BAND = "#dbe9f0"
FORBIDDEN = "#f1d6d6"
SIGNAL = "#0b5d7a"
BEYOND = "#a1141b"
SERIES = (("#0b5d7a", "-"), ("#5b2a86", "--"), ("#2f6b1f", "-."), ("#8c3b00", ":"))
NOISE_TOP = 5  # contributors drawn one by one; the rest are in the total and the caption's list

_ID = re.compile(r'\bid="([^"]+)"')


def _pyplot() -> Any:
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return plt


def _style(salt: str) -> dict[str, Any]:
    return {
        "svg.hashsalt": salt, "svg.fonttype": "none", "text.parse_math": False, "font.size": 9.0,
        "font.family": "sans-serif", "axes.edgecolor": INK, "axes.labelcolor": INK, "xtick.color": INK,
        "ytick.color": INK, "text.color": INK, "axes.titlesize": 9.0, "legend.fontsize": 8.0,
        "legend.framealpha": 0.95, "path.simplify": False,
    }


def _svg(fig: Any, plot_id: str) -> str:
    """The figure as an ``<svg>`` element with ids prefixed by ``plot_id`` and matplotlib's global style dropped."""
    plt = _pyplot()
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    plt.close(fig)
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r"<style[^>]*>.*?</style>", "", text, flags=re.S)
    text = re.sub(r"<metadata>.*?</metadata>", "", text, flags=re.S)
    ids = set(_ID.findall(text))
    text = _ID.sub(lambda m: f'id="{plot_id}-{m.group(1)}"', text)
    text = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{plot_id}-{m.group(1)})" if m.group(1) in ids else m.group(0),
                  text)
    text = re.sub(r'xlink:href="#([^"]+)"',
                  lambda m: f'xlink:href="#{plot_id}-{m.group(1)}"' if m.group(1) in ids else m.group(0), text)
    text = re.sub(r'<svg ([^>]*?)width="[^"]*" height="[^"]*"', r'<svg \1', text, count=1)
    text = re.sub(r'\s+xmlns(:xlink)?="[^"]*"', "", text)  # HTML gives inline SVG its namespaces
    return text.replace("<svg ", f'<svg role="img" aria-labelledby="{plot_id}-caption" class="plot" ', 1).strip()


def _log_axis(ax: Any) -> None:
    """Decade ticks labelled with SI prefixes (10 Hz, 1 kHz), unlabelled minor ticks, grid and legend."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullLocator

    from afecheck.model.units import format_si

    ax.xaxis.set_major_locator(LogLocator(base=10.0, numticks=9))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda x, _pos: format_si(x, "Hz", 1)))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.grid(True, which="major", color=GRID, lw=0.6)
    ax.legend(loc="lower left")


def _finite(trace: Trace, values: tuple[float, ...]) -> tuple[list[float], list[float]]:
    pairs = [(f, v) for f, v in zip(trace.freqs_hz, values, strict=True) if v == v and abs(v) != float("inf")]
    return [p[0] for p in pairs], [p[1] for p in pairs]


def loop_plot(view: StageView, plot_id: str) -> str | None:
    """|T| in dB and its phase against frequency, crossover and phase margin marked, limit lines drawn."""
    t = view.loop_gain
    if t is None:
        return None
    plt = _pyplot()
    with plt.rc_context(_style(plot_id)):
        fig, (ax_m, ax_p) = plt.subplots(2, 1, sharex=True, figsize=(7.0, 4.6))
        fig.subplots_adjust(left=0.1, right=0.98, top=0.94, bottom=0.1, hspace=0.08)
        f, m = _finite(t, t.magnitude_db)
        ax_m.semilogx(f, m, color=LOOP, lw=1.6, label="|T| loop gain")
        ax_m.axhline(0.0, color=INK, lw=0.8, ls="-")
        ax_m.set_ylabel("|T| (dB)")
        f, p = _finite(t, t.phase_deg)
        ax_p.semilogx(f, p, color=PHASE, lw=1.6, ls="--", label="phase of T")
        ax_p.axhline(-180.0, color=INK, lw=0.8)
        ax_p.set_ylabel("phase (°)")
        ax_p.set_xlabel("frequency (Hz)")
        if view.phase_margin_limits_deg is not None:
            warn, err = view.phase_margin_limits_deg
            ax_p.axhline(-180.0 + warn, color=LIMIT_WARN, lw=1.0, ls=(0, (4, 2)), label=f"PM warning limit {warn:g}°")
            ax_p.axhline(-180.0 + err, color=LIMIT_ERROR, lw=1.0, ls=(0, (1, 1.5)), label=f"PM error limit {err:g}°")
        if view.gain_margin_limits_db is not None and view.gain_margin_db is not None:
            warn, err = view.gain_margin_limits_db
            ax_m.axhline(-warn, color=LIMIT_WARN, lw=1.0, ls=(0, (4, 2)), label=f"GM warning limit {warn:g} dB")
        fc, pm = view.crossover_hz, view.phase_margin_deg
        if fc is not None:
            for ax in (ax_m, ax_p):
                ax.axvline(fc, color=INK, lw=0.8, ls=":")
            ax_m.plot([fc], [0.0], marker="D", ms=6, color=INK, ls="none", label=f"crossover {_hz(fc)}")
            if pm is not None:
                ax_p.plot([fc], [pm - 180.0], marker="D", ms=6, color=INK, ls="none")
                ax_p.annotate("", xy=(fc, pm - 180.0), xytext=(fc, -180.0),
                              arrowprops={"arrowstyle": "<->", "color": INK, "lw": 1.0})
                ax_p.annotate(f"PM {pm:.1f}°", xy=(fc, -180.0 + pm / 2.0), xytext=(6, 0),
                              textcoords="offset points", va="center", color=INK)
        for ax in (ax_m, ax_p):
            _log_axis(ax)
        ax_m.set_title(f"Loop gain of {view.opamp}")
        return _svg(fig, plot_id)


def closed_loop_plot(view: StageView, plot_id: str) -> str | None:
    """|H| in dB from each signal input to the stage output, the signal band shaded."""
    if not view.closed_loop:
        return None
    plt = _pyplot()
    with plt.rc_context(_style(plot_id)):
        fig, ax = plt.subplots(figsize=(7.0, 2.9))
        fig.subplots_adjust(left=0.1, right=0.98, top=0.9, bottom=0.16)
        if view.band_hz is not None:
            lo, hi = view.band_hz
            ax.axvspan(lo, hi, color=BAND, lw=0, label=f"signal band {_hz(lo)} to {_hz(hi)}")
            ax.axvline(hi, color=INK, lw=0.8, ls=":")
        for k, tr in enumerate(view.closed_loop):
            color, style = SERIES[k % len(SERIES)]
            f, m = _finite(tr, tr.magnitude_db)
            ax.semilogx(f, m, color=color, ls=style, lw=1.6, label=f"from {tr.label}")
        _log_axis(ax)
        ax.set_xlabel("frequency (Hz)")
        ax.set_ylabel(f"|{view.out} / input| (dB)")
        ax.set_title(f"Closed-loop response to {view.out}")
        return _svg(fig, plot_id)


def headroom_plot(view: StageView, plot_id: str) -> str | None:
    """One bar per headroom row: rails, the part's limits with the zones beyond them hatched, the signal range."""
    if not view.headroom:
        return None
    plt = _pyplot()
    rows = list(reversed(view.headroom))
    with plt.rc_context(_style(plot_id)):
        height = 0.9 + 0.75 * len(rows)
        fig, ax = plt.subplots(figsize=(7.0, height))
        fig.subplots_adjust(left=0.21, right=0.98, top=1 - 0.3 / height, bottom=0.5 / height)
        values = [v for h in rows for v in (h.rail_low, h.rail_high, h.limit_low, h.limit_high, h.signal_low,
                                             h.signal_high) if v is not None]
        span = (max(values) - min(values)) or 1.0
        left, right = min(values) - 0.04 * span, max(values) + 0.04 * span
        for y, h in enumerate(rows):
            _headroom_row(ax, y, h, left, right)
        ax.set_yticks(range(len(rows)), [h.label for h in rows])
        ax.set_xlim(left, right)
        ax.set_ylim(-0.6, len(rows) - 0.4)
        ax.set_xlabel("volts")
        ax.grid(True, axis="x", color=GRID, lw=0.6)
        ax.set_title(f"Headroom of {view.opamp}: rails, limits (hatched: beyond) and the signal range")
        return _svg(fig, plot_id)


def _headroom_row(ax: Any, y: int, h: Headroom, left: float, right: float) -> None:
    ax.barh(y, h.rail_high - h.rail_low, left=h.rail_low, height=0.5, color="white", edgecolor=INK, lw=0.8)
    low = h.limit_low if h.limit_low is not None else left
    high = h.limit_high if h.limit_high is not None else right
    if h.limit_low is not None:
        ax.barh(y, h.limit_low - left, left=left, height=0.5, color=FORBIDDEN, hatch="////", edgecolor=LIMIT_ERROR,
                lw=0)
        ax.plot([h.limit_low] * 2, [y - 0.3, y + 0.3], color=LIMIT_ERROR, lw=1.4)
    if h.limit_high is not None:
        ax.barh(y, right - h.limit_high, left=h.limit_high, height=0.5, color=FORBIDDEN, hatch="\\\\\\\\",
                edgecolor=LIMIT_ERROR, lw=0)
        ax.plot([h.limit_high] * 2, [y - 0.3, y + 0.3], color=LIMIT_ERROR, lw=1.4)
    ax.barh(y, max(h.signal_high - h.signal_low, 1e-9 * (right - left)), left=h.signal_low, height=0.22,
            color=SIGNAL, lw=0)
    ax.plot([h.signal_low, h.signal_high], [y, y], ls="none", marker="|", ms=14, mew=2, color=SIGNAL)
    for value, bad in ((h.signal_low, h.signal_low < low), (h.signal_high, h.signal_high > high)):
        if bad:
            ax.plot([value], [y], marker="X", ms=10, color=BEYOND, ls="none")
            ax.annotate("beyond", xy=(value, y), xytext=(0, 9), textcoords="offset points", ha="center",
                        color=BEYOND, fontweight="bold")
    for x, align, shift in ((h.rail_low, "left", 2), (h.rail_high, "right", -2)):
        ax.annotate(f"rail {x:.3g} V", xy=(x, y - 0.25), xytext=(shift, -9), textcoords="offset points", ha=align,
                    fontsize=7.0)


def noise_plot(panel: NoisePanel, plot_id: str) -> str | None:
    """Output noise density (V/√Hz) at a net against frequency, the largest contributors beside the total, the band
    shaded."""
    points = [(f, d) for f, d in zip(panel.freqs_hz, panel.output_density, strict=True) if f > 0 and d > 0]
    if len(points) < 2:
        return None
    plt = _pyplot()
    with plt.rc_context(_style(plot_id)):
        fig, ax = plt.subplots(figsize=(7.0, 3.2))
        fig.subplots_adjust(left=0.13, right=0.6, top=0.9, bottom=0.15)
        lo, hi = panel.band_hz
        ax.axvspan(lo, hi, color=BAND, lw=0, label=f"band {_hz(lo)} to {_hz(hi)}")
        ax.loglog([p[0] for p in points], [p[1] for p in points], color=INK, lw=2.0,
                  label=f"total, {_volts(panel.output_rms)} rms")
        for k, c in enumerate(panel.contributors[:NOISE_TOP]):
            pts = [(f, d) for f, d in zip(panel.freqs_hz, c.density, strict=True) if f > 0 and d > 0]
            if len(pts) < 2:
                continue
            color, style = SERIES[k % len(SERIES)]
            ax.loglog([p[0] for p in pts], [p[1] for p in pts], color=color, ls=style, lw=1.3,
                      marker=_MARKERS[k % len(_MARKERS)], markevery=max(1, len(pts) // 6), ms=4,
                      label=f"{c.name} ({100 * c.share:.2g} %)")
        _log_axis(ax)
        _density_axis(ax)
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0, fontsize=7.0)
        ax.set_xlabel("frequency (Hz)")
        ax.set_ylabel("density at the net (V/√Hz)")
        ax.set_title(f"Output noise density at {panel.net}")
        return _svg(fig, plot_id)


_MARKERS = ("o", "s", "^", "v", "D")


def _density_axis(ax: Any) -> None:
    """Log density axis labelled in SI volts per root hertz at 1, 2 and 5 of each decade, no minor labels."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullLocator

    from afecheck.model.units import format_si

    ax.yaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0), numticks=12))
    ax.yaxis.set_major_formatter(FuncFormatter(lambda y, _pos: format_si(y, "V", 1)))
    ax.yaxis.set_minor_locator(NullLocator())


def _volts(value: float) -> str:
    from afecheck.model.units import format_si

    return format_si(value, "V", 3)


def _hz(value: float) -> str:
    from afecheck.model.units import format_si

    return format_si(value, "Hz", 3)

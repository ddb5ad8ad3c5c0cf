"""Run the hand-written reference decks of tests/reference/cases through ngspice and read back what they say.

A case is ``<name>.yaml`` (the afecheck design, written by hand) beside ``<name>.cir`` (the same circuit as a SPICE
deck, written by hand with the macromodel of ``opamp.lib``). Nothing here calls afecheck's netlist or exporter.
Lines starting ``*@`` in the deck tell the test what to compare:

``*@ input U1 IN VS [scale]``  stage U1's input on net IN is driven by source VS; afecheck's gain from the Thevenin
                              voltage is tf(v(out), VS)/scale and its loading error 1 - tf(v(IN), VS)/scale
                              (scale: Thevenin volts per source volt, e.g. R2/(R1+R2) for a divider off a rail)
``*@ rs IN 5000``             the declared source resistance in front of net IN (for the input resistance)
``*@ corner VS 0 1``          element VS takes each listed value (all combinations with the other corners)
                              and, at each of those, every op-amp's offset voltage and its bias and offset
                              currents take both signs, all combinations (see :func:`sign_corners`)
``*@ nets IN OUT``            nets whose DC range (min and max over the corners) is compared
``*@ loop U1 [tol_deg]``      compare U1's crossover, phase margin and gain margin with the loop opened in ngspice
``*@ dctol 1e-4``             absolute DC tolerance in volts for this case (the deck says why beside it)
``*@ iout U1 XU1 OUT 50``      U1's peak DC output current: (v(xu1.o) - v(OUT))/50 ohm at every corner, the current
                              through the macromodel's output resistance

The loading error is also read at every corner (a thermistor divider's Thevenin resistance moves with them).
"""

from __future__ import annotations

import itertools
import math
import shutil
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from ngspice_harness import read_raw, run_ngspice

HERE = Path(__file__).parent
CASES = HERE / "cases"
LIB = HERE / "opamp.lib"


@dataclass
class Directives:
    """What a deck asks to be compared."""

    inputs: list[tuple[str, str, str, float]] = field(default_factory=list)
    rs: dict[str, float] = field(default_factory=dict)
    corners: list[tuple[str, list[float]]] = field(default_factory=list)
    nets: list[str] = field(default_factory=list)
    loops: list[tuple[str, float]] = field(default_factory=list)
    dc_tol: float = 1e-9
    iout: list[tuple[str, str, str, float]] = field(default_factory=list)


def directives(deck: str) -> Directives:
    """The ``*@`` lines of a deck."""
    d = Directives()
    for line in deck.splitlines():
        if not line.startswith("*@"):
            continue
        word, *args = line[2:].split()
        if word == "input":
            d.inputs.append((args[0], args[1], args[2], float(args[3]) if len(args) > 3 else 1.0))
        elif word == "rs":
            d.rs[args[0]] = float(args[1])
        elif word == "corner":
            d.corners.append((args[0], [float(a) for a in args[1:]]))
        elif word == "nets":
            d.nets.extend(args)
        elif word == "iout":
            d.iout.append((args[0], args[1], args[2], float(args[3])))
        elif word == "dctol":
            d.dc_tol = float(args[0])
        elif word == "loop":
            d.loops.append((args[0], float(args[1]) if len(args) > 1 else 0.01))
        else:
            raise ValueError(f"unknown directive {word!r}")
    return d


def _circuit(deck: str) -> str:
    """The deck without its ``.end`` line (a control block goes before it)."""
    lines = [ln for ln in deck.splitlines() if ln.strip().lower() != ".end"]
    return "\n".join(lines) + "\n"


def _run(deck: str, work: Path) -> tuple[str, Path]:
    work.mkdir(parents=True, exist_ok=True)
    shutil.copy(LIB, work / "opamp.lib")
    return run_ngspice(deck, work)


def _values(block: str) -> dict[str, float]:
    out = {}
    for line in block.splitlines():
        if "=" in line:
            name, _, value = line.partition("=")
            try:
                out[name.strip().lower()] = float(value)
            except ValueError:
                continue
    return out


def _alter(element: str, value: float) -> str:
    kind = element[0].lower()
    return f"alter {element} dc = {value!r}" if kind in "vi" else f"alter {element} = {value!r}"


@dataclass(frozen=True)
class DcAnswer:
    """tf results per (input net, output net) and DC ranges per net over the corners."""

    tf: dict[tuple[str, str], tuple[float, float]]
    ranges: dict[str, tuple[float, float]]
    corners: list[dict[str, float]]
    at_net: dict[str, list[float]]


def _instances(deck: str) -> dict[str, dict[str, float]]:
    """Each ``afe_opamp`` instance of a deck (continuation lines joined) and its ib, ios and vos parameters."""
    joined: list[str] = []
    for line in deck.splitlines():
        if line.startswith("+") and joined:
            joined[-1] += " " + line[1:]
        else:
            joined.append(line)
    out = {}
    for line in joined:
        tokens = line.split()
        if tokens and tokens[0].upper().startswith("X") and "afe_opamp" in tokens:
            params = dict(t.lower().split("=", 1) for t in tokens if "=" in t)
            out[tokens[0].lower()] = {k: float(params.get(k, "0")) for k in ("ib", "ios", "vos")}
    return out


def sign_corners(deck: str) -> list[list[list[str]]]:
    """Corner axes for the op-amps' ± quantities: per instance, Vos at both signs and (Ib, Ios) at all four sign
    pairs, each option the ``alter`` lines that set it on the subcircuit's own sources (Ib+ = Ib + Ios/2 into
    in+, Ib- = Ib - Ios/2 into in-, as in opamp.lib). Quantities that are zero add no axis."""
    axes: list[list[list[str]]] = []
    for inst, p in sorted(_instances(deck).items()):
        if p["vos"]:
            axes.append([[f"alter v.{inst}.vos dc = {sv * p['vos']!r}"] for sv in (1.0, -1.0)])
        if p["ib"] or p["ios"]:
            pairs = sorted({(sb * p["ib"], so * p["ios"]) for sb in (1.0, -1.0) for so in (1.0, -1.0)})
            axes.append([[f"alter i.{inst}.ibp dc = {ib + ios / 2!r}", f"alter i.{inst}.ibm dc = {ib - ios / 2!r}"]
                         for ib, ios in pairs])
    return axes


def dc_answers(deck: str, outputs: dict[str, str], work: Path) -> DcAnswer:
    """Transfer functions (at the deck's nominal values) then an operating point at every corner.

    ``outputs`` maps an op-amp refdes to its output net. tf gives the DC transfer ratio and the input resistance
    seen by the source. The DC ranges are the extremes ngspice finds over the deck's corners and, at each, every
    sign combination of the op-amps' offset voltages and bias and offset currents (each is a ± quantity).
    """
    d = directives(deck)
    ctl = ["set numdgt=15"]
    jobs = []
    for opamp, net, src, _scale in d.inputs:
        for target in (outputs[opamp], net):
            jobs.append((opamp, net, target, src))
            ctl += [f"echo @@tf {len(jobs) - 1}", f"tf v({target}) {src}", "print all", "destroy all"]
    names = sorted(set(d.nets) | {n for _, x, out, _ in d.iout for n in (f"{x}.o", out)})
    combos = list(itertools.product(*[v for _, v in d.corners])) or [()]
    signs = list(itertools.product(*sign_corners(deck))) if names else []
    k = 0
    for combo in combos:
        ctl += [_alter(el, v) for (el, _), v in zip(d.corners, combo, strict=True)]
        for option in signs:
            ctl += [line for alters in option for line in alters]
            # each analysis leaves a plot behind and ngspice slows with their number: drop them once printed
            ctl += ["op", f"echo @@corner {k}", "print " + " ".join(f"v({n})" for n in names), "destroy all"]
            k += 1
        for _opamp, net, src, _scale in d.inputs:
            ctl += [f"echo @@ctf {net} {src}", f"tf v({net}) {src}", "print all", "destroy all"]
    text, _ = _run(_circuit(deck) + ".control\n" + "\n".join(ctl) + "\nquit\n.endc\n.end\n", work)
    blocks = text.split("@@")
    tf: dict[tuple[str, str], tuple[float, float]] = {}
    corners: list[dict[str, float]] = []
    at_net: dict[str, list[float]] = {}
    for block in blocks[1:]:
        head, _, rest = block.partition("\n")
        vals = _values(rest)
        if head.startswith("ctf"):
            at_net.setdefault(head.split()[1], []).append(vals["transfer_function"])
        elif head.startswith("tf"):
            _opamp, net, target, src = jobs[int(head.split()[1])]
            tf[(net, target)] = (vals["transfer_function"], vals[f"{src.lower()}#input_impedance"])
        else:
            corners.append({n: vals[f"v({n.lower()})"] for n in names})
    ranges = {n: (min(c[n] for c in corners), max(c[n] for c in corners)) for n in names}
    return DcAnswer(tf, ranges, corners, at_net)


def open_loop_deck(deck: str, opamp: str) -> str:
    """The deck with op-amp ``opamp``'s instance line switched to ``afe_opamp_open`` and a 1 V AC test source."""
    out = []
    found = False
    for line in _circuit(deck).splitlines():
        tokens = line.split()
        if tokens and tokens[0].upper() == f"X{opamp.upper()}" and "afe_opamp" in tokens:
            i = tokens.index("afe_opamp")
            tokens[i:i + 1] = ["brk_drv", "brk_ret", "afe_opamp_open"]
            line = " ".join(tokens)
            found = True
        out.append(line)
    if not found:
        raise ValueError(f"no instance line X{opamp} ... afe_opamp in the deck")
    out.append("Vbrk brk_drv 0 dc 0 ac 1")
    return "\n".join(out) + "\n"


@dataclass(frozen=True)
class LoopAnswer:
    """Worst crossing of |T| through 1 (frequency, phase margin) and the gain margin, as ngspice's sweep gives them."""

    crossover_hz: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None


def loop_answer(deck: str, opamp: str, work: Path, per_decade: int = 200) -> LoopAnswer:
    """Sweep T = -v(ret)/v(drv) from 1 mHz to 10 GHz and read crossover, phase margin and gain margin from it.

    Interpolated linearly in log f between samples 1/per_decade of a decade apart; REFERENCE-TOOLS measured a
    0.02° error at 20 points a decade, falling as the square of the spacing, so 200 a decade keeps it near
    0.0002°, far below the 0.01° compared.
    """
    body = open_loop_deck(deck, opamp)
    ctl = ["set filetype=binary", f"ac dec {per_decade} 1e-3 1e10", "write loop.raw v(brk_ret)"]
    _, w = _run(body + ".control\n" + "\n".join(ctl) + "\nquit\n.endc\n.end\n", work)
    raw = read_raw(w / "loop.raw")
    f = raw["frequency"].real
    t = -raw["v(brk_ret)"]
    mag = np.abs(t)
    phase = np.degrees(np.unwrap(np.angle(t)))
    phase -= 360.0 * round(phase[0] / 360.0)
    lf = np.log(f)
    crossings = []
    for i in np.nonzero((mag[:-1] > 1.0) & (mag[1:] <= 1.0))[0]:
        x = (0.0 - math.log(mag[i])) / (math.log(mag[i + 1]) - math.log(mag[i]))
        fc = math.exp(lf[i] + x * (lf[i + 1] - lf[i]))
        crossings.append((180.0 + phase[i] + x * (phase[i + 1] - phase[i]), fc))
    gm = None
    # gain margin at the first fall of the phase through -180° (where T is real and negative)
    below = np.nonzero((phase[:-1] > -180.0) & (phase[1:] <= -180.0))[0]
    if below.size:
        i = below[0]
        x = (-180.0 - phase[i]) / (phase[i + 1] - phase[i])
        gm = -20.0 * (math.log10(mag[i]) + x * (math.log10(mag[i + 1]) - math.log10(mag[i])))
    if not crossings:
        return LoopAnswer(None, None, gm)
    pm, fc = min(crossings)
    return LoopAnswer(fc, pm, gm)

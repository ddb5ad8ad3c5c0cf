"""An independent ngspice reference for worst-case DC ranges and loop margins, written from docs/FORMAT.md.

Nothing here uses afecheck's netlist, deck writer or solver: :func:`random_design` makes a design as plain data
(the exchange format), :func:`dc_extremes` writes one SPICE copy of the whole circuit per corner (every
rail end, signal end, offset sign and thermistor temperature on a dense grid: a brute-force corner sweep, no
superposition) and takes each net's extremes and each op-amp's output current (through its output resistance)
over them, read from ngspice's binary raw file, and :func:`loop_margins` breaks one op-amp's loop at
its gain chain in the full circuit (every other op-amp in place) and reads phase margin, crossover, gain
margin and high-frequency noise gain from a dense AC sweep.

The op-amp is written from the part fields' meaning in docs/FORMAT.md: Rdiff and Cdiff between the inputs,
Rcm and Ccm from each input to ground, bias currents into the pins (Ib ± Ios/2), Vos in series with in+, a
VCVS of gain A0, two RC poles (fp1 = GBW/A0 and the second pole) each buffered by a unity VCVS, then Ro.
"""

from __future__ import annotations

import itertools
import math
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from ngspice_harness import read_raw

NGSPICE = shutil.which("ngspice")
BAD = ("error", "singular matrix", "warning from checkvalid", "simulation interrupted")
T25 = 298.15
TEMPERATURE_POINTS = 49
MAX_CORNERS = 2000


# ---------------------------------------------------------------- random designs (plain exchange-format data)

def _part(rng: np.random.Generator, offsets: bool) -> dict:
    a0 = float(10 ** rng.uniform(4, 6))
    gbw = float(10 ** rng.uniform(5.5, 7.5))
    ib = float(10 ** rng.uniform(-11, -7)) if offsets and rng.random() < 0.7 else 0.0
    return {
        "gbw": gbw, "open_loop_gain": a0, "second_pole": float(gbw * 10 ** rng.uniform(-0.2, 1.3)),
        "output_resistance": float(rng.uniform(10, 200)), "input_resistance_diff": float(10 ** rng.uniform(6, 12)),
        "input_resistance_cm": float(10 ** rng.uniform(8, 12)),
        "input_capacitance_diff": float(rng.choice([0.0, rng.uniform(0.5e-12, 8e-12)])),
        "input_capacitance_cm": float(rng.choice([0.0, rng.uniform(0.5e-12, 8e-12)])),
        "offset_voltage": float(rng.uniform(1e-5, 3e-3)) if offsets else 0.0, "bias_current": ib,
        "offset_current": float(ib * rng.uniform(0, 0.5)) if ib and rng.random() < 0.5 else 0.0,
    }


def _r(rng: np.random.Generator, lo: float = 1e3, hi: float = 1e6) -> float:
    return float(10 ** rng.uniform(math.log10(lo), math.log10(hi)))


class _Builder:
    """Accumulates components, parts, signals and loads of one random design."""

    def __init__(self, rng: np.random.Generator, offsets: int) -> None:
        self.rng = rng
        self.comps: dict[str, dict] = {}
        self.parts: dict[str, dict] = {}
        self.signals: dict[str, dict] = {}
        self.loads: dict[str, dict] = {}
        self.offsets = offsets  # how many op-amps still get offsets (keeps the corner count small)
        self.n = 0

    def name(self, prefix: str) -> str:
        self.n += 1
        return f"{prefix}{self.n}"

    def res(self, a: str, b: str, value: float) -> None:
        self.comps[self.name("R")] = {"kind": "resistor", "value": value, "pins": {"1": a, "2": b}}

    def cap(self, a: str, b: str, value: float) -> None:
        self.comps[self.name("C")] = {"kind": "capacitor", "value": value, "pins": {"1": a, "2": b}}

    def opamp(self, inp: str, inm: str, out: str) -> str:
        ref = self.name("U")
        self.parts[f"P{ref}"] = _part(self.rng, self.offsets > 0)
        self.offsets -= 1
        self.comps[ref] = {"kind": "opamp", "part": f"P{ref}",
                           "pins": {"in+": inp, "in-": inm, "out": out, "v+": "VP", "v-": "VN"}}
        if self.rng.random() < 0.5:
            self.loads[out] = {"resistance": _r(self.rng, 2e3, 1e5), "capacitance": float(self.rng.uniform(0, 200e-12))}
        return ref

    def voltage_signal(self, net: str, span: float) -> None:
        lo = float(self.rng.uniform(-span, span / 2))
        self.signals[net] = {"dc": [lo, lo + float(self.rng.uniform(0, span / 2))],
                             "source_resistance": float(self.rng.choice([0.0, _r(self.rng, 10, 1e4)]))}

    # stage kinds -------------------------------------------------------------------------------------------
    def inverting(self, src: str, out: str) -> None:
        m = self.name("M")
        self.res(src, m, _r(self.rng))
        self.res(m, out, _r(self.rng))
        if self.rng.random() < 0.4:
            self.cap(m, out, float(10 ** self.rng.uniform(-12, -10)))
        self.opamp("REF" if self.rng.random() < 0.5 else "GND", m, out)

    def non_inverting(self, src: str, out: str) -> None:
        m = self.name("M")
        self.res(m, out, _r(self.rng))
        self.res(m, "REF" if self.rng.random() < 0.5 else "GND", _r(self.rng))
        self.opamp(src, m, out)

    def mfb(self, src: str, out: str) -> None:
        x, m = self.name("X"), self.name("M")
        self.res(src, x, _r(self.rng, 1e3, 1e5))
        self.cap(x, "GND", float(10 ** self.rng.uniform(-9, -7)))
        self.res(x, m, _r(self.rng, 1e3, 1e5))
        self.res(x, out, _r(self.rng, 1e3, 1e5))
        self.cap(m, out, float(10 ** self.rng.uniform(-10, -8)))
        self.opamp("REF", m, out)

    def sallen_key(self, src: str, out: str) -> None:
        x, p = self.name("X"), self.name("P")
        self.res(src, x, _r(self.rng, 1e3, 1e5))
        self.res(x, p, _r(self.rng, 1e3, 1e5))
        self.cap(x, out, float(10 ** self.rng.uniform(-9, -7)))
        self.cap(p, "GND", float(10 ** self.rng.uniform(-10, -8)))
        self.opamp(p, out, out)

    def composite(self, src: str, out: str) -> None:
        """A composite amplifier: a precise op-amp whose output drives a non-inverting booster stage, the overall
        inverting feedback from the booster's output back to the first op-amp (one loop through both)."""
        m, x, n = self.name("M"), self.name("X"), self.name("N")
        self.res(src, m, _r(self.rng, 1e3, 1e5))
        self.res(m, out, _r(self.rng, 1e3, 1e5))
        if self.rng.random() < 0.6:
            self.cap(m, x, float(10 ** self.rng.uniform(-11, -9)))  # local integrator: tames the double pole
        self.opamp("REF" if self.rng.random() < 0.5 else "GND", m, x)
        self.res(n, out, _r(self.rng, 1e3, 1e5))
        self.res(n, "GND", _r(self.rng, 1e3, 1e5))
        self.opamp(x, n, out)

    def integrator(self, src: str, out: str) -> None:
        m = self.name("M")
        self.res(src, m, _r(self.rng, 1e3, 1e5))
        self.cap(m, out, float(10 ** self.rng.uniform(-9, -7)))
        self.res(m, out, _r(self.rng, 1e6, 1e8))  # reset / DC-gain resistor
        self.opamp("REF", m, out)


def random_design(rng: np.random.Generator, kind: str) -> dict:
    """A random design of one kind: single, cascade, inamp, composite, mfb, sallen-key, tia, integrator, ntc-ref."""
    b = _Builder(rng, offsets=2 if kind in ("inamp", "cascade", "composite") else 3)
    vp = float(rng.choice([5.0, 12.0, 15.0]))
    dual = kind not in ("ntc-ref",) and rng.random() < 0.6
    rails = {"VP": {"voltage": vp, "tolerance": float(rng.choice([0.0, 0.02, 0.05]))},
             "VN": {"voltage": -vp if dual else 0.0}, "REF": {"voltage": 0.0 if dual else vp / 2,
                                                            "tolerance": float(rng.choice([0.0, 0.01]))}}
    if not dual:
        rails["VN"] = {"voltage": 0.0}
    if kind in ("single", "cascade", "composite", "mfb", "sallen-key", "integrator"):
        b.voltage_signal("IN", 1.0)
        stages = {"single": 1, "cascade": int(rng.integers(2, 4))}.get(kind, 1)
        src = "IN"
        for k in range(stages):
            out = f"OUT{k + 1}"
            if kind in ("single", "cascade"):
                (b.inverting if rng.random() < 0.5 else b.non_inverting)(src, out)
            else:
                {"mfb": b.mfb, "sallen-key": b.sallen_key, "integrator": b.integrator,
                 "composite": b.composite}[kind](src, out)
            src = out
    elif kind == "inamp":
        b.voltage_signal("INP", 0.5)
        b.voltage_signal("INN", 0.5)
        g = _r(rng, 1e3, 1e5)
        b.res("M1", "M2", g)
        b.res("A1", "M1", _r(rng, 5e3, 5e4))
        b.res("A2", "M2", _r(rng, 5e3, 5e4))
        b.opamp("INP", "M1", "A1")
        b.opamp("INN", "M2", "A2")
        r1, r2 = _r(rng, 5e3, 5e4), _r(rng, 5e3, 5e4)
        b.res("A1", "D", r1)
        b.res("D", "OUT", r2)
        b.res("A2", "E", r1 * float(rng.uniform(0.99, 1.01)))
        b.res("E", "REF", r2)
        b.opamp("E", "D", "OUT")
    elif kind == "tia":
        b.signals["PD"] = {"kind": "current", "current": [0.0, float(10 ** rng.uniform(-7, -5))],
                           "capacitance": float(10 ** rng.uniform(-11, -9.3)),
                           "shunt_resistance": float(10 ** rng.uniform(7, 10))}
        rf = _r(rng, 1e4, 1e6)
        b.res("PD", "OUT", rf)
        if rng.random() < 0.6:
            b.cap("PD", "OUT", float(10 ** rng.uniform(-12.5, -10.5)))
        b.opamp("REF", "PD", "OUT")
    elif kind == "ntc-ref":
        r25 = float(rng.choice([10e3, 47e3, 100e3]))
        lo = float(rng.uniform(-40, 20))
        b.comps["RT1"] = {"kind": "ntc", "r25": r25, "beta": float(rng.uniform(3300, 4300)),
                          "temperature": [lo, lo + float(rng.uniform(20, 80))], "pins": {"1": "VP", "2": "TH"}}
        b.res("TH", "GND", r25 * float(rng.uniform(0.5, 2)))
        b.res("TH", "M", _r(rng, 1e3, 1e5))
        b.res("M", "OUT", _r(rng, 1e3, 1e5))
        b.opamp("REF", "M", "OUT")
    return {"afecheck": 1, "name": f"random {kind}", "parts": b.parts, "rails": rails, "components": b.comps,
            "signals": b.signals, "loads": b.loads}


# ---------------------------------------------------------------- SPICE text of one copy of the circuit

def _v(x: float) -> str:
    return repr(float(x))


def ntc(r25: float, beta: float, t_c: float) -> float:
    """Beta model R(T) = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539)."""
    return r25 * math.exp(beta * (1.0 / (t_c + 273.15) - 1.0 / T25))


@dataclass(frozen=True)
class Corner:
    """One corner: each rail's voltage, each signal's DC value, each op-amp's offset signs, each NTC's temperature."""

    rails: dict
    signals: dict
    signs: dict
    temps: dict


def _opamp_lines(p: str, ref: str, part: dict, inp: str, inm: str, out: str, signs: tuple[float, float, float],
                 probe: bool) -> list[str]:
    n = f"{p}{ref}_"
    a0, gbw, f2 = part["open_loop_gain"], part["gbw"], part["second_pole"]
    s_vos, s_ib, s_ios = signs
    ib, ios = part["bias_current"], part["offset_current"]
    lines = [f"R{n}rd {inp} {inm} {_v(part['input_resistance_diff'])}",
             f"R{n}rcp {inp} 0 {_v(part['input_resistance_cm'])}", f"R{n}rcm {inm} 0 {_v(part['input_resistance_cm'])}"]
    if part["input_capacitance_diff"]:
        lines.append(f"C{n}cd {inp} {inm} {_v(part['input_capacitance_diff'])}")
    if part["input_capacitance_cm"]:
        lines += [f"C{n}ccp {inp} 0 {_v(part['input_capacitance_cm'])}",
                  f"C{n}ccm {inm} 0 {_v(part['input_capacitance_cm'])}"]
    lines += [f"I{n}ibp {inp} 0 DC {_v(s_ib * ib + s_ios * ios / 2)}",
              f"I{n}ibm {inm} 0 DC {_v(s_ib * ib - s_ios * ios / 2)}",
              f"V{n}vos {n}x {inp} DC {_v(s_vos * part['offset_voltage'])}",
              f"E{n}a {n}a 0 {n}x {inm} {_v(a0)}"]
    prev = f"{n}a"
    for i, fp in enumerate((gbw / a0, f2), start=1):
        lines += [f"R{n}p{i} {prev} {n}rc{i} 1", f"C{n}p{i} {n}rc{i} 0 {_v(1 / (2 * math.pi * fp))}"]
        nxt = (f"{n}ret" if probe else f"{n}o") if i == 2 else f"{n}b{i}"
        lines.append(f"E{n}b{i} {nxt} 0 {n}rc{i} 0 1")
        prev = nxt
    if probe:
        lines.append(f"V{n}test {n}o 0 DC 0 AC 1")
    lines.append(f"R{n}ro {n}o {out} {_v(part['output_resistance'])}")
    return lines


def circuit_lines(design: dict, corner: Corner, prefix: str, probe: str | None = None) -> list[str]:
    """SPICE element lines of one copy of the design at ``corner``, every net prefixed (ground stays 0)."""
    gnd = design.get("ground", "GND")

    def node(net: str) -> str:
        return "0" if net == gnd else f"{prefix}{net}"

    lines: list[str] = []
    for net, v in corner.rails.items():
        if net != gnd:
            lines.append(f"V{prefix}rail_{net} {node(net)} 0 DC {_v(v)}")
    for ref, c in design["components"].items():
        pins = {k: node(v) for k, v in c["pins"].items()}
        if c["kind"] == "resistor":
            lines.append(f"R{prefix}{ref} {pins['1']} {pins['2']} {_v(c['value'])}")
        elif c["kind"] == "capacitor":
            lines.append(f"C{prefix}{ref} {pins['1']} {pins['2']} {_v(c['value'])}")
        elif c["kind"] == "ntc":
            t = corner.temps.get(ref, 0.5 * sum(c["temperature"]))
            lines.append(f"R{prefix}{ref} {pins['1']} {pins['2']} {_v(ntc(c['r25'], c['beta'], t))}")
        elif c["kind"] == "opamp":
            lines += _opamp_lines(prefix, ref, design["parts"][c["part"]], pins["in+"], pins["in-"], pins["out"],
                                  corner.signs.get(ref, (1.0, 1.0, 1.0)), probe == ref)
    for net, s in design["signals"].items():
        kind = s.get("kind", "voltage")
        value = corner.signals.get(net, 0.0)
        if kind == "current":
            lines.append(f"I{prefix}sig_{net} 0 {node(net)} DC {_v(value)}")
            if s.get("capacitance"):
                lines.append(f"C{prefix}sig_{net} {node(net)} 0 {_v(s['capacitance'])}")
            if s.get("shunt_resistance"):
                lines.append(f"R{prefix}sig_{net} {node(net)} 0 {_v(s['shunt_resistance'])}")
        elif s.get("source_resistance"):
            lines += [f"V{prefix}sig_{net} {prefix}{net}_s 0 DC {_v(value)}",
                      f"R{prefix}sig_{net} {prefix}{net}_s {node(net)} {_v(s['source_resistance'])}"]
        else:
            lines.append(f"V{prefix}sig_{net} {node(net)} 0 DC {_v(value)}")
    for net, ld in design["loads"].items():
        if ld.get("resistance"):
            lines.append(f"R{prefix}ld_{net} {node(net)} 0 {_v(ld['resistance'])}")
        if ld.get("capacitance"):
            lines.append(f"C{prefix}ld_{net} {node(net)} 0 {_v(ld['capacitance'])}")
    return lines


def _ngspice(deck: str) -> tuple[str, dict[str, bytes]]:
    """ngspice -b on ``deck``: its output and the files it wrote (fails on the messages ngspice prints but
    still exits 0 on)."""
    with tempfile.TemporaryDirectory(prefix="worst-spice-") as d:
        path = Path(d) / "deck.cir"
        path.write_text(deck, encoding="ascii")
        proc = subprocess.run([NGSPICE or "ngspice", "-b", str(path)], cwd=d, capture_output=True, text=True,
                              timeout=600)
        text = proc.stdout + proc.stderr
        files = {p.name: p.read_bytes() for p in Path(d).iterdir() if p.name != "deck.cir"}
    bad = [ln for ln in text.splitlines() if any(m in ln.lower() for m in BAD)]
    if proc.returncode != 0 or bad:
        raise AssertionError("ngspice failed:\n" + "\n".join(bad or text.splitlines()[-20:]))
    return text, files


def run(deck: str) -> str:
    """ngspice's output on ``deck``, with each text file it wrote appended under ``#file <name>``."""
    text, files = _ngspice(deck)
    return text + "".join(f"\n#file {k}\n{v.decode()}" for k, v in sorted(files.items()) if k.endswith(".txt"))


def run_raw(deck: str, name: str) -> dict[str, np.ndarray]:
    """The binary raw file ``name`` that ``deck`` writes, as arrays keyed by lower-cased vector name."""
    _, files = _ngspice(deck)
    with tempfile.TemporaryDirectory(prefix="worst-spice-raw-") as d:
        path = Path(d) / name
        path.write_bytes(files[name])
        return read_raw(path)


# ---------------------------------------------------------------- DC: brute-force corners

def corners(design: dict) -> list[Corner]:
    """Every combination of rail ends, signal ends and offset signs, times a dense grid of each NTC's range."""
    axes: list[tuple[str, str, tuple]] = []
    for net, r in design["rails"].items():
        v, t = r["voltage"], r.get("tolerance", 0.0)
        axes.append(("rail", net, (v * (1 - t), v * (1 + t)) if t else (v,)))
    for net, s in design["signals"].items():
        lo, hi = s["current"] if s.get("kind") == "current" else s["dc"]
        axes.append(("signal", net, (lo, hi) if hi != lo else (lo,)))
    for ref, c in design["components"].items():
        if c["kind"] == "opamp":
            p = design["parts"][c["part"]]
            for i, key in enumerate(("offset_voltage", "bias_current", "offset_current")):
                axes.append(("sign", (ref, i), (-1.0, 1.0) if p[key] else (1.0,)))
        elif c["kind"] == "ntc":
            lo, hi = c["temperature"]
            axes.append(("temp", ref, tuple(np.linspace(lo, hi, TEMPERATURE_POINTS))))
    out = []
    for combo in itertools.product(*(a[2] for a in axes)):
        rails, signals, temps, signs = {}, {}, {}, {}
        for (kind, key, _), value in zip(axes, combo, strict=True):
            if kind == "rail":
                rails[key] = value
            elif kind == "signal":
                signals[key] = value
            elif kind == "temp":
                temps[key] = value
            else:
                signs.setdefault(key[0], [1.0, 1.0, 1.0])[key[1]] = value
        out.append(Corner(rails, signals, {k: tuple(v) for k, v in signs.items()}, temps))
    return out


def dc_extremes(design: dict, nets: list[str], opamps: tuple[str, ...] = ()
                ) -> dict[str, tuple[float, float]]:
    """(lowest, highest) DC voltage of each net over every corner, one SPICE copy per corner in one deck; and
    under the key ``iout:<ref>`` each op-amp's output current (into its output net: the current through the
    model's output resistance, (v(o) − v(out))/Ro, read at every corner)."""
    cs = corners(design)
    if len(cs) > MAX_CORNERS:
        raise ValueError(f"{len(cs)} corners")
    gnd = design.get("ground", "GND")
    lines = ["worst-case corners"]
    for k, c in enumerate(cs):
        lines += circuit_lines(design, c, f"k{k}_")
    outs = {r: design["components"][r]["pins"]["out"] for r in opamps}
    lines += [".control", "op", "write dc.raw", "quit", ".endc", ".end"]
    values = run_raw("\n".join(lines) + "\n", "dc.raw")

    def v(k: int, net: str) -> float:
        return 0.0 if net == gnd else float(values[f"v(k{k}_{net})".lower()][0])

    out = {}
    for net in nets:
        vs = [v(k, net) for k in range(len(cs))]
        out[net] = (min(vs), max(vs))
    for r in opamps:
        ro = design["parts"][design["components"][r]["part"]]["output_resistance"]
        i = [(v(k, f"{r}_o") - v(k, outs[r])) / ro for k in range(len(cs))]
        out[f"iout:{r}"] = (min(i), max(i))
    return out


# ---------------------------------------------------------------- loops

@dataclass(frozen=True)
class Margins:
    """Worst phase margin over the sampled |T| = 1 crossings, its crossover, the gain margin at the first −180°
    crossing (None if none), the noise gain |A/T| at ``f_hf`` and how many crossings the samples showed."""

    phase_margin_deg: float | None
    crossover_hz: float | None
    gain_margin_db: float | None
    noise_gain_hf: float
    crossings: int


def loop_margins(design: dict, ref: str, per_decade: int = 200) -> Margins:
    """Break op-amp ``ref``'s loop after its gain chain (the rest of the circuit intact) and read its margins."""
    c = Corner({n: r["voltage"] for n, r in design["rails"].items()}, {}, {}, {})
    p = design["parts"][design["components"][ref]["part"]]
    gbw, a0, f2 = p["gbw"], p["open_loop_gain"], p["second_pole"]
    f_lo, f_hi = gbw / a0 / 30.0, 1e5 * max(gbw, f2)
    f_hf = 10.0 * max(gbw, f2)
    lines = ["loop break", *circuit_lines(design, c, "", probe=ref), ".control", "set numdgt=15",
             "set wr_singlescale", "set wr_vecnames", f"ac dec {per_decade} {_v(f_lo)} {_v(f_hi)}",
             f"wrdata loop.txt v({ref}_ret)", f"ac lin 1 {_v(f_hf)} {_v(f_hf)}", f"wrdata hf.txt v({ref}_ret)",
             "quit", ".endc", ".end"]
    text = run("\n".join(lines) + "\n")
    f, t = _read(text, "loop.txt")
    _, t_hf = _read(text, "hf.txt")
    t = -t
    a_hf = a0 / ((1 + 1j * f_hf * a0 / gbw) * (1 + 1j * f_hf / f2))
    ng_hf = float(abs(a_hf / -t_hf[0]))
    mag = np.abs(t)
    phase = np.degrees(np.unwrap(np.angle(t)))
    phase -= 360.0 * round(phase[0] / 360.0)
    lf = np.log(f)
    pms, fcs = [], []
    for i in np.nonzero((mag[:-1] > 1) != (mag[1:] > 1))[0]:
        lm = np.log(mag[i:i + 2])
        x = lf[i] - lm[0] * (lf[i + 1] - lf[i]) / (lm[1] - lm[0])
        pms.append(180.0 + float(np.interp(x, lf[i:i + 2], phase[i:i + 2])))
        fcs.append(float(np.exp(x)))
    gm = None
    below = np.nonzero((phase[:-1] > -180.0) & (phase[1:] <= -180.0))[0]
    if below.size:
        i = int(below[0])
        w = (phase[i] + 180.0) / (phase[i] - phase[i + 1])
        gm = float(-20.0 * (math.log10(mag[i]) + w * (math.log10(mag[i + 1]) - math.log10(mag[i]))))
    if not pms:
        return Margins(None, None, gm, ng_hf, 0)
    k = int(np.argmin(pms))
    return Margins(pms[k], fcs[k], gm, ng_hf, len(pms))


def loop_margins_near(design: dict, ref: str, f_c: float, points: int = 20001) -> float | None:
    """Phase margin at the sampled |T| = 1 crossing nearest ``f_c`` on a dense linear sweep of ±2 % around it
    (for a narrow notch a decade-wide grid steps over); the phase is unwrapped from the main sweep's start."""
    c = Corner({n: r["voltage"] for n, r in design["rails"].items()}, {}, {}, {})
    lines = ["loop break near a crossing", *circuit_lines(design, c, "", probe=ref), ".control",
             "set numdgt=15", "set wr_singlescale", "set wr_vecnames",
             f"ac lin {points} {_v(f_c * 0.98)} {_v(f_c * 1.02)}", f"wrdata near.txt v({ref}_ret)", "quit", ".endc",
             ".end"]
    f, t = _read(run("\n".join(lines) + "\n"), "near.txt")
    t = -t
    mag = np.abs(t)
    idx = np.nonzero((mag[:-1] > 1) != (mag[1:] > 1))[0]
    if not idx.size:
        return None
    i = int(idx[np.argmin(np.abs(f[idx] - f_c))])
    return float(180.0 + np.degrees(np.angle(t[i])))


def _read(text: str, name: str) -> tuple[np.ndarray, np.ndarray]:
    body = text.split(f"#file {name}\n", 1)[1].split("\n#file ", 1)[0]
    rows = [ln.split() for ln in body.splitlines()[1:] if ln.strip()]
    data = np.array(rows, dtype=float)
    return data[:, 0], data[:, 1] + 1j * data[:, 2]

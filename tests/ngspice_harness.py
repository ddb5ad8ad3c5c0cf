"""Helpers for the tests: build op-amp macromodels from plain numbers, and run ngspice in batch mode.

ngspice exits 0 even when a ``.control`` command fails or the matrix is singular (REFERENCE-TOOLS), so
:func:`run_ngspice` scans its output for the tell-tale messages and fails on them.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest

from afecheck.analysis.macromodel import opamp_macromodel
from afecheck.analysis.netlist import Element, Netlist, OpAmpInstance
from afecheck.parts.model import OpAmpModel

NGSPICE = shutil.which("ngspice")
needs_ngspice = pytest.mark.skipif(NGSPICE is None, reason="ngspice is not installed")
FAILURE_MARKERS = ("Error", "error:", "singular matrix", "Warning from checkvalid", "Simulation interrupted")


def opamp_elements(
    ref: str, inp: str, inm: str, out: str, *, a0: float, gbw: float, f2: float = math.inf, ro: float = 0.0,
    vos: float = 0.0, ib: float = 0.0, ios: float = 0.0, rcm: float = 1e300, rdiff: float = 1e300,
    ccm: float = 0.0, cdiff: float = 0.0,
) -> tuple[tuple[Element, ...], OpAmpInstance]:
    """Macromodel elements for an op-amp given by plain numbers (f2 = inf: single pole)."""
    model = OpAmpModel(
        gbw=gbw, open_loop_gain=a0, second_pole=f2 if math.isfinite(f2) else 1e300, output_resistance=ro,
        input_resistance_diff=rdiff, input_resistance_cm=rcm, input_capacitance_diff=cdiff,
        input_capacitance_cm=ccm, bias_current=ib, offset_current=ios, offset_voltage=vos,
    )
    mm = opamp_macromodel(ref, inp, inm, out, model)
    return mm.elements, mm.instance


class NgspiceError(AssertionError):
    """ngspice reported an error (it still exits 0 on most of them)."""


def run_ngspice(deck: str, workdir: Path | None = None, timeout: float = 120.0) -> tuple[str, Path]:
    """Run ``ngspice -b`` on ``deck`` in a temp dir; return (stdout+stderr, the directory). Fails on error text."""
    if NGSPICE is None:
        pytest.skip("ngspice is not installed")
    work = Path(workdir or tempfile.mkdtemp(prefix="afecheck-ngspice-"))
    (work / "deck.cir").write_text(deck, encoding="ascii")
    proc = subprocess.run([NGSPICE, "-b", "deck.cir"], cwd=work, capture_output=True, text=True, timeout=timeout)
    text = proc.stdout + proc.stderr
    bad = [line for line in text.splitlines() if any(m in line for m in FAILURE_MARKERS)]
    if proc.returncode != 0 or bad:
        raise NgspiceError(f"ngspice failed (exit {proc.returncode}):\n" + "\n".join(bad or text.splitlines()[-20:]))
    return text, work


_PRINT_LINE = re.compile(r"^\s*([A-Za-z][\w#.:+\-()\[\]]*)\s*=\s*([-+0-9.eE]+)\s*$")


def parse_print(text: str) -> dict[str, float]:
    """Values printed by ``print`` after ``op`` (``name = value`` lines), keys lower-cased."""
    out: dict[str, float] = {}
    for line in text.splitlines():
        m = _PRINT_LINE.match(line)
        if m:
            out[m.group(1).lower()] = float(m.group(2))
    return out


def read_raw(path: Path) -> dict[str, np.ndarray]:
    """Read an ngspice binary raw file (real or complex) into arrays keyed by lower-cased vector name."""
    data = path.read_bytes()
    head_end = data.index(b"Binary:\n") + len(b"Binary:\n")
    header = data[:head_end].decode("ascii", errors="replace").splitlines()
    n_vars = n_points = 0
    complex_data = False
    names: list[str] = []
    in_vars = False
    for line in header:
        if line.startswith("No. Variables:"):
            n_vars = int(line.split(":")[1])
        elif line.startswith("No. Points:"):
            n_points = int(line.split(":")[1])
        elif line.startswith("Flags:"):
            complex_data = "complex" in line
        elif line.startswith("Variables:"):
            in_vars = True
        elif line.startswith("Binary:"):
            in_vars = False
        elif in_vars and line.strip():
            parts = line.split()
            names.append(parts[1].lower())
    per = 2 if complex_data else 1
    raw = np.frombuffer(data[head_end:], dtype="<f8", count=n_vars * n_points * per)
    arr = raw.reshape(n_points, n_vars, per)
    values = arr[..., 0] + 1j * arr[..., 1] if complex_data else arr[..., 0]
    return {name: values[:, i] for i, name in enumerate(names)}


def prefixed(netlist: Netlist, prefix: str) -> Netlist:
    """A copy with every node (except ground) and element renamed ``prefix + name``, so copies share one deck."""
    from dataclasses import fields, replace

    from afecheck.analysis.netlist import GROUND

    def n(x: str) -> str:
        return x if x == GROUND else prefix + x

    node_fields = ("a", "b", "pos", "neg", "cpos", "cneg")
    out = []
    for e in netlist.elements:
        changes = {f.name: n(getattr(e, f.name)) for f in fields(e) if f.name in node_fields}
        out.append(replace(e, name=prefix + e.name, **changes))
    ops = {
        prefix + ref: replace(op, refdes=prefix + ref, in_plus=n(op.in_plus), in_minus=n(op.in_minus), out=n(op.out),
                              loop_element=prefix + op.loop_element)
        for ref, op in netlist.opamps.items()
    }
    return Netlist(tuple(out), ops)


def merged(netlists: list[Netlist]) -> Netlist:
    """Independent netlists (already prefixed apart) as one netlist sharing only ground."""
    elements: list[Element] = []
    ops: dict[str, OpAmpInstance] = {}
    for nl in netlists:
        elements.extend(nl.elements)
        ops.update(nl.opamps)
    return Netlist(tuple(elements), ops)

"""Hypothesis strategies for hostile design files: mutated samples, random designs and damaged text.

Shared by the default fuzz suite (a few hundred examples) and the long marked run (many thousands).
Every strategy yields ``(text, suffix)``: the bytes of a design file as a user might hand them over
and whether it is YAML or JSON. :func:`run_check` feeds one through the command line in-process and
turns any exception into an AssertionError that shows the input.
"""

from __future__ import annotations

import copy
import functools
import json
import math
import re
import tempfile
from pathlib import Path
from typing import Any

import yaml
from hypothesis import strategies as st

from tools.fuzz_inputs import DUMPER

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = tuple(sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml")))

KINDS = ("resistor", "capacitor", "opamp", "ntc", "vsource", "signal_source")
PINS = {
    "resistor": ("1", "2"), "capacitor": ("1", "2"), "ntc": ("1", "2"),
    "opamp": ("in+", "in-", "out", "v+", "v-"), "vsource": ("p", "n"), "signal_source": ("p", "n"),
}
PART_NAMES = ("AFE-GP1", "AFE-PREC1", "AFE-RRIO1", "AFE-JFET1", "AFE-HS1", "AFE-DECOMP5", "NO-SUCH-PART")

HOSTILE_VALUES: tuple[Any, ...] = (
    None, True, False, 0, -1, 1, 2**70, -(2**70), 1e308, -1e308, 1e-308, 5e-324, -1e-300,
    math.nan, math.inf, -math.inf, "nan", "NaN V", "inf", "-inf", "1e999", "1e-999", "", " ", "abc",
    "10 kΩ", "4k7", "4K7J", "R47", "1u0", "100n", "10m", "-5 V", "0", "0 V", "1e6 V", "3.3", "1 GHz",
    "80 dB", "-200 dB", "25 °C", "-300 °C", "1e400 K", "∞", "Ωk", "١٢٣", "💥", "\x00", "a" * 300,
    [], [1], [1, 2, 3], ["1 V", "0 V"], ["nan", "inf"], {}, {"x": 1}, {"voltage": "5 V"},
)
NET_NAMES = ("GND", "VCC", "VREF", "VMID", "IN", "OUT", "N1", "N2", "Ω-net", "неть", "网", "💧", "a b", "")
SPLICES = ("{", "}", "[", ":", "- ", "\t", "'", '"', "&a", "*a", "!!python/object:os.system", "\n  ", "💥", "\x00")
BAD_BYTES = (b"\xff", b"\xfe\xff", b"\xef\xbb\xbf", b"\x00", b"\xc3", b"\xed\xa0\x80")
TEXTS = st.text(st.characters(blacklist_categories=("Cs",)), min_size=0, max_size=12)


@functools.cache
def sample_data() -> tuple[tuple[str, dict], ...]:
    """The sample designs as plain data, with their file names (parsed once; callers deep-copy)."""
    return tuple((p.name, _with_intent(p)) for p in SAMPLES)


def _with_intent(path: Path) -> dict:
    """A sample as one self-contained document: its intent file's sections merged in, the reference dropped."""
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    if "intent" in data:
        intent = yaml.safe_load((path.parent / data.pop("intent")).read_text(encoding="utf-8"))
        for section in ("signals", "loads", "budgets"):
            data.setdefault(section, {}).update(intent.get(section, {}))
    return data


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    """Every key path in a nested dict/list tree (the root excluded)."""
    out: list[tuple] = []
    if isinstance(node, dict):
        items = list(node.items())
    elif isinstance(node, list):
        items = list(enumerate(node))
    else:
        return out
    for k, v in items:
        out.append(prefix + (k,))
        out.extend(_paths(v, prefix + (k,)))
    return out


def _parent(data: Any, path: tuple) -> Any:
    for k in path[:-1]:
        data = data[k]
    return data


def _opamps(data: dict) -> list[str]:
    comps = data.get("components") if isinstance(data.get("components"), dict) else {}
    return [r for r, c in comps.items() if isinstance(c, dict) and c.get("kind") == "opamp"]


@st.composite
def mutated_samples(draw: st.DrawFn) -> tuple[str, str]:
    """A sample design with one to four hostile edits, written as YAML or JSON."""
    name, data = draw(st.sampled_from(sample_data()))
    data = copy.deepcopy(data)
    for _ in range(draw(st.integers(1, 4))):
        _mutate(draw, data)
    return _serialise(draw, data)


def _mutate(draw: st.DrawFn, data: dict) -> None:
    op = draw(st.sampled_from(("delete", "replace", "replace", "rename", "kind", "pin", "cycle",
                               "no_opamps", "only_rails", "net")))
    paths = _paths(data)
    comps = data.get("components") if isinstance(data.get("components"), dict) else None
    if op in ("delete", "replace", "rename") and paths:
        path = paths[draw(st.integers(0, len(paths) - 1))]
        parent = _parent(data, path)
        if op == "delete":
            if isinstance(parent, dict):
                del parent[path[-1]]
            else:
                parent.pop(path[-1])
        elif op == "replace":
            # a copy: a later edit inside a shared hostile list or mapping would change it for every later example
            value = draw(st.sampled_from(HOSTILE_VALUES) | TEXTS | st.floats() | st.integers())
            parent[path[-1]] = copy.deepcopy(value)
        elif isinstance(parent, dict):
            parent[draw(TEXTS)] = parent.pop(path[-1])
    elif op == "kind" and comps:
        ref = draw(st.sampled_from(sorted(comps, key=str)))
        if isinstance(comps[ref], dict):
            comps[ref]["kind"] = draw(st.sampled_from(KINDS + ("inductor", "diode", "", "OPAMP")))
    elif op == "pin" and comps:
        ref = draw(st.sampled_from(sorted(comps, key=str)))
        pins = comps[ref].get("pins") if isinstance(comps[ref], dict) else None
        if isinstance(pins, dict) and pins:
            pin = draw(st.sampled_from(sorted(pins, key=str)))
            choice = draw(st.integers(0, 2))
            if choice == 0:
                pins[pin] = draw(st.sampled_from(NET_NAMES) | TEXTS)
            elif choice == 1:
                del pins[pin]
            else:
                pins[draw(st.sampled_from(("3", "in", "out2", "vcc", "💥")))] = "NOWHERE"
    elif op == "cycle" and comps is not None:
        a, b = "UCYC1", "UCYC2"
        comps[a] = {"kind": "opamp", "part": "AFE-GP1",
                    "pins": {"in+": "LOOP_B", "in-": "LOOP_A", "out": "LOOP_A", "v+": "VCC", "v-": "GND"}}
        comps[b] = {"kind": "opamp", "part": "AFE-GP1",
                    "pins": {"in+": "LOOP_A", "in-": "LOOP_B", "out": "LOOP_B", "v+": "VCC", "v-": "GND"}}
    elif op == "no_opamps" and comps is not None:
        for ref in _opamps(data):
            del comps[ref]
    elif op == "only_rails":
        for key in ("components", "signals", "loads", "budgets", "parts"):
            data.pop(key, None)
    elif op == "net" and comps:
        ref = draw(st.sampled_from(sorted(comps, key=str)))
        if isinstance(comps[ref], dict) and isinstance(comps[ref].get("pins"), dict):
            comps[ref]["pins"] = {p: draw(st.sampled_from(NET_NAMES)) for p in comps[ref]["pins"]}


@st.composite
def random_designs(draw: st.DrawFn) -> tuple[str, str]:
    """A design built from scratch: random parts on a small pool of nets, values sometimes hostile."""
    nets = draw(st.lists(st.sampled_from(NET_NAMES[1:]) | TEXTS.filter(bool), min_size=1, max_size=6, unique=True))
    net = st.sampled_from(["GND"] + nets)
    value = st.sampled_from(("10k", "1k", "100n", "1 V", "2.5 V", "1M", "10p")) | st.sampled_from(HOSTILE_VALUES)
    comps: dict[str, Any] = {}
    for i in range(draw(st.integers(0, 8))):
        kind = draw(st.sampled_from(KINDS))
        comp: dict[str, Any] = {"kind": kind, "pins": {p: draw(net) for p in PINS[kind]}}
        if kind in ("resistor", "capacitor", "vsource"):
            comp["value"] = draw(value)
        elif kind == "opamp":
            comp["part"] = draw(st.sampled_from(PART_NAMES))
        elif kind == "ntc":
            comp.update(r25=draw(value), beta=draw(st.sampled_from(("3950 K", 3950, -1, "nan"))),
                        temperature=draw(st.sampled_from((["-20 °C", "50 °C"], ["50 °C", "-20 °C"], [0, 0], "x"))))
        else:
            comp.update(dc=draw(st.sampled_from(([0, 1], ["0 V", "2 V"], [5, -5], ["nan", 1]))),
                        ac_amplitude=draw(value), source_resistance=draw(value))
        comps[draw(st.sampled_from((f"R{i}", f"U{i}", f"X{i}", f"Ω{i}", f"{i}")))] = comp
    data: dict[str, Any] = {"afecheck": draw(st.sampled_from((1, 1, 1, 2, "1", None))), "name": draw(TEXTS)}
    if draw(st.booleans()):
        data["rails"] = {n: {"voltage": draw(value)} for n in draw(st.lists(st.sampled_from(nets), max_size=3))}
    data["components"] = comps
    if draw(st.booleans()) and nets:
        data["signals"] = {draw(st.sampled_from(nets)): {"dc": [0, 1], "ac_amplitude": draw(value),
                                                         "band": [10, 1000], "source_resistance": draw(value)}}
    if draw(st.booleans()) and nets:
        data["loads"] = {draw(st.sampled_from(nets)): {"resistance": draw(value), "capacitance": draw(value),
                                                       "adc": {"full_scale": 3.3, "bits": draw(st.integers(-1, 40)),
                                                               "sample_rate": draw(value)}}}
    return _serialise(draw, data)


@st.composite
def damaged_bytes(draw: st.DrawFn) -> tuple[bytes, str]:
    """A sample file's bytes with random bytes spliced in (invalid UTF-8, BOMs, NULs), or pure noise."""
    if draw(st.booleans()):
        return draw(st.binary(max_size=400)), draw(st.sampled_from((".yaml", ".json", ".yml", "")))
    data = draw(st.sampled_from(SAMPLES)).read_bytes()
    pos = draw(st.integers(0, len(data)))
    noise = draw(st.sampled_from(BAD_BYTES) | st.binary())
    return data[:pos] + noise + data[pos:], ".yaml"


@st.composite
def damaged_texts(draw: st.DrawFn) -> tuple[str, str]:
    """A sample file's text cut short, with characters inserted or lines dropped or repeated."""
    path = draw(st.sampled_from(SAMPLES))
    text = path.read_text(encoding="utf-8")
    for _ in range(draw(st.integers(1, 3))):
        lines = text.splitlines(keepends=True)
        op = draw(st.integers(0, 4))
        pos = draw(st.integers(0, max(0, len(text) - 1)))
        if op == 0:
            text = text[:pos]
        elif op == 1:
            text = text[:pos] + draw(st.sampled_from(SPLICES)) + text[pos:]
        elif op == 2 and lines:
            del lines[draw(st.integers(0, len(lines) - 1))]
            text = "".join(lines)
        elif op == 3 and lines:
            i = draw(st.integers(0, len(lines) - 1))
            lines.insert(i, lines[i])
            text = "".join(lines)
        else:
            text = text[:pos] + draw(TEXTS) + text[pos:]
    return text, ".yaml"


def _serialise(draw: st.DrawFn, data: Any) -> tuple[str, str]:
    if draw(st.booleans()):
        try:
            return json.dumps(_str_keys(data), ensure_ascii=draw(st.booleans()), allow_nan=True), ".json"
        except (TypeError, ValueError):
            pass
    return yaml.dump(data, Dumper=DUMPER, allow_unicode=True, sort_keys=False), ".yaml"


def _str_keys(data: Any) -> Any:
    if isinstance(data, dict):
        return {str(k): _str_keys(v) for k, v in data.items()}
    if isinstance(data, list):
        return [_str_keys(v) for v in data]
    return data


def run_check(text: str | bytes, suffix: str, extra: tuple[str, ...] = ()) -> tuple[int, str, str]:
    """Run ``afecheck check --format json`` in-process on ``text``; fail with the input shown on any defect.

    Defects (:func:`tools.fuzz_inputs.run_main`): an exception, an exit status outside 0/1/2, a traceback, 10 s or
    more, an internal-error finding or a non-finite number in the report; exit 2 must name the file with a line
    number. Returns (exit status, stdout, stderr).
    """
    from tools.fuzz_inputs import run_main

    with tempfile.TemporaryDirectory(prefix="afefuzz-") as tmp:
        path = Path(tmp) / f"design{suffix}"
        if isinstance(text, bytes):
            path.write_bytes(text)
        else:
            path.write_text(text, encoding="utf-8", errors="surrogatepass")
        rc, out, stderr, _ = run_main(["check", *extra, "--format", "json", str(path)], f"input:\n{text!r}", "json")
        if rc == 2:
            assert re.search(re.escape(str(path)) + r":\d+", stderr), (
                f"input error without file:line on input:\n{text}\nstderr:\n{stderr}"
            )
        return rc, out, stderr

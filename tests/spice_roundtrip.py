"""Round trip for the SPICE reader: a design -> `afecheck spice --circuit-only` deck + intent + map -> read back.

What a SPICE netlist cannot say travels beside it, as an engineer's export would: signals, loads and budgets
in the intent file; tolerances, dielectrics, thermistor data, rail tolerances and reference sources in the map.
The one change made to a design first: a ``signal_source`` component with its ``n`` pin on ground becomes a
``signals:`` entry on its ``p`` net (the same Thevenin source; a netlist has no element for a declared range).
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path
from typing import Any

from afecheck.analysis import analyse
from afecheck.analysis.netlist import NetlistOptions, netlist_from_design
from afecheck.analysis.spice import spice_deck
from afecheck.engine.runner import run_rules
from afecheck.model.load import load_design
from afecheck.model.loaded import LoadedDesign

_REFINE = ("tolerance", "dielectric", "description", "r25", "beta", "temperature", "dissipation", "tempco",
           "steinhart_hart", "points", "r0", "tolerance_class", "wiring", "lead_resistance", "bridge", "r", "x0", "k",
           "measurand")


def netlist_form(loaded: LoadedDesign) -> dict[str, Any]:
    """The design as plain data with grounded signal sources moved to ``signals:``."""
    data = loaded.design.model_dump(mode="json", by_alias=True, exclude_none=True, exclude_unset=True)
    data.pop("intent", None)
    data["part_libraries"] = []
    data.setdefault("signals", {})
    used = {c.get("part") for c in data["components"].values()}
    data["parts"] = {name: model.model_dump(mode="json", exclude_none=True) for name, model in loaded.parts.items()
                     if name in used and not loaded.part_origins.get(name, "").startswith("built-in")}
    for ref, comp in list(data["components"].items()):
        if comp["kind"] == "signal_source":
            assert comp["pins"]["n"] == data["ground"], f"{ref}: a floating signal source has no netlist form"
            del data["components"][ref]
            data["signals"][comp["pins"]["p"]] = {k: comp[k] for k in ("dc", "ac_amplitude", "band",
                                                                        "source_resistance") if k in comp}
    return data


@dataclasses.dataclass
class RoundTrip:
    original: LoadedDesign
    back: LoadedDesign
    names: dict[str, str]
    deck: str


def round_trip(loaded: LoadedDesign, folder: Path) -> RoundTrip:
    """Normalise ``loaded``, write its deck, intent and map into ``folder``, read them back."""
    norm_path = folder / "design.json"
    norm_path.write_text(json.dumps(netlist_form(loaded)), encoding="utf-8")
    original = load_design(norm_path)
    d = original.design
    netlist = netlist_from_design(original, options=NetlistOptions(include_signals=False, include_loads=False))
    deck = spice_deck(netlist, d.name)
    (folder / "board.cir").write_text(deck.text, encoding="utf-8")
    nets = dict(deck.nodes)
    nets[d.ground] = "0"

    def ref(r: str) -> str:
        name = deck.elements[r]
        return name[1:] if d.components[r].kind == "opamp" and name[1:2].isalpha() else name

    names = {r: ref(r) for r in d.components} | nets
    intent: dict[str, Any] = {"afecheck-intent": 1}
    for section in ("signals", "loads", "budgets"):
        entries = {}
        for net, entry in getattr(d, section).items():
            data = entry.model_dump(mode="json", exclude_none=True, exclude_unset=True)
            if "reference" in data:
                data["reference"] = nets[data["reference"]]
            entries[nets[net]] = data
        intent[section] = entries
    if d.operating_temperature is not None:
        intent["operating_temperature"] = list(d.operating_temperature)
    components: dict[str, Any] = {}
    for r, comp in d.components.items():
        fields = {k: v for k, v in comp.model_dump(mode="json", exclude_none=True).items() if k in _REFINE}
        if comp.kind in ("ntc", "rtd", "bridge_arm", "vsource"):
            fields["kind"] = comp.kind
        if fields:
            components[deck.elements[r]] = fields
    rails = {nets[n]: {k: v for k, v in r.model_dump(mode="json", exclude_none=True).items()
                       if k in ("tolerance", "description")} for n, r in d.rails.items() if n != d.ground}
    netlist_map = {"afecheck-map": 1, "components": components, "rails": rails}
    (folder / "intent.json").write_text(json.dumps(intent), encoding="utf-8")
    (folder / "map.json").write_text(json.dumps(netlist_map), encoding="utf-8")
    parts = {"afecheck-parts": 1, "parts": {n: original.parts[n].model_dump(mode="json", exclude_none=True)
                                            for n in d.parts}}
    (folder / "parts.json").write_text(json.dumps(parts), encoding="utf-8")
    back = load_design(folder / "board.cir", intent=folder / "intent.json", netlist_map=folder / "map.json",
                       libraries=(folder / "parts.json",) if d.parts else ())
    return RoundTrip(original, back, names, deck.text)


def renamed(value: Any, names: dict[str, str]) -> Any:
    """``value`` with every design name replaced by its name in the deck; floats kept for :func:`same`."""
    if isinstance(value, str):
        return names.get(value, value)
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: renamed(getattr(value, f.name), names) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {renamed(k, names): renamed(v, names) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        items = [renamed(v, names) for v in value]
        return sorted(items, key=repr) if all(isinstance(v, str) for v in items) else items
    return value


def same(a: Any, b: Any, where: str = "", rel: float = 1e-9) -> list[str]:
    """Differences between two renamed values; floats equal to ``rel`` relative (1e-15 absolute near zero)."""
    if isinstance(a, float) and isinstance(b, (int, float)) or isinstance(b, float) and isinstance(a, (int, float)):
        if math.isnan(a) and math.isnan(b) or a == b:
            return []
        return [] if abs(a - b) <= rel * max(abs(a), abs(b)) + 1e-15 else [f"{where}: {a!r} != {b!r}"]
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            return [f"{where}: keys {sorted(set(a) ^ set(b))}"]
        return [d for k in a for d in same(a[k], b[k], f"{where}.{k}", rel)]
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return [f"{where}: {len(a)} items != {len(b)}"]
        return [d for i, (x, y) in enumerate(zip(a, b, strict=True)) for d in same(x, y, f"{where}[{i}]", rel)]
    return [] if a == b else [f"{where}: {a!r} != {b!r}"]


def findings_of(loaded: LoadedDesign, names: dict[str, str] | None = None) -> list[dict[str, Any]]:
    """Each finding as rule, severity, confidence, electrical names and ctx numbers (no file, line, message)."""
    out = []
    for f in run_rules(loaded):
        row = {"rule": f.rule, "severity": int(f.severity), "confidence": f.confidence, "assumed": f.assumed,
               "refs": f.location.refs, "nets": f.location.nets, "pins": f.location.pins, "ctx": f.ctx}
        out.append(renamed(row, names or {}))
    return sorted(out, key=lambda r: (r["rule"], r["refs"], r["nets"], r["pins"]))


def compare(trip: RoundTrip) -> list[str]:
    """Every difference in stages and findings between the original and the design read back."""
    mine = renamed(analyse(trip.original).stages, trip.names)
    theirs = renamed(analyse(trip.back).stages, {})
    diffs = same(sorted(mine, key=lambda s: s["opamp"]), sorted(theirs, key=lambda s: s["opamp"]), "stages")
    diffs += same(findings_of(trip.original, trip.names), findings_of(trip.back), "findings")
    return diffs

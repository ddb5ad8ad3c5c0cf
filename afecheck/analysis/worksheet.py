"""The reviewer's worksheet: noise, DC error and drift at every stage output, loaded net and budgeted net, and the
drive of every ADC input.

Only ``afecheck stages`` asks for the whole worksheet; the rules compute the same analyses for budgeted nets
alone, so a design's check costs nothing here unless it declares budgets.
"""

from __future__ import annotations

from dataclasses import dataclass

from afecheck.analysis.adc_drive import AdcResult, analyse_adc
from afecheck.analysis.dc_error import DcErrorResult, analyse_dc_error
from afecheck.analysis.noise import NoiseResult, analyse_noise
from afecheck.analysis.results import DesignAnalysis
from afecheck.analysis.supply import SupplyResult, analyse_supply
from afecheck.model.loaded import LoadedDesign


@dataclass(frozen=True)
class Worksheet:
    """The nets reviewed (in order), their budgets, and each analysis's results over them."""

    nets: tuple[str, ...]
    budgets: dict[str, dict[str, float | None]]
    noise: NoiseResult
    dc_error: DcErrorResult
    adc: AdcResult
    supply: SupplyResult


def worksheet_nets(loaded: LoadedDesign, analysis: DesignAnalysis) -> tuple[str, ...]:
    """Stage outputs (in stage order), then loaded nets, then budgeted nets; each once, ground and rails left out."""
    d = loaded.design
    nets = [s.out for s in analysis.stages] + list(d.loads) + list(d.budgets)
    return tuple(n for n in dict.fromkeys(nets) if n and n not in loaded.fixed_nets)


def build_worksheet(loaded: LoadedDesign, analysis: DesignAnalysis) -> Worksheet:
    """Noise and DC error at every worksheet net, and ADC drive at every ADC net."""
    nets = worksheet_nets(loaded, analysis)
    budgets = {n: b.model_dump() for n, b in loaded.design.budgets.items()}
    return Worksheet(nets=nets, budgets=budgets, noise=analyse_noise(loaded, nets),
                     dc_error=analyse_dc_error(loaded, nets), adc=analyse_adc(loaded, analysis),
                     supply=analyse_supply(loaded, analysis))

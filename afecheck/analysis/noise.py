"""Noise at a net: spectral density and RMS over the signal band, every source carried by its own transfer.

Sources: Johnson-Nyquist noise of every resistor (a current of density √(4kT/R) across it, Johnson 1928,
Nyquist 1928), including a thermistor and a declared source resistance; each op-amp's input voltage noise
en²·(1 + fce/f) in series with ``in+`` and its current noise in²·(1 + fci/f) into each input, independent.
The macromodel's own resistors (input and output resistance, pole networks) carry no noise: the part's en and in
already stand for everything inside it.

Each source reaches the net through its own transfer, read from one adjoint solve of the channel's nodal
matrix per frequency (Yᵀ·z = e_net gives v_net per unit excitation of every source at once), so stages after
the source shape it too. Densities add in power; each source's white and 1/f parts are integrated over the band
apart, segment by segment as power laws (exact where the transfer is flat). Input-referred figures divide by
the gain from the channel's declared signal to the net.

Temperature: resistors at the top of the design's declared operating range (thermal noise grows with T, so
that is the worst case), else 25 °C (298.15 K), the temperature part data are stated at; a thermometer (NTC, RTD)
at the temperature its resistance is taken at, the middle of its own declared range (a bridge arm, at ambient, as
any resistor; :mod:`afecheck.sensors.measurand`). A thermocouple is its loop resistance's thermal noise.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np

from afecheck.analysis.channel import Channel, channel_netlist, per_channel
from afecheck.analysis.mna import check_connectivity, system_of
from afecheck.analysis.netlist import GROUND, ZERO_C_K, Inductor, OpAmpCore, Resistor
from afecheck.errors import AnalysisError, InputError, SingularCircuitError
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors.measurand import sensor_noise_kelvin

BOLTZMANN = 1.380649e-23  # J/K, exact since the 2019 SI redefinition
DEFAULT_TEMPERATURE_C = 25.0
DC_BAND_LOW_HZ = 0.1  # lower edge for a band declared from DC: the usual 0.1 Hz low-frequency noise convention
POINTS_PER_DECADE = 40
_ROLE = {"signal.rs": "source resistance", "rs": "source resistance", "load.r": "load resistance"}


@dataclass(frozen=True)
class NoiseSource:
    """One independent noise source: its name, kind, parts, and where it enters the channel's netlist."""

    name: str
    kind: str
    refs: tuple[str, ...]
    white: float
    """white density: A²/Hz for currents, V²/Hz for voltages"""
    corner_hz: float
    node_a: str
    node_b: str = GROUND
    core: str | None = None
    """for op-amp voltage noise: the core element whose + input it sits in series with"""
    branch: str | None = None
    """for an inductor's winding resistance: the branch whose voltage law it sits in (a series voltage, V²/Hz)"""

    def power(self, f: np.ndarray) -> np.ndarray:
        """Density at each frequency, white·(1 + fc/f)."""
        return self.white * (1.0 + self.corner_hz / f)


@dataclass(frozen=True)
class NoiseContributor:
    """One source's share of a net's noise over the band."""

    name: str
    kind: str
    refs: tuple[str, ...]
    output_rms: float
    share: float
    output_density_top: float
    """output-referred density at the band's upper edge, V/√Hz"""
    output_density: tuple[float, ...] = ()
    """output-referred density on the net's frequency grid, V/√Hz (what the report plots)"""


@dataclass(frozen=True)
class NetNoise:
    """Noise at one net: band, temperature, density curves, RMS totals and ranked contributors."""

    net: str
    band: tuple[float, float]
    temperature_k: float
    freqs: tuple[float, ...]
    output_density: tuple[float, ...]
    output_rms: float
    contributors: tuple[NoiseContributor, ...]
    signal: str | None = None
    input_density: tuple[float, ...] | None = None
    input_rms: float | None = None
    assumed: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class NoiseResult:
    """Noise at each requested net, and the reason for each net that could not be evaluated."""

    nets: Mapping[str, NetNoise]
    not_evaluated: Mapping[str, str]


def johnson_density(resistance: float, temperature_k: float) -> float:
    """Open-circuit thermal noise voltage density √(4kTR) in V/√Hz (Johnson 1928; Nyquist 1928)."""
    return math.sqrt(4.0 * BOLTZMANN * temperature_k * resistance)


def band_rms(freqs: np.ndarray, power: np.ndarray) -> float:
    """√∫ power df over the grid, each segment a power law through its end points (exact for 1/f and white)."""
    f1, f2, s1, s2 = freqs[:-1], freqs[1:], power[:-1], power[1:]
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = f2 / f1
        alpha = np.log(s2 / s1) / np.log(ratio)
        seg = np.where(np.abs(alpha + 1.0) < 1e-9, s1 * f1 * np.log(ratio),
                       s1 * f1 / (alpha + 1.0) * (ratio ** (alpha + 1.0) - 1.0))
        seg = np.where((s1 > 0) & (s2 > 0) & np.isfinite(seg), seg, 0.5 * (s1 + s2) * (f2 - f1))
    return float(math.sqrt(max(float(np.sum(seg)), 0.0)))


def noise_temperature_k(loaded: LoadedDesign) -> float:
    """Kelvin at which resistor noise is taken: the top of the operating range, else 25 °C."""
    rng = loaded.design.operating_temperature
    return (max(rng) if rng else DEFAULT_TEMPERATURE_C) + ZERO_C_K


def channel_band(loaded: LoadedDesign, channel: Channel) -> tuple[float, float] | None:
    """The union of the declared bands of the channel's signals (lower edge at least 0.1 Hz); with none declared,
    DC to half the sample rate of an ADC the channel drives (what the converter sees); else None."""
    d = loaded.design
    bands = []
    for name, _ in channel.signal_branches:
        src = d.signals.get(name) if name in d.signals else d.components[name]
        if src.band:
            bands.append(src.band)
    if not bands:
        rates = [load.adc.sample_rate for net, load in d.loads.items() if load.adc and net in channel.nets]
        if not rates:
            return None
        bands.append((0.0, 0.5 * max(rates)))
    lo = max(min(b[0] for b in bands), DC_BAND_LOW_HZ)
    hi = max(b[1] for b in bands)
    return (lo, hi) if hi > lo else None


def _sources(loaded: LoadedDesign, netlist, temperature_k: float) -> tuple[list[NoiseSource], list[str]]:  # noqa: ANN001
    internal = tuple(f"{ref}#" for ref in netlist.opamps)
    d = loaded.design
    out: list[NoiseSource] = []
    assumed: list[str] = []
    for e in netlist.elements:
        if isinstance(e, Resistor) and not e.name.startswith(internal):
            t_k = temperature_k
            ref = e.name.split("#")[0]
            comp = d.components.get(ref)
            if e.name == ref:
                t_k = sensor_noise_kelvin(comp, temperature_k)
            refs = (ref,) if ref in d.components else ()
            label = e.name if e.name == ref else f"{ref} {_ROLE.get(e.name.split('#', 1)[1], 'resistance')}"
            out.append(NoiseSource(f"{label} thermal", "resistor", refs, 4 * BOLTZMANN * t_k / e.value, 0.0,
                                   e.a, e.b))
        elif isinstance(e, Inductor) and e.series_resistance > 0:
            refs = (e.name,) if e.name in d.components else ()
            out.append(NoiseSource(f"{e.name} winding thermal", "resistor", refs,
                                   4 * BOLTZMANN * temperature_k * e.series_resistance, 0.0, e.a, e.b, branch=e.name))
    for ref, op in netlist.opamps.items():
        model = loaded.part(ref)
        values = {}
        for name in ("voltage_noise", "voltage_noise_corner", "current_noise", "current_noise_corner"):
            values[name], was = model.get(name)
            if was:
                assumed.append(f"{ref}.{name}")
        out.append(NoiseSource(f"{ref} voltage noise", "opamp-voltage", (ref,), values["voltage_noise"] ** 2,
                               values["voltage_noise_corner"], op.in_plus, core=op.loop_element))
        for pin, node in (("in+", op.in_plus), ("in-", op.in_minus)):
            if node != GROUND:
                out.append(NoiseSource(f"{ref} current noise {pin}", "opamp-current", (ref,),
                                       values["current_noise"] ** 2, values["current_noise_corner"], node))
    return out, assumed


def log_band_grid(lo: float, hi: float, per_decade: int = POINTS_PER_DECADE) -> np.ndarray:
    """Logarithmic grid from ``lo`` to ``hi`` inclusive, at least 8 points."""
    n = max(8, int(math.ceil(math.log10(hi / lo) * per_decade)) + 1)
    return np.logspace(math.log10(lo), math.log10(hi), n)


def channel_noise(loaded: LoadedDesign, channel: Channel, nets: Iterable[str],
                  freqs: np.ndarray | None = None) -> dict[str, NetNoise]:
    """Noise at each of ``nets`` (all in ``channel``) on ``freqs`` (default: a grid over the channel's band)."""
    if freqs is None:
        band = channel_band(loaded, channel)
        if band is None:
            raise AnalysisError("no signal band is declared for the channel")
        f = log_band_grid(*band)
    else:
        f = np.asarray(freqs, dtype=float)
        band = (float(f[0]), float(f[-1]))
    netlist = channel_netlist(loaded, channel)
    system = system_of(netlist)
    t_k = noise_temperature_k(loaded)
    sources, assumed = _sources(loaded, netlist, t_k)
    targets = list(nets)
    gnd = loaded.design.ground
    rows = [system.node_index(GROUND if n == gnd else n) for n in targets]
    e = np.zeros((f.size, system.size, len(targets)), dtype=complex)
    for j, r in enumerate(rows):
        if r >= 0:
            e[:, r, j] = 1.0
    check_connectivity(netlist, dc=False)
    y = system.admittance(f)
    try:
        z = np.linalg.solve(np.swapaxes(y, 1, 2), e)
    except np.linalg.LinAlgError:
        raise SingularCircuitError("the channel's nodal matrix is singular") from None
    power = np.zeros((len(sources), f.size, len(targets)))
    flicker = np.zeros((len(sources), f.size, len(targets)))
    for i, src in enumerate(sources):
        if src.core is not None:
            core = netlist.element(src.core)
            assert isinstance(core, OpAmpCore)
            h = z[:, system.branch_index(src.core), :] * core.gain(f)[:, None]
        elif src.branch is not None:
            h = z[:, system.branch_index(src.branch), :]
        else:
            a, b = system.node_index(src.node_a), system.node_index(src.node_b)
            h = (z[:, a, :] if a >= 0 else 0.0) - (z[:, b, :] if b >= 0 else 0.0)
        gain2 = np.abs(h) ** 2
        power[i] = gain2 * src.power(f)[:, None]
        flicker[i] = gain2 * (src.white * src.corner_hz / f)[:, None]
    total = power.sum(axis=0)
    signal = None
    gain = None
    if channel.signal_branches:
        # input-referred only to voltage signals: a current signal's source has no branch unknown, and its
        # input-referred noise would be amperes, which the worksheet does not print
        branches = set(system.branches)
        found = [(name, br) for name, br in channel.signal_branches if br in branches]
        if found:
            gains = [np.abs(z[:, system.branch_index(br), :]) for _, br in found]
            best = [max(range(len(found)), key=lambda k, j=j: float(gains[k][:, j].max())) for j in range(len(targets))]
            signal = [found[b][0] for b in best]
            gain = np.stack([gains[b][:, j] for j, b in enumerate(best)], axis=1)
    results: dict[str, NetNoise] = {}
    for j, net in enumerate(targets):
        rms_each = [math.hypot(band_rms(f, power[i, :, j] - flicker[i, :, j]), band_rms(f, flicker[i, :, j]))
                    for i in range(len(sources))]
        out_rms = math.sqrt(sum(r * r for r in rms_each))
        tot_sq = out_rms**2 or 1.0
        contributors = sorted(
            (NoiseContributor(s.name, s.kind, s.refs, r, r * r / tot_sq, float(math.sqrt(power[i, -1, j])),
                              tuple(float(v) for v in np.sqrt(power[i, :, j])))
             for i, (s, r) in enumerate(zip(sources, rms_each, strict=True))),
            key=lambda c: (-c.output_rms, c.name))
        in_density = in_rms = None
        sig = None
        if gain is not None and np.all(gain[:, j] > 0):
            sig = signal[j]
            in_power = total[:, j] / gain[:, j] ** 2
            in_flicker = flicker[:, :, j].sum(axis=0) / gain[:, j] ** 2
            in_density = tuple(float(v) for v in np.sqrt(in_power))
            in_rms = math.hypot(band_rms(f, in_power - in_flicker), band_rms(f, in_flicker))
        results[net] = NetNoise(
            net=net, band=(float(band[0]), float(band[1])), temperature_k=float(t_k),
            freqs=tuple(float(v) for v in f), output_density=tuple(float(v) for v in np.sqrt(total[:, j])),
            output_rms=out_rms, contributors=tuple(c for c in contributors if c.output_rms > 0), signal=sig,
            input_density=in_density, input_rms=in_rms, assumed=tuple(sorted(set(assumed))),
        )
    return results


def analyse_noise(loaded: LoadedDesign, nets: Iterable[str]) -> NoiseResult:
    """Noise at each of ``nets``, channel by channel (one adjoint solve per channel); reasons for the rest."""
    nets = list(dict.fromkeys(nets))
    if not nets:
        return NoiseResult({}, {})
    found, missing = per_channel(loaded, nets, channel_noise,
                                 (AnalysisError, InputError, SingularCircuitError, ValueError, np.linalg.LinAlgError))
    return NoiseResult(found, missing)

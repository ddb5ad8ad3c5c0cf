"""ADC drive at every net that feeds an ADC: range fill, anti-alias attenuation, settling, charge kick-back.

Range: the net's DC range plus its AC peak against the converter's input range (0..FS, or ±FS/2 when bipolar,
above the load's reference): the margin at each end and the fraction of the codes the signal spans.
Anti-alias: the channel's attenuation at fs − fmax (the lowest frequency that folds onto the signal band) against
the band, from the transfer of the channel's declared signal (or, for a thermistor channel, of a current across
the thermistor), compared with the ideal converter's SNR 6.02·N + 1.76 dB (Bennett 1948).
Settling: the driver's closed-loop time constant 1/(2π·fc) and the RC between it and the converter,
(R + Rout)·(C + Csample), combined as √(τ1² + τ2²) (common practice for two first-order lags), must settle to
half an LSB within the acquisition time (half the sample period when none is declared: common practice for
successive-approximation converters, marked assumed). A full-scale step needs (N + 1)·ln 2 time constants;
where the sampling capacitor is declared, the step the input meets is only the charge shared with the RC's
capacitor, Csample/(C + Csample) of full scale, which takes ln((C + Csample)/Csample) time constants fewer.
Kick-back: the RC's capacitor against the converter's sampling capacitor; the charge shared at each sample is
Csample/(C + Csample) of the step.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from afecheck.analysis.channel import Channel, channel_key, channel_netlist, find_channels
from afecheck.analysis.mna import solve_ac
from afecheck.analysis.netlist import CurrentSource, Netlist
from afecheck.analysis.results import DesignAnalysis
from afecheck.errors import AnalysisError, InputError, SingularCircuitError
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors.measurand import swept_refs

IDEAL_SNR_OFFSET_DB = 1.76
DB_PER_BIT = 6.02
PASSBAND_FRACTION_OF_FS = 1e-3  # a DC signal's passband is read this far below fs (essentially DC)
ATTENUATION_DIGITS = 6  # decimal places of dB kept
ACQUISITION_FRACTION = 0.5  # of the sample period, when the converter declares no acquisition time


@dataclass(frozen=True)
class AdcDrive:
    """What an ADC input sees: range and fill, alias attenuation, the RC, settling, kick-back."""

    net: str
    bits: int
    sample_rate: float
    input_low: float
    input_high: float
    signal_low: float | None
    signal_high: float | None
    margin_low: float | None
    margin_high: float | None
    codes_used: float | None
    alias_hz: float
    passband_hz: float
    attenuation_db: float | None
    required_db: float
    driver: str | None
    series_resistance: float
    rc_capacitance: float
    load_capacitance: float
    tau: float | None
    time_constants_needed: float
    settling_time: float | None
    acquisition_time: float
    acquisition_assumed: bool
    sampling_capacitance: float | None
    capacitor_ratio: float | None
    series_refs: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class AdcResult:
    """Drive figures for each ADC net, and the reason for any that could not be evaluated."""

    nets: Mapping[str, AdcDrive]
    not_evaluated: Mapping[str, str]


def ideal_snr_db(bits: int) -> float:
    """SNR of an ideal N-bit converter with a full-scale sine: 6.02·N + 1.76 dB (Bennett 1948)."""
    return DB_PER_BIT * bits + IDEAL_SNR_OFFSET_DB


def settling_time_constants(bits: int) -> float:
    """Time constants for a first-order step to settle within half an LSB of N bits: (N + 1)·ln 2."""
    return (bits + 1) * math.log(2.0)


def _reference_voltage(loaded: LoadedDesign, net: str | None) -> float | None:
    d = loaded.design
    if net is None or net == d.ground:
        return 0.0
    rail = d.rails.get(net)
    return None if rail is None or rail.voltage is None else float(rail.voltage)


def _attenuation(loaded: LoadedDesign, channel: Channel, net: str, f_pass: float,
                 f_alias: float) -> tuple[float | None, str | None]:
    """(attenuation in dB from the band to the alias frequency at ``net``, or None with the reason)."""
    netlist = channel_netlist(loaded, channel)
    names = {e.name for e in netlist.elements}
    entries: list[tuple[Netlist, str]] = [(netlist, br) for _, br in channel.signal_branches if br in names]
    if not entries:
        for ref in swept_refs(loaded, channel.refs):
            e = netlist.element(ref)
            entries.append((netlist.with_elements(CurrentSource("#inject", e.a, e.b, ac=1.0)), "#inject"))
    if not entries:
        return None, "no declared signal or sensor drives the channel"
    node = "0" if net == loaded.design.ground else net
    best = None
    for nl, src in entries:
        sol = solve_ac(nl, np.array([f_pass, f_alias]), {src: 1.0})
        h = np.abs(sol.voltage(node))
        if best is None or h[0] > best[0]:
            best = h
    assert best is not None
    if best[0] <= 0:
        return None, "the declared signal does not reach the net"
    if best[1] <= 0:
        return math.inf, None
    # to a micro-decibel: below that the figure is the solver's rounding (two nearly equal gains of an unfiltered
    # channel), which differs with the order the same circuit's elements are written in
    return round(float(20 * math.log10(best[0] / best[1])), ATTENUATION_DIGITS), None


def _rc(loaded: LoadedDesign, net: str, outputs: Mapping[str | None, str]) -> tuple[str | None, float, float,
                                                                                   tuple[str, ...]]:
    """(driving op-amp, series resistance, capacitance of parts from the net to fixed nets, series parts);
    ``outputs`` maps each op-amp output net to its op-amp."""
    d = loaded.design
    fixed = loaded.fixed_nets
    cap = 0.0
    series: list[tuple[str, str]] = []
    for ref, other, kind in loaded.two_pin_by_net.get(net, ()):
        if kind == "capacitor" and other in fixed:
            cap += float(d.components[ref].value)  # type: ignore[union-attr]
        elif kind == "resistor" and other in outputs:
            series.append((ref, other))
    if net in outputs:
        return outputs[net], 0.0, cap, ()
    if len(series) == 1:
        ref, other = series[0]
        return outputs[other], float(d.components[ref].value), cap, (ref,)  # type: ignore[union-attr]
    return None, 0.0, cap, ()


def analyse_adc(loaded: LoadedDesign, analysis: DesignAnalysis, cache: dict | None = None) -> AdcResult:
    """Drive figures at every net with ``loads.<net>.adc``; identical channels are solved once (``cache``)."""
    d = loaded.design
    channels = find_channels(loaded)
    stages = {s.opamp: s for s in analysis.stages}
    outputs = {c.pins.get("out"): ref for ref, c in d.components.items() if c.kind == "opamp"}
    cache = {} if cache is None else cache
    found: dict[str, AdcDrive] = {}
    missing: dict[str, str] = {}
    for net, load in d.loads.items():
        adc = load.adc
        if adc is None:
            continue
        ref_v = _reference_voltage(loaded, load.reference)
        if ref_v is None:
            missing[net] = f"the ADC's reference net {load.reference} has no known voltage"
            continue
        lo, hi = (ref_v - adc.full_scale / 2, ref_v + adc.full_scale / 2) if adc.bipolar else (
            ref_v, ref_v + adc.full_scale)
        sig = analysis.nets.get(net)
        notes: list[str] = []
        s_lo = s_hi = m_lo = m_hi = used = None
        if sig is not None:
            s_lo, s_hi = sig.dc_min - sig.ac_amplitude, sig.dc_max + sig.ac_amplitude
            m_lo, m_hi = s_lo - lo, hi - s_hi
            used = (s_hi - s_lo) / adc.full_scale
        else:
            notes.append("the net's signal range was not evaluated")
        f_max = sig.f_max if sig is not None else 0.0
        f_alias = adc.sample_rate - f_max
        f_pass = f_max if f_max > 0 else adc.sample_rate * PASSBAND_FRACTION_OF_FS
        att: float | None = None
        channel = channels.get(net)
        if channel is None:
            notes.append("the net joins no channel")
        elif f_alias <= f_pass:
            notes.append(f"the band reaches {f_max:g} Hz, at or above fs − fmax: the signal itself aliases")
        else:
            key = ("adc-att", channel_key(loaded, channel, net), f_pass, f_alias)
            try:
                if key not in cache:
                    cache[key] = _attenuation(loaded, channel, net, f_pass, f_alias)
                att, why = cache[key]
                if why:
                    notes.append(why)
            except (AnalysisError, InputError, SingularCircuitError, ValueError, ArithmeticError) as exc:
                notes.append(f"attenuation not evaluated: {exc}")
        driver, r_series, c_parts, series_refs = _rc(loaded, net, outputs)
        c_load = float(load.capacitance or 0.0)
        cs = adc.input_capacitance
        t_acq = adc.acquisition_time or ACQUISITION_FRACTION / adc.sample_rate
        n_tau = settling_time_constants(adc.bits)
        if cs and c_parts + c_load > 0:
            n_tau = max(n_tau + math.log(cs / (c_parts + c_load + cs)), 0.0)
        tau = settling = None
        stage = stages.get(driver) if driver else None
        if stage is None or stage.crossover_hz is None:
            notes.append("no driving op-amp stage with a known crossover, so settling is not evaluated")
        else:
            rout = stage.output_resistance or 0.0
            tau_rc = (r_series + rout) * (c_parts + c_load + (cs or 0.0))
            tau_drv = 1.0 / (2 * math.pi * stage.crossover_hz)
            tau = math.hypot(tau_rc, tau_drv)
            settling = n_tau * tau
        found[net] = AdcDrive(
            net=net, bits=adc.bits, sample_rate=float(adc.sample_rate), input_low=lo, input_high=hi,
            signal_low=s_lo, signal_high=s_hi, margin_low=m_lo, margin_high=m_hi, codes_used=used,
            alias_hz=float(f_alias), passband_hz=float(f_pass), attenuation_db=att, required_db=ideal_snr_db(adc.bits),
            driver=driver, series_resistance=r_series, rc_capacitance=c_parts, load_capacitance=c_load, tau=tau,
            time_constants_needed=n_tau, settling_time=settling, acquisition_time=float(t_acq),
            acquisition_assumed=adc.acquisition_time is None, sampling_capacitance=cs,
            capacitor_ratio=(c_parts / cs) if cs else None, series_refs=series_refs, notes=tuple(notes),
        )
    return AdcResult(found, missing)

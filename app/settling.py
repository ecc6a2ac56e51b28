"""Does the divider drive the converter's input well enough, and how soon after power-up?

Single-pole models, stated so they can be checked by hand:

* Acquisition (design.md §4, common practice): a full-scale step on the
  sampling capacitor Cs settles to ½ LSB after (N + 1)·ln 2 time constants,
  t ≥ (N + 1)·ln 2 · (Rsource + Rswitch) · Cs.
* A filter capacitor Cf on the pin shares charge with Cs first (Cs settling
  to the pin through its switch, τ = Rswitch·Cs·Cf/(Cs + Cf)): the step left
  is Cs/(Cs + Cf) of full scale, which then decays with the ladder's dominant
  (Elmore) time constant τ = Rsource·(Cs + Cf) + Rswitch·Cs; with Cf = 0 this
  is the first rule again. With Cf ≥ (2^(N+1) − 1)·Cs the
  shared step is already below ½ LSB and the source only has to refill Cf
  between conversions: periodic kicks of Cs/(Cs + Cf) of full scale reach a
  steady droop below ½ LSB when the interval T satisfies
  exp(−T/τf) ≤ 1 − 2^(N+1)·Cs/(Cs + Cf), τf = Rsource·Cf (derived here from a
  charge balance; no published source).
* Power-up: the divider switched on into a discharged Cf gives
  V(t) = V(1 − e^(−t/τ)), τ = Rthevenin·Cf; good to ½ LSB after
  t = τ·ln(V / ½ LSB).

Resistances are the divider's Thevenin resistance seen from the pin (load and
converter input included), worst over the range.
"""

from __future__ import annotations

import math
from typing import Any, Optional

import numpy as np

from app import series
from app.adc import Adc

_PREFIX = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def eng(value: Optional[float], unit: str, digits: int = 3) -> str:
    """Engineering text for a quantity: 4.7e-9, "F" → "4.7 nF"; 4120, "Ω" → "4.12 kΩ"."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return f"0 {unit}"
    for scale, prefix in _PREFIX:
        if abs(value) >= scale * 0.9995:
            return f"{float(f'{value / scale:.{digits}g}'):g} {prefix}{unit}"
    return f"{value:.{digits}g} {unit}"


def _suggest_capacitor(farads: float) -> float:
    """The smallest E6 capacitor value (IEC 60063) at or above ``farads``."""
    _, above = series.neighbours("E6", farads * 1e12)
    return above * 1e-12


def power_up_s(adc: Adc, supply_v: float, thevenin_ohm, vout_v, filter_f: float) -> tuple[np.ndarray, float]:
    """Time after switch-on until the output is within ½ LSB of its final value, per point and worst."""
    half = 0.5 * adc.lsb(supply_v)
    vout = np.asarray(vout_v, dtype=float)
    tau = np.asarray(thevenin_ohm, dtype=float) * filter_f
    with np.errstate(divide="ignore"):
        t = np.where(vout > half, tau * np.log(np.maximum(vout, half) / half), 0.0)
    return t, float(np.max(t))


def check(adc: Adc, supply_v: float, thevenin_ohm, vout_v, stimulus) -> Optional[dict[str, Any]]:
    """The settling report for ``adc.sampling`` (None when there is nothing to check).

    ``thevenin_ohm``, ``vout_v`` and ``stimulus`` are (n,) over the range.
    ``ok`` is True or False when an acquisition time or a sampling interval
    was given to check, None otherwise.
    """
    sampling = adc.sampling
    if sampling is None or (sampling.capacitance_f is None and sampling.filter_f is None):
        return None
    r_th = np.asarray(thevenin_ohm, dtype=float)
    worst = int(np.argmax(r_th))
    r_src, r_sw, n = float(r_th[worst]), sampling.switch_ohm, adc.bits
    out: dict[str, Any] = {"source_ohm": r_src, "source_at": float(np.asarray(stimulus)[worst]), "bits": n}
    verdicts: list[str] = []
    fixes: list[str] = []
    cf, cs = sampling.filter_f or 0.0, sampling.capacitance_f
    if cs is not None:
        _acquisition(out, verdicts, fixes, sampling, n, r_src, r_sw, cs, cf)
    if cf:
        _, t_up = power_up_s(adc, supply_v, r_th, vout_v, cf)
        out["power_up_s"] = t_up
        verdicts.append(f"After switching the divider on, wait {eng(t_up, 's')} for the {eng(cf, 'F')} capacitor "
                        f"to charge within ½ LSB.")
    checked = [out[k] for k in ("acquisition_ok", "interval_ok") if k in out]
    out["ok"] = all(checked) if checked else None
    out["verdict"] = " ".join(verdicts)
    out["fixes"] = fixes
    return out


def _acquisition(out, verdicts, fixes, sampling, n, r_src, r_sw, cs, cf) -> None:
    full = 2.0 ** (n + 1)
    share = cs / (cs + cf)
    excess = math.log(full * share)  # > 0: the step left after charge sharing is above ½ LSB
    t_switch = (n + 1) * math.log(2.0) * r_sw * cs * cf / (cs + cf) if cf else 0.0
    tau = r_src * (cs + cf) + r_sw * cs  # Elmore: the dominant time constant of the two-capacitor ladder
    need = t_switch + tau * max(0.0, excess)
    c_min = (full - 1.0) * cs
    out |= {"required_acquisition_s": need, "acquisition_s": sampling.acquisition_s, "min_filter_f": c_min}
    t_acq = sampling.acquisition_s
    if t_acq is None:
        verdicts.append(f"The {eng(r_src, 'Ω')} source needs an acquisition time of at least {eng(need, 's')} "
                        f"to settle to ½ LSB (give yours to check it).")
    elif t_acq >= need:
        out["acquisition_ok"] = True
        verdicts.append(f"The {eng(r_src, 'Ω')} source settles the sampling capacitor to ½ LSB in "
                        f"{eng(need, 's')}, within the {eng(t_acq, 's')} acquisition time.")
    else:
        out["acquisition_ok"] = False
        verdicts.append(f"The {eng(r_src, 'Ω')} source needs {eng(need, 's')} to settle to ½ LSB; "
                        f"the acquisition time is only {eng(t_acq, 's')}.")
        fixes.append(f"Lengthen the acquisition time to at least {eng(need, 's')}.")
        if excess > 0:
            r_max = ((t_acq - t_switch) / excess - r_sw * cs) / (cs + cf)
            out["max_source_ohm"] = max(r_max, 0.0)
            if r_max > 0:
                fixes.append(f"Or bring the divider's source resistance below {eng(r_max, 'Ω')}.")
    if cf < c_min:
        suggested = _suggest_capacitor(2.0 * c_min)
        interval = -r_src * suggested * math.log(1.0 - full * cs / (cs + suggested))
        out |= {"suggested_filter_f": suggested, "suggested_interval_s": interval}
        if out.get("acquisition_ok") is not True:
            fixes.append(f"Or put {eng(suggested, 'F')} from the pin to ground (at least {eng(c_min, 'F')}, "
                         f"(2^(N+1) − 1)·Cs) and sample no faster than every {eng(interval, 's')}.")
        return
    interval = -r_src * cf * math.log(1.0 - full * share)
    out["min_interval_s"] = interval
    if sampling.interval_s is None:
        verdicts.append(f"The {eng(cf, 'F')} capacitor on the pin holds each sample within ½ LSB; sample no "
                        f"faster than every {eng(interval, 's')}.")
    elif sampling.interval_s >= interval:
        out["interval_ok"] = True
        verdicts.append(f"The {eng(cf, 'F')} capacitor on the pin holds each sample within ½ LSB and refills "
                        f"in {eng(interval, 's')}, inside the {eng(sampling.interval_s, 's')} interval.")
    else:
        out["interval_ok"] = False
        verdicts.append(f"The {eng(cf, 'F')} capacitor on the pin needs {eng(interval, 's')} to refill between "
                        f"samples; they come every {eng(sampling.interval_s, 's')}.")
        fixes.append(f"Sample no faster than every {eng(interval, 's')}, or lower the source resistance.")

"""Predictions from a fitted series R-L-C or tank: retune, rejection, affordable loss.

Every answer comes from the chain response of :mod:`fitkit.chain`, evaluated on floats or
on correlated ``uncertainties`` values, so each carries the fit's error bars.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from scipy.optimize import brentq
from uncertainties import UFloat, wrap

from fitkit.chain import CIRCUITS, TWO_PI, Chain, rejection_db
from fitkit.errors import PredictionError
from fitkit.result import COMPONENTS, CircuitFit, nominal, std_dev
from fitkit.tuning import (
    BandCover,
    band_cover,
    check_capacitor,
    check_hz,
    check_range,
    extremum_of,
    resonance_hz,
    tuning_c,
)
from fitkit.units import format_quantity


def values_from_fit(fit: CircuitFit) -> dict:
    """Correlated R, L and C of a fit, as ``uncertainties`` values.

    Raises
    ------
    PredictionError
        When the fit is not of a series circuit or a tank, or did not determine one of
        the values.
    """
    if fit.topology not in CIRCUITS:
        raise PredictionError(
            f"predictions cover a series R-L-C or a tank; this fit is a {fit.topology} circuit",
            remedy="fit the sweep as a series circuit or a tank (--model series|tank), "
            "or type R, L and C with --value",
        )
    missing = [n for n in COMPONENTS if not fit[n].determined]
    if missing:
        why = fit[missing[0]].reason
        raise PredictionError(
            f"the fit did not determine {', '.join(missing)}" + (f" ({why})" if why else ""),
            remedy="fit again with the missing value given (--known L=220u+-1u), "
            "or type R, L and C with --value",
        )
    u = fit.correlated()
    return {n: u[n] for n in COMPONENTS}


def check_values(values: dict) -> dict:
    """Refuse component values no circuit has; return them unchanged."""
    for name, low_ok in (("R", True), ("L", False), ("C", False)):
        v = nominal(values[name])
        if not math.isfinite(v) or v < 0 or (v == 0 and not low_ok):
            raise PredictionError(
                f"{name} = {v!r} is not a component value",
                remedy=f"give {name} above 0" + (" (R may be 0)" if low_ok else ""),
            )
    return values


def loaded_q(values: dict, chain: Chain, at_hz=None):
    """The circuit's Q with the chain's resistance loading it, at ``at_hz``.

    ``at_hz`` is the chain's peak (or null); by default the circuit's own resonance. With
    ``x = w L`` and ``Rloop`` the resistance the chain presents there
    (:meth:`Chain.loop_ohm_at`, the load capacitance included): a series circuit
    ``x / (R + Rloop)``; a tank, whose dynamic resistance ``R_D = x^2 / R`` the chain
    damps, ``Q Rloop / (Rloop + R_D) = x Rloop / (R Rloop + x^2)`` with ``Q = x / R``
    (derived from the parallel-circuit relations, as for the fit).
    """
    own = resonance_hz(values["L"], values["C"])
    freq = own if at_hz is None else at_hz
    loop = chain.loop_ohm_at(nominal(freq))
    x = TWO_PI * freq * values["L"]
    if chain.circuit == "tank":
        return x * loop / (values["R"] * loop + x * x)
    return x / (values["R"] + loop)


def needed_q(power_ratio: float, freq_hz: float, f0_hz: float) -> float:
    """Loaded Q a single tuned circuit needs for ``power_ratio`` at ``freq_hz``.

    ``sqrt(a - 1) / |y|`` with ``y = f/f0 - f0/f`` (series circuit in a resistive loop).

    Examples
    --------
    >>> round(needed_q(100.0, 1.01e6, 1e6))
    500
    """
    y = freq_hz / f0_hz - f0_hz / freq_hz
    return math.sqrt(power_ratio - 1.0) / abs(y)


@dataclass(frozen=True)
class Carrier:
    """An unwanted carrier and its level relative to the wanted one (dB, + is stronger)."""

    freq_hz: float
    level_db: float = 0.0
    label: str = ""


@dataclass(frozen=True)
class CarrierResult:
    """Rejection of one carrier and the signal-to-interference ratio it leaves."""

    carrier: Carrier
    rejection_db: UFloat

    @property
    def sir_db(self) -> UFloat:
        return self.rejection_db - self.carrier.level_db


@dataclass(frozen=True)
class LossLimit:
    """The largest loss resistance, and smallest loaded Q, that meet a rejection."""

    required_db: float
    binding: Carrier
    r_max_ohm: UFloat
    q_loaded_min: UFloat
    per_carrier: list = field(default_factory=list)  # (Carrier, r_max_ohm) pairs


def loss_limit(
    values: dict, wanted_hz: float, carriers: list, required_db: float, chain: Chain
) -> LossLimit:
    """The largest R (smallest loaded Q) still giving ``required_db`` against every carrier.

    The carrier needing the smallest R binds. R is found on the full chain response (so
    any placement works); its uncertainty comes from L and C through their correlation.

    Raises
    ------
    PredictionError
        For a required rejection of 0 dB or less, or one that even R = 0 cannot give.
    """
    if not (math.isfinite(required_db) and required_db > 0):
        raise PredictionError(
            f"a required rejection of {required_db} dB asks for nothing",
            remedy="give the rejection needed, in dB above 0",
        )
    if not carriers:
        raise PredictionError(
            "a required rejection needs carriers to hold it against",
            remedy="give the unwanted carriers (absolute or as offsets)",
        )
    per = []
    for carrier in carriers:
        solve = wrap(_r_max_solver(carrier, wanted_hz, required_db, chain))
        per.append((carrier, solve(values["L"], values["C"])))
    binding, r_max = min(per, key=lambda pair: nominal(pair[1]))
    q_min = loaded_q({"R": r_max, "L": values["L"], "C": values["C"]}, chain)
    return LossLimit(required_db, binding, r_max, q_min, per)


_MORE_Q = {
    "series": "raise the loaded Q: a larger L with a smaller C, less source and load "
    "resistance in the loop (tap the coil or couple through a transformer), or a second "
    "tuned circuit",
    "tank": "raise the loaded Q: load the tank more lightly (more source and load "
    "resistance across it: tap the coil or couple through a transformer), a smaller L with "
    "a larger C, or a second tuned circuit",
}
_LOSSLESS_OHM = 1e-9  # "no loss": a lossless tank at resonance would divide by zero


def _r_max_solver(carrier: Carrier, wanted_hz: float, required_db: float, chain: Chain):
    def margin(r_ohm, l_h, c_f):
        v = {"R": r_ohm, "L": l_h, "C": c_f}
        return rejection_db(carrier.freq_hz, wanted_hz, v, chain) - required_db

    def solve(l_h: float, c_f: float) -> float:
        best = margin(_LOSSLESS_OHM, l_h, c_f)
        if best < 0:
            raise PredictionError(
                f"even a lossless circuit (R = 0) in this chain rejects the carrier at "
                f"{format_quantity(carrier.freq_hz, 'Hz')} by only {best + required_db:.1f} dB, "
                f"not the {required_db:g} dB required",
                remedy=_MORE_Q[chain.circuit],
            )
        high = max(chain.loop_ohm, 1.0)
        for _ in range(200):
            if margin(high, l_h, c_f) < 0:
                return brentq(margin, _LOSSLESS_OHM, high, args=(l_h, c_f), xtol=1e-12, rtol=1e-13)
            high *= 4.0
        raise PredictionError(  # the chain rejects the carrier whatever the circuit's loss
            f"the carrier at {format_quantity(carrier.freq_hz, 'Hz')} is rejected by "
            f"{required_db:g} dB whatever the circuit's loss",
            remedy="no limit on the loss follows from this carrier; drop it from the list",
        )

    return solve


@dataclass(frozen=True)
class Prediction:
    """Everything ``fitkit predict`` answers, with uncertainties carried through."""

    values: dict  # R, L and C as used (C retuned, as fitted, or as typed)
    c_origin: str
    chain: Chain
    wanted_hz: float
    tune_hz: float
    q_loaded: UFloat
    carriers: list
    band: BandCover | None = None
    limit: LossLimit | None = None
    c_range_f: tuple | None = None
    extremum_hz: UFloat | float | None = None  # the chain's peak (a trap's null), for plots
    notes: tuple = ()  # call-outs: carriers that come out stronger than the wanted one, why

    def to_dict(self) -> dict:
        out = {
            "values": {n: _udict(self.values[n], u) for n, u in zip(COMPONENTS, "ohm H F".split())},
            "c_origin": self.c_origin,
            "chain": self.chain.to_dict(),
            "wanted_hz": self.wanted_hz,
            "tune_hz": self.tune_hz,
            "Q_loaded": _udict(self.q_loaded, ""),
            "c_range_f": None if self.c_range_f is None else list(self.c_range_f),
            "extremum": {
                "kind": self.chain.extremum,
                "freq_hz": None if self.extremum_hz is None else _udict(self.extremum_hz, "Hz"),
            },
            "notes": list(self.notes),
            "carriers": [
                {
                    "freq_hz": r.carrier.freq_hz,
                    "offset_hz": r.carrier.freq_hz - self.wanted_hz,
                    "level_db": r.carrier.level_db,
                    "label": r.carrier.label,
                    "rejection_db": _udict(r.rejection_db, "dB"),
                    "sir_db": _udict(r.sir_db, "dB"),
                }
                for r in self.carriers
            ],
            "band": None,
            "loss_limit": None,
        }
        if self.band is not None:
            b = self.band
            out["band"] = {
                "band_hz": list(b.band_hz),
                "c_needed_f": [_udict(c, "F") for c in b.c_needed_f],
                "ratio_needed": b.ratio_needed,
                "ratio_given": b.ratio_given,
                "covered": b.covered,
            }
        if self.limit is not None:
            lim = self.limit
            out["loss_limit"] = {
                "required_db": lim.required_db,
                "binding_freq_hz": lim.binding.freq_hz,
                "r_max_ohm": _udict(lim.r_max_ohm, "ohm"),
                "q_loaded_min": _udict(lim.q_loaded_min, ""),
                "met_now": nominal(self.values["R"]) <= nominal(lim.r_max_ohm),
            }
        return out


def predict(
    values: dict,
    chain: Chain,
    *,
    wanted_hz: float | None = None,
    tune_hz: float | None = None,
    retune: bool = True,
    carriers: tuple = (),
    c_range_f: tuple | None = None,
    band_hz: tuple | None = None,
    required_db: float | None = None,
) -> Prediction:
    """Retune, reject and invert in one call: what ``fitkit predict`` prints.

    Parameters
    ----------
    values : dict
        ``R``, ``L``, ``C``: floats or correlated ``uncertainties`` values
        (:func:`values_from_fit`).
    chain : Chain
        Where the circuit sits in service (:func:`chain_from_setup` for the bench).
    wanted_hz : float, optional
        The wanted carrier; default the circuit's own resonance (no retune).
    tune_hz : float, optional
        Where to tune, when not on the wanted carrier (a trap on an interferer).
    retune : bool
        Replace C by the value tuning the chain to ``tune_hz`` (or the wanted carrier).
    carriers : tuple of Carrier
        The unwanted carriers.
    c_range_f : (float, float), optional
        The tuning capacitor's range; the tuning C must lie in it.
    band_hz : (float, float), optional
        Band edges, to check the capacitor range against.
    required_db : float, optional
        A rejection every carrier must get: gives the loss limit.

    Returns
    -------
    Prediction

    Raises
    ------
    PredictionError
        For frequencies at or below 0 Hz, a carrier out of the capacitor's reach, or a
        required rejection no loss can give; the message names the value and the fix.

    Examples
    --------
    >>> p = predict({"R": 5.0, "L": 220e-6, "C": 1e-9}, Chain("series", 50.0, 50.0),
    ...             wanted_hz=999e3, carriers=(Carrier(1008e3),))
    >>> round(p.carriers[0].rejection_db, 2)
    0.24
    """
    values = check_values(dict(values))
    own_hz = nominal(resonance_hz(values["L"], values["C"]))
    wanted = own_hz if wanted_hz is None else check_hz(wanted_hz, "wanted carrier")
    tune = wanted if tune_hz is None else check_hz(tune_hz, "tuning frequency")
    origin = "as given"
    if retune and (wanted_hz is not None or tune_hz is not None):
        values["C"] = tuning_c(tune, values, chain)
        origin = "retuned"
        if c_range_f is not None:
            check_capacitor(values["C"], c_range_f, tune, values, chain)
    for carrier in carriers:
        check_hz(carrier.freq_hz, f"carrier {carrier.label or ''}".strip())
    results = [CarrierResult(c, rejection_db(c.freq_hz, wanted, values, chain)) for c in carriers]
    band = None if band_hz is None else band_cover(band_hz, values, chain, c_range_f)
    limit = None
    if required_db is not None:
        limit = loss_limit(values, wanted, list(carriers), required_db, chain)
    extremum = extremum_of(values, chain, tune)
    return Prediction(
        values,
        origin,
        chain,
        wanted,
        tune,
        loaded_q(values, chain, extremum),
        results,
        band,
        limit,
        None if c_range_f is None else check_range(c_range_f),
        extremum,
        tuple(_call_outs(results, wanted, extremum, chain, origin)),
    )


def _call_outs(results: list, wanted_hz: float, extremum, chain: Chain, origin: str) -> list:
    """A line for each carrier that comes out stronger than the wanted one, with the reason."""
    notes = []
    for r in results:
        sir, rejection = nominal(r.sir_db), nominal(r.rejection_db)
        if sir >= 0:
            continue
        name = format_quantity(r.carrier.freq_hz, "Hz")
        if rejection >= 0:
            notes.append(
                f"the carrier at {name} arrives {r.carrier.level_db:.1f} dB above the wanted "
                f"one and the chain takes only {rejection:.2f} dB off it: it comes out "
                f"{-sir:.2f} dB stronger at the output"
            )
            continue
        notes.append(
            f"the carrier at {name} comes out {-rejection:.2f} dB stronger than the wanted "
            f"one: {_off_peak(extremum, wanted_hz, chain, origin)}"
        )
    return notes


def _off_peak(extremum, wanted_hz: float, chain: Chain, origin: str) -> str:
    """Why a carrier gets through better than the wanted one."""
    if extremum is None:
        return f"the chain's response has no {chain.extremum} near the wanted carrier"
    at = format_quantity(nominal(extremum), "Hz")
    if not chain.passes:
        return (
            f"the circuit traps (its null sits at {at}, nearer the wanted carrier than this "
            "one); tune the null onto the unwanted carrier with --tune-to"
        )
    if origin == "as given":
        return f"with C as given the chain's response peaks at {at}, not on the wanted carrier"
    off = nominal(extremum) - wanted_hz
    if abs(off) > 1e-6 * wanted_hz:
        return f"the chain's response peaks at {at}, where it was tuned, not on the wanted carrier"
    return f"the chain's response rises again away from its peak at {at}"


def value_and_error(x) -> tuple:
    """Value and standard error of a float or an ``uncertainties`` value.

    An error below 1e-6 of the value is rounding left over where the error cancels
    (the smallest loaded Q depends on the requirement, not on L and C), so it is 0.
    """
    value, err = nominal(x), std_dev(x)
    return value, (0.0 if err <= 1e-6 * abs(value) else err)


def _udict(x, unit: str) -> dict:
    value, err = value_and_error(x)
    return {"value": value, "u": err, "unit": unit}

"""Predictions from a fitted series R-L-C: retune, rejection of carriers, affordable loss.

Every answer comes from the chain response of :mod:`fitkit.chain`, evaluated on floats or
on correlated ``uncertainties`` values, so each carries the fit's error bars.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from scipy.optimize import brentq
from uncertainties import UFloat, umath, wrap

from fitkit.chain import CIRCUITS, TWO_PI, Chain, Pair, rejection_db
from fitkit.errors import PredictionError
from fitkit.result import COMPONENTS, CircuitFit, nominal, std_dev
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


def check_hz(freq_hz: float, what: str) -> float:
    """Refuse a frequency that is zero, negative or not finite; return it as float."""
    f = float(freq_hz)
    if not (math.isfinite(f) and f > 0):
        raise PredictionError(
            f"the {what} {format_quantity(f, 'Hz')} is not a frequency above 0 Hz",
            remedy="give a frequency above 0 (an offset must land above 0 Hz)",
        )
    return f


def tuning_c(tune_hz: float, l_h, chain: Chain):
    """The capacitance that tunes the chain to ``tune_hz``: ``C = 1 / (w (w L + X))``.

    ``X`` is the reactance the chain adds in the loop: for series placement the load's own
    reactance (a capacitance across the load makes it slightly negative), so the loop
    reactance is zero at ``tune_hz``; for shunt placement 0, so the trap's null (the
    circuit's own resonance, ``C = 1/(w^2 L)``) sits there.

    Raises
    ------
    PredictionError
        When no capacitance can tune the chain there.
    """
    w = TWO_PI * check_hz(tune_hz, "tuning frequency")
    if chain.circuit == "tank":
        return 1.0 / (w * w * l_h)  # the tank's own resonance on the carrier
    extra = 0.0
    if chain.placement == "series" and chain.load_f:
        load = 1.0 / Pair(1.0 / chain.load_ohm, w * chain.load_f)
        extra = load.im
    needed = w * l_h + extra
    if nominal(needed) <= 0:
        raise PredictionError(
            f"no capacitance tunes this chain to {format_quantity(tune_hz, 'Hz')}: the "
            "load's capacitance outweighs the coil there",
            remedy="lower the load capacitance or use a larger L",
        )
    return 1.0 / (w * needed)


def resonance_hz(l_h, c_f):
    """The circuit's own resonance ``1 / (2 pi sqrt(L C))``."""
    return 1.0 / (TWO_PI * umath.sqrt(l_h * c_f))


def loaded_q(values: dict, chain: Chain):
    """The circuit's Q with the chain's resistance loading it, at its own resonance.

    A series circuit: ``w0 L / (R + Rloop)``. A tank, whose dynamic resistance
    ``R_D = L / (R C)`` the chain's resistance damps: ``Q Rloop / (Rloop + R_D)`` with
    ``Q = w0 L / R`` (derived from the parallel-circuit relations, as for the fit).
    """
    w0 = TWO_PI * resonance_hz(values["L"], values["C"])
    if chain.circuit == "tank":
        r_dynamic = values["L"] / (values["R"] * values["C"])
        return (w0 * values["L"] / values["R"]) * chain.loop_ohm / (chain.loop_ohm + r_dynamic)
    return w0 * values["L"] / (values["R"] + chain.loop_ohm)


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


def check_capacitor(c_f, c_range_f: tuple, tune_hz: float, l_h) -> None:
    """Refuse a tuning capacitance outside the capacitor's range, naming what it reaches."""
    c_min, c_max = _check_range(c_range_f)
    c = nominal(c_f)
    if c_min <= c <= c_max:
        return
    f_lo, f_hi = (nominal(resonance_hz(l_h, x)) for x in (c_max, c_min))
    side = "above the capacitor's maximum" if c > c_max else "below the capacitor's minimum"
    raise PredictionError(
        f"tuning to {format_quantity(tune_hz, 'Hz')} needs C = {format_quantity(c, 'F')}, "
        f"{side}; the range {format_quantity(c_min, 'F')} to {format_quantity(c_max, 'F')} "
        f"tunes this L from about {format_quantity(f_lo, 'Hz')} to {format_quantity(f_hi, 'Hz')}",
        remedy="choose a carrier in that span, a capacitor that reaches "
        f"{format_quantity(c, 'F')}, or another coil",
    )


def _check_range(pair: tuple, unit: str = "F") -> tuple:
    lo, hi = (float(x) for x in pair)
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise PredictionError(
            f"the range {lo!r} to {hi!r} {unit} is not a range of positive values",
            remedy="give the smaller value first, both above 0, e.g. 20p..500p",
        )
    return lo, hi


@dataclass(frozen=True)
class BandCover:
    """Whether a capacitor range tunes a band, and the range that would."""

    band_hz: tuple
    c_needed_f: tuple  # (at the top of the band, at the bottom): ufloats
    ratio_needed: float
    ratio_given: float | None
    covered: bool | None


def band_cover(band_hz: tuple, l_h, chain: Chain, c_range_f: tuple | None = None) -> BandCover:
    """The capacitance a band needs with this L, and whether ``c_range_f`` covers it.

    A range covers the band when it reaches both ends, which needs at least
    ``Cmax/Cmin >= (fmax/fmin)^2``.
    """
    f_lo, f_hi = _check_range(band_hz, "Hz")
    needed = (tuning_c(f_hi, l_h, chain), tuning_c(f_lo, l_h, chain))
    given = covered = None
    if c_range_f is not None:
        c_min, c_max = _check_range(c_range_f)
        given = c_max / c_min
        covered = c_min <= nominal(needed[0]) and nominal(needed[1]) <= c_max
    return BandCover((f_lo, f_hi), needed, (f_hi / f_lo) ** 2, given, covered)


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

    def to_dict(self) -> dict:
        out = {
            "values": {n: _udict(self.values[n], u) for n, u in zip(COMPONENTS, "ohm H F".split())},
            "c_origin": self.c_origin,
            "chain": self.chain.to_dict(),
            "wanted_hz": self.wanted_hz,
            "tune_hz": self.tune_hz,
            "q_loaded": _udict(self.q_loaded, ""),
            "c_range_f": None if self.c_range_f is None else list(self.c_range_f),
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
        values["C"] = tuning_c(tune, values["L"], chain)
        origin = "retuned"
        if c_range_f is not None:
            check_capacitor(values["C"], c_range_f, tune, values["L"])
    for carrier in carriers:
        check_hz(carrier.freq_hz, f"carrier {carrier.label or ''}".strip())
    results = [CarrierResult(c, rejection_db(c.freq_hz, wanted, values, chain)) for c in carriers]
    band = None if band_hz is None else band_cover(band_hz, values["L"], chain, c_range_f)
    limit = None
    if required_db is not None:
        limit = loss_limit(values, wanted, list(carriers), required_db, chain)
    return Prediction(
        values,
        origin,
        chain,
        wanted,
        tune,
        loaded_q(values, chain),
        results,
        band,
        limit,
        None if c_range_f is None else _check_range(c_range_f),
    )


def value_and_error(x) -> tuple:
    """Value and standard error of a float or an ``uncertainties`` value.

    An error below 1e-6 of the value is rounding left over where the error cancels
    (the smallest loaded Q depends on the requirement, not on L and C), so it is 0.
    """
    value, err = nominal(x), std_dev(x)
    return value, (0.0 if err <= 1e-6 * abs(value) else err)


def _udict(x, unit: str) -> dict:
    value, err = value_and_error(x)
    return {"value": value, "stderr": err, "unit": unit}

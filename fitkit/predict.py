"""Predictions from a fitted series R-L-C: retune, rejection of carriers, affordable loss.

Every answer comes from the chain response of :mod:`fitkit.chain`, evaluated on floats or
on correlated ``uncertainties`` values, so each carries the fit's error bars.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from scipy.optimize import brentq
from uncertainties import UFloat, umath, wrap

from fitkit.chain import (
    CIRCUITS,
    TWO_PI,
    Chain,
    bracketed_root,
    extremum_hz,
    rejection_db,
    response_slope,
)
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


def tuning_c(tune_hz: float, values: dict, chain: Chain):
    """The capacitance that puts the chain's response peak (a trap's null) on ``tune_hz``.

    Solved on the whole chain response (:mod:`fitkit.chain`): source and load resistance,
    the load's capacitance and the placement all count, and so does the circuit's own loss.
    In a resistive loop a series circuit's peak is its own resonance, ``C = 1/(w^2 L)``;
    a capacitance across the load, or a tank's loss, moves it.

    Parameters
    ----------
    tune_hz : float
        Where the peak (or null) must sit.
    values : dict
        ``R`` and ``L``: floats or correlated ``uncertainties`` values (C is not used).
    chain : Chain
        The chain in service.

    Returns
    -------
    float or UFloat
        C, carrying the uncertainties of R and L.

    Raises
    ------
    PredictionError
        When no capacitance puts the peak there (the chain's own capacitance holds it away).
    """
    solve = wrap(_c_solver(check_hz(tune_hz, "tuning frequency"), chain))
    return solve(values["R"], values["L"])


def _c_solver(tune_hz: float, chain: Chain):
    sign = 1.0 if chain.passes else -1.0

    def beyond(c_f, r_ohm, l_h):  # above 0 while C is too large (the extremum lies below)
        return sign * response_slope(tune_hz, {"R": r_ohm, "L": l_h, "C": c_f}, chain)

    def solve(r_ohm: float, l_h: float) -> float:
        c_own = 1.0 / ((TWO_PI * tune_hz) ** 2 * l_h)
        if r_ohm == 0 and not chain.passes:
            return c_own  # a lossless trap's null is its own resonance, whatever the chain
        c_f = bracketed_root(lambda c: beyond(c, r_ohm, l_h), c_own)
        if c_f is None:
            side = "below" if beyond(c_own, r_ohm, l_h) > 0 else "above"
            held = (
                f"the load's {format_quantity(chain.load_f, 'F')} with this L holds it {side} that"
                if chain.load_f
                else f"the chain's loading holds it {side} that"
            )
            raise PredictionError(
                f"no capacitance puts this chain's {chain.extremum} on "
                f"{format_quantity(tune_hz, 'Hz')}: {held}",
                remedy="use a smaller L, less capacitance across the load (shorter leads, "
                "a low-capacitance probe), or tap the load down the coil",
            )
        return c_f

    return solve


def extremum_of(values: dict, chain: Chain, near_hz: float):
    """The chain's peak (a trap's null) nearest ``near_hz``, with the values' uncertainty.

    Returns
    -------
    float, UFloat or None
        None when the response has no peak or null there.
    """

    def solve(r_ohm: float, l_h: float, c_f: float) -> float:
        if r_ohm == 0 and not chain.passes:
            return 1.0 / (TWO_PI * math.sqrt(l_h * c_f))  # the lossless trap's pole
        found = extremum_hz({"R": r_ohm, "L": l_h, "C": c_f}, chain, near_hz)
        return math.nan if found is None else found

    found = wrap(solve)(values["R"], values["L"], values["C"])
    return None if math.isnan(nominal(found)) else found


def resonance_hz(l_h, c_f):
    """The circuit's own resonance ``1 / (2 pi sqrt(L C))``."""
    return 1.0 / (TWO_PI * umath.sqrt(l_h * c_f))


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


def check_capacitor(c_f, c_range_f: tuple, tune_hz: float, values: dict, chain: Chain) -> None:
    """Refuse a tuning capacitance outside the capacitor's range, naming what it reaches.

    The span reached is where the range's ends put the chain's peak (or null).
    """
    c_min, c_max = _check_range(c_range_f)
    c = nominal(c_f)
    if c_min <= c <= c_max:
        return
    side = "above the capacitor's maximum" if c > c_max else "below the capacitor's minimum"
    plain = {n: nominal(values[n]) for n in ("R", "L")}
    ends = []
    for c_end in (c_max, c_min):
        own = nominal(resonance_hz(plain["L"], c_end))
        found = extremum_of({**plain, "C": c_end}, chain, own)
        ends.append("?" if found is None else format_quantity(nominal(found), "Hz"))
    raise PredictionError(
        f"tuning to {format_quantity(tune_hz, 'Hz')} needs C = {format_quantity(c, 'F')}, "
        f"{side}; the range {format_quantity(c_min, 'F')} to {format_quantity(c_max, 'F')} "
        f"puts this chain's {chain.extremum} from about {ends[0]} to {ends[1]}",
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


def band_cover(
    band_hz: tuple, values: dict, chain: Chain, c_range_f: tuple | None = None
) -> BandCover:
    """The capacitance a band needs in this chain, and whether ``c_range_f`` covers it.

    A range covers the band when it reaches both ends; in a resistive loop that needs at
    least ``Cmax/Cmin >= (fmax/fmin)^2`` (``C = 1/(w^2 L)``), and a capacitance across the
    load asks for more.
    """
    f_lo, f_hi = _check_range(band_hz, "Hz")
    needed = (tuning_c(f_hi, values, chain), tuning_c(f_lo, values, chain))
    given = covered = None
    if c_range_f is not None:
        c_min, c_max = _check_range(c_range_f)
        given = c_max / c_min
        covered = c_min <= nominal(needed[0]) and nominal(needed[1]) <= c_max
    ratio = nominal(needed[1]) / nominal(needed[0])
    return BandCover((f_lo, f_hi), needed, ratio, given, covered)


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
            "q_loaded": _udict(self.q_loaded, ""),
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
        None if c_range_f is None else _check_range(c_range_f),
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
    return {"value": value, "stderr": err, "unit": unit}

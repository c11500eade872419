"""Tuning on the whole chain: the C that puts the chain's peak (a trap's null) on a carrier.

The chain's response (:mod:`fitkit.chain`) is solved for C with every element counted:
source and load resistance, the load's capacitance, the placement and the circuit's own
loss. R and L may be correlated ``uncertainties`` values; C then carries their errors.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from uncertainties import umath, wrap

from fitkit.chain import TWO_PI, Chain, bracketed_root, extremum_hz, response_slope
from fitkit.errors import PredictionError
from fitkit.result import nominal
from fitkit.units import format_quantity


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


def check_capacitor(c_f, c_range_f: tuple, tune_hz: float, values: dict, chain: Chain) -> None:
    """Refuse a tuning capacitance outside the capacitor's range, naming what it reaches.

    The span reached is where the range's ends put the chain's peak (or null).
    """
    c_min, c_max = check_range(c_range_f)
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


def check_range(pair: tuple, unit: str = "F") -> tuple:
    """A (low, high) pair of positive values, low first; refused otherwise."""
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
    f_lo, f_hi = check_range(band_hz, "Hz")
    needed = (tuning_c(f_hi, values, chain), tuning_c(f_lo, values, chain))
    given = covered = None
    if c_range_f is not None:
        c_min, c_max = check_range(c_range_f)
        given = c_max / c_min
        covered = c_min <= nominal(needed[0]) and nominal(needed[1]) <= c_max
    ratio = nominal(needed[1]) / nominal(needed[0])
    return BandCover((f_lo, f_hi), needed, ratio, given, covered)

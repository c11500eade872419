"""The chain a tuned circuit sits in, and its response: one formula for every placement.

The circuit sits either in series between a source resistance and a load, or across the
line between them (a trap); the load may have a capacitance across it (a probe, a
receiver's input). With ``Yl`` the load admittance and ``Zc = R + j (w L - 1/(w C))`` the
circuit, the voltage transfer from the source EMF to the load is ``1 / D`` with::

    series:  D = 1 + (Rsource + Zc) Yl
    shunt:   D = 1 + Rsource (1/Zc + Yl)

so the power ratio of the wanted carrier to an unwanted one at the output, at equal drive,
is ``|D(f_unwanted)|^2 / |D(f_wanted)|^2``. For a series circuit in a resistive loop this is
the textbook ``1 + Q_L^2 (f/f0 - f0/f)^2`` with ``Q_L = w0 L / (R + Rsource + Rload)``.

``D`` is computed in real arithmetic on (real, imaginary) pairs, because ``uncertainties``
has no complex numbers: the same code then runs on floats, numpy arrays (plots) and
correlated ``uncertainties`` values (error bars that keep the L-C correlation).

The chain's response has a peak where the circuit passes the carrier (a series circuit in
series, a tank across the line) and a null where it traps it (a series circuit across the
line, a tank in series); :func:`extremum_hz` finds it on the whole chain, load capacitance
included. Its slope ``d|D|^2/df`` is taken by the complex-step derivative (Squire and
Trapp, SIAM Review 40, 1998, from memory), exact to rounding because every operation on
the pairs is analytic.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq
from uncertainties import umath

from fitkit.errors import PredictionError
from fitkit.result import nominal
from fitkit.setups import Setup
from fitkit.units import format_quantity

PLACEMENTS = ("series", "shunt")
#: the circuits a chain can hold: a series R-L-C, or a tank (coil with loss R across C)
CIRCUITS = ("series", "tank")
TWO_PI = 2.0 * math.pi


@dataclass(frozen=True)
class Pair:
    """A complex number as two real parts, for values numpy's complex type cannot hold."""

    re: object
    im: object = 0.0

    def __add__(self, other):
        o = as_pair(other)
        return Pair(self.re + o.re, self.im + o.im)

    __radd__ = __add__

    def __mul__(self, other):
        o = as_pair(other)
        return Pair(self.re * o.re - self.im * o.im, self.re * o.im + self.im * o.re)

    __rmul__ = __mul__

    def __rtruediv__(self, other):
        o = as_pair(other)
        d = self.abs2()
        return Pair((o.re * self.re + o.im * self.im) / d, (o.im * self.re - o.re * self.im) / d)

    def abs2(self):
        return self.re * self.re + self.im * self.im


def as_pair(x) -> Pair:
    return x if isinstance(x, Pair) else Pair(x, 0.0)


@dataclass(frozen=True)
class Chain:
    """Where the circuit sits in service.

    Attributes
    ----------
    placement : str
        ``"series"`` (between source and load) or ``"shunt"`` (across the line).
    source_ohm : float
        Resistance of the source driving the chain.
    load_ohm : float or None
        Resistance of the load; ``None`` for no resistive load (shunt placement only).
    load_f : float
        Capacitance across the load (probe, input capacitance).
    origin : str
        Where the description came from, for the report.
    circuit : str
        What sits in the chain: ``"series"`` R-L-C or ``"tank"`` (a coil with loss R
        across C), one of :data:`CIRCUITS`.
    """

    placement: str = "series"
    source_ohm: float = 0.0
    load_ohm: float | None = None
    load_f: float = 0.0
    origin: str = "as described"
    circuit: str = "series"

    def __post_init__(self) -> None:
        if self.placement not in PLACEMENTS:
            raise PredictionError(
                f"unknown placement {self.placement!r}", remedy="choose series or shunt"
            )
        if self.circuit not in CIRCUITS:
            raise PredictionError(
                f"predictions cover a series R-L-C or a tank, not a {self.circuit} circuit",
                remedy="fit the sweep as a series circuit or a tank (--model series|tank)",
            )
        for name in ("source_ohm", "load_f"):
            value = getattr(self, name)
            if not (math.isfinite(value) and value >= 0):
                raise PredictionError(
                    f"the chain's {name} = {value!r} must be a finite value >= 0",
                    remedy="give a resistance or capacitance of 0 or more",
                )
        if self.load_ohm is not None and not (math.isfinite(self.load_ohm) and self.load_ohm > 0):
            raise PredictionError(
                f"the chain's load resistance {self.load_ohm!r} ohm must be above 0",
                remedy="give the load's input resistance, e.g. 50 or 2k",
            )
        if self.placement == "series" and self.load_ohm is None:
            raise PredictionError(
                "a series circuit needs a load resistance to deliver to",
                remedy="give the load resistance of the chain (e.g. the receiver's input)",
            )
        if self.placement == "shunt" and self.source_ohm == 0:
            raise PredictionError(
                "a circuit across a line driven from 0 ohm cannot change the output",
                remedy="give the source resistance that drives the line",
            )

    @property
    def passes(self) -> bool:
        """True when the response peaks at the circuit's resonance; False for a trap (null)."""
        return (self.placement == "series") == (self.circuit == "series")

    @property
    def extremum(self) -> str:
        """``"peak"`` or ``"null"``: what the circuit puts in the chain's response."""
        return "peak" if self.passes else "null"

    def loop_ohm_at(self, freq_hz):
        """The resistance the chain presents to the circuit at ``freq_hz``.

        As :attr:`loop_ohm`, with the load capacitance in the load: the real part of
        ``Rsource + Zl`` (series placement) or of ``Rsource || Zl`` (a series circuit
        across the line), the resistance in series with the circuit. A tank across the line
        has ``Rsource || Rload`` across it; the load's capacitance adds to the tank's own.
        """
        yl = load_admittance(freq_hz, self)
        if self.placement == "series":
            return self.source_ohm + (1.0 / yl).re
        if self.circuit == "tank":
            return self.loop_ohm
        return (1.0 / (yl + 1.0 / self.source_ohm)).re

    @property
    def loop_ohm(self) -> float:
        """Resistance the chain puts in series with the circuit (sets the loaded Q)."""
        if self.placement == "series":
            return self.source_ohm + self.load_ohm
        if self.load_ohm is None:
            return self.source_ohm
        return self.source_ohm * self.load_ohm / (self.source_ohm + self.load_ohm)

    def describe(self) -> str:
        """One line: placement and resistances."""
        where = "in series between" if self.placement == "series" else "across the line between"
        if self.circuit == "tank":
            where = "a tank " + where
        load = (
            "no resistive load"
            if self.load_ohm is None
            else (f"load {format_quantity(self.load_ohm, 'ohm')}")
        )
        if self.load_f:
            load += f" || {format_quantity(self.load_f, 'F')}"
        text = f"{where} source {format_quantity(self.source_ohm, 'ohm')} and {load}"
        return f"{text} ({self.origin})"

    def to_dict(self) -> dict:
        return {
            "placement": self.placement,
            "circuit": self.circuit,
            "source_ohm": self.source_ohm,
            "load_ohm": self.load_ohm,
            "load_f": self.load_f,
            "loop_ohm": self.loop_ohm,
            "origin": self.origin,
        }


def chain_from_setup(setup: dict) -> Chain:
    """The chain the circuit sat in on the bench, from a fit's ``setup`` dictionary.

    Raises
    ------
    PredictionError
        For benches with no chain (an impedance or reflection reading).
    """
    s = Setup(**setup)
    origin = "the bench setup"
    source = s.source_ohm if s.source_in_loop else 0.0
    if s.bench == "divider":
        return Chain("series", source, s.sense_ohm, s.probe_f, origin)
    if s.bench == "across":  # the circuit across the line behind the feed, the probe as load
        return Chain("shunt", source + s.feed_ohm, None, s.probe_f, origin)
    if s.bench in ("series-through", "shunt-through"):
        return Chain(s.bench.split("-")[0], s.z0_ohm, s.z0_ohm, 0.0, origin)
    raise PredictionError(
        f"a {s.bench} bench reads the circuit alone, with no chain around it",
        remedy="describe the chain in service: placement, source and load resistance",
    )


def load_admittance(freq_hz, chain: Chain) -> Pair:
    """``Yl = 1/Rload + j w Cload`` (no resistive load: the capacitance alone)."""
    g = 0.0 if chain.load_ohm is None else 1.0 / chain.load_ohm
    return Pair(g, TWO_PI * freq_hz * chain.load_f)


def denominator_abs2(freq_hz, values: dict, chain: Chain):
    """``|D|^2`` of the chain (see the module docstring); floats, arrays or ufloats."""
    w = TWO_PI * freq_hz
    if chain.circuit == "tank":
        zc = 1.0 / (1.0 / Pair(values["R"], w * values["L"]) + Pair(0.0, w * values["C"]))
    else:
        zc = Pair(values["R"], w * values["L"] - 1.0 / (w * values["C"]))
    yl = load_admittance(freq_hz, chain)
    if chain.placement == "series":
        d = 1.0 + (chain.source_ohm + zc) * yl
    else:
        d = 1.0 + chain.source_ohm * (1.0 / zc + yl)
    return d.abs2()


def response_slope(freq_hz: float, values: dict, chain: Chain) -> float:
    """``d|D|^2/df`` at ``freq_hz`` (floats only), by the complex-step derivative."""
    step = 1e-20 * freq_hz
    plain = {n: nominal(v) for n, v in values.items()}
    return denominator_abs2(complex(freq_hz, step), plain, chain).imag / step


def extremum_hz(values: dict, chain: Chain, near_hz: float) -> float | None:
    """The chain's response peak (or a trap's null) nearest ``near_hz``; None without one.

    Examples
    --------
    >>> chain = Chain("series", 50.0, 50.0)
    >>> round(extremum_hz({"R": 5.0, "L": 220e-6, "C": 1e-9}, chain, 300e3))
    339319
    """
    sign = 1.0 if chain.passes else -1.0

    def beyond(f):  # above 0 where f lies above the extremum
        return sign * response_slope(f, values, chain)

    return bracketed_root(beyond, near_hz)


def bracketed_root(func, start: float) -> float | None:
    """The root of an increasing ``func`` nearest ``start`` (> 0), searched geometrically.

    None when none lies within a factor of about 1e21 either side.
    """
    first = func(start)
    if first == 0:
        return start
    down = first > 0
    edge, step = start, 1e-3
    for _ in range(80):
        other = edge / (1.0 + step) if down else edge * (1.0 + step)
        if (func(other) < 0) == down:
            lo, hi = (other, edge) if down else (edge, other)
            return brentq(func, lo, hi, xtol=1e-15 * start, rtol=1e-14)
        edge, step = other, min(step * 2.0, 1.0)
    return None


def rejection_db(freq_hz: float, wanted_hz: float, values: dict, chain: Chain):
    """Rejection of a carrier at ``freq_hz`` relative to the wanted one, in dB, equal drive.

    Parameters
    ----------
    freq_hz, wanted_hz : float
        The unwanted and the wanted carrier.
    values : dict
        ``R``, ``L``, ``C`` as floats or (correlated) ``uncertainties`` values.
    chain : Chain
        Where the circuit sits.

    Returns
    -------
    float or UFloat
        ``10 log10(P_wanted / P_unwanted)`` at the load.

    Examples
    --------
    >>> chain = Chain("series", 0.0, 50.0)
    >>> round(rejection_db(1.01e6, 1e6, {"R": 0.0, "L": 7.957747e-4, "C": 3.183099e-11},
    ...                    chain), 2)
    6.96
    """
    ratio = denominator_abs2(freq_hz, values, chain) / denominator_abs2(wanted_hz, values, chain)
    return 10.0 * umath.log10(ratio)


def response_db(freq_hz: np.ndarray, wanted_hz: float, values: dict, chain: Chain) -> np.ndarray:
    """The chain's response in dB relative to the wanted carrier (nominal values, arrays)."""
    plain = {n: nominal(v) for n, v in values.items()}
    f = np.asarray(freq_hz, dtype=np.float64)
    ratio = denominator_abs2(wanted_hz, plain, chain) / denominator_abs2(f, plain, chain)
    return 10.0 * np.log10(ratio)

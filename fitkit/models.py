"""lmfit Models of each circuit's impedance, to use on their own with lmfit.

Each class follows the pattern of lmfit's built-in models: the formula in its docstring,
parameter hints (bounds, and derived values by ``expr``, whose uncertainties lmfit
propagates with the correlations) set in ``__init__``, and ``guess(data, f=...)`` that
returns starting :class:`lmfit.Parameters` from fitkit's closed-form start (the linear
least squares of :mod:`fitkit.estimate`). The independent variable is the frequency
``f`` in Hz; the data are complex impedances in ohm.

The varied parameters are the well-conditioned ones fitkit itself fits: the loss ``R``
(ohm), the resonance ``f0`` (Hz) and ``Q = 2 pi f0 L / R``; ``L`` and ``C`` (and a coil's
``C_self``, from its self-resonance ``f_self``) are derived, so their errors and
correlations come out of the fit. Raw L and C (1e-4 H against 1e-12 F) would leave the
least squares ill-conditioned. ``from_components(R=..., L=..., C=...)`` makes parameters
from component values.

A loss that grows as sqrt(f) (wire loss once the skin depth is well below the wire's
radius) is an option of every model: ``sqrt_loss=True`` varies ``skin``, the share
``x = k sqrt(f0) / r_dc`` of the loss at f0 that grows, so ``r(f) = R (1 + x sqrt(f/f0))
/ (1 + x)`` with R the loss at the resonance, as ``fitkit fit --model tank-sqrtf`` does;
``R_dc`` and ``k_skin`` (``r = R_dc + k_skin sqrt(f)``) are derived.

Examples
--------
>>> import numpy as np
>>> from fitkit.models import SeriesRLCModel
>>> f = np.linspace(300e3, 400e3, 201)
>>> model = SeriesRLCModel()
>>> z = model.eval(model.from_components(R=6.8, L=220e-6, C=1e-9), f=f)
>>> result = model.fit(z, model.guess(z, f=f), f=f)
>>> print(f"L = {result.params['L'].value * 1e6:.2f} uH, f0 = {result.params['f0'].value:.0f} Hz")
L = 220.00 uH, f0 = 339319 Hz
"""

from __future__ import annotations

import lmfit
import numpy as np
from lmfit.models import update_param_vals

from fitkit.circuits import TWO_PI, coil_in_series, series_rlc, tank
from fitkit.topologies import TOPOLOGIES

__all__ = ["CoilModel", "SeriesRLCModel", "TankModel"]


def _components(f0, q, r):
    """L and C from the resonance, Q and the loss (the same for series and tank)."""
    w0 = TWO_PI * f0
    return q * r / w0, 1.0 / (w0 * q * r)


class _CircuitModel(lmfit.Model):
    """What the circuit models share: ``f`` as the variable, bounds, L and C, guess()."""

    topology = "series"

    def __init__(self, func, *, sqrt_loss=False, prefix="", nan_policy="raise", **kwargs):
        self.sqrt_loss = sqrt_loss
        kwargs.update({"prefix": prefix, "nan_policy": nan_policy, "independent_vars": ["f"]})
        super().__init__(func, **kwargs)
        p = self.prefix
        for name in self._param_root_names:
            self.set_param_hint(name, min=0.0)
        self.set_param_hint("L", expr=f"{p}Q*{p}R / (2*pi*{p}f0)")
        self.set_param_hint("C", expr=f"1 / (2*pi*{p}f0*{p}Q*{p}R)")
        if sqrt_loss:
            self.set_param_hint("skin", value=1.0, min=0.0)
            self.set_param_hint("R_dc", expr=f"{p}R / (1 + {p}skin)")
            self.set_param_hint("k_skin", expr=f"{p}R*{p}skin / ((1 + {p}skin)*sqrt({p}f0))")
        else:
            self.set_param_hint("skin", value=0.0, vary=False)

    @staticmethod
    def _loss(f, r, f0, skin):
        """R at each frequency (R at f0; grown as sqrt(f) by the share ``skin``)."""
        return r * (1.0 + skin * np.sqrt(np.asarray(f, dtype=float) / f0)) / (1.0 + skin)

    def from_components(self, **values) -> lmfit.Parameters:
        """Parameters for component values: ``R``, ``L``, ``C`` (and ``C_self``), SI."""
        r, ind, c = values.pop("R"), values.pop("L"), values.pop("C")
        f0 = 1.0 / (TWO_PI * np.sqrt(ind * c))
        given = {"R": r, "f0": f0, "Q": TWO_PI * f0 * ind / r}
        if "C_self" in values:
            given["f_self"] = 1.0 / (TWO_PI * np.sqrt(ind * values.pop("C_self")))
        return self.make_params(**{self.prefix + k: v for k, v in given.items()}, **values)

    def guess(self, data, f=None, **kwargs):
        """Starting parameters from fitkit's closed-form estimate on the impedance ``data``.

        Parameters
        ----------
        data : array of complex
            Measured impedance, ohm.
        f : array of float
            Frequencies, Hz (ascending).
        **kwargs
            Parameter values to use instead, as in lmfit's built-in models.

        Returns
        -------
        lmfit.Parameters

        Raises
        ------
        ValueError
            When ``f`` is not given.
        """
        from fitkit.estimate import estimate_start
        from fitkit.setups import Setup
        from fitkit.sweep import Sweep

        if f is None:
            raise ValueError("guess() needs the frequencies: guess(data, f=f)")
        setup = Setup(bench="impedance", kind="impedance")
        sweep = Sweep(np.asarray(f, dtype=float), np.asarray(data), "impedance")
        topology = TOPOLOGIES[self.topology + ("-sqrtf" if self.sqrt_loss else "")]
        start = estimate_start(sweep, setup, topology)
        comps = topology.components(setup, start.f0_hz, start.q, start.scale_ohm, start.extras)
        r = float(comps["R"])
        values = {"R": r, "f0": start.f0_hz, "Q": TWO_PI * start.f0_hz * float(comps["L"]) / r}
        if "f_self" in start.extras:
            values["f_self"] = float(start.extras["f_self"])
        values["skin"] = float(start.extras.get("skin", 0.0))
        params = self.make_params(**{self.prefix + k: v for k, v in values.items()})
        return update_param_vals(params, self.prefix, **kwargs)


class SeriesRLCModel(_CircuitModel):
    r"""R, L and C in series.

    .. math::

        Z(f) = R\,k(f) + j 2\pi f L + \frac{1}{j 2\pi f C},
        \quad L = \frac{Q R}{2\pi f_0}, \quad C = \frac{1}{2\pi f_0 Q R}

    with ``k(f) = 1`` (or the sqrt(f) growth of ``sqrt_loss``). Varied: ``R`` (ohm),
    ``f0`` (Hz), ``Q``, bounded at 0. Derived: ``L`` (H), ``C`` (F) and the -3 dB
    ``bandwidth = f0 / Q`` (Hz).
    """

    topology = "series"

    def __init__(self, *, sqrt_loss=False, **kwargs):
        def series_impedance(f, R, f0, Q, skin=0.0):
            return series_rlc(f, self._loss(f, R, f0, skin), *_components(f0, Q, R))

        super().__init__(series_impedance, sqrt_loss=sqrt_loss, **kwargs)
        self.set_param_hint("bandwidth", expr=f"{self.prefix}f0 / {self.prefix}Q")


class TankModel(_CircuitModel):
    r"""A coil (L with series loss R) across C: a parallel tank.

    .. math::

        Z(f) = \left(\frac{1}{R\,k(f) + j 2\pi f L} + j 2\pi f C\right)^{-1},
        \quad L = \frac{Q R}{2\pi f_0}, \quad C = \frac{1}{2\pi f_0 Q R}

    Varied: ``R`` (ohm), ``f0`` (Hz), ``Q``, bounded at 0. Derived: ``L``, ``C`` and the
    dynamic resistance at resonance ``R_dynamic = L / (R C)`` (ohm).
    """

    topology = "tank"

    def __init__(self, *, sqrt_loss=False, **kwargs):
        def tank_impedance(f, R, f0, Q, skin=0.0):
            return tank(f, self._loss(f, R, f0, skin), *_components(f0, Q, R))

        super().__init__(tank_impedance, sqrt_loss=sqrt_loss, **kwargs)
        p = self.prefix
        self.set_param_hint("R_dynamic", expr=f"{p}L / ({p}R*{p}C)")


class CoilModel(_CircuitModel):
    r"""A real coil (L, loss R, self-capacitance C_self across both) in series with C.

    .. math::

        Z(f) = \left(\frac{1}{R\,k(f) + j 2\pi f L} + j 2\pi f C_{self}\right)^{-1}
               + \frac{1}{j 2\pi f C},
        \quad C_{self} = \frac{1}{(2\pi f_{self})^2 L}

    with L and C from ``f0``, ``Q`` and ``R`` as for :class:`SeriesRLCModel`. Varied:
    ``R``, ``f0``, ``Q`` and the coil's self-resonance ``f_self`` (Hz), bounded at 0.
    Derived: ``L``, ``C``, ``C_self`` (F).
    """

    topology = "coil"

    def __init__(self, *, sqrt_loss=False, **kwargs):
        def coil_impedance(f, R, f0, Q, f_self, skin=0.0):
            ind, c = _components(f0, Q, R)
            c_self = 1.0 / ((TWO_PI * f_self) ** 2 * ind)
            return coil_in_series(f, self._loss(f, R, f0, skin), ind, c, c_self)

        super().__init__(coil_impedance, sqrt_loss=sqrt_loss, **kwargs)
        p = self.prefix
        self.set_param_hint("C_self", expr=f"1 / ((2*pi*{p}f_self)**2 * {p}L)")

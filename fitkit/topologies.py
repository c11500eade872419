"""Topologies in the fit's well-conditioned terms.

Every topology is fitted through the same internal numbers: the resonance f0, a Q and a
scale resistance (plus, for a coil with self-capacitance, its self-resonance). Each class
maps them to component values and back; the maps use only arithmetic, so they work on
plain floats and on correlated ``uncertainties`` values alike.

- ``series``: R, L, C in series. q is the loaded Q, ``w0 L / (R + Rfixture)``; the scale
  is the loop resistance ``R + Rfixture``.
- ``tank``: a coil (L with series loss R) across C. q is the tank's own Q, ``w0 L / R``;
  the scale is its dynamic resistance at resonance ``L / (R C)``.
- ``coil``: a real coil (L, loss R, self-capacitance Cself across it) in series with C;
  as ``series`` plus the coil's self-resonance.

Each topology also comes with a loss that grows with frequency as wire
loss does once the skin depth is well below the wire's radius (skin depth
``sqrt(rho / (pi f mu))``; any electromagnetics text): ``r(f) = r_dc + k sqrt(f)``,
``k >= 0``. Its extra internal number is ``x = k sqrt(f0) / r_dc``, the share of the
loss at f0 that grows, so ``r(f) = R (1 + x sqrt(f / f0)) / (1 + x)`` with R the loss
at f0. No corner frequency has to be known.
"""

from __future__ import annotations

import numpy as np

from fitkit.circuits import TWO_PI, coil_in_series, series_rlc, tank
from fitkit.errors import SetupError
from fitkit.result import nominal


class Topology:
    """The series circuit; the other topologies change what differs."""

    name = "series"
    family = "series"  # the circuit's shape, whatever its loss law
    label = "series R-L-C"
    extras: tuple = ()
    scale_floor_is_fixture = True  # the loop resistance cannot be below the fixture's

    def loss_factor(self, freq_hz, f0_hz, extras: dict):
        """How the loss resistance scales with frequency, 1 at the resonance."""
        return 1.0

    def components(self, setup, f0, q, scale, extras: dict) -> dict:
        w0 = TWO_PI * f0
        return {"R": scale - setup.external_ohm, "L": q * scale / w0, "C": 1.0 / (w0 * q * scale)}

    def scale_from_known(self, setup, name: str, value, f0, q):
        w0 = TWO_PI * f0
        if name == "L":
            return w0 * value / q
        if name == "C":
            return 1.0 / (w0 * q * value)
        return value + setup.external_ohm

    def impedance(self, freq_hz, comps: dict, loss_factor) -> np.ndarray:
        return series_rlc(freq_hz, comps["R"] * loss_factor, comps["L"], comps["C"])

    def partials(self, w, comps: dict, z, loss) -> dict:
        """dZ/d(each element) at angular frequencies ``w`` where the impedance is ``z``;
        ``"loss"`` is the loss resistance as it stands at each frequency (``loss``)."""
        return {"loss": 1.0, "L": 1j * w, "C": 1j / (w * comps["C"] ** 2)}

    def derived(self, setup, f0, q, comps: dict) -> dict:
        out = {"f0": f0, "Q_loaded": q, "loaded_bandwidth": f0 / q}
        r = comps["R"]
        # a sweep with no fixture values cannot split the loop's loss from the circuit's
        if nominal(r) > 0 and not setup.shape_only:
            out["Q"] = TWO_PI * f0 * comps["L"] / r
            out["bandwidth"] = r / (TWO_PI * comps["L"])
        return out


class Tank(Topology):
    name = "tank"
    family = "tank"
    label = "parallel tank (coil with loss across C)"
    scale_floor_is_fixture = False

    def components(self, setup, f0, q, scale, extras: dict) -> dict:
        w0 = TWO_PI * f0
        return {"R": scale / q**2, "L": scale / (q * w0), "C": q / (w0 * scale)}

    def scale_from_known(self, setup, name: str, value, f0, q):
        w0 = TWO_PI * f0
        if name == "L":
            return q * w0 * value
        if name == "C":
            return q / (w0 * value)
        return q**2 * value

    def impedance(self, freq_hz, comps: dict, loss_factor) -> np.ndarray:
        return tank(freq_hz, comps["R"] * loss_factor, comps["L"], comps["C"])

    def partials(self, w, comps: dict, z, loss) -> dict:
        # Z = 1 / Y, Y = 1 / (loss + j w L) + j w C: dZ = -Z^2 dY
        arm = (z / (loss + 1j * w * comps["L"])) ** 2
        return {"loss": arm, "L": 1j * w * arm, "C": -1j * w * z**2}

    def derived(self, setup, f0, q, comps: dict) -> dict:
        r_dynamic = comps["L"] / (comps["R"] * comps["C"])
        ext = setup.external_ohm
        # the fixture's resistance in series with the tank damps it in parallel:
        # the response's pole sits at Q * Rext / (Rext + R_D) (derived)
        q_loaded = q * ext / (ext + r_dynamic) if ext > 0 else q
        return {
            "f0": f0,
            "Q": q,
            "Q_loaded": q_loaded,
            "bandwidth": f0 / q,
            "loaded_bandwidth": f0 / q_loaded,
            "R_dynamic": r_dynamic,
        }


class Coil(Topology):
    name = "coil"
    family = "coil"
    label = "coil with self-capacitance, in series with C"
    extras = ("f_self",)

    def components(self, setup, f0, q, scale, extras: dict) -> dict:
        comps = super().components(setup, f0, q, scale, extras)
        comps["C_self"] = 1.0 / ((TWO_PI * extras["f_self"]) ** 2 * comps["L"])
        return comps

    def impedance(self, freq_hz, comps: dict, loss_factor) -> np.ndarray:
        return coil_in_series(
            freq_hz, comps["R"] * loss_factor, comps["L"], comps["C"], comps["C_self"]
        )

    def partials(self, w, comps: dict, z, loss) -> dict:
        # the coil is a tank of (loss, L, C_self) in series with C
        coil = z - 1.0 / (1j * w * comps["C"])
        arm = (coil / (loss + 1j * w * comps["L"])) ** 2
        return {
            "loss": arm,
            "L": 1j * w * arm,
            "C_self": -1j * w * coil**2,
            "C": 1j / (w * comps["C"] ** 2),
        }

    def derived(self, setup, f0, q, comps: dict) -> dict:
        out = super().derived(setup, f0, q, comps)
        out["f_self"] = 1.0 / (TWO_PI * (comps["L"] * comps["C_self"]) ** 0.5)
        return out


class SqrtLoss(Topology):
    """A topology whose loss grows as ``r_dc + k sqrt(f)`` (see the module notes)."""

    def __init__(self, base: Topology) -> None:
        self.base = base
        self.name = f"{base.name}-sqrtf"
        self.family = base.family
        self.label = f"{base.label}, loss r_dc + k sqrt(f)"
        self.extras = (*base.extras, "skin")
        self.scale_floor_is_fixture = base.scale_floor_is_fixture

    def loss_factor(self, freq_hz, f0_hz, extras: dict):
        x = extras["skin"]
        return (1.0 + x * np.sqrt(np.asarray(freq_hz) / f0_hz)) / (1.0 + x)

    def components(self, setup, f0, q, scale, extras: dict) -> dict:
        comps = self.base.components(setup, f0, q, scale, extras)
        x = extras["skin"]
        comps["R_dc"] = comps["R"] / (1.0 + x)
        comps["k_skin"] = comps["R"] * x / ((1.0 + x) * f0**0.5)
        return comps

    def scale_from_known(self, setup, name: str, value, f0, q):
        return self.base.scale_from_known(setup, name, value, f0, q)

    def impedance(self, freq_hz, comps: dict, loss_factor) -> np.ndarray:
        return self.base.impedance(freq_hz, comps, loss_factor)

    def partials(self, w, comps: dict, z, loss) -> dict:
        return self.base.partials(w, comps, z, loss)

    def derived(self, setup, f0, q, comps: dict) -> dict:
        out = self.base.derived(setup, f0, q, comps)
        if "f_self" in out:
            out["R_self"] = comps["R_dc"] + comps["k_skin"] * out["f_self"] ** 0.5
        return out


_BASES = (Topology(), Tank(), Coil())
TOPOLOGIES = {t.name: t for t in (*_BASES, *(SqrtLoss(b) for b in _BASES))}
SERIES = TOPOLOGIES["series"]


def get_topology(name: str) -> Topology:
    """The topology by name (``series``, ``tank``, ``coil``, or one of them with
    ``-sqrtf``: its loss growing as ``r_dc + k sqrt(f)``)."""
    try:
        return TOPOLOGIES[name]
    except KeyError:
        raise SetupError(
            f"unknown circuit model {name!r}",
            remedy=f"choose one of: {', '.join(TOPOLOGIES)}, or auto",
        ) from None

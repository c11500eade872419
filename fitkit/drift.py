"""Drift diagnosis: what changed between a unit's fit and a reference, and which part did it.

For each value both sides determined, the change ``d = x - x_ref`` has the combined
standard uncertainty ``u = sqrt(u^2 + u_ref^2)`` of two independent fits (the law of
propagation of uncertainty, GUM, JCGM 100:2008, from memory); nominal values count as
exact (``u_ref = 0``). A change is significant when ``|z| = |d| / u > 2`` (about 95 %).

The reading ties the resonance back to the parts with the series R-L-C relations
``f0 = 1 / (2 pi sqrt(L C))`` and ``Q = (1/R) sqrt(L/C)``: a relative change dC/C moves f0
by about -dC/(2C) and Q by about -dC/(2C).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from fitkit.result import QUANTITIES, CircuitFit

#: |z| above this is a significant change (k = 2, about 95 % for a normal distribution)
SIGNIFICANT_Z = 2.0
_WORDS = {"R": "R", "L": "L", "C": "C", "f0_hz": "f0", "Q": "Q", "Q_loaded": "loaded Q",
          "bandwidth_hz": "bandwidth", "loaded_bandwidth_hz": "loaded bandwidth"}  # fmt: skip


@dataclass(frozen=True)
class Change:
    """One value now and in the reference, in SI."""

    name: str
    reference: float
    reference_u: float
    value: float
    value_u: float

    @property
    def delta(self) -> float:
        return self.value - self.reference

    @property
    def relative(self) -> float:
        return self.delta / self.reference

    @property
    def u(self) -> float:
        """Combined standard uncertainty of the change (independent fits)."""
        return math.hypot(self.value_u, self.reference_u)

    @property
    def z(self) -> float:
        if self.u == 0:
            return math.inf if self.delta else 0.0
        return self.delta / self.u

    @property
    def significant(self) -> bool:
        return abs(self.z) > SIGNIFICANT_Z

    def to_dict(self) -> dict:
        z = self.z if math.isfinite(self.z) else None
        return {
            "reference": self.reference, "reference_u": self.reference_u,
            "value": self.value, "value_u": self.value_u, "change": self.delta,
            "relative": self.relative, "change_u": self.u, "z": z,
            "significant": self.significant,
        }  # fmt: skip


def fit_values(fit: CircuitFit) -> dict:
    """``{quantity: (value, stderr)}`` of the values a fit determined."""
    return {n: (q.value, q.stderr or 0.0) for n, q in fit.quantities.items() if q.value is not None}


def compare(unit: dict, reference: dict) -> list[Change]:
    """The changes of every value both sides give, in the order of ``QUANTITIES``.

    Parameters
    ----------
    unit, reference : dict
        ``{quantity: (value, stderr)}``; nominal values with stderr 0.
    """
    return [
        Change(name, *reference[name], *unit[name])
        for name in QUANTITIES
        if name in unit and name in reference and reference[name][0]
    ]


def _move(change: Change | None) -> str:
    word = _WORDS[change.name] if change else ""
    if change is None:
        return ""
    if not change.significant:
        return f"{word} unchanged"
    way = "up" if change.delta > 0 else "down"
    return f"{word} {way} {abs(change.relative) * 100:.1f}%"


def _grown(rel: float) -> str:
    return f"{'grown' if rel > 0 else 'shrunk'} by about {abs(rel) * 100:.1f}%"


def _names(items: list[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def reading(changes: list[Change]) -> list[str]:
    """What the changes mean, in plain words, tied back to R, L and C.

    Examples
    --------
    >>> ref = {"f0_hz": (100e3, 10.0), "Q": (50.0, 0.2), "R": (10.0, 0.1),
    ...        "L": (1e-3, 1e-6), "C": (2.533e-9, 3e-12)}
    >>> now = {"f0_hz": (97.1e3, 10.0), "Q": (48.6, 0.2), "R": (10.0, 0.1),
    ...        "L": (1e-3, 1e-6), "C": (2.687e-9, 3e-12)}
    >>> reading(compare(now, ref))[0]
    'f0 down 2.9%, Q down 2.8%: C has grown by about 6.1%; R and L within their uncertainty'
    """
    by = {c.name: c for c in changes}
    q = by.get("Q") or by.get("Q_loaded")
    head = ", ".join(p for p in (_move(by.get("f0_hz")), _move(q)) if p)
    parts = [by[n] for n in ("R", "L", "C") if n in by]
    if parts:
        moved = [c for c in parts if c.significant]
        steady = [c.name for c in parts if not c.significant]
        causes = [f"{c.name} has {_grown(c.relative)}" for c in moved]
        if steady:
            causes.append(f"{_names(steady)} within {'its' if len(steady) == 1 else 'their'} "
                          "uncertainty")  # fmt: skip
        lines = [f"{head}: {'; '.join(causes)}" if head else "; ".join(causes)]
        if "L" in by and "C" in by and "f0_hz" in by:
            implied = (1 + by["L"].relative) * (1 + by["C"].relative)
            lines.append(
                f"the change in L*C implies f0 {(implied**-0.5 - 1) * 100:+.1f}% "
                f"(f0 ~ 1/sqrt(LC)); measured {by['f0_hz'].relative * 100:+.1f}%"
            )
        return lines
    return _relative_reading(by, head)


def _relative_reading(by: dict, head: str) -> list[str]:
    """The reading when the sweeps fixed only f0 and the loaded Q (no scale)."""
    lines = [head] if head else []
    f0 = by.get("f0_hz")
    if f0 is not None and f0.significant:
        lc = (1 + f0.relative) ** -2 - 1
        lines.append(
            f"the product L*C has {_grown(lc)} (f0 ~ 1/sqrt(LC)); these sweeps cannot tell "
            "whether L or C changed"
        )
    ql = by.get("Q_loaded")
    if ql is not None and ql.significant:
        lines.append(
            f"the loaded Q has {_grown(ql.relative)}: the loss in the whole loop changed "
            "relative to sqrt(L/C); the coil's own R cannot be told from the fixture's"
        )
    lines.append(
        "to tell which part changed: give a known value (e.g. --known L=...) or sweep "
        "with a calibrated scale, so that R, L and C are determined"
    )
    return lines

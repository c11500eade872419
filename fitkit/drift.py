"""Drift diagnosis: what changed between a unit's fit and a reference, and which part did it.

For each value both sides determined, the change ``d = x - x_ref`` has the combined
standard uncertainty ``u = sqrt(u^2 + u_ref^2)`` of two independent fits (the law of
propagation of uncertainty, GUM, JCGM 100:2008, from memory); nominal values count as
exact (``u_ref = 0``). A change is significant when ``|z| = |d| / u > 2`` (about 95 %).

The reading ties the resonance back to the parts with the series R-L-C relations
``f0 = 1 / (2 pi sqrt(L C))`` and ``Q = (1/R) sqrt(L/C)``: a relative change dC/C moves f0
by about -dC/(2C) and Q by about -dC/(2C).

The correction restores the reference value of a part that moved: a capacitance that
shrank takes the difference across it (capacitances in parallel add); one that grew takes
``C Cref / (C - Cref)`` in series (series capacitances add as reciprocals), or a part of
the reference value. A coil's L goes as the square of its turns for a fixed winding
(common practice), so the turns change by ``sqrt(Lref / L) - 1``; a slug screwed further
into the winding raises L.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from fitkit.errors import FitkitError
from fitkit.result import QUANTITIES, CircuitFit
from fitkit.setups import Setup
from fitkit.units import format_quantity

#: |z| above this is a significant change (k = 2, about 95 % for a normal distribution)
SIGNIFICANT_Z = 2.0
_WORDS = {"Q_loaded": "loaded Q", "loaded_bandwidth": "loaded bandwidth"}


@dataclass(frozen=True)
class Change:
    """One value now and in the reference, in SI."""

    name: str
    reference: float
    reference_u: float
    value: float
    value_u: float

    doubtful: str = ""  # why the fit on either side marks this value doubtful

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
            "unit": QUANTITIES[self.name][0],
            "reference": self.reference, "reference_u": self.reference_u,
            "value": self.value, "value_u": self.value_u, "change": self.delta,
            "relative": self.relative, "change_u": self.u,
            "relative_u": self.u / abs(self.reference), "z": z,
            "significant": self.significant, "doubtful": self.doubtful,
        }  # fmt: skip


@dataclass(frozen=True)
class Side:
    """One side of a comparison: where its values came from and what its fit warned of.

    Attributes
    ----------
    source : str
        The file (or "nominal values").
    values : dict
        ``{quantity: (value, u)}``; nominal values with u = 0.
    warnings : tuple of str
        The fit's warnings.
    doubtful : dict
        ``{quantity: why}`` for values the fit marks doubtful.
    own : dict
        ``{quantity: u}``, the sweep's own share of each uncertainty, where the setup
        stated uncertainties of its fixture values (empty: all the sweep's).
    bench : dict or None
        The setup of a fitted side: two sides swept on the same bench share its fixture,
        and its stated uncertainties then cancel in the change (to first order: a sense
        resistor 1 % off scales L now and L then alike).
    """

    source: str
    values: dict
    warnings: tuple = ()
    doubtful: dict = field(default_factory=dict)
    own: dict = field(default_factory=dict)
    bench: dict | None = None

    def to_dict(self) -> dict:
        return {"source": self.source, "warnings": list(self.warnings), "doubtful": self.doubtful}


def fit_values(fit: CircuitFit) -> dict:
    """``{quantity: (value, u)}`` of the values a fit determined."""
    return {n: (q.value, q.stderr or 0.0) for n, q in fit.quantities.items() if q.value is not None}


def side_of_fit(fit: CircuitFit, source: str) -> Side:
    """A fit as one side of a comparison, with its warnings and doubtful marks."""
    doubtful = {
        n: getattr(q, "doubtful", "")
        for n, q in fit.quantities.items()
        if getattr(q, "doubtful", "")
    }
    own = {n: q.u_sweep for n, q in fit.quantities.items() if q.u_sweep is not None}
    return Side(source, fit_values(fit), tuple(fit.stats.warnings), doubtful, own, fit.setup)


def compare(unit, reference) -> list[Change]:
    """The changes of every value both sides give, in the order of ``QUANTITIES``.

    Parameters
    ----------
    unit, reference : Side or dict
        A :class:`Side`, or its ``{quantity: (value, u)}``.
    """
    unit, reference = (x if isinstance(x, Side) else Side("", x) for x in (unit, reference))
    now, ref = unit.values, reference.values
    if one_bench(unit, reference):  # one fixture for both
        now, ref = ({n: (v, side.own.get(n, u)) for n, (v, u) in side.values.items()}
                    for side in (unit, reference))  # fmt: skip
    return [
        Change(name, *ref[name], *now[name], _doubt(name, unit, reference))
        for name in QUANTITIES
        if name in now and name in ref and ref[name][0]
    ]


def one_bench(unit: Side, reference: Side) -> bool:
    """Whether two fitted sides name one bench that states uncertainties of its values:
    their shares then leave the change (a saved fit holds lists where a fresh one holds
    tuples: the setups are compared as Setups)."""
    if unit.bench is None or reference.bench is None:
        return False
    try:
        a, b = Setup(**unit.bench), Setup(**reference.bench)
    except (TypeError, FitkitError):
        return False
    return a == b and bool(a.uncertainty)


def _doubt(name: str, unit: Side, reference: Side) -> str:
    why = [f"{which}: {side.doubtful[name]}" for which, side in (("now", unit),
           ("reference", reference)) if side.doubtful.get(name)]  # fmt: skip
    return "; ".join(why)


def _move(change: Change | None) -> str:
    word = _WORDS.get(change.name, change.name) if change else ""
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
    >>> ref = {"f0": (100e3, 10.0), "Q": (50.0, 0.2), "R": (10.0, 0.1),
    ...        "L": (1e-3, 1e-6), "C": (2.533e-9, 3e-12)}
    >>> now = {"f0": (97.1e3, 10.0), "Q": (48.6, 0.2), "R": (10.0, 0.1),
    ...        "L": (1e-3, 1e-6), "C": (2.687e-9, 3e-12)}
    >>> reading(compare(now, ref))[0]
    'f0 down 2.9%, Q down 2.8%: C has grown by about 6.1%; R and L within their uncertainty'
    """
    by = {c.name: c for c in changes}
    q = by.get("Q") or by.get("Q_loaded")
    head = ", ".join(p for p in (_move(by.get("f0")), _move(q)) if p)
    parts = [by[n] for n in ("R", "L", "C") if n in by]
    if parts:
        moved = [c for c in parts if c.significant]
        steady = [c.name for c in parts if not c.significant]
        causes = [f"{c.name} has {_grown(c.relative)}" for c in moved]
        if steady:
            causes.append(f"{_names(steady)} within {'its' if len(steady) == 1 else 'their'} "
                          "uncertainty")  # fmt: skip
        lines = [f"{head}: {'; '.join(causes)}" if head else "; ".join(causes)]
        if "L" in by and "C" in by and "f0" in by:
            implied = (1 + by["L"].relative) * (1 + by["C"].relative)
            lines.append(
                f"the change in L*C implies f0 {(implied**-0.5 - 1) * 100:+.1f}% "
                f"(f0 ~ 1/sqrt(LC)); measured {by['f0'].relative * 100:+.1f}%"
            )
        return lines
    return _relative_reading(by, head)


def _relative_reading(by: dict, head: str) -> list[str]:
    """The reading when the sweeps fixed only f0 and the loaded Q (no scale)."""
    lines = [head] if head else []
    f0 = by.get("f0")
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


def corrections(changes: list[Change]) -> list[str]:
    """What restores the reference, for each part that changed significantly.

    Examples
    --------
    >>> c = Change("C", 200e-12, 0.1e-12, 183.8e-12, 0.1e-12)
    >>> corrections([c])[0]
    'C has shrunk by 16.20 pF +/- 0.14 pF (-8.100% +/- 0.071%): add about 16.2 pF across it'
    """
    by = {c.name: c for c in changes}
    out = []
    f0 = by.get("f0")
    if f0 is not None and f0.significant and not {"L", "C"} & set(by):
        lc = (1 + f0.relative) ** -2 - 1
        out.append(
            f"f0 has {'risen' if f0.delta > 0 else 'fallen'} by "
            f"{signed_percent(abs(f0.relative), f0.u / f0.reference).lstrip('+')}: the product L*C "
            f"has {_grown(lc)}; retune (slug or trimmer) until f0 is back at "
            f"{format_quantity(f0.reference, 'Hz')}"
        )
    for c in changes:
        if not c.significant or c.name not in _RESTORE:
            continue
        unit = QUANTITIES[c.name][0]
        moved = (
            f"{c.name} has {'grown' if c.delta > 0 else 'shrunk'} by "
            f"{format_quantity(abs(c.delta), unit, c.u or None)} "
            f"({signed_percent(c.relative, c.u / abs(c.reference))})"
        )
        out.append(f"{moved}: {_RESTORE[c.name](c)}")
    return out


def signed_percent(relative: float, relative_u: float) -> str:
    """'-2.8720% +/- 0.0020%': a relative change to the precision its uncertainty allows."""
    value, _, u = format_quantity(relative * 100, "", relative_u * 100 or None).partition(" +/- ")
    sign = "+" if relative >= 0 and not value.startswith("-") else ""
    return f"{sign}{value}% +/- {u}%" if u else f"{sign}{value}%"


def _about(x: float, unit: str) -> str:
    return format_quantity(float(f"{x:.3g}"), unit)


def _restore_c(c: Change) -> str:
    if c.delta < 0:
        return f"add about {_about(-c.delta, 'F')} across it"
    series = c.value * c.reference / c.delta
    return (
        f"replace it with a part of {_about(c.reference, 'F')}, or put about "
        f"{_about(series, 'F')} in series with it"
    )


def _restore_l(c: Change) -> str:
    turns = (math.sqrt(c.reference / c.value) - 1.0) * 100.0
    if c.delta > 0:
        return (
            f"if it has a slug, turn it out (less core in the winding); else take off about "
            f"{abs(turns):.2g}% of its turns"
        )
    return f"if it has a slug, turn it further in; else add about {turns:.2g}% more turns"


def _restore_r(c: Change) -> str:
    if c.delta > 0:
        return (
            "look for a dry joint, a corroded contact, damp in the winding or a lossy "
            "capacitor; no trim restores it"
        )
    return "check that the unit is the one the reference was taken of"


_RESTORE = {"C": _restore_c, "L": _restore_l, "R": _restore_r}

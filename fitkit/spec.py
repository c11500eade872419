"""Specifications (nominal values and tolerances) and the verdicts a fit earns against them.

A specification is a small TOML file; each value gets a table of its own::

    [rule]
    decision = "guarded"     # or "simple"
    coverage = 2             # k: the guard band is k standard uncertainties (k = 2, ~95 %)

    [L]
    nominal = "220u"         # SI prefixes allowed; the unit may be written or left out
    tolerance = "5%"         # +- a percentage of nominal, or an absolute "+-" amount: "10u"

    [C]
    min = "950p"             # or absolute limits; either one alone is a one-sided limit
    max = "1.05n"

Values: ``R``, ``L``, ``C``, ``f0``, ``Q``, ``bandwidth`` (of the circuit) and ``Q_loaded``,
``loaded_bandwidth`` (as the bench saw it), named as everywhere else (docs/names.md); an
old spelling (``[f0_hz]``) is read with a note.

Decision rules (ILAC-G8:09/2019, "Guidelines on decision rules and statements of
conformity", and ISO 14253-1:2017, guard bands; both cited from memory):

- ``simple``: simple acceptance; the uncertainty is not used. Inside the limits passes,
  outside fails.
- ``guarded``: a guard band of ``w = k u`` on each side. Pass only when the whole interval
  ``value +- k u`` lies inside the limits, fail only when it lies wholly outside, otherwise
  undecided (the interval straddles a limit).

A value the fit did not determine is ``undecided (not determined)`` under either rule.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path

from fitkit.errors import FitkitError, InputError
from fitkit.names import OLD_NAMES, QUANTITIES, current_name
from fitkit.tomlfile import read_toml, refuse_unknown_keys, table_line
from fitkit.units import format_quantity, format_to, parse_quantity

#: the values a specification can check (named as in :data:`fitkit.names.QUANTITIES`):
#: a tank's dynamic resistance, a coil's self-capacitance and self-resonance among them
CHECKABLE = ("R", "L", "C", "f0", "Q", "Q_loaded", "bandwidth", "loaded_bandwidth",
             "R_dynamic", "C_self", "f_self")  # fmt: skip
#: spec name -> (CircuitFit quantity name, unit)
SPEC_NAMES = {name: (name, QUANTITIES[name][0]) for name in CHECKABLE}
RULES = ("simple", "guarded")
PASS, FAIL, UNDECIDED = "pass", "fail", "undecided"
NOT_DETERMINED = "undecided (not determined)"
_LIMIT_KEYS = {"nominal", "tolerance", "min", "max"}


@dataclass(frozen=True)
class Limit:
    """Acceptance limits for one value, in SI; ``None`` for an open side."""

    name: str
    quantity: str
    unit: str
    low: float | None
    high: float | None
    nominal: float | None = None

    def describe(self) -> str:
        """The limits in words, e.g. ``'209 uH to 231 uH'``."""
        low = format_quantity(self.low, self.unit) if self.low is not None else None
        high = format_quantity(self.high, self.unit) if self.high is not None else None
        if low and high:
            return f"{low} to {high}"
        return f">= {low}" if low else f"<= {high}"


@dataclass(frozen=True)
class Spec:
    """A specification: limits per value and the decision rule."""

    limits: tuple
    rule: str = "guarded"
    coverage: float = 2.0
    source: str = "<memory>"

    def with_rule(self, rule: str | None, coverage: float | None) -> Spec:
        """The same limits under another rule or coverage factor (``None`` keeps them)."""
        return Spec(
            self.limits,
            rule or self.rule,
            self.coverage if coverage is None else float(coverage),
            self.source,
        )

    def nominals(self) -> dict:
        """``{quantity: nominal}`` for the values that state a nominal."""
        return {lim.quantity: lim.nominal for lim in self.limits if lim.nominal is not None}

    def rule_text(self) -> str:
        """The decision rule in one sentence, with its sources."""
        if self.rule == "simple":
            return (
                "simple acceptance (ILAC-G8:09/2019): a value inside its "
                "limits passes, outside fails; the uncertainty is not used"
            )
        return (
            f"guarded acceptance with a guard band of k = {self.coverage:g} standard "
            "uncertainties (ILAC-G8:09/2019 and ISO 14253-1:2017): pass when "
            f"value +- {self.coverage:g}u lies inside the limits, fail when it lies wholly "
            "outside, otherwise undecided"
        )


@dataclass(frozen=True)
class Verdict:
    """The verdict on one value, or overall."""

    word: str
    detail: str = ""

    def text(self) -> str:
        return f"{self.word} ({self.detail})" if self.detail else self.word


@dataclass
class UnitVerdicts:
    """Verdicts per value (spec name -> Verdict) and the overall verdict."""

    values: dict = field(default_factory=dict)

    @property
    def overall(self) -> str:
        words = {v.word for v in self.values.values()}
        if FAIL in words:
            return FAIL
        return UNDECIDED if UNDECIDED in words else PASS


def load_spec(path: str | Path) -> Spec:
    """Read a specification file (layout in the module docstring).

    Raises
    ------
    InputError
        When the file is missing, not TOML, names an unknown value or key, or gives
        limits that cannot be read or that contradict each other.
    """
    p = Path(path)
    data = read_toml(
        p,
        what="specification file",
        option="--spec",
        layout='write it as in docs/batch.md: [L] nominal = "220u" tolerance = "5%"',
    )
    rule = data.pop("rule", {})
    if not isinstance(rule, dict):
        raise InputError(
            f"rule = {rule!r} must be a table",
            remedy='write it as a section: [rule] on its own line, then decision = "guarded"',
            path=p,
        )
    refuse_unknown_keys("[rule]", rule, ("decision", "coverage"), p)
    limits = tuple(_limit(name, table, p) for name, table in _current_names(data, p).items())
    if not limits:
        raise InputError(
            "the specification gives no limits",
            remedy=f"add a table for any of {', '.join(SPEC_NAMES)}, e.g. [L] nominal = "
            '"220u" tolerance = "5%"',
            path=p,
        )
    decision = rule.get("decision", "guarded")
    if decision not in RULES:
        raise InputError(
            f"[rule] decision = {decision!r} is not a known rule",
            remedy=f"use one of {', '.join(RULES)}",
            path=p,
        )
    coverage = rule.get("coverage", 2.0)
    if (
        isinstance(coverage, bool)
        or not isinstance(coverage, (int, float))
        or not 0 <= coverage < math.inf
    ):
        raise InputError(
            f"[rule] coverage = {coverage!r} is not a non-negative number",
            remedy="write the coverage factor k as a number, e.g. coverage = 2",
            path=p,
        )
    return Spec(limits, decision, float(coverage), str(p))


def _current_names(data: dict, path: Path) -> dict:
    """The tables under today's names; an old name is read with a note naming its line.

    Raises
    ------
    InputError
        When a value is given twice, under its old and its new name.
    """
    out = {}
    for name, table in data.items():
        if OLD_NAMES.get(name) in SPEC_NAMES:
            line = table_line(path, name)
            name = current_name(name, f"{path}" + (f", line {line}" if line else ""))
        if name in out:
            raise InputError(
                f"[{name}] is given twice, under its old and its new name",
                remedy=f"keep one table [{name}]",
                path=path,
            )
        out[name] = table
    return out


def _limit(name: str, table, path: Path) -> Limit:
    if name not in SPEC_NAMES or not isinstance(table, dict):
        near = difflib.get_close_matches(name, list(SPEC_NAMES), n=1)
        hint = f"did you mean [{near[0]}]? " if near and name not in SPEC_NAMES else ""
        raise InputError(
            f"[{name}] is not a value fitkit can check"
            + ("" if isinstance(table, dict) else f" (it is {table!r}, not a table)"),
            remedy=f"{hint}use tables named {', '.join(SPEC_NAMES)} (and [rule])",
            path=path,
        )
    refuse_unknown_keys(f"[{name}]", table, sorted(_LIMIT_KEYS), path)
    quantity, unit = SPEC_NAMES[name]
    try:
        return _limit_values(name, quantity, unit, table)
    except FitkitError as exc:
        raise InputError(f"[{name}]: {exc.message}", remedy=exc.remedy, path=path) from None


def _limit_values(name: str, quantity: str, unit: str, table: dict) -> Limit:
    def read(key):
        return _number(table[key], unit, f"{name} {key}") if key in table else None

    nominal, low, high = read("nominal"), read("min"), read("max")
    if "tolerance" in table:
        if nominal is None:
            raise InputError("a tolerance needs a nominal", remedy="add nominal = ...")
        text = str(table["tolerance"]).strip()
        if text.endswith("%"):
            width = abs(nominal) * _number(text[:-1], "", f"{name} tolerance") / 100
        else:
            width = _number(text.lstrip("+-"), unit, f"{name} tolerance")
        low = nominal - width if low is None else low
        high = nominal + width if high is None else high
    if low is None and high is None:
        raise InputError(
            "no limits given", remedy='add tolerance = "5%" to the nominal, or min / max'
        )
    if low is not None and high is not None and not low <= high:
        raise InputError(f"min {low:g} is above max {high:g}", remedy="swap or correct them")
    return Limit(name, quantity, unit, low, high, nominal)


def _number(text, unit: str, what: str) -> float:
    """A value with an SI prefix; unit-less values (Q, percentages) as plain numbers."""
    if unit:
        return parse_quantity(text, unit, what=what)
    try:
        value = float(text)
    except (TypeError, ValueError):
        value = math.nan
    if not math.isfinite(value):
        raise InputError(
            f"cannot read {what} {text!r} as a finite number",
            remedy="write a plain number, e.g. 50",
        )
    return value


def decide(value: float | None, stderr: float | None, limit: Limit, spec: Spec) -> Verdict:
    """The verdict on one value under the specification's decision rule.

    Examples
    --------
    >>> lim = Limit("L", "L", "H", 209e-6, 231e-6)
    >>> decide(230e-6, 1e-6, lim, Spec((lim,))).text()
    'undecided (230.0 uH +/- 2.0 uH (k = 2) straddles the limit 231.0 uH)'
    """
    if value is None:
        return Verdict(UNDECIDED, "not determined")
    low = -math.inf if limit.low is None else limit.low
    high = math.inf if limit.high is None else limit.high
    if spec.rule == "simple" or spec.coverage == 0:
        if low <= value <= high:
            return Verdict(PASS)
        edge = high if value > high else low
        shown, limit_text = _apart(value, edge, limit.unit, stderr)
        return Verdict(FAIL, f"{shown} {_side(value, edge)} the limit {limit_text}")
    if stderr is None or not math.isfinite(stderr):
        return Verdict(UNDECIDED, "no uncertainty to guard with")
    band = spec.coverage * stderr
    if low <= value - band and value + band <= high:
        return Verdict(PASS)
    edge = high if value + band > high else low
    shown, limit_text = _apart(value, edge, limit.unit, band)
    band_text = format_quantity(value, limit.unit, band).split(" +/- ")[1]
    interval = f"{shown} +/- {band_text} (k = {spec.coverage:g})"
    if value + band < low or value - band > high:
        return Verdict(FAIL, f"{interval} {_side(value, edge)} the limit {limit_text}")
    return Verdict(UNDECIDED, f"{interval} straddles the limit {limit_text}")


def _side(value: float, edge: float) -> str:
    return "above" if value > edge else "below"


def _apart(value: float, edge: float, unit: str, stderr: float | None) -> tuple:
    """Value and limit printed to the same last digit: the uncertainty's second significant
    digit, or one digit past the first where they differ, whichever is finer."""
    steps = [x for x in (stderr, abs(value - edge)) if x is not None and math.isfinite(x) and x > 0]
    if not steps:
        return format_quantity(value, unit), format_quantity(edge, unit)
    step = min(steps) * (1 + 1e-9)  # a difference of exactly 0.1 must not read as 0.0999
    return tuple(format_to(x, unit, step) for x in (value, edge))


def judge(values: dict, spec: Spec) -> UnitVerdicts:
    """Verdicts of one unit.

    Parameters
    ----------
    values : dict
        ``{quantity: (value or None, stderr or None)}`` using CircuitFit quantity names.
    spec : Spec
        The specification.

    Returns
    -------
    UnitVerdicts
        Per spec name, and overall (fail if any fails, else undecided if any is, else pass).
    """
    out = UnitVerdicts()
    for lim in spec.limits:
        value, stderr = values.get(lim.quantity, (None, None))
        out.values[lim.name] = decide(value, stderr, lim, spec)
    return out

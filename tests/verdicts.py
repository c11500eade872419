"""Judge a fit of an imperfect sweep against its truth: right, flagged, refused or wrong.

The rule (the trust promise of issue 11): every reported value is either within
``Z_LIMIT`` of its own standard errors of the truth ("right"), or it is marked doubtful
on the value itself and the fit carries a warning ("flagged"), or the fit refuses with
a ``FitError`` where the case allows it ("refused"). A value that cannot be known may be
"not determined". Anything else is "confidently wrong". Used by ``test_robustness.py``
and ``benchmarks/robustness.py``, so both judge alike.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from fitkit.errors import FitError, FitkitError
from fitkit.fitting import fit_sweep
from tests.imperfect import ImperfectCase, make_case

Z_LIMIT = 4.0
RIGHT, FLAGGED, UNDETERMINED = "right", "flagged", "not determined"
REFUSED, REFUSED_WRONGLY, WRONG = "refused", "refused wrongly", "confidently wrong"
OUTCOMES = (RIGHT, FLAGGED, UNDETERMINED, REFUSED, REFUSED_WRONGLY, WRONG)
#: the pseudo-quantity of a verdict about the fit as a whole (a refusal, a point dropped)
WHOLE_FIT = "(fit)"


@dataclass(frozen=True)
class Verdict:
    """How one reported quantity (or the fit as a whole) of one case came out."""

    case: str
    quantity: str
    truth: float | None
    value: float | None
    stderr: float | None
    z: float
    outcome: str
    acceptable: bool
    note: str = ""

    def describe(self) -> str:
        numbers = (
            f"truth {_g(self.truth)}, value {_g(self.value)} +/- {_g(self.stderr)}, "
            f"z = {self.z:.1f}"
        )
        text = f"{self.case} / {self.quantity}: {self.outcome} ({numbers})"
        return text + (f": {self.note}" if self.note else "")


def _g(x) -> str:
    return "-" if x is None else f"{x:.6g}"


def fit_case(case: ImperfectCase):
    """The case fitted with ``topology="auto"`` and its options; a FitkitError is returned,
    not raised."""
    try:
        return fit_sweep(case.sweep, case.setup, topology="auto", **case.options)
    except FitkitError as exc:
        return exc


def run_case(name: str, seed: int = 0) -> tuple:
    """Build, fit and judge one case: ``(case or None, fit or error, verdicts)``.

    A Setup that fitkit refuses to accept counts as the fit refusing.
    """
    try:
        case = make_case(name, seed)
    except FitkitError as exc:
        return None, exc, [_refusal(name, exc, allowed=False)]
    result = fit_case(case)
    return case, result, judge(case, result)


def doubtful(fit, quantity) -> str:
    """The doubt attached to a value, when the fit also carries a warning; else ""."""
    mark = getattr(quantity, "doubtful", "") or ""
    return mark if (mark and fit.stats.warnings) else ""


def judge(case: ImperfectCase, result) -> list:
    """Verdicts for every quantity of the truth the fit reports, and for the fit itself."""
    if isinstance(result, FitkitError):
        allowed = case.expect != "values" and isinstance(result, FitError)
        if allowed and case.refusal and not re.search(case.refusal, result.message):
            return [
                _refusal(case.name, result, False, f"the message should match {case.refusal!r}")
            ]
        return [_refusal(case.name, result, allowed)]
    if case.expect == "refusal":
        f0 = result.quantities["f0"]
        note = f"fitted ({result.topology}, f0 = {f0.text()}) instead of refusing"
        return [
            Verdict(case.name, WHOLE_FIT, None, f0.value, f0.stderr, math.inf, WRONG, False, note)
        ]
    out = [_quantity_verdict(case, result, n, t) for n, t in case.truth.items()]
    out += [_doubt_verdict(case, result, n) for n in case.must_doubt]
    out += _point_verdicts(case, result)
    return [v for v in out if v is not None]


def _refusal(name: str, exc: FitkitError, allowed: bool, why: str = "") -> Verdict:
    outcome = REFUSED if allowed else REFUSED_WRONGLY
    note = exc.message + (f" ({why})" if why else "")
    return Verdict(name, WHOLE_FIT, None, None, None, math.nan, outcome, allowed, note)


def _quantity_verdict(case, fit, name: str, truth):
    q = fit.quantities.get(name)
    if q is None:  # the topology chosen does not report it
        return None
    mark = doubtful(fit, q)
    warnings = "; ".join(fit.stats.warnings)
    if truth is None:
        if not q.determined:
            return Verdict(case.name, name, None, None, None, 0.0, RIGHT, True, "not determined")
        outcome = FLAGGED if mark else WRONG
        note = mark or "a number where the sweep cannot determine one"
        return Verdict(
            case.name, name, None, q.value, q.stderr, math.inf, outcome, bool(mark), note
        )
    if not q.determined:
        ok = name not in case.must_be_right
        return Verdict(case.name, name, truth, None, None, math.nan, UNDETERMINED, ok, q.reason)
    z = _z(q.value, q.stderr, truth)
    if z <= Z_LIMIT:
        outcome, note = RIGHT, ""
    elif mark:
        outcome, note = FLAGGED, mark
    else:
        outcome, note = WRONG, (f"warnings: {warnings}" if warnings else "no warning")
    acceptable = outcome == RIGHT or (outcome == FLAGGED and name not in case.must_be_right)
    return Verdict(case.name, name, truth, q.value, q.stderr, z, outcome, acceptable, note)


def _doubt_verdict(case, fit, name: str):
    """A quantity with no true value: any number reported must be marked doubtful."""
    q = fit.quantities.get(name)
    if q is None or not q.determined:
        return None
    mark = doubtful(fit, q)
    outcome = FLAGGED if mark else WRONG
    note = mark or "a number for a quantity the sweep has no true value for, not marked"
    return Verdict(case.name, name, None, q.value, q.stderr, math.inf, outcome, bool(mark), note)


def _point_verdicts(case, fit) -> list:
    """The glitch must be dropped and named; the point of high leverage kept."""
    dropped = list(fit.stats.outliers_hz)

    def was_dropped(f_hz: float) -> bool:
        return any(math.isclose(f_hz, x, rel_tol=1e-9) for x in dropped)

    out = []
    for what, f_hz, want_dropped in [("glitch dropped", f, True) for f in case.drop_hz] + [
        ("peak point kept", f, False) for f in case.keep_hz
    ]:
        ok = was_dropped(f_hz) == want_dropped
        note = f"point at {f_hz:g} Hz " + ("dropped" if was_dropped(f_hz) else "kept")
        outcome = RIGHT if ok else WRONG
        out.append(Verdict(case.name, what, f_hz, None, None, math.nan, outcome, ok, note))
    return out


def _z(value: float, stderr, truth: float) -> float:
    if value == truth:
        return 0.0
    if stderr is None or not stderr > 0 or not math.isfinite(stderr):
        return math.inf
    return abs(value - truth) / stderr

"""A phase delay on a divider bench that more probe capacitance would explain as well.

On a divider the probe's capacitance ``Cp`` across the sense resistor ``Rs`` makes the
sense impedance ``Rs / (1 + j w Cp Rs)``. To first order in ``w Cp Rs`` its phase lags by
``w Cp Rs``, what a delay ``tau = Cp Rs`` gives, and in the loop it adds
``-j w Cp Rs^2``, what an inductance ``-Cp Rs^2`` adds (derived from the divider map in
:meth:`fitkit.setups.Setup.coefficients`). A delay the fit finds on a divider (channel
skew, unequal cables) is therefore read as well as ``tau / Rs`` more probe capacitance
than the setup states, and read so, L and f0 move by many of their standard errors while
the two readings fit the sweep alike. The sweep cannot tell them apart; a probe's
capacitance is seldom known to a few pF (common practice), so the values that move are
marked doubtful with both readings, unless the sweep itself tells them apart (at high
frequency the two part at second order: the criterion then decides).
"""

from __future__ import annotations

import dataclasses

from fitkit.model_choice import EVIDENCE, bic
from fitkit.nuisance import PARAMETER
from fitkit.units import format_quantity, format_to

_DELAY = PARAMETER["delay"]


def probe_reading(problem, first, values: dict, q: dict) -> list:
    """A ``(text, affected)`` warning when the delay found on a divider reads as well as
    probe capacitance and the values read so differ by more than their standard errors;
    ``values`` are the last pass's internal values, ``q`` the reported quantities."""
    setup = problem.setup
    if setup.bench != "divider" or not setup.sense_ohm or "delay" not in problem.bench.terms:
        return []
    tau = q["delay"].value
    probe = setup.probe_f + tau / setup.sense_ohm
    if not probe >= 0.0:  # a phase lead that no capacitance gives: a true delay
        return []
    other = problem.with_terms(
        tuple(t for t in problem.bench.terms if t != "delay"),
        setup=dataclasses.replace(setup, probe_f=probe),
    )
    here = first.moved(values)
    start = {k: v for k, v in values.items() if k != _DELAY}
    try:
        read = other.refine(here, start, [n for n in first.free if n != _DELAY])
    except (ArithmeticError, ValueError):
        return []
    if bic(other, read, first.used) - bic(problem, here, first.used) > EVIDENCE:
        return []  # the sweep itself says delay
    alternative = other.reported(read.values)
    moved = [
        name
        for name, x in q.items()
        if x.determined and x.stderr and name in alternative
        and abs(alternative[name] - x.value) > x.stderr
    ]  # fmt: skip
    if not moved:
        return []
    readings = ", ".join(
        f"{name} = {format_to(alternative[name], q[name].unit, q[name].stderr)}" for name in moved
    )
    return [
        (
            f"the phase delay found ({format_quantity(tau, 's')}) fits as well as a probe "
            f"capacitance of {format_quantity(probe, 'F')} where the setup says "
            f"{format_quantity(setup.probe_f, 'F')} (delay = sense resistor x extra "
            f"capacitance); read so, {readings}. Measure the probe's capacitance, or the "
            "channels' skew with both probes on one point, and put it in the setup",
            tuple(moved),
        )
    ]

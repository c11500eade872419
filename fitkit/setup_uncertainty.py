"""Stated uncertainties of the fixture values, carried into every fitted value.

A fixture value the setup gives with a standard uncertainty (a sense resistor of
47 ohm +- 0.5 ohm, a probe capacitance known to a few pF) is an input quantity of each
fitted value: the fit found its values for the fixture as stated, and another fixture
value would have given others. To first order a reported value ``y`` moves with a
fixture value ``s`` by the total derivative

    dy/ds = (partial y / partial s) + (partial y / partial p) dp/ds,

the first term where ``y`` reads ``s`` itself (the circuit's loss is the loop's less the
sense resistor), the second as the fit's parameters ``p`` follow ``s``: the minimum of
the weighted residual ``r(p, s)`` moves by ``dp/ds = -(J^T J)^-1 J^T dr/ds`` (the
implicit function theorem at a least-squares minimum, in its Gauss-Newton form; derived).
The law of propagation of uncertainty (JCGM 100:2008 (GUM), eq. 13) adds
``(dy/ds u(s))^2`` to the variance of ``y`` and the matching covariances (on a divider
L, C and R all scale with the sense resistor together). The derivatives in ``s`` are
central differences of one part in a million: the model is smooth in every fixture
value, and a Setup holds real numbers only.
"""

from __future__ import annotations

import dataclasses

import numpy as np

_STEP = 1e-6


def setup_rows(problem, values: dict, names: list, used, noise) -> list:
    """``(gradient, u)`` for each fixture value the setup states with an uncertainty:
    the derivative of every reported value in it (the fit moving with it), and ``u``."""
    rows = []
    jacobian = None
    for field, u in problem.setup.uncertainty:
        if not u:
            continue
        if jacobian is None:
            jacobian = problem.jacobian(values, list(names), used, noise)
        s = getattr(problem.setup, field)
        h = _STEP * max(abs(s), u)
        low, high = (s - h, s + h) if s >= h else (s, s + h)  # (a capacitance may be 0)
        below, above = _with(problem, field, low), _with(problem, field, high)
        dr = above.residual_values(values, used, noise) - below.residual_values(values, used, noise)
        dp, *_ = np.linalg.lstsq(jacobian, -dr, rcond=None)  # over the step high - low
        half = {n: 0.5 * d for n, d in zip(names, dp)}
        up = above.reported({**values, **{n: values[n] + d for n, d in half.items()}})
        down = below.reported({**values, **{n: values[n] - d for n, d in half.items()}})
        rows.append(({k: (float(up[k]) - float(down[k])) / (high - low) for k in up}, u))
    return rows


def _with(problem, field: str, value: float):
    """The same problem on a bench whose ``field`` has ``value``."""
    setup = dataclasses.replace(problem.setup, **{field: value})
    return problem.with_terms(problem.bench.terms, setup=setup)

"""Series R-L-C closed forms and the bench relations, checked against fitkit.

Outside sources: the series-resonance relations and worked example of Alexander & Sadiku,
Fundamentals of Electric Circuits, ch. 14 (from memory: the example's printed values are
checked to the digits the book gives); the bench relations are standard two-port
relations, derived by algebra in the comments.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.circuits import series_rlc
from fitkit.estimate import predicted
from fitkit.setups import Setup
from fitkit.topologies import SERIES

# The worked example: R = 2 ohm, L = 1 mH, C = 0.4 uF.
R, L, C = 2.0, 1e-3, 0.4e-6
TWO_PI = 2.0 * math.pi


def rad_to_hz(w: float) -> np.ndarray:
    return np.array([w / TWO_PI])


# --- closed forms (Alexander & Sadiku, ch. 14, from memory) ---------------------------


def textbook_w0(l_h, c_f):
    return 1.0 / math.sqrt(l_h * c_f)  # w0 = 1/sqrt(LC)


def textbook_q(r, l_h, c_f):
    return math.sqrt(l_h / c_f) / r  # Q = (1/R) sqrt(L/C)


def textbook_half_power(w0, q):
    # w1,2 = w0 [sqrt(1 + 1/(4Q^2)) -+ 1/(2Q)]
    root = math.sqrt(1.0 + 1.0 / (4.0 * q * q))
    return w0 * (root - 1.0 / (2.0 * q)), w0 * (root + 1.0 / (2.0 * q))


def test_worked_example_values():
    # Alexander & Sadiku, ch. 14 (from memory): w0 = 50 krad/s, Q = 25, B = 2 krad/s,
    # w1 = 49.010 krad/s, w2 = 51.010 krad/s (checked to the printed digits).
    w0 = textbook_w0(L, C)
    q = textbook_q(R, L, C)
    w1, w2 = textbook_half_power(w0, q)
    assert w0 == pytest.approx(50e3, rel=1e-12)
    assert q == pytest.approx(25.0, rel=1e-12)
    assert w0 / q == pytest.approx(2e3, rel=1e-12)  # bandwidth B = w0/Q = R/L
    assert R / L == pytest.approx(w0 / q, rel=1e-12)
    assert w1 / 1e3 == pytest.approx(49.010, abs=0.0005)
    assert w2 / 1e3 == pytest.approx(51.010, abs=0.0005)
    assert w2 - w1 == pytest.approx(w0 / q, rel=1e-12)  # difference w0/Q
    assert math.sqrt(w1 * w2) == pytest.approx(w0, rel=1e-12)  # geometric mean w0


def test_series_rlc_is_resistive_at_f0():
    # At w0 = 1/sqrt(LC) the reactances cancel: Z = R (Alexander & Sadiku, ch. 14, from memory)
    z = series_rlc(rad_to_hz(textbook_w0(L, C)), R, L, C)[0]
    assert z.real == pytest.approx(R, rel=1e-12)
    assert abs(z.imag) < 1e-9 * math.sqrt(L / C)  # reactances of ~50 ohm cancel


def test_series_rlc_reactances():
    # Z = R + j(wL - 1/(wC)): 1 kHz, 10 kHz against the element laws
    for f in (1e3, 1e4):
        w = TWO_PI * f
        z = series_rlc(np.array([f]), R, L, C)[0]
        assert z.real == pytest.approx(R, rel=1e-14)
        assert z.imag == pytest.approx(w * L - 1.0 / (w * C), rel=1e-12)


@pytest.mark.parametrize("r, l_h, c_f", [(R, L, C), (5.0, 100e-6, 1e-9), (0.5, 2e-6, 3e-9)])
def test_half_power_points_of_series_rlc(r, l_h, c_f):
    # At the half-power points |Z| = sqrt(2) R (current down by sqrt 2, power halved) and
    # the phase of Z is -45 degrees below resonance, +45 above (Alexander & Sadiku, ch. 14,
    # from memory).
    w0 = textbook_w0(l_h, c_f)
    w1, w2 = textbook_half_power(w0, textbook_q(r, l_h, c_f))
    z = series_rlc(np.array([w1, w2]) / TWO_PI, r, l_h, c_f)
    np.testing.assert_allclose(np.abs(z), math.sqrt(2.0) * r, rtol=1e-9)
    np.testing.assert_allclose(np.degrees(np.angle(z)), [-45.0, 45.0], atol=1e-7)
    # and the magnitude peaks (|Z| is least) at w0: a little off w0 it is larger
    near = series_rlc(np.array([0.999, 1.0, 1.001]) * w0 / TWO_PI, r, l_h, c_f)
    assert np.argmin(np.abs(near)) == 1


def test_circuit_values_invert_the_closed_forms():
    # fitkit's parametrisation (resonance, Q, loop resistance) -> R, L, C must agree with
    # w0 = 1/sqrt(LC) and Q = (1/R) sqrt(L/C) for the worked example (impedance bench: the
    # fixture adds nothing to the loop). Alexander & Sadiku, ch. 14, from memory.
    setup = Setup(bench="impedance", kind="impedance")
    comps = SERIES.components(setup, 50e3 / TWO_PI, 25.0, 2.0, {})
    r, l_h, c_f = comps["R"], comps["L"], comps["C"]
    assert r == pytest.approx(R, rel=1e-12)
    assert l_h == pytest.approx(L, rel=1e-12)
    assert c_f == pytest.approx(C, rel=1e-12)
    f = np.array([7e3, 50e3 / TWO_PI, 9e3])
    np.testing.assert_allclose(
        predicted(setup, f, 50e3 / TWO_PI, 25.0, 2.0), series_rlc(f, R, L, C), rtol=1e-12
    )


# --- bench relations (standard two-port relations, derived) ---------------------------

F = np.array([1e6])


def test_reflection_inverse():
    # Z = Z0 (1 + S11)/(1 - S11): S11 = 1/3 -> 50 * (4/3)/(2/3) = 100 ohm;
    # S11 = -1/3 -> 50 * (2/3)/(4/3) = 25 ohm (Z0 = 50).
    setup = Setup(bench="reflection", kind="s11", z0_ohm=50.0)
    z, _ = setup.impedance_from(np.array([1 / 3, -1 / 3]), np.array([1e6, 1e6]))
    np.testing.assert_allclose(z, [100.0, 25.0], rtol=1e-12, atol=1e-12)
    # forward: (100 - 50)/(100 + 50) = 1/3, (25 - 50)/(25 + 50) = -1/3
    np.testing.assert_allclose(
        setup.response(np.array([100.0, 25.0]), np.array([1e6, 1e6])), [1 / 3, -1 / 3], rtol=1e-12
    )


def test_series_through_relation():
    # S21 = 2 Z0/(2 Z0 + Z): Z = 100 ohm, Z0 = 50 -> 100/200 = 0.5
    setup = Setup(bench="series-through", kind="s21", z0_ohm=50.0)
    assert setup.response(np.array([100.0]), F)[0] == pytest.approx(0.5, rel=1e-12)
    z, _ = setup.impedance_from(np.array([0.5]), F)
    assert z[0] == pytest.approx(100.0, rel=1e-12)


def test_series_through_unloaded_q():
    # Unloaded Q = Q_L / (1 - |S21(f0)|): the circuit sees 2 Z0 in its loop, so
    # Q_L = w0 L/(R + 2 Z0), |S21(f0)| = 2 Z0/(2 Z0 + R), 1 - |S21| = R/(R + 2 Z0),
    # and the ratio is w0 L / R (derived). fitkit's loaded Q uses external_ohm.
    setup = Setup(bench="series-through", kind="s21", z0_ohm=50.0)
    w0 = textbook_w0(L, C)
    q_loaded = w0 * L / (R + setup.external_ohm)
    s21_f0 = abs(setup.response(series_rlc(rad_to_hz(w0), R, L, C), rad_to_hz(w0))[0])
    assert q_loaded / (1.0 - s21_f0) == pytest.approx(textbook_q(R, L, C), rel=1e-9)


def test_shunt_through_relation():
    # S21 = 2 Z/(2 Z + Z0): Z = 25 ohm, Z0 = 50 -> 50/100 = 0.5
    setup = Setup(bench="shunt-through", kind="s21", z0_ohm=50.0)
    assert setup.response(np.array([25.0]), F)[0] == pytest.approx(0.5, rel=1e-12)
    z, _ = setup.impedance_from(np.array([0.5]), F)
    assert z[0] == pytest.approx(25.0, rel=1e-12)


def test_divider_relation():
    # H = Rs/(Rsource + Z + Rs): 50 ohm source, 10 ohm sense, Z = 40 ohm -> 10/100 = 0.1;
    # against the terminal the source drops out: 10/(40 + 10) = 0.2.
    emf = Setup(bench="divider", kind="ratio", sense_ohm=10.0, reference="open-circuit")
    term = Setup(bench="divider", kind="ratio", sense_ohm=10.0)
    assert emf.response(np.array([40.0]), F)[0] == pytest.approx(0.1, rel=1e-12)
    assert term.response(np.array([40.0]), F)[0] == pytest.approx(0.2, rel=1e-12)
    # A matched-display generator at 1 Vrms has a 2 V EMF (common practice): 0.2 V on Rs.
    volts = Setup(bench="divider", kind="volts", sense_ohm=10.0, amplitude_vrms=1.0)
    assert volts.response(np.array([40.0]), F)[0] == pytest.approx(0.2, rel=1e-12)
    for setup in (emf, term, volts):
        z, _ = setup.impedance_from(setup.response(np.array([40.0]), F), F)
        assert z[0] == pytest.approx(40.0, rel=1e-12)

"""A delay found on a divider bench that more probe capacitance explains as well.

The sweep is an ngspice AC analysis (the independent simulator of tests/spice.py) of a
series R-L-C from the generator terminal to a 47 ohm sense resistor whose probe really
has 40 pF across it, with seeded noise added; the setup says 15 pF, as a user who took
the probe's label would write. To first order the extra 25 pF lags the reading's phase
as a delay of 47 ohm x 25 pF = 1.175 ns and adds -25 pF x (47 ohm)^2 = -55 nH to the
loop (derived in fitkit/probe_reading.py), so the fit with a delay term reads L 55 nH
low, many of its standard errors: it must say so, with the reading that puts the
capacitance in the probe.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from fitkit.fitting import fit_sweep
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from tests.spice import require_ngspice, run_ac, spice_value

S = spice_value
R, L, C = 6.8, 220e-6, 1e-9  # f0 = 339.3 kHz, Q = 69
SENSE, PROBE = 47.0, 40e-12
NOISE = 2e-4  # on the real and on the imaginary part of the ratio


@pytest.fixture(scope="module")
def ngspice_sweep(tmp_path_factory) -> Sweep:
    require_ngspice()
    netlist = f"""series circuit into a sense resistor with its probe's capacitance
Vin term 0 AC 1
Rc term a {S(R)}
Lc a b {S(L)}
Cc b sense {S(C)}
Rs sense 0 {S(SENSE)}
Cp sense 0 {S(PROBE)}
.ac lin 401 250e3 450e3
"""
    freq, v = run_ac(netlist, ["sense"], tmp_path_factory.mktemp("probe"))
    rng = np.random.default_rng(11)
    noisy = v["sense"] + NOISE * (rng.normal(size=freq.size) + 1j * rng.normal(size=freq.size))
    return Sweep(freq_hz=freq, values=noisy, kind="ratio", source="probe-40pF.csv")


def _setup(probe_f: float) -> Setup:
    return Setup(
        bench="divider", kind="ratio", sense_ohm=SENSE, probe_f=probe_f, reference="terminal"
    )


def _off(q, truth: float) -> float:
    return abs(q.value - truth) / q.stderr


@pytest.mark.ngspice
def test_a_wrong_probe_capacitance_marks_l_and_f0_with_the_other_reading(ngspice_sweep):
    fit = fit_sweep(ngspice_sweep, _setup(15e-12), topology="series")
    q = fit.quantities
    f0 = 1.0 / (2.0 * math.pi * math.sqrt(L * C))
    # the case is real: the delay is the probe's extra R C, and L and f0 are off by far
    # more than their standard errors
    assert abs(q["delay"].value - SENSE * (PROBE - 15e-12)) < 4 * q["delay"].stderr + 10e-12
    assert _off(q["L"], L) > 4 and _off(q["f0"], f0) > 4
    # ... so they are marked doubtful, with the capacitance that reads the delay
    for name in ("L", "f0"):
        assert "probe capacitance" in q[name].doubtful, name
    stated = re.search(r"probe capacitance of ([\d.]+) pF", q["L"].doubtful)
    assert stated and abs(float(stated.group(1)) - 40.0) < 1.0
    # R and C do not move with it (the extra capacitance acts as an inductance)
    assert not q["R"].doubtful and not q["C"].doubtful
    assert _off(q["R"], R) < 4 and _off(q["C"], C) < 4


@pytest.mark.ngspice
def test_the_other_reading_is_the_truth(ngspice_sweep):
    # the setup that states the probe as it is: no delay needed, no such warning, and
    # every value within 4 standard errors of the netlist
    fit = fit_sweep(ngspice_sweep, _setup(PROBE), topology="series")
    q = fit.quantities
    assert "delay" not in q or not q["delay"].determined or _off(q["delay"], 0.0) < 4
    assert not any("probe capacitance" in w for w in fit.stats.warnings)
    f0 = 1.0 / (2.0 * math.pi * math.sqrt(L * C))
    for name, truth in (("R", R), ("L", L), ("C", C), ("f0", f0)):
        assert _off(q[name], truth) < 4, name


def test_a_delay_off_a_divider_is_not_read_as_a_probe():
    # a reflection bench has no probe: a delay there is the calibration plane
    from tests.imperfect import make_case

    case = make_case("s11_reference_plane", seed=0)
    fit = fit_sweep(case.sweep, case.setup, topology="series")
    assert "delay" in fit.quantities
    assert not any("probe capacitance" in w for w in fit.stats.warnings)

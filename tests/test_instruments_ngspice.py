"""The simulated bench's two channels against an ngspice AC analysis of the same bench.

The outside source is ngspice's nodal analysis of the netlist: a generator EMF behind
50 ohm, the circuit, and the sense resistor (or the feed resistor and the tank), read at
the generator terminal (channel 1) and at the output (channel 2).
"""

from __future__ import annotations

import numpy as np
import pytest

from fitkit.instruments.bench_model import BenchModel
from fitkit.setups import Setup
from tests.spice import assert_complex_close, require_ngspice, run_ac
from tests.spice import spice_value as S

pytestmark = pytest.mark.ngspice


def _channels(model: BenchModel, freq_hz: np.ndarray, emf: float) -> tuple:
    pairs = [model.voltages(float(f), emf) for f in freq_hz]
    return np.array([p[0] for p in pairs]), np.array([p[1] for p in pairs])


def test_series_divider_channels_match_ngspice(tmp_path):
    require_ngspice()
    setup = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12)
    model = BenchModel("series", 10.0, 220e-6, 1e-9, setup=setup)
    netlist = f"""series circuit on a divider bench
Vgen emf 0 dc 0 ac 2.0
Rsource emf term 50
Rdut term m1 {S(10.0)}
Ldut m1 m2 {S(220e-6)}
Cdut m2 out {S(1e-9)}
Rsense out 0 47
Cprobe out 0 {S(15e-12)}
.ac dec 40 30e3 3e6
"""
    freq, v = run_ac(netlist, ["term", "out"], tmp_path)
    ch1, ch2 = _channels(model, freq, 2.0)
    assert_complex_close(ch1, v["term"])
    assert_complex_close(ch2, v["out"])


def test_tank_across_channels_match_ngspice(tmp_path):
    require_ngspice()
    setup = Setup("across", "ratio", feed_ohm=10e3)
    model = BenchModel("tank", 3.0, 100e-6, 2.2e-9, setup=setup)
    netlist = f"""tank fed through a resistor, read across it
Vgen emf 0 dc 0 ac 1.0
Rsource emf term 50
Rfeed term out 10e3
Lcoil out m1 {S(100e-6)}
Rcoil m1 0 {S(3.0)}
Ctank out 0 {S(2.2e-9)}
.ac dec 40 30e3 3e6
"""
    freq, v = run_ac(netlist, ["term", "out"], tmp_path)
    ch1, ch2 = _channels(model, freq, 1.0)
    assert_complex_close(ch1, v["term"])
    assert_complex_close(ch2, v["out"])

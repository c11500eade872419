"""The robustness set's handbook responses against an independent simulator: ngspice AC.

Three of the imperfect sweeps of ``tests/imperfect.py`` are rebuilt as netlists and their
noise-free readings compared with ngspice at the same frequencies (1e-6 relative in
magnitude, 1e-4 degree in phase; ngspice writes 16 significant digits):

- the channel skew: the tank across its feed resistor, the second channel delayed by a
  matched lossless line of delay tau (a line of delay TD multiplies a matched wave by
  exp(-j w TD): Pozar, Microwave Engineering, ch. 2, from memory);
- the calibration plane: a 50 ohm line of delay l/v between the analyser's port and the
  series trap; S11 at the port from the port voltage, ``S11 = 2 V/E - 1`` for an EMF E
  behind 50 ohm (derived: V = V+ + V-, V+ = E/2 on a matched source);
- the coil with self-capacitance whose loss grows as sqrt(f): SPICE has no element whose
  resistance follows sqrt(f), so each of three frequencies runs on its own with the loss
  frozen at r(f) there, which is exact at that frequency.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests import imperfect
from tests.imperfect import make_case
from tests.spice import assert_complex_close, require_ngspice, run_ac, spice_value

S = spice_value


@pytest.fixture(autouse=True)
def _needs_ngspice(request):
    if request.node.get_closest_marker("ngspice"):
        require_ngspice()


def _lin(freq_hz: np.ndarray) -> str:
    return f".ac lin {freq_hz.size} {S(freq_hz[0])} {S(freq_hz[-1])}"


def _case_and_capacitor(name: str, params: dict) -> tuple:
    """The case, its frequencies, and the capacitor that tunes its coil to f0."""
    case = make_case(name, seed=0)
    return case, case.sweep.freq_hz, imperfect.capacitor_for(params["f0"], params["L"])


@pytest.mark.ngspice
def test_channel_skew_against_ngspice(tmp_path):
    p = imperfect.SKEW
    case, f, c_f = _case_and_capacitor("channel_skew", p)
    netlist = f"""tank across its feed resistor, second channel delayed
Vin in 0 AC 1
Rfeed in out {S(p["feed"])}
Lt out m {S(p["L"])}
Rt m 0 {S(p["r"])}
Ct out 0 {S(c_f)}
Ebuf nb 0 out 0 1
Rsrc nb n1 50
T1 n1 0 n2 0 Z0=50 TD={S(imperfect.skew_seconds())}
Rload n2 0 50
{_lin(f)}
"""
    freq, v = run_ac(netlist, ["n2"], tmp_path)
    np.testing.assert_allclose(freq, f, rtol=1e-12)
    # the matched line halves the buffered voltage and delays it
    assert_complex_close(case.clean_values, 2.0 * v["n2"], freq_hz=f, what="channel skew")


@pytest.mark.ngspice
def test_calibration_plane_against_ngspice(tmp_path):
    p = imperfect.PLANE
    case, f, c_f = _case_and_capacitor("s11_reference_plane", p)
    netlist = f"""series trap behind a length of 50 ohm cable
Vs src 0 AC 1
Rsrc src port 50
T1 port 0 dut 0 Z0=50 TD={S(p["length_m"] / imperfect.CABLE_VELOCITY)}
Rd dut a {S(p["r"])}
Ld a b {S(p["L"])}
Cd b 0 {S(c_f)}
{_lin(f)}
"""
    freq, v = run_ac(netlist, ["port"], tmp_path)
    np.testing.assert_allclose(freq, f, rtol=1e-12)
    assert_complex_close(case.clean_values, 2.0 * v["port"] - 1.0, freq_hz=f, what="S11")


@pytest.mark.ngspice
@pytest.mark.parametrize("where", ["low", "self-resonance", "top"])
def test_coil_with_growing_loss_against_ngspice(where, tmp_path):
    case = make_case("coil_self_capacitance", seed=0)
    f = case.sweep.freq_hz
    i = {"low": 20, "self-resonance": int(np.argmin(np.abs(f - 1e6))), "top": f.size - 1}[where]
    fi = f[i]
    r = float(imperfect.skin_loss(fi, imperfect.COIL_R_DC, imperfect.coil_loss_k()))
    cp = imperfect.capacitor_for(imperfect.coil_self_resonance_hz(), imperfect.COIL_L_H)
    netlist = f"""coil with its self-capacitance, loss frozen at r(f)
I1 0 top AC 1
Rc top m {S(r)}
Lc m 0 {S(imperfect.COIL_L_H)}
Cp top 0 {S(cp)}
.ac lin 1 {S(fi)} {S(fi)}
"""
    freq, v = run_ac(netlist, ["top"], tmp_path)
    np.testing.assert_allclose(freq, [fi], rtol=1e-12)
    # 1 A into the coil: the node voltage is its impedance
    assert_complex_close(case.clean_values[i : i + 1], v["top"], what=f"coil at {fi:g} Hz")

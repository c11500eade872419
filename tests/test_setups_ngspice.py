"""fitkit's bench forward models against an independent simulator: ngspice AC analysis.

Each test builds the bench arrangement as a netlist around a series R-L-C (the circuit
under test, a subcircuit), lets ngspice solve it at 101 frequencies from a decade below
to a decade above resonance, and compares what the instrument would read with
``Setup.response(series_rlc(...))`` at the frequencies ngspice wrote. The outside source
for every expected value is the ngspice AC analysis of the netlist (nodal analysis of
the same wiring); the wave relations used to turn node voltages into S-parameters are
derived in comments. Tolerance: 1e-6 relative in magnitude, 1e-4 degree in phase
(ngspice writes 16 significant digits).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.circuits import series_rlc
from fitkit.estimate import predicted
from fitkit.setups import Setup
from tests.spice import (
    assert_complex_close,
    ngspice_available,
    require_ngspice,
    run_ac,
    spice_value,
)

S = spice_value

# The circuits under test: (R ohm, L henry, C farad).
CIRCUITS = [
    # w0 = 50 krad/s, Q = 25: the worked series-resonance example of Alexander & Sadiku,
    # Fundamentals of Electric Circuits, ch. 14 (from memory).
    pytest.param((2.0, 1e-3, 0.4e-6), id="2ohm-1mH-400nF"),
    # f0 ~ 503 kHz, Q ~ 63.
    pytest.param((5.0, 100e-6, 1e-9), id="5ohm-100uH-1nF"),
    # f0 ~ 503 kHz, Q ~ 0.32: a heavily damped circuit, broad response. (R is kept off
    # the reference impedances 50 and 75 ohm: S11 would vanish at resonance there.)
    pytest.param((100.0, 10e-6, 10e-9), id="100ohm-10uH-10nF"),
]


@pytest.fixture(autouse=True)
def _needs_ngspice(request):
    if request.node.get_closest_marker("ngspice"):
        require_ngspice()


def f0_hz(rlc) -> float:
    _, l_h, c_f = rlc
    return 1.0 / (2.0 * math.pi * math.sqrt(l_h * c_f))


def netlist(title: str, rlc, elements: str) -> str:
    """A netlist: the R-L-C as subcircuit ``dut`` (pins 1, 2) and a 101-point .ac sweep."""
    r, l_h, c_f = rlc
    f0 = f0_hz(rlc)
    return f"""{title}
.subckt dut 1 2
Rdut 1 m1 {S(r)}
Ldut m1 m2 {S(l_h)}
Cdut m2 2 {S(c_f)}
.ends dut
{elements.strip()}
.ac dec 50 {S(f0 / 10)} {S(f0 * 10)}
"""


def fitkit_reads(setup: Setup, rlc, freq_hz: np.ndarray) -> np.ndarray:
    return setup.response(series_rlc(freq_hz, *rlc), freq_hz)


# ---------------------------------------------------------------------------------------
# Netlists of the bench arrangements. Each returns (netlist, what the instrument reads
# as a function of ngspice's node voltages, the nodes to read).


def divider_open_circuit(rlc, source_ohm, sense_ohm, probe_f, emf=1.0):
    """Generator EMF behind its source resistance, circuit, sense resistor || probe."""
    probe = f"Cprobe sense 0 {S(probe_f)}" if probe_f else ""
    text = netlist(
        "divider, ratio against the generator EMF",
        rlc,
        f"""
Vgen emf 0 dc 0 ac {S(emf)}
Rsource emf term {S(source_ohm)}
Xdut term sense dut
Rsense sense 0 {S(sense_ohm)}
{probe}
""",
    )
    return text, (lambda v: v["sense"] / emf), ["sense"]


def divider_terminal(rlc, source_ohm, sense_ohm, probe_f):
    """As above, the ratio taken against the generator's output terminal."""
    text, _, _ = divider_open_circuit(rlc, source_ohm, sense_ohm, probe_f)
    return text, (lambda v: v["sense"] / v["term"]), ["sense", "term"]


def impedance_bench(rlc):
    """1 A AC current into the circuit: the node voltage is Z in ohms.

    The 1e12 H inductor only gives the nodes a DC path for ngspice's operating point; it
    shunts Z by j w 1e12 ohm, a relative change below 1e-9 for these circuits.
    """
    text = netlist(
        "impedance read directly",
        rlc,
        """
Iprobe 0 port dc 0 ac 1
Xdut port 0 dut
Ldcpath port 0 1e12
""",
    )
    return text, (lambda v: v["port"] / 1.0), ["port"]


def reflection_bench(rlc, z0):
    """One-port: EMF behind Z0 drives the circuit (to ground).

    With the port voltage split into incident and reflected waves, V = a + b. A matched
    load (Z = Z0) reflects nothing and sees V = EMF Z0 / (Z0 + Z0) = EMF/2, so the
    incident wave is a = EMF/2, whatever the load. Hence
    S11 = b / a = (V - a) / a = 2 V / EMF - 1.  (Check: V = EMF Z/(Z + Z0) gives
    2Z/(Z + Z0) - 1 = (Z - Z0)/(Z + Z0).)
    """
    emf = 2.0
    text = netlist(
        "reflection",
        rlc,
        f"""
Vgen emf 0 dc 0 ac {S(emf)}
Rz0 emf port {S(z0)}
Xdut port 0 dut
""",
    )
    return text, (lambda v: 2.0 * v["port"] / emf - 1.0), ["port"]


def series_through_bench(rlc, z0):
    """Circuit in series between a Z0 source and a Z0 load.

    The matched load reflects nothing, so the transmitted wave is the load voltage and
    S21 = V(load) / a = 2 V(load) / EMF (incident wave a = EMF/2, as derived above).
    """
    emf = 2.0
    text = netlist(
        "series-through",
        rlc,
        f"""
Vgen emf 0 dc 0 ac {S(emf)}
Rz0src emf port1 {S(z0)}
Xdut port1 port2 dut
Rz0load port2 0 {S(z0)}
""",
    )
    return text, (lambda v: 2.0 * v["port2"] / emf), ["port2"]


def shunt_through_bench(rlc, z0):
    """Circuit across the line between a Z0 source and a Z0 load: S21 = 2 V(load) / EMF."""
    emf = 2.0
    text = netlist(
        "shunt-through",
        rlc,
        f"""
Vgen emf 0 dc 0 ac {S(emf)}
Rz0src emf line {S(z0)}
Xdut line 0 dut
Rz0load line 0 {S(z0)}
""",
    )
    return text, (lambda v: 2.0 * v["line"] / emf), ["line"]


def simulate(bench, tmp_path):
    text, reading, nodes = bench
    freq, v = run_ac(text, nodes, tmp_path)
    assert freq.size >= 30
    return freq, reading(v)


# ---------------------------------------------------------------------------------------
# 1. Divider, ratio against the generator's open-circuit EMF (source resistance in the loop).


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
@pytest.mark.parametrize(
    "sense_ohm, probe_f",
    [
        pytest.param(10.0, 0.0, id="no-probe"),
        # probe capacitance chosen so that w Cprobe Rsense spans ~0.01..1 over the sweep
        pytest.param(10.0, "scaled", id="probe"),
    ],
)
def test_divider_open_circuit_matches_ngspice(rlc, sense_ohm, probe_f, tmp_path):
    if probe_f == "scaled":
        probe_f = 0.3 / (2 * math.pi * f0_hz(rlc) * sense_ohm)
    freq, spice = simulate(divider_open_circuit(rlc, 50.0, sense_ohm, probe_f), tmp_path)
    setup = Setup(
        bench="divider",
        kind="ratio",
        source_ohm=50.0,
        sense_ohm=sense_ohm,
        probe_f=probe_f,
        reference="open-circuit",
    )
    # outside source: ngspice AC analysis, V(sense)/EMF
    assert_complex_close(fitkit_reads(setup, rlc, freq), spice, freq_hz=freq, what="divider/EMF")


# 2. Divider, ratio against the generator's output terminal (source resistance drops out).


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
@pytest.mark.parametrize("probe", [False, True], ids=["no-probe", "probe"])
def test_divider_terminal_matches_ngspice(rlc, probe, tmp_path):
    sense_ohm = 47.0
    probe_f = 0.5 / (2 * math.pi * f0_hz(rlc) * sense_ohm) if probe else 0.0
    # The simulated generator has 600 ohm; fitkit's setup keeps its default 50 ohm: against
    # the terminal the source resistance must not matter.
    freq, spice = simulate(divider_terminal(rlc, 600.0, sense_ohm, probe_f), tmp_path)
    setup = Setup(bench="divider", kind="ratio", sense_ohm=sense_ohm, probe_f=probe_f)
    assert setup.reference == "terminal"
    # outside source: ngspice AC analysis, V(sense)/V(terminal)
    assert_complex_close(
        fitkit_reads(setup, rlc, freq), spice, freq_hz=freq, what="divider/terminal"
    )


# 3. Divider, absolute volts from the generator's displayed amplitude.


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
@pytest.mark.parametrize("display", ["matched", "open-circuit"])
@pytest.mark.parametrize("source_ohm", [50.0, 600.0])
def test_divider_volts_matches_ngspice(rlc, display, source_ohm, tmp_path):
    amplitude = 0.25  # Vrms as the generator displays it
    # A generator whose display assumes a matched 50 ohm load shows half its open-circuit
    # EMF, so its EMF is twice the display (common practice); otherwise the display is the
    # EMF itself.
    emf = 2.0 * amplitude if display == "matched" else amplitude
    sense_ohm, probe_f = 10.0, 0.2 / (2 * math.pi * f0_hz(rlc) * 10.0)
    text, _, nodes = divider_open_circuit(rlc, source_ohm, sense_ohm, probe_f, emf=emf)
    freq, v = run_ac(text, nodes, tmp_path)
    setup = Setup(
        bench="divider",
        kind="volts",
        source_ohm=source_ohm,
        sense_ohm=sense_ohm,
        probe_f=probe_f,
        amplitude_vrms=amplitude,
        display=display,
    )
    # outside source: ngspice AC analysis, V(sense) in volts
    assert_complex_close(fitkit_reads(setup, rlc, freq), v["sense"], freq_hz=freq, what="volts")


# 4. Impedance read directly.


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
def test_impedance_matches_ngspice(rlc, tmp_path):
    freq, spice = simulate(impedance_bench(rlc), tmp_path)
    setup = Setup(bench="impedance", kind="impedance")
    # outside source: ngspice AC analysis, V/I with a 1 A current source
    assert_complex_close(fitkit_reads(setup, rlc, freq), spice, freq_hz=freq, what="Z")
    # and the bare circuit model itself
    assert_complex_close(series_rlc(freq, *rlc), spice, freq_hz=freq, what="series_rlc")


# 5. Reflection, 6. series-through, 7. shunt-through.


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
@pytest.mark.parametrize("z0", [50.0, 75.0])
@pytest.mark.parametrize(
    "bench, kind, build",
    [
        ("reflection", "s11", reflection_bench),
        ("series-through", "s21", series_through_bench),
        ("shunt-through", "s21", shunt_through_bench),
    ],
    ids=["reflection", "series-through", "shunt-through"],
)
def test_s_parameters_match_ngspice(rlc, z0, bench, kind, build, tmp_path):
    freq, spice = simulate(build(rlc, z0), tmp_path)
    setup = Setup(bench=bench, kind=kind, z0_ohm=z0)
    # outside source: ngspice AC analysis, waves from node voltages (derived in the builders)
    assert_complex_close(fitkit_reads(setup, rlc, freq), spice, freq_hz=freq, what=bench)


# ---------------------------------------------------------------------------------------
# The model the fit uses: estimate.predicted, parametrised by resonance, loaded Q and loop
# resistance. The resistance the fixture adds to the loop is worked out here from each
# netlist (Thevenin resistance the circuit sees), not taken from fitkit.

PREDICTED_CASES = [
    # (id, setup, bench builder, fixture resistance in the loop)
    (
        "divider-emf",
        Setup(bench="divider", kind="ratio", sense_ohm=10.0, reference="open-circuit"),
        lambda rlc: divider_open_circuit(rlc, 50.0, 10.0, 0.0),
        50.0 + 10.0,  # source + sense resistor
    ),
    (
        "divider-terminal",
        Setup(bench="divider", kind="ratio", sense_ohm=47.0),
        lambda rlc: divider_terminal(rlc, 50.0, 47.0, 0.0),
        47.0,  # the sense resistor (ratio against the terminal: source outside)
    ),
    (
        "divider-volts",
        Setup(bench="divider", kind="volts", sense_ohm=10.0, amplitude_vrms=0.5),
        lambda rlc: divider_open_circuit(rlc, 50.0, 10.0, 0.0, emf=1.0),  # matched: 2 x 0.5
        50.0 + 10.0,
    ),
    ("impedance", Setup(bench="impedance", kind="impedance"), impedance_bench, 0.0),
    (
        "reflection",
        Setup(bench="reflection", kind="s11"),
        lambda rlc: reflection_bench(rlc, 50.0),
        50.0,  # Z0 behind the source
    ),
    (
        "series-through",
        Setup(bench="series-through", kind="s21"),
        lambda rlc: series_through_bench(rlc, 50.0),
        100.0,  # source Z0 plus load Z0 in series with the circuit
    ),
    (
        "shunt-through",
        Setup(bench="shunt-through", kind="s21"),
        lambda rlc: shunt_through_bench(rlc, 50.0),
        25.0,  # source Z0 in parallel with load Z0 across the circuit
    ),
]


@pytest.mark.ngspice
@pytest.mark.parametrize("rlc", CIRCUITS)
@pytest.mark.parametrize(
    "setup, build, fixture_ohm",
    [c[1:] for c in PREDICTED_CASES],
    ids=[c[0] for c in PREDICTED_CASES],
)
def test_predicted_matches_ngspice(rlc, setup, build, fixture_ohm, tmp_path):
    r, l_h, _ = rlc
    f0 = f0_hz(rlc)
    loop = r + fixture_ohm
    q_loaded = 2 * math.pi * f0 * l_h / loop  # loaded Q = w0 L / (R + fixture resistance)
    freq, spice = simulate(build(rlc), tmp_path)
    # outside source: ngspice AC analysis
    assert_complex_close(
        predicted(setup, freq, f0, q_loaded, loop), spice, freq_hz=freq, what="predicted"
    )


# ---------------------------------------------------------------------------------------
# The comparison has teeth: a wrong fixture value must not pass.


@pytest.mark.ngspice
def test_comparison_catches_a_missing_probe_and_a_wrong_display(tmp_path):
    rlc = (5.0, 100e-6, 1e-9)
    probe_f = 0.3 / (2 * math.pi * f0_hz(rlc) * 10.0)
    freq, spice = simulate(divider_open_circuit(rlc, 50.0, 10.0, probe_f), tmp_path / "a")
    blind = Setup(bench="divider", kind="ratio", sense_ohm=10.0, reference="open-circuit")
    with pytest.raises(AssertionError):
        assert_complex_close(fitkit_reads(blind, rlc, freq), spice)

    text, _, nodes = divider_open_circuit(rlc, 50.0, 10.0, 0.0, emf=0.5)  # EMF = display
    freq, v = run_ac(text, nodes, tmp_path / "b")
    wrong = Setup(bench="divider", kind="volts", sense_ohm=10.0, amplitude_vrms=0.5)
    with pytest.raises(AssertionError):  # "matched" doubles the EMF: a factor 2 off
        assert_complex_close(fitkit_reads(wrong, rlc, freq), v["sense"])


@pytest.mark.ngspice
def test_run_ac_rejects_a_floating_node(tmp_path):
    # A current source into a series R-L-C has no DC path: ngspice warns of a singular
    # matrix, and run_ac must refuse the result rather than hand it over.
    text = netlist(
        "floating",
        (2.0, 1e-3, 0.4e-6),
        "Iprobe 0 port dc 0 ac 1\nXdut port 0 dut\n",
    )
    with pytest.raises(RuntimeError, match="ngspice failed"):
        run_ac(text, ["port"], tmp_path)


# ---------------------------------------------------------------------------------------
# The skip-or-fail rule of tests/spice.py (no ngspice needed).


def test_require_ngspice_skips_locally_and_fails_under_ci(monkeypatch, tmp_path):
    monkeypatch.delenv("FITKIT_NGSPICE", raising=False)
    monkeypatch.setenv("PATH", str(tmp_path))  # an empty directory: no ngspice on PATH
    assert not ngspice_available()
    monkeypatch.delenv("CI", raising=False)
    with pytest.raises(pytest.skip.Exception):
        require_ngspice()
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception):
        require_ngspice()
    with pytest.raises(pytest.fail.Exception):
        run_ac(netlist("x", (2.0, 1e-3, 0.4e-6), "Rx port 0 1"), ["port"], tmp_path)

"""Taking sweeps from the simulated bench through pyvisa and pyvisa-py, nothing mocked.

The truth is the circuit inside the simulated bench; a fit of the sweep taken through
the whole path (SCPI over a loopback socket, sine fits, adaptive placement) must find it
within 4 standard uncertainties. Failures (a dropped connection, a timeout, an error in
the instrument's queue, a clipped point, Ctrl-C) must each leave the generator output
off and the points taken in the file.
"""

from __future__ import annotations

import math
from dataclasses import replace

import pytest

pytest.importorskip("pyvisa_py")

from fitkit.errors import SetupError  # noqa: E402
from fitkit.instruments.bench_model import SCENARIOS, scenario_model  # noqa: E402
from fitkit.instruments.powered import powered  # noqa: E402
from fitkit.instruments.profile import load_profile  # noqa: E402
from fitkit.instruments.reading import ReadSettings  # noqa: E402
from fitkit.instruments.session import SweepRequest, take_sweep  # noqa: E402
from fitkit.instruments.simbench import SimulatedBench  # noqa: E402
from fitkit.instruments.sweep_file import read_points, write_setup_file  # noqa: E402
from fitkit.instruments.transport import InstrumentError  # noqa: E402
from fitkit.readers import read_sweep  # noqa: E402
from fitkit.workflow import fit_file  # noqa: E402

FAST = ReadSettings(settle_periods=0, settle_min_s=0, record_points=400)


def _take(bench, sim, request, out, **options):
    """A sweep of the simulated circuit with the shipped profile, read fast."""
    options.setdefault("settings", FAST)
    profile = options.pop("profile", None) or load_profile()
    return take_sweep(request, sim.setup, profile, bench.addresses, out, **options)


@pytest.mark.parametrize("scenario", ["series", "tank", "coil"])
def test_adaptive_sweep_recovers_the_simulated_circuit(tmp_path, scenario):
    seen_on, holder = [], {}

    def progress(points, fit):
        seen_on.append(holder["bench"].output_on)

    sim = scenario_model(scenario)
    span = SCENARIOS[scenario][2]
    request = SweepRequest(*span, topology=sim.topology, target="Q", target_rel=0.005)
    out = tmp_path / "sweep.csv"
    with SimulatedBench(sim) as bench:
        holder["bench"] = bench
        taken = _take(bench, sim, request, out, progress=progress)
        assert not bench.output_on  # off at the end
    assert all(seen_on)  # on during the sweep
    assert taken.stopped.startswith("target reached")
    # a series circuit (or coil) loads the generator at resonance: its noisier points
    # there were read with much longer records; the tank, fed through 10 kohm, hardly
    # loads it
    longest = max(p.length for p in taken.points)
    assert longest > 3 if scenario != "tank" else longest < 2
    fit = taken.fit
    truths = [("R", sim.r_ohm), ("L", sim.l_h), ("C", sim.c_f)]
    if scenario == "coil":
        truths.append(("C_self", sim.c_self_f))
    for name, truth in truths:
        q = fit[name]
        assert abs(q.value - truth) < 4 * q.stderr, (name, q.value, q.stderr, truth)
    # the file is an ordinary sweep file, identities in its metadata
    sweep = read_sweep(out)
    assert sweep.points == len(taken.points)
    assert "simulated generator" in sweep.metadata["generator"]
    assert "simulated digitiser" in sweep.metadata["digitiser"]


@pytest.mark.parametrize(
    ("scenario", "target", "truths"),
    [
        # a relative divider, no fixture values: H = gain / Z_loop fixes f0 and the
        # loaded Q only, Q_loaded = sqrt(L/C) / (R + Rsense) (series R-L-C; any
        # circuits text)
        ("series", "Q_loaded", ("f0", "Q_loaded")),
        # across a tank fed through a known resistor the shape also fixes the scale
        ("tank", "Q_loaded", ("R", "L", "C")),
    ],
)
def test_relative_sweep_recovers_what_its_shape_determines(tmp_path, scenario, target, truths):
    sim = scenario_model(scenario)
    sense = None if sim.setup.bench == "divider" else sim.setup.sense_ohm
    setup = replace(sim.setup, relative=True, sense_ohm=sense)
    request = SweepRequest(
        *SCENARIOS[scenario][2], topology=sim.topology, target=target, target_rel=0.005
    )
    with SimulatedBench(sim) as bench:
        taken = take_sweep(
            request, setup, load_profile(), bench.addresses, tmp_path / "s.csv", settings=FAST
        )
    assert taken.stopped.startswith("target reached")
    f0 = 1 / (2 * math.pi * math.sqrt(sim.l_h * sim.c_f))
    known = {"R": sim.r_ohm, "L": sim.l_h, "C": sim.c_f, "f0": f0}
    known["Q_loaded"] = math.sqrt(sim.l_h / sim.c_f) / (sim.r_ohm + sim.setup.external_ohm)
    for name in truths:
        q = taken.fit[name]
        assert abs(q.value - known[name]) < 4 * q.stderr, (name, q.value, q.stderr)
    if scenario == "series":
        assert not taken.fit["L"].determined


def test_a_relative_divider_sweep_refuses_a_target_it_cannot_reach(tmp_path):
    setup = replace(scenario_model("series").setup, relative=True)
    request = SweepRequest(100e3, 1e6, target="L")
    addresses = {"generator": "TCPIP::127.0.0.1::9::SOCKET", "digitiser": "unused"}
    with pytest.raises(SetupError, match="fixes only the resonance and the loaded Q, not L"):
        take_sweep(request, setup, load_profile(), addresses, tmp_path / "s.csv")
    assert not (tmp_path / "s.csv").exists()


def test_the_written_sigma_column_weights_the_fit_of_the_file(tmp_path):
    sim = scenario_model("series")
    out = tmp_path / "sweep.csv"
    request = SweepRequest(100e3, 1e6, target_rel=0.01, max_points=40)
    with SimulatedBench(sim) as bench:
        taken = _take(bench, sim, request, out)
    sweep = read_sweep(out)
    by_freq = sorted(taken.points, key=lambda p: p.freq_hz)
    assert sweep.sigma == pytest.approx([p.sigma for p in by_freq], rel=1e-3)
    write_setup_file(tmp_path, sim.setup, force=True)
    fit, _ = fit_file(out, topology="series")
    assert fit.stats.noise.startswith("additive, per point, the sweep's own sigmas")
    # the sine fits' sigmas are honest (IEEE Std 1057 residual variance): the reduced
    # chi-square against them stays within the chi-square range the fit accepts
    assert not any("per-point sigmas" in w for w in fit.stats.warnings)
    plain, _ = fit_file(out, topology="series", noise="estimate")
    assert "estimated" in plain.stats.noise
    assert plain["L"].value != fit["L"].value


def _check_failure(bench, out, exc_info, message):
    assert not bench.output_after
    assert exc_info.match(message)
    points, metadata = read_points(out)
    assert points and metadata["state"] == "incomplete"
    assert f"the {len(points)} points taken are saved in {out}" in exc_info.value.remedy


@pytest.mark.parametrize(
    ("fault", "message"),
    [
        (("drop", 150), "lost the connection to the digitiser"),
        (("silent", 150), "the digitiser did not answer"),
        (("error", 150), "the digitiser reported error -222"),
        (("overload", 150), "clipped at .* on the largest range"),
    ],
)
def test_instrument_failures_stop_with_output_off_and_points_saved(tmp_path, fault, message):
    sim = scenario_model("series")
    out = tmp_path / "sweep.csv"
    profile = load_profile()
    quick = {**profile.digitiser.settings, "timeout_ms": 300}
    profile = replace(profile, digitiser=replace(profile.digitiser, settings=quick))
    request = SweepRequest(100e3, 1e6, max_points=60)
    with SimulatedBench(sim, {"digitiser": fault}) as bench:
        with pytest.raises(InstrumentError) as info:
            _take(bench, sim, request, out, profile=profile)
        bench.output_after = bench.output_on
    _check_failure(bench, out, info, message)


def test_a_dropped_generator_is_reconnected_to_switch_the_output_off(tmp_path):
    sim = scenario_model("series")
    out = tmp_path / "sweep.csv"
    with SimulatedBench(sim, {"generator": ("drop", 40)}) as bench:
        with pytest.raises(InstrumentError, match="lost the connection to the generator"):
            _take(bench, sim, SweepRequest(100e3, 1e6, max_points=60), out)
        assert not bench.output_on


def test_a_hung_generator_is_reported_to_be_switched_off_by_hand(tmp_path):
    sim = scenario_model("series")
    profile = load_profile()
    quick = {**profile.generator.settings, "timeout_ms": 300}
    profile = replace(profile, generator=replace(profile.generator, settings=quick))
    with SimulatedBench(sim, {"generator": ("silent", 40)}) as bench:
        with pytest.raises(
            InstrumentError, match="could not switch the generator output off"
        ) as info:
            _take(bench, sim, SweepRequest(100e3, 1e6), tmp_path / "s.csv", profile=profile)
        assert bench.output_on  # the simulated generator hung with its output on
    assert "the sweep had stopped: the generator did not answer" in info.value.message
    assert "OFF BY HAND" in info.value.remedy
    assert not (tmp_path / "s.csv.part").exists()


def test_ctrl_c_switches_the_output_off_and_the_sweep_continues(tmp_path):
    sim = scenario_model("series")
    out = tmp_path / "sweep.csv"
    request = SweepRequest(100e3, 1e6, target_rel=0.003, max_points=60)

    def interrupt(points, fit):
        raise KeyboardInterrupt

    with SimulatedBench(sim) as bench:
        with pytest.raises(KeyboardInterrupt):
            _take(bench, sim, request, out, progress=interrupt)
        assert not bench.output_on
        before, metadata = read_points(out)
        assert len(before) == request.coarse_points and metadata["state"] == "incomplete"
        taken = _take(bench, sim, request, out, resume=True)
        assert not bench.output_on
    assert len(taken.points) > len(before)
    freqs = [p.freq_hz for p in taken.points]
    assert len(set(freqs)) == len(freqs)  # the coarse pass was not taken again
    assert read_points(out)[1]["state"] == "complete"


def test_the_point_budget_stops_a_sweep_that_cannot_reach_its_target(tmp_path):
    sim = scenario_model("series")
    request = SweepRequest(100e3, 1e6, target_rel=1e-6, max_points=30)
    with SimulatedBench(sim) as bench:
        taken = _take(bench, sim, request, tmp_path / "s.csv")
        assert not bench.output_on
    assert taken.stopped == "point budget reached (30 points)"
    assert len(read_points(tmp_path / "s.csv")[0]) == 30


def test_amplitude_above_the_ceiling_is_refused_before_connecting(tmp_path):
    request = SweepRequest(100e3, 1e6, amplitude_vpp=8.0, ceiling_vpp=5.0)
    addresses = {"generator": "TCPIP::127.0.0.1::9::SOCKET", "digitiser": "unused"}
    with pytest.raises(SetupError, match="above the ceiling of 5 Vpp"):
        take_sweep(
            request, scenario_model("series").setup, load_profile(), addresses, tmp_path / "s.csv"
        )
    assert not (tmp_path / "s.csv").exists()


SHORT_PROFILE = """
name = "short forms, scope measurements"
[generator]
identify = "*IDN?"
wait = "*OPC?"
error = "SYST:ERR?"
set_frequency = "FREQ {frequency}"
set_amplitude = "VOLT {amplitude}"
output_on = "OUTP ON"
output_off = "OUTP OFF"
[digitiser]
identify = "*IDN?"
wait = "*OPC?"
error = "SYST:ERR?"
set_range = "SENS{channel}:VOLT:RANG {range}"
measure_amplitude = "MEAS{channel}:VOLT:AC?"
measure_phase = "MEAS{channel}:PHAS? {reference}"
"""


def test_a_user_profile_with_scope_measurements_reads_the_ratio(tmp_path):
    # SCPI short forms and default nodes (FREQ for SOURce1:FREQuency), SCPI-1999 vol. 1
    path = tmp_path / "short.toml"
    path.write_text(SHORT_PROFILE, encoding="utf-8")
    sim = scenario_model("series")
    scope = ReadSettings("scope", settle_periods=0, settle_min_s=0)
    request = SweepRequest(200e3, 600e3, coarse_points=12, max_points=24)
    with SimulatedBench(sim) as bench:
        taken = _take(
            bench, sim, request, tmp_path / "s.csv", settings=scope, profile=load_profile(path)
        )
    assert all(math.isnan(p.sigma) for p in taken.points)
    f0 = taken.fit["f0"]
    truth = 1 / (2 * math.pi * math.sqrt(sim.l_h * sim.c_f))
    assert abs(f0.value - truth) < 4 * f0.stderr


def test_a_clipped_point_is_read_again_on_a_larger_range():
    sim = scenario_model("series")
    with SimulatedBench(sim) as bench:
        with powered(load_profile(), bench.addresses, 1.0, settings=FAST) as reader:
            reader.range_index = {1: 0, 2: 0}  # both channels on 10 mV: the record clips
            reader.prepare()
            point = reader.read(339e3)
    assert point.reads > 3
    # the circuit's own ratio at this frequency (the model checked against ngspice)
    v1, v2 = sim.voltages(339e3, 1.0)
    assert abs(point.ratio - v2 / v1) < 4 * point.sigma
    # and the ranges the reader settled on hold the traces without clipping
    held = reader.ranges[reader.range_index[1]]
    assert held > abs(v1) > 0.3 * held

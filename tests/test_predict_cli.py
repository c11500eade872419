"""fitkit predict as a user meets it: exit codes, messages, JSON, plot."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.fitting import fit_sweep
from tests.synthetic import SETUPS, make_sweep

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sweeps"
SERIES = SAMPLES / "hand_wound_series" / "sweep.csv"
CHAIN = ("--placement", "series", "--chain-source-r", "10", "--chain-load-r", "10")
TYPED = ("--value", "R=6.8+-0.1", "--value", "L=220u+-0.5u", "--value", "C=1n")


def run(*args):
    return CliRunner().invoke(main, ["predict", *[str(a) for a in args]], catch_exceptions=False)


@pytest.fixture(scope="module")
def saved_fit(tmp_path_factory):
    setup = SETUPS["divider-terminal"]
    fit = fit_sweep(make_sweep(setup, seed=3), setup)
    path = tmp_path_factory.mktemp("fit") / "fit.json"
    path.write_text(fit.to_json(), encoding="utf-8")
    return path


def test_saved_fit_prints_tuning_and_rejections(saved_fit):
    out = run("--saved-fit", saved_fit, "--wanted", "999k", "--raster", "mw-9k", *CHAIN)
    assert out.exit_code == 0, out.output
    assert "retuned: the chain's response peaks at 999 kHz" in out.output
    assert "loaded Q" in out.output
    assert out.output.count(" dB +/- ") >= 8  # rejection and S/I for four neighbours
    assert "(mw-9k)" in out.output


def test_json_has_the_promised_shape(saved_fit):
    out = run(
        "--saved-fit",
        saved_fit,
        "--wanted",
        "999k",
        "--raster",
        "mw-9k",
        "--image-if",
        "455k",
        "--carrier",
        "+27k,+12",
        "--require-db",
        "1",
        "--json",
        *CHAIN,
    )
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    offsets = sorted(c["offset_hz"] for c in data["carriers"])
    # GE75 9 kHz raster neighbours, the image at + 2 x 455 kHz, and the typed offset
    assert offsets == pytest.approx([-18e3, -9e3, 9e3, 18e3, 27e3, 910e3])
    typed = next(c for c in data["carriers"] if c["offset_hz"] == pytest.approx(27e3))
    assert typed["level_db"] == 12.0
    assert typed["sir_db"]["value"] == pytest.approx(typed["rejection_db"]["value"] - 12.0)
    for c in data["carriers"]:
        assert set(c["rejection_db"]) == {"value", "u", "unit"}
        assert c["rejection_db"]["u"] > 0
    limit = data["loss_limit"]
    # the upper neighbour binds: |f/f0 - f0/f| is smaller 9 kHz above than 9 kHz below
    assert limit["binding_freq_hz"] == pytest.approx(1008e3)
    assert set(limit) >= {"r_max_ohm", "q_loaded_min", "required_db", "met_now"}
    # image rejection against the closed form 10 log10(1 + Q^2 y^2) (Kennedy & Davis ch. 6,
    # from memory) with the loaded Q the command reports
    q = data["Q_loaded"]["value"]
    y = 1909e3 / 999e3 - 999e3 / 1909e3
    image = next(c for c in data["carriers"] if c["label"] == "image")
    assert image["rejection_db"]["value"] == pytest.approx(
        10 * math.log10(1 + (q * y) ** 2), rel=1e-4
    )


def test_sweep_file_with_its_bench_setup():
    out = run(SERIES, "--carrier", "360k", "--json")
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert data["chain"]["origin"] == "the bench setup"
    assert data["chain"]["load_ohm"] == 47.0  # the sample's sense resistor
    assert data["c_origin"] == "as given"


def test_typed_values_and_a_carrier_file(tmp_path):
    carriers = tmp_path / "carriers.txt"
    carriers.write_text("# strong local station\n1017k, +20 dB\n\n-9k  # weak neighbour\n")
    out = run(*TYPED, *CHAIN, "--wanted", "999k", "--carrier-file", carriers, "--json")
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert [c["freq_hz"] for c in data["carriers"]] == pytest.approx([1017e3, 990e3])
    assert data["carriers"][0]["level_db"] == 20.0
    assert data["values"]["L"]["u"] == pytest.approx(0.5e-6)


def test_plot_is_written_and_not_overwritten(saved_fit, tmp_path):
    plot = tmp_path / "response.png"
    args = ("--saved-fit", saved_fit, "--wanted", "999k", "--carrier", "+9k", *CHAIN)
    out = run(*args, "--plot", plot)
    assert out.exit_code == 0, out.output
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    again = run(*args, "--plot", plot)
    assert again.exit_code == 2 and "--force" in again.output
    assert run(*args, "--plot", plot, "--force").exit_code == 0


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("--wanted", "0"), "wanted carrier 0 Hz is not a frequency above 0"),
        (("--wanted", "-1M"), "wanted carrier -1 MHz"),
        (("--wanted", "999k", "--carrier", "-2M"), "not a frequency above 0"),
        (("--wanted", "999k", "--c-range", "20p..50p"), "above the capacitor's maximum"),
        (("--wanted", "999k", "--c-range", "20p"), "LOW..HIGH"),
        (("--wanted", "999k", "--carrier", "+9k", "--require-db", "80"), "lossless"),
        (("--wanted", "999k", "--carrier", "+9k", "--require-db", "-3"), "above 0"),
        (("--carrier", "+9k"), "need a wanted carrier"),
        (("--wanted", "1000k", "--raster", "mw-9k"), "not on the mw-9k raster"),
        (("--wanted", "999k", "--carrier", "+9k,loud"), "carrier level 'loud'"),
    ],
)
def test_bad_input_exits_2_with_the_value_and_the_fix(args, message):
    out = run(*TYPED, *CHAIN, *args)
    assert out.exit_code == 2, out.output
    assert message in out.output
    assert "fix:" in out.output


def test_starting_points_and_chains_are_checked(saved_fit):
    neither = run("--wanted", "999k")
    assert neither.exit_code == 2 and "exactly one starting point" in neither.output
    both = run("--saved-fit", saved_fit, *TYPED)
    assert both.exit_code == 2 and "exactly one" in both.output
    no_chain = run(*TYPED, "--wanted", "999k")
    assert no_chain.exit_code == 2 and "no chain" in no_chain.output
    short = run("--value", "L=220u", "--value", "C=1n", *CHAIN)
    assert short.exit_code == 2 and "lack R" in short.output


def test_the_reported_tank_is_tuned_on_its_chain_and_a_stronger_neighbour_is_named():
    args = (
        *("--value", "R=4", "--value", "L=240u", "--value", "C=200p", "--circuit", "tank"),
        *("--wanted", "1008k", "--carrier", "+9k", "--carrier", "-9k", "--placement", "shunt"),
        *("--chain-source-r", "100k", "--chain-load-r", "1M", "--chain-load-c", "20p"),
    )
    out = run(*args)
    assert out.exit_code == 0, out.output
    assert "retuned: the chain's response peaks at 1.008 MHz" in out.output
    assert "note" not in out.output
    as_given = run(*args, "--as-fitted", "--json")
    data = json.loads(as_given.output)
    assert data["extremum"]["kind"] == "peak"
    assert data["extremum"]["freq_hz"]["value"] == pytest.approx(692.6e3, rel=1e-3)
    assert "comes out 0.22 dB stronger" in data["notes"][0]

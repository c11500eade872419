"""Make the demo sweeps in this folder (invented scenarios; see README.md here).

Run from the repository root: ``python sample_sweeps/make_samples.py``. Seeded, so the
files come out the same every time. Each scenario is a folder holding the sweep and the
fitkit-setup.toml that describes its bench.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from fitkit.circuits import series_rlc
from fitkit.setups import Setup

HERE = Path(__file__).resolve().parent


def _write(path: Path, header: list[str], columns: list[np.ndarray], fmt: list[str]) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", encoding="utf-8", newline="\n") as fh:
        for line in header:
            fh.write(line + "\n")
        for row in zip(*columns):
            fh.write(",".join(f.format(v) for f, v in zip(fmt, row)) + "\n")


def hand_wound_series(rng: np.random.Generator) -> None:
    """A hand-wound coil in series with a 1 nF mica capacitor, swept with a generator and
    a two-channel scope: channel 1 on the generator terminal, channel 2 across a 47 ohm
    sense resistor, a 10x probe (about 15 pF). The scope exports gain in dB and phase."""
    folder = HERE / "hand_wound_series"
    r, l_h, c_f = 6.8, 220e-6, 1.0e-9
    setup = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12, reference="terminal")
    f = np.geomspace(200e3, 700e3, 241)
    h = setup.response(series_rlc(f, r, l_h, c_f), f)
    gain_db = 20 * np.log10(np.abs(h)) + rng.normal(0, 0.03, f.size)
    phase = np.degrees(np.angle(h)) + rng.normal(0, 0.25, f.size)
    gain_db[97] += 2.5  # a glitch when the scope switched range
    _write(
        folder / "sweep.csv",
        ["# scope frequency response export", "# probe 10x on channel 2",
         "Frequency (kHz),Gain (dB),Phase (deg)"],
        [f / 1e3, gain_db, phase],
        ["{:.4f}", "{:.3f}", "{:.2f}"],
    )
    (folder / "fitkit-setup.toml").write_text(
        "[bench]\n"
        'arrangement = "divider"\n'
        'sense_resistor = "47"\n'
        'probe_capacitance = "15p"\n'
        'ratio_reference = "terminal"\n',
        encoding="utf-8",
    )


def single_channel_volts(rng: np.random.Generator) -> None:
    """The same kind of loop read with one meter across a 100 ohm sense resistor, in
    volts, with nobody having noted the generator amplitude: a relative sweep. An LCR
    meter gave the coil's inductance as 150 uH."""
    folder = HERE / "single_channel_volts"
    r, l_h, c_f = 3.3, 150e-6, 680e-12
    setup = Setup(
        "divider", "volts", sense_ohm=100.0, reference="open-circuit", amplitude_vrms=1.0,
        display="open-circuit",
    )
    f = np.linspace(400e3, 1100e3, 141)
    v = np.abs(setup.response(series_rlc(f, r, l_h, c_f), f)) * 0.8 * 2 * math.sqrt(2)
    v = v * (1 + rng.normal(0, 0.004, f.size)) + rng.normal(0, 0.002, f.size)
    _write(
        folder / "sweep.csv",
        ["Frequency (Hz),Vout (Vpp)"],
        [f, v],
        ["{:.1f}", "{:.4f}"],
    )
    (folder / "fitkit-setup.toml").write_text(
        "[bench]\n"
        'arrangement = "divider"\n'
        'sense_resistor = "100"\n'
        'ratio_reference = "open-circuit"\n',
        encoding="utf-8",
    )


def main() -> None:
    rng = np.random.default_rng(20261201)
    hand_wound_series(rng)
    single_channel_volts(rng)


if __name__ == "__main__":
    main()

"""Make the demo sweeps in this folder (invented scenarios; see README.md here).

Run from the repository root: ``python sample_sweeps/make_samples.py``. Seeded, so the
files come out the same every time. Each scenario is a folder holding the sweep and the
fitkit-setup.toml that describes its bench.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from fitkit.circuits import coil_in_series, series_rlc, tank
from fitkit.readers import write_touchstone
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
        [
            "# scope frequency response export",
            "# probe 10x on channel 2",
            "Frequency (kHz),Gain (dB),Phase (deg)",
        ],
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
        "divider",
        "volts",
        sense_ohm=100.0,
        reference="open-circuit",
        amplitude_vrms=1.0,
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


def hand_wound_tank(rng: np.random.Generator) -> None:
    """A hand-wound coil across a 470 pF silver-mica capacitor, read on an impedance
    analyser that exports |Z| in ohm and phase in degrees (error about 0.2% of reading)."""
    folder = HERE / "hand_wound_tank"
    r, l_h, c_f = 12.0, 330e-6, 470e-12
    f = np.geomspace(300e3, 600e3, 301)
    z = tank(f, r, l_h, c_f) * np.exp(
        0.002 * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    )
    _write(
        folder / "sweep.csv",
        ["# impedance analyser export", "Freq (Hz);|Z| (ohm);Phase (deg)"],
        [f, np.abs(z), np.degrees(np.angle(z))],
        ["{:.2f}", "{:.3f}", "{:.3f}"],
    )
    text = (folder / "sweep.csv").read_text(encoding="utf-8").replace(",", ";")
    (folder / "sweep.csv").write_text(text, encoding="utf-8")


def coil_self_resonance(rng: np.random.Generator) -> None:
    """A single-layer coil, 40 turns on a 25 mm former over 30 mm, in series with a 100 pF
    capacitor, swept 1 to 45 MHz on a network analyser in series-through (Touchstone)."""
    folder = HERE / "coil_self_resonance"
    folder.mkdir(parents=True, exist_ok=True)
    r, l_h, c_f, cself_f = 1.6, 24.6e-6, 100e-12, 1.3e-12
    f = np.linspace(1e6, 45e6, 441)
    setup = Setup("series-through", "s21", z0_ohm=50.0)
    s21 = setup.response(coil_in_series(f, r, l_h, c_f, cself_f), f)
    s21 = s21 + 2e-4 * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    s11 = np.zeros_like(s21)
    data = np.stack([np.stack([s11, s21], axis=-1), np.stack([s21, s11], axis=-1)], axis=-2)
    write_touchstone(
        folder / "coil_in_series.s2p",
        f,
        data,
        fmt="RI",
        freq_unit="MHz",
        reference_ohm=50.0,
        version="1.1",
        parameter="S",
        comments=["coil in series with 100 pF, series-through fixture; only S21 measured"],
    )


def scope_export() -> None:
    """A hand-typed three-point export in a European scope's dialect: semicolons, decimal
    commas, key;value lines before the header, a temperature column, an empty row and
    rows out of order. Shown by ``fitkit inspect`` in docs/readers.md."""
    (HERE / "scope_export.csv").write_text(
        "Generator amplitude;2 Vpp\n"
        "Sense resistor;47 ohm\n"
        "Frequency (kHz);Gain (dB);Phase (deg);Temp\n"
        "455,0;-3,01;0,5;21,5\n"
        "450,0;-6,20;44,1;21,5\n"
        ";;;\n"
        "460,0;-6,35;-43,8;21,6\n",
        encoding="utf-8",
    )


def main() -> None:
    rng = np.random.default_rng(20261201)
    hand_wound_series(rng)
    single_channel_volts(rng)
    hand_wound_tank(rng)
    coil_self_resonance(rng)
    scope_export()


if __name__ == "__main__":
    main()

"""Make the batch and drift demo sweeps (invented scenarios; see README.md here).

Run from the repository root: ``python sample_sweeps/make_kits.py``. Seeded, so the
files come out the same every time.

- ``kits/``: twelve teaching kits, each a coil (470 uH +- 5 %) in series with a
  capacitor (2.2 nF +- 5 %), swept through a 22 ohm sense resistor. Kit 07 has a
  capacitor 11 % high, kit 04 a coil right at its upper limit, and kit 10's file was
  cut short by a full USB stick.
- ``drift/``: one filter unit swept when it was built and again years later, after its
  capacitor grew by 6 %.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fitkit.circuits import series_rlc
from fitkit.setups import Setup

HERE = Path(__file__).resolve().parent
KIT_SETUP = Setup("divider", "ratio", sense_ohm=22.0, probe_f=15e-12, reference="terminal")
KIT_SETUP_NOTE = """\
# every kit was swept the same way: generator terminal -> kit -> 22 ohm sense resistor,
# scope channel 2 across the sense resistor through a 10x probe (about 15 pF)
"""


def setup_toml(sense_ohm: str) -> str:
    """A divider bench file: the sense resistor, a 10x probe, ratio against the terminal."""
    return (
        f'[bench]\narrangement = "divider"\nsense_resistor = "{sense_ohm}"\n'
        'probe_capacitance = "15p"\nratio_reference = "terminal"\n'
    )


KIT_SPEC_TOML = """\
# what a teaching kit must meet (the parts list says 470 uH and 2.2 nF, both 5 %)
[rule]
decision = "guarded"   # pass only when value +- k u lies inside the limits
coverage = 2

[L]
nominal = "470u"
tolerance = "5%"

[C]
nominal = "2.2n"
tolerance = "5%"

[R]
max = "15"             # coil and wiring loss, ohm

[Q]
min = 30
"""


def write_sweep(path: Path, freq_hz: np.ndarray, h: np.ndarray, rng: np.random.Generator) -> None:
    """Write a scope-style export: gain in dB and phase in degrees, with reading noise."""
    gain_db = 20 * np.log10(np.abs(h)) + rng.normal(0, 0.03, freq_hz.size)
    phase = np.degrees(np.angle(h)) + rng.normal(0, 0.25, freq_hz.size)
    rows = [f"{f:.1f},{g:.3f},{p:.2f}" for f, g, p in zip(freq_hz, gain_db, phase)]
    path.write_text(
        "Frequency (Hz),Gain (dB),Phase (deg)\n" + "\n".join(rows) + "\n", encoding="utf-8"
    )


def kits(rng: np.random.Generator) -> None:
    """Twelve kits; one capacitor out of tolerance, one coil at a limit, one cut file."""
    folder = HERE / "kits"
    folder.mkdir(exist_ok=True)
    f = np.geomspace(100e3, 250e3, 201)
    for n in range(1, 13):
        r = 8.0 * (1 + rng.normal(0, 0.05))
        l_h = 470e-6 * (1 + rng.normal(0, 0.012))
        c_f = 2.2e-9 * (1 + rng.normal(0, 0.01))
        if n == 4:
            l_h = 470e-6 * 1.05  # the coil sits right on its upper limit
        if n == 7:
            c_f = 2.2e-9 * 1.11  # a capacitor from the wrong bin
        path = folder / f"kit-{n:02d}.csv"
        write_sweep(path, f, KIT_SETUP.response(series_rlc(f, r, l_h, c_f), f), rng)
        if n == 10:  # the stick filled up while the file was written
            text = path.read_text(encoding="utf-8")
            path.write_text(text[:60], encoding="utf-8")
    (folder / "fitkit-setup.toml").write_text(KIT_SETUP_NOTE + setup_toml("22"), encoding="utf-8")
    (folder / "spec.toml").write_text(KIT_SPEC_TOML, encoding="utf-8")


def drift(rng: np.random.Generator) -> None:
    """A filter unit when new and years later: its capacitor has grown by 6 %."""
    folder = HERE / "drift"
    folder.mkdir(exist_ok=True)
    setup = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12, reference="terminal")
    f = np.geomspace(300e3, 600e3, 241)
    r, l_h, c_f = 9.0, 680e-6, 180e-12
    for name, c in (("reference.csv", c_f), ("drifted.csv", c_f * 1.06)):
        write_sweep(folder / name, f, setup.response(series_rlc(f, r, l_h, c), f), rng)
    (folder / "fitkit-setup.toml").write_text(setup_toml("47"), encoding="utf-8")


def main() -> None:
    rng = np.random.default_rng(20261205)
    kits(rng)
    drift(rng)


if __name__ == "__main__":
    main()

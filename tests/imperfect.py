"""Imperfect bench sweeps with known truth: the robustness set (seeded, invented scenarios).

Each case is one way a real sweep departs from the ideal model: a coil whose loss grows
with frequency, a generator whose output tilts, a channel skew, a calibration plane off,
a range switch, a reading floor, a glitch, a sparse or weak peak, a drifting resonance,
an uncalibrated scale, a resonance outside the sweep, no resonance at all; plus a clean
control. :func:`make_case` builds one as an :class:`ImperfectCase` record: the Sweep, the
Setup the user would state, the truth in fitkit's quantity names, the fit options, and
what outcome is acceptable.

The circuit and bench responses are written here from handbook relations, not taken from
fitkit's own model functions, so the check is independent:

- series R-L-C, ``Z = R + j w L + 1/(j w C)``; a tank, a coil L with series loss r across
  C, ``Z = (r + j w L) || 1/(j w C)``; f0 = 1/(2 pi sqrt(LC)), Q = w0 L / R, bandwidth
  f0/Q: Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14 (from memory);
- a coil with self-capacitance Cp is the same network, Cp across L + r; its
  self-resonance 1/(2 pi sqrt(L Cp)): Terman, Radio Engineers' Handbook, 1943 (from memory);
- a wire's loss growing as sqrt(f) once the skin depth sqrt(rho/(pi f mu)) is below the
  wire radius, ``r(f) = r_dc + k sqrt(f)``: skin-depth relation (textbook electromagnetics,
  from memory);
- bench relations: a voltage divider (Ohm's law); S11 = (Z - Z0)/(Z + Z0), series-through
  S21 = 2 Z0/(2 Z0 + Z), shunt-through S21 = 2 Z/(2 Z + Z0): Pozar, Microwave Engineering,
  ch. 4 (from memory);
- a pure delay tau multiplies a phasor by exp(-j w tau); a line of length l at velocity v
  between the calibration plane and the part multiplies S11 by exp(-j 2 w l / v) (Pozar,
  ch. 2, from memory); v ~ 0.66 c in solid-polyethylene coaxial cable (common practice).

Two of them (the channel skew through a delay line, the calibration plane through a
line) and the coil with sqrt(f) loss are checked against ngspice in
``tests/test_imperfect_ngspice.py``.

Truth for the loaded Q follows fitkit's definition for each topology (see
``fitkit/topologies.py``): for a series circuit ``w0 L / (R + Rext)``, where Rext is the
resistance the bench puts in series with the circuit (sense resistor, plus the source
when the ratio is against the EMF; Z0 for S11, 2 Z0 series-through, Z0/2 shunt-through,
0 for an impedance analyser: the Thevenin resistance the circuit sees); for a tank, the
same Rext damps it, ``Q Rext / (Rext + R_D)`` with R_D = L/(r C) (derived: near f0 the
tank is R_D / (1 + j 2 Q delta), so the response's pole sits there), or Q with no fixture.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fitkit.setups import Setup
from fitkit.sweep import Sweep

TWO_PI = 2.0 * math.pi
C_LIGHT = 299_792_458.0  # m/s, SI definition
CABLE_VELOCITY = 0.66 * C_LIGHT  # solid polyethylene coax (common practice)
SEED = 11

#: what a case accepts: every truth quantity right, flagged or not determined ("values");
#: a FitError whose message matches ``refusal`` ("refusal"); or either of those, with every
#: quantity that has no true value flagged ("refusal-or-doubt")
EXPECTS = ("values", "refusal", "refusal-or-doubt")


@dataclass(frozen=True)
class ImperfectCase:
    """One imperfect sweep, what is true about it, and what outcome is acceptable.

    Attributes
    ----------
    name, effect, band : str
        Short id, the bench imperfection in words, and the band (audio, IF, MW, VHF...).
    sweep : Sweep
        What the instrument wrote (noise and imperfection included).
    setup : Setup
        The bench as the user would state it (the imperfection not in it).
    truth : dict
        Quantity name -> true value in SI; ``None`` where the sweep cannot determine it.
    clean_values : ndarray
        The reading without noise (imperfection included), for the ngspice checks.
    options : dict
        Extra keyword arguments for ``fit_sweep`` (``topology="auto"`` is always used).
    expect : str
        One of :data:`EXPECTS`.
    refusal : str
        A regular expression the FitError message must match when refusing.
    must_be_right : tuple
        Quantities that must be right (a doubtful mark is not enough).
    must_doubt : tuple
        Quantities with no true value: any number reported must be marked doubtful.
    drop_hz, keep_hz : tuple
        Frequencies of points the outlier step must drop (a glitch) or keep (a point of
        high leverage).
    """

    name: str
    effect: str
    band: str
    sweep: Sweep
    setup: Setup
    truth: dict
    clean_values: np.ndarray
    options: dict = field(default_factory=dict)
    expect: str = "values"
    refusal: str = ""
    must_be_right: tuple = ()
    must_doubt: tuple = ()
    drop_hz: tuple = ()
    keep_hz: tuple = ()


# -- handbook responses ----------------------------------------------------------------------
def omega(freq_hz) -> np.ndarray:
    return TWO_PI * np.asarray(freq_hz, dtype=np.float64)


def series_impedance(freq_hz, r_ohm, l_h, c_f) -> np.ndarray:
    """``R + j w L + 1/(j w C)`` (Alexander & Sadiku, ch. 14, from memory)."""
    w = omega(freq_hz)
    return r_ohm + 1j * w * l_h + 1.0 / (1j * w * c_f)


def tank_impedance(freq_hz, r_ohm, l_h, c_f) -> np.ndarray:
    """A coil (L with series loss r, scalar or per frequency) across C; also a coil with its
    self-capacitance C across it (Terman, 1943, from memory)."""
    w = omega(freq_hz)
    branch = r_ohm + 1j * w * l_h
    return branch / (1.0 + 1j * w * c_f * branch)


def skin_loss(freq_hz, r_dc_ohm, k_ohm_per_root_hz) -> np.ndarray:
    """``r(f) = r_dc + k sqrt(f)``: loss of a wire thicker than the skin depth."""
    return r_dc_ohm + k_ohm_per_root_hz * np.sqrt(np.asarray(freq_hz, dtype=np.float64))


def divider_ratio(z, sense_ohm, source_ohm=0.0) -> np.ndarray:
    """Voltage across the sense resistor over the EMF (or over the generator terminal
    when ``source_ohm`` is 0): Ohm's law on the loop."""
    return sense_ohm / (source_ohm + z + sense_ohm)


def across_ratio(z, feed_ohm) -> np.ndarray:
    """Voltage across the circuit fed through ``feed_ohm``, over the generator terminal."""
    return z / (feed_ohm + z)


def reflection(z, z0_ohm=50.0) -> np.ndarray:
    return (z - z0_ohm) / (z + z0_ohm)


def series_through(z, z0_ohm=50.0) -> np.ndarray:
    return 2.0 * z0_ohm / (2.0 * z0_ohm + z)


def delay(freq_hz, seconds) -> np.ndarray:
    """A pure time delay: ``exp(-j w tau)``."""
    return np.exp(-1j * omega(freq_hz) * seconds)


# -- truths in fitkit's quantity names ---------------------------------------------------------
def resonance_hz(l_h, c_f) -> float:
    return 1.0 / (TWO_PI * math.sqrt(l_h * c_f))


def series_truth(r_ohm, l_h, c_f, external_ohm) -> dict:
    """Truth of a series R-L-C seen through a bench that adds ``external_ohm`` in series."""
    f0 = resonance_hz(l_h, c_f)
    q = TWO_PI * f0 * l_h / r_ohm
    q_loaded = TWO_PI * f0 * l_h / (r_ohm + external_ohm)
    return {
        "R": r_ohm,
        "L": l_h,
        "C": c_f,
        "f0": f0,
        "Q": q,
        "Q_loaded": q_loaded,
        "bandwidth": f0 / q,
        "loaded_bandwidth": f0 / q_loaded,
    }


def tank_truth(r_ohm, l_h, c_f, external_ohm) -> dict:
    """Truth of a tank (coil loss r at f0) damped by ``external_ohm`` (0: undamped)."""
    out = series_truth(r_ohm, l_h, c_f, 0.0)
    r_dynamic = l_h / (r_ohm * c_f)
    q_loaded = out["Q"] * external_ohm / (external_ohm + r_dynamic) if external_ohm else out["Q"]
    out.update(R_dynamic=r_dynamic, Q_loaded=q_loaded, loaded_bandwidth=out["f0"] / q_loaded)
    return out


def capacitor_for(f0_hz, l_h) -> float:
    return 1.0 / ((TWO_PI * f0_hz) ** 2 * l_h)


def span(f0_hz, bandwidth_hz, half_span_bw, points=201) -> np.ndarray:
    """Linear grid over f0 +- ``half_span_bw`` bandwidths."""
    return np.linspace(
        f0_hz - half_span_bw * bandwidth_hz, f0_hz + half_span_bw * bandwidth_hz, points
    )


# -- noise -------------------------------------------------------------------------------------
def additive(clean, level, rng, *, magnitude_only=False) -> np.ndarray:
    """Gaussian noise of ``level`` times the largest reading on the real and imaginary
    parts; a magnitude-only reading is the magnitude of the noisy phasor."""
    sigma = level * np.max(np.abs(clean))
    noisy = clean + sigma * (rng.normal(size=clean.size) + 1j * rng.normal(size=clean.size))
    return np.abs(noisy) if magnitude_only else noisy


def relative(clean, magnitude_share, phase_deg, rng) -> np.ndarray:
    """Noise as a share of the reading in magnitude and degrees in phase (an analyser)."""
    log_mag = magnitude_share * rng.normal(size=clean.size)
    phase = math.radians(phase_deg) * rng.normal(size=clean.size)
    return clean * np.exp(log_mag + 1j * phase)


# -- the cases -----------------------------------------------------------------------------
def _spec(effect, band, setup, truth, freq, clean, values, **extra) -> dict:
    """What a builder returns: the fields of an ImperfectCase, with the sweep's parts."""
    return dict(
        effect=effect,
        band=band,
        setup=setup,
        truth=truth,
        freq=freq,
        clean=clean,
        values=values,
        **extra,
    )


def _series_on_divider(r, l_h, f0_hz, sense, half_span_bw=4.0) -> tuple:
    """A series circuit read as a divider ratio over f0 +- a few loaded bandwidths:
    ``(truth, freq, clean ratio, setup)``."""
    c_f = capacitor_for(f0_hz, l_h)
    truth = series_truth(r, l_h, c_f, sense)
    f = span(truth["f0"], truth["loaded_bandwidth"], half_span_bw)
    clean = divider_ratio(series_impedance(f, r, l_h, c_f), sense)
    return truth, f, clean, Setup("divider", "ratio", sense_ohm=sense)


def _clean_control(rng) -> dict:
    truth, f, clean, setup = _series_on_divider(8.0, 220e-6, 1e6, 47.0)
    effect = "none: complex divider ratio, 50 dB SNR (the control)"
    noisy = additive(clean, 3e-3, rng)
    return _spec(effect, "MW", setup, truth, f, clean, noisy, must_be_right=tuple(truth))


def coil_grid() -> np.ndarray:
    """Three decades, 201 log-spaced points, as an analyser's default log sweep."""
    return np.geomspace(2e3, 2e6, 201)


#: the coil of the self-capacitance case: 820 uH, loss 3.3 ohm at DC rising to 10x that at
#: its self-resonance, which lies midway (in log f) between two grid points near 1 MHz
COIL_L_H, COIL_R_DC = 820e-6, 3.3


def coil_self_resonance_hz() -> float:
    f = coil_grid()
    i = int(np.argmin(np.abs(f - 1e6)))
    return math.sqrt(f[i] * f[i + 1])


def coil_loss_k() -> float:
    """k such that r(f_self) = 10 r_dc."""
    return 9.0 * COIL_R_DC / math.sqrt(coil_self_resonance_hz())


def _coil_self_capacitance(rng) -> dict:
    f, f_self, k = coil_grid(), coil_self_resonance_hz(), coil_loss_k()
    cp = capacitor_for(f_self, COIL_L_H)
    clean = tank_impedance(f, skin_loss(f, COIL_R_DC, k), COIL_L_H, cp)
    truth = tank_truth(float(skin_loss(f_self, COIL_R_DC, k)), COIL_L_H, cp, 0.0)
    # the same network read as a coil with self-capacitance (names of the coil topology)
    truth.update(C_self=cp, f_self=f_self)
    effect = (
        "coil self-capacitance, loss r_dc + k sqrt(f), log grid over three decades, "
        "resonance between two points"
    )
    noisy = relative(clean, 0.002, 0.1, rng)
    return _spec(effect, "audio to MW", Setup("impedance", "impedance"), truth, f, clean, noisy)


def _low_snr_magnitude(rng) -> dict:
    truth, f, clean, setup = _series_on_divider(10.0, 470e-6, 455e3, 50.0, half_span_bw=3.0)
    # a reading locked to the signal's phase: |H| plus Gaussian noise, which can dip below
    # zero in the tails; 12 dB peak SNR
    mag = np.abs(clean)
    noisy = mag + np.max(mag) / 10 ** (12.0 / 20.0) * rng.normal(size=f.size)
    effect = "magnitude-only divider ratio at 12 dB peak SNR, additive noise"
    return _spec(effect, "IF 455 kHz", setup, truth, f, mag, noisy)


def _impedance_relative_noise(rng) -> dict:
    r, l_h = 1.0, 1.5e-6
    c_f = capacitor_for(10.7e6, l_h)
    truth = tank_truth(r, l_h, c_f, 0.0)
    f = span(truth["f0"], truth["bandwidth"], 4.0)
    clean = tank_impedance(f, r, l_h, c_f)
    effect = "impedance analyser, noise 0.5 % of |Z| and 0.3 deg"
    noisy = relative(clean, 0.005, 0.3, rng)
    return _spec(effect, "IF 10.7 MHz", Setup("impedance", "impedance"), truth, f, clean, noisy)


def _generator_tilt(rng) -> dict:
    r, l_h, c_f, sense, source, emf = 15.0, 100e-3, 47e-9, 100.0, 50.0, 2.0
    truth = series_truth(r, l_h, c_f, sense + source)
    f = span(truth["f0"], truth["loaded_bandwidth"], 4.0)
    clean = emf * divider_ratio(series_impedance(f, r, l_h, c_f), sense, source)
    # the generator's output slopes linearly in log f from -0.3 dB to +0.3 dB
    position = np.log(f / f[0]) / math.log(f[-1] / f[0])
    tilted = np.abs(clean) * 10 ** ((0.6 * position - 0.3) / 20.0)
    setup = Setup("divider", "volts", sense_ohm=sense, amplitude_vrms=1.0, display="matched")
    effect = (
        "volts, magnitude only, no reference channel; generator output tilts "
        "+-0.3 dB linearly in log f"
    )
    noisy = additive(tilted, 1e-3, rng, magnitude_only=True)
    return _spec(effect, "audio", setup, truth, f, tilted, noisy)


#: the tank of the channel-skew case (455 kHz IF can) and its bench
SKEW = {"r": 12.0, "L": 680e-6, "feed": 100e3, "f0": 455e3, "period_share": 0.03}


def skew_seconds() -> float:
    return SKEW["period_share"] / SKEW["f0"]


def _channel_skew(rng) -> dict:
    r, l_h, feed = SKEW["r"], SKEW["L"], SKEW["feed"]
    c_f = capacitor_for(SKEW["f0"], l_h)
    truth = tank_truth(r, l_h, c_f, feed)
    f = span(truth["f0"], truth["loaded_bandwidth"], 4.0)
    clean = across_ratio(tank_impedance(f, r, l_h, c_f), feed) * delay(f, skew_seconds())
    effect = "inter-channel time skew of 3 % of a period at f0 (complex ratio)"
    setup = Setup("across", "ratio", feed_ohm=feed)
    return _spec(effect, "IF 455 kHz", setup, truth, f, clean, additive(clean, 1e-3, rng))


def _probe_mislabelled(rng) -> dict:
    # the probe across the 47 ohm sense resistor has 40 pF; the user wrote the 15 pF of its
    # label. The sense impedance is Rs || 1/(j w Cp) (Ohm's law on the pair); the extra
    # 25 pF lags the phase as a delay of 1.2 ns would and acts as -55 nH in the loop
    r, l_h, sense = 8.0, 220e-6, 47.0
    c_f = capacitor_for(1e6, l_h)
    truth = series_truth(r, l_h, c_f, sense)
    f = span(truth["f0"], truth["loaded_bandwidth"], 4.0)
    zs = sense / (1.0 + 1j * omega(f) * 40e-12 * sense)
    clean = zs / (series_impedance(f, r, l_h, c_f) + zs)
    effect = "probe capacitance of 40 pF entered as 15 pF (divider ratio, 70 dB SNR)"
    setup = Setup("divider", "ratio", sense_ohm=sense, probe_f=15e-12)
    return _spec(effect, "MW", setup, truth, f, clean, additive(clean, 3e-4, rng))


def _tank_on_reflection(rng) -> dict:
    # a tank of Q 300 straight on a network analyser's port: 44 kohm at resonance against
    # 50 ohm, so |S11| stays within 0.3 % of 1 and the resonance shows in the phase;
    # S11 = (Z - Z0)/(Z + Z0) (Pozar, Microwave Engineering, ch. 2, from memory)
    r, l_h = 0.5, 2.2e-6
    c_f = capacitor_for(10.7e6, l_h)
    truth = tank_truth(r, l_h, c_f, 50.0)
    f = span(truth["f0"], truth["bandwidth"], 12.0)
    clean = reflection(tank_impedance(f, r, l_h, c_f))
    effect = "a high-Q tank straight on a reflection port: |S11| within 0.3 % of 1"
    setup = Setup("reflection", "s11")
    return _spec(effect, "IF 10.7 MHz", setup, truth, f, clean, additive(clean, 1e-3, rng))


#: the series trap of the calibration-plane case and the line left between plane and part
PLANE = {"r": 5.0, "L": 1e-6, "f0": 98e6, "length_m": 0.04}


def _s11_reference_plane(rng) -> dict:
    r, l_h = PLANE["r"], PLANE["L"]
    c_f = capacitor_for(PLANE["f0"], l_h)
    truth = series_truth(r, l_h, c_f, 50.0)
    f = span(truth["f0"], truth["loaded_bandwidth"], 4.0)
    line = delay(f, 2.0 * PLANE["length_m"] / CABLE_VELOCITY)
    clean = reflection(series_impedance(f, r, l_h, c_f)) * line
    effect = "S11 with the calibration plane 4 cm of cable (v = 0.66 c) from the part"
    setup = Setup("reflection", "s11")
    return _spec(effect, "VHF", setup, truth, f, clean, additive(clean, 2e-3, rng))


def _range_switch_step(rng) -> dict:
    truth, f, clean, setup = _series_on_divider(6.0, 150e-6, 1.2e6, 33.0)
    # the instrument changes range 2 loaded bandwidths above resonance, reading 3 % high
    above = f > truth["f0"] + 2.0 * truth["loaded_bandwidth"]
    stepped = clean * np.where(above, 1.03, 1.0)
    effect = "range switch: magnitude x1.03 above f0 + 2 loaded bandwidths (complex ratio)"
    return _spec(effect, "MW", setup, truth, f, stepped, additive(stepped, 1e-3, rng))


def _reading_floor(rng) -> dict:
    r, sense, f0 = 3.0, 10.0, 700e3
    l_h = 50.0 * (r + sense) / (TWO_PI * f0)  # loaded Q 50
    c_f = capacitor_for(f0, l_h)
    truth = series_truth(r, l_h, c_f, sense)
    f = np.geomspace(f0 / 2.0, f0 * 2.0, 201)
    mag = np.abs(divider_ratio(series_impedance(f, r, l_h, c_f), sense))
    floor = np.max(mag) * 10 ** (-50.0 / 20.0)
    floored = np.sqrt(mag**2 + floor**2)
    noisy = floored * 10 ** (0.05 * rng.normal(size=f.size) / 20.0)
    effect = "magnitude in dB with a reading floor 50 dB below the peak, 0.05 dB noise"
    setup = Setup("divider", "ratio", sense_ohm=sense)
    return _spec(effect, "MW", setup, truth, f, floored, noisy, recorded_in_db=True)


def _glitch_and_lone_peak(rng) -> dict:
    r, l_h, sense = 20.0, 50e-3, 20.0
    c_f = capacitor_for(5e3, l_h)
    truth = series_truth(r, l_h, c_f, sense)
    # 160 Hz steps, one of them on f0: the only point inside the 127 Hz half-power band
    f = truth["f0"] + 160.0 * np.arange(-15, 16)
    clean = divider_ratio(series_impedance(f, r, l_h, c_f), sense)
    noisy = additive(clean, 1e-3, rng)
    glitch = 24  # 1.44 kHz above f0, far out in the tail
    noisy[glitch] += 0.2
    effect = (
        "one big glitch off resonance, and the peak sample the only point in the half-power band"
    )
    setup = Setup("divider", "ratio", sense_ohm=sense)
    points = dict(drop_hz=(float(f[glitch]),), keep_hz=(float(f[15]),))
    return _spec(effect, "audio", setup, truth, f, clean, noisy, **points)


def _sparse_peak(rng) -> dict:
    r, l_h, feed = 9.0, 200e-6, 47e3
    c_f = capacitor_for(1.4e6, l_h)
    truth = tank_truth(r, l_h, c_f, feed)
    f0, bw = truth["f0"], truth["loaded_bandwidth"]
    step = 0.45 * bw  # two or three points inside the half-power band
    f = f0 - 4.0 * bw + 0.3 * step + step * np.arange(18)
    clean = across_ratio(tank_impedance(f, r, l_h, c_f), feed)
    noisy = additive(clean, 5e-3, rng, magnitude_only=True)
    effect = "sparse peak: 18 points, 2-3 inside the half-power band (magnitude only)"
    setup = Setup("across", "ratio", feed_ohm=feed)
    return _spec(effect, "MW", setup, truth, f, np.abs(clean), noisy)


def _weak_peak(rng) -> dict:
    r, l_h = 6.0, 1e-6
    c_f = capacitor_for(104e6, l_h)
    truth = series_truth(r, l_h, c_f, 100.0)
    f = span(truth["f0"], truth["loaded_bandwidth"], 3.0)
    clean = series_through(series_impedance(f, r, l_h, c_f))
    noisy = additive(clean, 10 ** (-10.0 / 20.0), rng)
    setup = Setup("series-through", "s21")
    return _spec("weak peak: complex S21 at 10 dB SNR", "VHF", setup, truth, f, clean, noisy)


def _slow_drift(rng) -> dict:
    r, l_h, sense = 12.0, 10e-3, 22.0
    truth, f, _, setup = _series_on_divider(r, l_h, 15e3, sense)
    # the capacitor settles while the sweep runs: f0 starts 0.3 loaded bandwidths high and
    # settles with a time constant of a fifth of the sweep (a warm-up); the truth is the
    # settled circuit. (A drift steady in time, on a sweep steady in frequency, only stretches the
    # frequency axis: it reads exactly as a static circuit of another Q, and no fit of one
    # sweep can see it; docs/method.md says to sweep both ways then.)
    t = np.linspace(0.0, 1.0, f.size)
    drift = 0.3 * truth["loaded_bandwidth"] * np.exp(-t / 0.2)
    c_now = capacitor_for(truth["f0"] + drift, l_h)
    clean = divider_ratio(series_impedance(f, r, l_h, c_now), sense)
    effect = "f0 settles by 0.3 loaded bandwidths early in the sweep (complex ratio)"
    return _spec(effect, "audio", setup, truth, f, clean, additive(clean, 1e-3, rng))


def _relative_scale(rng) -> dict:
    full, f, clean, _ = _series_on_divider(2.5, 2.2e-6, 10.7e6, 22.0)
    # uncalibrated channels: the ratio carries an unknown gain; the sense resistor unknown
    clean = 0.37 * clean
    shape = ("f0", "Q_loaded", "loaded_bandwidth")
    truth = {n: (full[n] if n in shape else None) for n in full}
    effect = "relative scale, no fixture values: only the shape counts"
    setup = Setup("divider", "ratio", relative=True)
    noisy = additive(clean, 2e-3, rng)
    return _spec(effect, "IF 10.7 MHz", setup, truth, f, clean, noisy, must_be_right=shape)


def _open_capacitor(rng) -> dict:
    # a 330 uH coil meant for 1.5 nF (226 kHz); the capacitor is open, 3 pF of stray
    # capacitance is left, so the circuit resonates near 5 MHz, far above the sweep
    r, l_h, c_stray, sense = 5.0, 330e-6, 3e-12, 47.0
    f = np.linspace(100e3, 300e3, 201)
    clean = divider_ratio(series_impedance(f, r, l_h, c_stray), sense)
    effect = "open capacitor: resonance near 5 MHz, swept 100-300 kHz"
    setup = Setup("divider", "ratio", sense_ohm=sense)
    refuse = dict(expect="refusal", refusal=r"above 300(\.0+)? kHz")
    return _spec(effect, "LW kit", setup, {}, f, clean, additive(clean, 1e-3, rng), **refuse)


def _flat_resistor(rng) -> dict:
    f = np.geomspace(1e3, 100e3, 101)
    clean = np.full(f.size, 1000.0 + 0j)
    effect = "no resonance at all: a 1 kohm resistor on an impedance analyser"
    doubt = ("L", "C", "f0", "Q", "Q_loaded", "bandwidth", "loaded_bandwidth")
    setup = Setup("impedance", "impedance")
    noisy = relative(clean, 0.005, 0.3, rng)
    outcome = dict(expect="refusal-or-doubt", must_doubt=doubt)
    return _spec(effect, "audio", setup, {"R": 1000.0}, f, clean, noisy, **outcome)


_BUILDERS = {
    "clean_control": _clean_control,
    "coil_self_capacitance": _coil_self_capacitance,
    "low_snr_magnitude": _low_snr_magnitude,
    "impedance_relative_noise": _impedance_relative_noise,
    "generator_tilt": _generator_tilt,
    "channel_skew": _channel_skew,
    "s11_reference_plane": _s11_reference_plane,
    "range_switch_step": _range_switch_step,
    "reading_floor": _reading_floor,
    "glitch_and_lone_peak": _glitch_and_lone_peak,
    "sparse_peak": _sparse_peak,
    "weak_peak": _weak_peak,
    "slow_drift": _slow_drift,
    "relative_scale": _relative_scale,
    "open_capacitor": _open_capacitor,
    "flat_resistor": _flat_resistor,
    "probe_mislabelled": _probe_mislabelled,
    "tank_on_reflection": _tank_on_reflection,
}
CASE_NAMES = tuple(_BUILDERS)


def make_case(name: str, seed: int = 0) -> ImperfectCase:
    """Build one case; its noise comes from ``numpy.random.default_rng([SEED, i, seed])``
    with ``i`` the case's place in :data:`CASE_NAMES`.

    Building may raise a ``fitkit`` error when the Setup the user would state is not
    accepted (then the case counts as refused).
    """
    rng = np.random.default_rng([SEED, CASE_NAMES.index(name), seed])
    spec = _BUILDERS[name](rng)
    sweep = Sweep(
        spec.pop("freq"),
        spec.pop("values"),
        spec["setup"].kind,
        recorded_in_db=spec.pop("recorded_in_db", False),
        source=f"<imperfect:{name}:{seed}>",
    )
    return ImperfectCase(name=name, sweep=sweep, clean_values=spec.pop("clean"), **spec)

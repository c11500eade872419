"""Amplitude and phase of sampled sine waves by least squares, with their own noise.

The four-parameter fit of IEEE Std 1057-2017 (digitizing waveform recorders), clause 4.1.3,
also in IEEE Std 1241-2010 (analog-to-digital converters), clause 4.1.4.3: the record
``y(t) = A cos(w t) + B sin(w t) + C`` is fitted by linear least squares at a trial
frequency (the three-parameter fit), then the frequency is refined by adding the column
``t (-A sin(w t) + B cos(w t))`` for a correction ``dw`` and iterating (from memory).

A two-channel capture gives the ratio of the output to the input channel: the reference
channel's four-parameter fit fixes the frequency, the other channel is fitted with the
three-parameter fit at that frequency, so both phases refer to the same clock. The
residual variance of each fit gives the covariance of its complex amplitude, and the
ratio's standard deviation follows to first order: that is each point's own noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

_ITERATIONS = 8
_CONVERGED = 1e-10  # relative frequency change that ends the iteration


@dataclass(frozen=True)
class SineFit:
    """One channel's fitted sine.

    Attributes
    ----------
    amplitude : complex
        Complex amplitude ``a`` with ``y = Re(a exp(j w t)) + offset`` (volts, peak).
    freq_hz : float
        The fitted (or given) frequency.
    offset : float
        The DC offset, volts.
    residual_rms : float
        RMS of the residuals, volts (noise, quantisation and distortion).
    amplitude_var : float
        Variance of the real part (and of the imaginary part) of ``amplitude``, volts^2.
    """

    amplitude: complex
    freq_hz: float
    offset: float
    residual_rms: float
    amplitude_var: float


def fit_sine(
    samples: np.ndarray, interval_s: float, freq_hz: float, *, refine: bool = True
) -> SineFit:
    """Fit a sine to equally spaced samples (IEEE Std 1057 three- or four-parameter fit).

    Parameters
    ----------
    samples : ndarray
        The record, volts.
    interval_s : float
        Time between samples, seconds.
    freq_hz : float
        The expected frequency (the generator's setting); refined when ``refine``.
    refine : bool
        Four-parameter fit (frequency refined) when True, three-parameter when False.

    Returns
    -------
    SineFit

    Examples
    --------
    >>> t = np.arange(400) * 1e-6
    >>> fit = fit_sine(0.5 * np.cos(2 * np.pi * 10e3 * t - 0.3), 1e-6, 10.1e3)
    >>> round(abs(fit.amplitude), 6), round(fit.freq_hz, 3)
    (0.5, 10000.0)
    """
    y = np.asarray(samples, dtype=np.float64)
    t = np.arange(y.size) * interval_s
    w = 2.0 * math.pi * freq_hz
    coef, design = _three_parameter(y, t, w)
    if refine:
        for _ in range(_ITERATIONS):
            a, b = coef[0], coef[1]
            extra = t * (-a * np.sin(w * t) + b * np.cos(w * t))
            full = np.column_stack([design, extra])
            step = np.linalg.lstsq(full, y, rcond=None)[0]
            w += float(step[3])
            coef, design = _three_parameter(y, t, w)
            if abs(step[3]) < _CONVERGED * w:
                break
    resid = y - design @ coef
    dof = max(y.size - (4 if refine else 3), 1)
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(design.T @ design)
    return SineFit(
        complex(coef[0], -coef[1]),
        w / (2.0 * math.pi),
        float(coef[2]),
        math.sqrt(s2),
        0.5 * float(cov[0, 0] + cov[1, 1]),
    )


def _three_parameter(y: np.ndarray, t: np.ndarray, w: float) -> tuple:
    design = np.column_stack([np.cos(w * t), np.sin(w * t), np.ones_like(t)])
    return np.linalg.lstsq(design, y, rcond=None)[0], design


@dataclass(frozen=True)
class ChannelRatio:
    """The output channel over the input channel at one frequency.

    Attributes
    ----------
    ratio : complex
        Output over input, complex (phase of the output relative to the input).
    sigma : float
        Standard deviation of the real part (and of the imaginary part) of ``ratio``.
    freq_hz : float
        The frequency the reference fit found.
    input_v, output_v : SineFit
        The two channels' fits.
    """

    ratio: complex
    sigma: float
    freq_hz: float
    input_v: SineFit
    output_v: SineFit


def channel_ratio(
    reference: np.ndarray, output: np.ndarray, interval_s: float, freq_hz: float
) -> ChannelRatio:
    """Ratio of two simultaneously captured channels, with its standard deviation.

    To first order ``var(r) = (var a_out + |r|^2 var a_in) / |a_in|^2`` for
    ``r = a_out / a_in`` with independent channel noise (the delta method).
    """
    fin = fit_sine(reference, interval_s, freq_hz, refine=True)
    fout = fit_sine(output, interval_s, fin.freq_hz, refine=False)
    ratio = fout.amplitude / fin.amplitude
    var = (fout.amplitude_var + abs(ratio) ** 2 * fin.amplitude_var) / abs(fin.amplitude) ** 2
    sigma = math.sqrt(var)
    return ChannelRatio(ratio, sigma, fin.freq_hz, fin, fout)

"""Reading one point: set the frequency, let the circuit settle, range, measure, check.

Two ways to measure, chosen by the user:

- ``waveform``: capture both channels over a few periods and fit a sine to each
  (:mod:`fitkit.instruments.sinefit`, IEEE Std 1057 / 1241); the ratio comes with its own
  standard deviation, from the fits' residuals;
- ``scope``: ask the digitiser for its own RMS amplitude and phase measurements through
  the profile's templates; no per-point noise is known then.

Settling: after each frequency change wait a number of periods and at least a minimum
time; once the loaded Q is known, at least 7 time constants of the circuit's envelope,
``tau = 2 QL / w0`` (Q/pi periods; Terman, Radio Engineers' Handbook, 1943, from
memory), which settles it to 0.1 %.

Ranging: a channel whose record reaches the rail of its range (clipped) goes one range
up and the point is read again; a channel using under a third of its range goes
down while the trace still fits in the smaller range. A point still clipped on the
largest range is refused with a message.

Equal noise: where the circuit loads the generator (a series circuit at resonance) the
input channel drops and a point's ratio is noisier. The fit weights each point by its
own sigma, so this costs precision, not honesty; to spend the time where the noise is,
once a noise goal is set (the session sets the median of the coarse pass), a point
noisier than 1.1 times the goal is read again with a record longer by
``(sigma / goal)^2`` (noise falls as one over the square root of the samples), at most
16 times the default length.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from fitkit.instruments.sinefit import channel_ratio
from fitkit.instruments.transport import Instrument, InstrumentError

MODES = ("waveform", "scope")
_RAIL = 1.0 - 1.0 / 128  # within one step of an 8-bit converter's full scale
_FILL_LOW = 1.0 / 3.0  # a trace under this share of its range goes a range down
_FILL_HIGH = 0.8  # ...when it then fills at most this share of the smaller range
_MAX_READS = 8
_SETTLE_TIME_CONSTANTS = 7.0  # e^-7 < 0.1 %
_EQUAL_NOISE = 1.1  # a point noisier than this times the goal is read again, longer
_LONGEST = 16.0  # the longest record, in default record lengths


@dataclass(frozen=True)
class ReadSettings:
    """How each point is read.

    Attributes
    ----------
    mode : str
        ``"waveform"`` (sine fits of captured records) or ``"scope"`` (the digitiser's
        own amplitude and phase measurements).
    settle_periods : float
        Periods of the test frequency to wait after changing it.
    settle_min_s : float
        Shortest wait after changing the frequency, seconds.
    record_periods : float
        Periods in each captured record.
    record_points : int
        Samples in each captured record.
    equal_noise : bool
        Read noisy points again with longer records (see the module notes).
    """

    mode: str = "waveform"
    settle_periods: float = 20.0
    settle_min_s: float = 0.002
    record_periods: float = 10.0
    record_points: int = 1000
    equal_noise: bool = True


@dataclass(frozen=True)
class Point:
    """One measured point.

    Attributes
    ----------
    freq_hz : float
        The generator's frequency.
    ratio : complex
        Output channel over input channel.
    sigma : float
        Standard deviation of the ratio's real (and imaginary) part; NaN when unknown.
    reads : int
        How many reads it took (ranging, clipped and longer reads count).
    length : float
        The kept record's length in default record lengths (longer for equal noise).
    """

    freq_hz: float
    ratio: complex
    sigma: float
    reads: int
    length: float = 1.0


class PointReader:
    """Reads points with a connected generator and digitiser.

    Parameters
    ----------
    generator, digitiser : Instrument
        Connected instruments (output already on).
    settings : ReadSettings
        Settling, ranging and the way of measuring.
    """

    def __init__(self, generator: Instrument, digitiser: Instrument, settings: ReadSettings):
        self.generator = generator
        self.digitiser = digitiser
        self.settings = settings
        part = digitiser.profile.settings
        self.channels = (part["input_channel"], part["output_channel"])
        self.ranges = list(part["ranges"])
        self.range_index = {c: len(self.ranges) - 1 for c in self.channels}
        self.envelope_periods = 0.0
        self.noise_goal = None

    def settle_for(self, q_loaded: float) -> None:
        """Wait at least 7 envelope time constants of a circuit of this loaded Q."""
        self.envelope_periods = _SETTLE_TIME_CONSTANTS * q_loaded / math.pi

    def prepare(self) -> None:
        """Put both channels on the largest range (safe before the first point)."""
        for channel in self.channels:
            self._set_range(channel)

    def read(self, freq_hz: float) -> Point:
        """Measure the ratio at one frequency.

        Raises
        ------
        InstrumentError
            A channel clipped on the largest range, ranging that did not settle, or
            an instrument failure.
        """
        self.generator.send("set_frequency", frequency=float(freq_hz))
        self.generator.wait()
        s = self.settings
        periods = max(s.settle_periods, self.envelope_periods)
        time.sleep(max(periods / freq_hz, s.settle_min_s))
        length, reads = 1.0, 0
        while reads < _MAX_READS:
            reads += 1
            ratio, sigma, peaks = self._measure(freq_hz, length)
            if self._rerange(peaks, freq_hz):
                continue
            longer = self._length_for(sigma)
            if longer <= length:
                return Point(float(freq_hz), ratio, sigma, reads, length)
            length = longer
        raise InstrumentError(
            f"the vertical range did not settle at {freq_hz:.6g} Hz after {_MAX_READS} reads",
            remedy="check the signal is steady (no intermittent contact), or fix the ranges",
            path=self.digitiser.address,
        )

    def _length_for(self, sigma: float) -> float:
        """How much longer a record must be to bring ``sigma`` to the noise goal."""
        if self.noise_goal is None or not sigma > _EQUAL_NOISE * self.noise_goal:
            return 1.0
        return min((sigma / self.noise_goal) ** 2, _LONGEST)

    def _measure(self, freq_hz: float, length: float = 1.0) -> tuple:
        d, s = self.digitiser, self.settings
        periods, samples = s.record_periods * length, round(s.record_points * length)
        if d.profile.has("set_duration"):
            d.send("set_duration", duration=periods / freq_hz)
            d.send("set_points", points=samples)
        if s.mode == "scope":
            vin, vout = (d.ask_number("measure_amplitude", channel=c) for c in self.channels)
            phase = d.ask_number(
                "measure_phase", channel=self.channels[1], reference=self.channels[0]
            )
            self._check_input(vin, freq_hz)
            ratio = vout / vin * np.exp(1j * math.radians(phase))
            return complex(ratio), math.nan, [math.sqrt(2.0) * v for v in (vin, vout)]
        d.send("capture")
        d.wait()
        records = [np.asarray(d.ask_numbers("fetch", channel=c)) for c in self.channels]
        if min(r.size for r in records) < 16:
            raise InstrumentError(
                f"the digitiser sent records of {records[0].size} and {records[1].size} samples",
                remedy="check the set_points and fetch commands of the profile",
                path=d.address,
            )
        self._check_input(float(np.max(np.abs(records[0]))), freq_hz)
        interval = periods / freq_hz / records[0].size
        fit = channel_ratio(records[0], records[1], interval, freq_hz)
        return fit.ratio, fit.sigma, [float(np.max(np.abs(r))) for r in records]

    def _check_input(self, level: float, freq_hz: float) -> None:
        floor = self.ranges[0] * 0.01
        if not level > floor:
            raise InstrumentError(
                f"no signal on the input channel {self.channels[0]} at {freq_hz:.6g} Hz",
                remedy="check the generator's output and the probe on the input channel",
                path=self.digitiser.address,
            )

    def _rerange(self, peaks: list, freq_hz: float) -> bool:
        """Change ranges as the peaks need; True when the point must be read again."""
        changed = False
        for channel, peak in zip(self.channels, peaks):
            i = self.range_index[channel]
            if peak >= _RAIL * self.ranges[i]:
                if i == len(self.ranges) - 1:
                    raise InstrumentError(
                        f"channel {channel} clipped at {freq_hz:.6g} Hz on the largest "
                        f"range ({self.ranges[i]:g} V)",
                        remedy="lower the generator amplitude (--amplitude), use a x10 probe, "
                        "or add a larger range to the profile",
                        path=self.digitiser.address,
                    )
                self.range_index[channel] = i + 1
            elif i > 0 and peak < _FILL_LOW * self.ranges[i]:
                fits = [k for k in range(i) if peak < _FILL_HIGH * self.ranges[k]]
                if not fits:
                    continue
                self.range_index[channel] = fits[0]
            else:
                continue
            self._set_range(channel)
            changed = True
        return changed

    def _set_range(self, channel: int) -> None:
        self.digitiser.send(
            "set_range", channel=channel, range=self.ranges[self.range_index[channel]]
        )

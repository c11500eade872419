"""The Sweep record: what an instrument measured, in SI, with nothing about file formats.

Readers make Sweeps; fitting reads them. A Sweep is checked when made: frequencies finite,
positive, ascending and unique; the measured values finite and the same length; each
point's own standard deviation, when the file gives one, finite, above zero and one per
point.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fitkit.errors import InputError

#: What a sweep measured. Values are complex when phase was recorded, real magnitudes
#: otherwise. "ratio": output over input of the bench divider (dimensionless);
#: "volts": absolute output in volts RMS; "impedance": Z in ohm; "s11", "s21":
#: scattering parameters against the reference impedance.
KINDS = ("ratio", "volts", "impedance", "s11", "s21")


@dataclass(frozen=True)
class Sweep:
    """One measured frequency sweep.

    Attributes
    ----------
    freq_hz : ndarray of float64
        Frequencies in Hz, ascending and unique.
    values : ndarray
        The measured quantity in SI: complex when phase was measured, else real magnitudes.
    kind : str
        One of :data:`KINDS`.
    recorded_in_db : bool
        The magnitude was written in dB; its noise is then roughly even in dB.
    source : str
        Where the sweep came from (a file path), for messages and reports.
    metadata : dict
        What the file stated about itself (e.g. a generator amplitude written in a
        key,value line); shown to the user for confirmation, never trusted silently.
    notes : list of str
        What the reader did on the way (rows dropped, sorted, merged), to show the user.
    sha256 : str or None
        The SHA-256 of the file's bytes as the reader read them (None for a sweep made
        in memory), so reports and batches need not read the file again.
    sigma : ndarray of float64 or None
        Each point's own standard deviation, when the file states one (None otherwise).
        Absolute (``sigma_relative`` False): in the unit of ``values`` (SI), the same on
        the real and on the imaginary part of a complex value, or of the magnitude.
        Relative (``sigma_relative`` True): of the natural log of the magnitude (a
        fraction of the reading) and, for complex values, of the phase in radians.
    sigma_relative : bool
        ``sigma`` is relative to the reading (see ``sigma``).
    """

    freq_hz: np.ndarray
    values: np.ndarray
    kind: str
    recorded_in_db: bool = False
    source: str = "<memory>"
    metadata: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    sha256: str | None = None
    sigma: np.ndarray | None = None
    sigma_relative: bool = False

    def __post_init__(self) -> None:
        f = np.asarray(self.freq_hz, dtype=np.float64)
        v = np.asarray(self.values)
        if not np.iscomplexobj(v):
            v = v.astype(np.float64)
        object.__setattr__(self, "freq_hz", f)
        object.__setattr__(self, "values", v)
        if self.kind not in KINDS:
            raise InputError(
                f"unknown measured quantity {self.kind!r}",
                remedy=f"use one of: {', '.join(KINDS)}",
                path=self.source,
            )
        if f.ndim != 1 or v.shape != f.shape:
            raise InputError(
                f"{f.size} frequencies but {v.size} measured values",
                remedy="give one measured value per frequency",
                path=self.source,
            )
        if f.size < 2:
            raise InputError(
                f"the sweep has {f.size} point(s)",
                remedy="a fit needs a sweep of many points across the resonance",
                path=self.source,
            )
        if not (np.isfinite(f).all() and np.isfinite(v).all()):
            raise InputError(
                "the sweep holds a value that is not a finite number",
                remedy="remove or repair the rows with NaN or infinite values",
                path=self.source,
            )
        if (f <= 0).any():
            raise InputError(
                f"frequency {f[f <= 0][0]:g} Hz is zero or negative",
                remedy="check the frequency column and its unit",
                path=self.source,
            )
        if (f[1:] <= f[:-1]).any():
            raise InputError(
                "frequencies are not ascending and unique",
                remedy="sort the sweep and merge repeated frequencies",
                path=self.source,
            )
        if self.sigma is not None:
            self._check_sigma(f.size)

    def _check_sigma(self, points: int) -> None:
        s = np.asarray(self.sigma, dtype=np.float64)
        object.__setattr__(self, "sigma", s)
        if s.shape != (points,):
            raise InputError(
                f"{s.size} per-point standard deviations for {points} points",
                remedy="give one standard deviation per point, or none",
                path=self.source,
            )
        bad = ~np.isfinite(s) | (s <= 0)
        if bad.any():
            i = int(np.argmax(bad))
            raise InputError(
                f"the standard deviation {s[i]:g} of the point at {self.freq_hz[i]:g} Hz is "
                "not a finite number above zero",
                remedy="repair the uncertainty column, or delete it to fit without "
                "per-point weights",
                path=self.source,
            )

    @property
    def is_complex(self) -> bool:
        """True when phase was measured."""
        return bool(np.iscomplexobj(self.values))

    @property
    def points(self) -> int:
        return int(self.freq_hz.size)

    def describe(self) -> str:
        """A one-line description for the user."""
        from fitkit.units import format_quantity

        form = "complex" if self.is_complex else "magnitude only"
        if self.recorded_in_db:
            form += ", recorded in dB"
        return (
            f"{self.points} points, {format_quantity(self.freq_hz[0], 'Hz')} to "
            f"{format_quantity(self.freq_hz[-1], 'Hz')}, {self.kind} ({form})"
        )

"""Bench arrangements: what the instrument saw when the circuit had impedance Z.

Every arrangement is a bilinear map of Z, ``m = (a Z + b) / (c Z + d)``, with coefficients
set by the fixture (source resistance, sense resistor with the probe capacitance across
it, reference impedance). One map serves the forward model, its exact inverse (for the
closed-form start) and the loop resistance that loads the circuit (for the loaded Q).
The trade's relations:

- divider: ``H = Zsense / (Rsource + Z + Zsense)``, ``Zsense = Rs || 1/(j w Cprobe)``;
  against the generator's output terminal the source resistance drops out:
  ``H = Zsense / (Z + Zsense)``;
- across: the voltage across the circuit, fed through a resistor Rfeed, with the probe
  across the circuit: ``H = Zp / (Rfeed + Zp)``, ``Zp = Z || 1/(j w Cprobe)`` (plus the
  source resistance when the ratio is against the open-circuit EMF);
- impedance: the analyser reads Z itself;
- reflection: ``S11 = (Z - Z0) / (Z + Z0)``;
- series-through: ``S21 = 2 Z0 / (2 Z0 + Z)``;
- shunt-through: ``S21 = 2 Z / (2 Z + Z0)``.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from fitkit.errors import SetupError
from fitkit.units import format_quantity

BENCHES = ("divider", "across", "impedance", "reflection", "series-through", "shunt-through")
#: benches that read a voltage ratio (or volts) from a generator, with its references
GENERATOR_BENCHES = ("divider", "across")
REFERENCES = ("terminal", "open-circuit")
DISPLAYS = ("matched", "open-circuit")

#: Which bench arrangement each measured quantity comes from, when the user does not say.
DEFAULT_BENCH = {
    "ratio": "divider",
    "volts": "divider",
    "impedance": "impedance",
    "s11": "reflection",
    "s21": "series-through",
}
_BENCHES_FOR_KIND = {
    "ratio": GENERATOR_BENCHES,
    "volts": GENERATOR_BENCHES,
    "impedance": ("impedance",),
    "s11": ("reflection",),
    "s21": ("series-through", "shunt-through"),
}


#: fixture values that may carry a stated uncertainty
UNCERTAIN_FIELDS = (
    "source_ohm", "sense_ohm", "feed_ohm", "probe_f", "z0_ohm", "amplitude_vrms", "reading_gain"
)  # fmt: skip


@dataclass(frozen=True)
class Setup:
    """The bench arrangement a sweep was taken with. Known values, never fitted.

    Attributes
    ----------
    bench : str
        One of :data:`BENCHES`.
    kind : str
        The measured quantity (see :data:`fitkit.sweep.KINDS`).
    source_ohm : float
        The generator's source resistance.
    sense_ohm : float or None
        The sense resistor of a divider.
    feed_ohm : float or None
        The resistor feeding the circuit on an ``across`` bench.
    probe_f : float
        Probe or input capacitance across the sense resistor.
    reference : str
        For a divider ratio: measured against the generator's output ``"terminal"`` (its
        source resistance drops out) or against its ``"open-circuit"`` EMF.
    z0_ohm : float
        Reference impedance of S-parameters.
    amplitude_vrms : float or None
        Generator amplitude as set on its display, for absolute-volt sweeps.
    display : str
        ``"matched"``: the generator's display assumes a 50 ohm load and shows half its
        open-circuit EMF (common practice); ``"open-circuit"``: it shows the EMF.
    relative : bool
        The measured scale is not calibrated (only its shape counts).
    reading_gain : float
        What the instrument reads over what it should: 1 for a calibrated reading. Its
        stated uncertainty is the calibration's (two scope channels through two probes
        agree to a few per cent, an analyser to a fraction of one: common practice).
    uncertainty : tuple
        Standard uncertainties of fixture values, as ``(field, u)`` pairs (fields of
        :data:`UNCERTAIN_FIELDS`, ``u`` in the field's unit): carried into every fitted
        value's uncertainty (:mod:`fitkit.setup_uncertainty`).
    """

    bench: str
    kind: str
    source_ohm: float = 50.0
    sense_ohm: float | None = None
    feed_ohm: float | None = None
    probe_f: float = 0.0
    reference: str = "terminal"
    z0_ohm: float = 50.0
    amplitude_vrms: float | None = None
    display: str = "matched"
    relative: bool = False
    reading_gain: float = 1.0
    uncertainty: tuple = ()

    def __post_init__(self) -> None:
        # (a saved fit gives lists: kept as pairs, so the setup stays hashable)
        pairs = tuple((str(name), float(u)) for name, u in self.uncertainty)
        object.__setattr__(self, "uncertainty", pairs)
        for name, u in pairs:
            if name not in UNCERTAIN_FIELDS or getattr(self, name) is None:
                raise SetupError(f"an uncertainty is given for {name}, which this bench has not")
            if not (math.isfinite(u) and u >= 0):
                raise SetupError(f"the uncertainty of {name} must be finite and >= 0, not {u!r}")
        _check_choice("bench", self.bench, BENCHES)
        _check_choice("reference", self.reference, REFERENCES)
        _check_choice("generator display", self.display, DISPLAYS)
        if self.bench not in _BENCHES_FOR_KIND.get(self.kind, ()):
            allowed = " or ".join(_BENCHES_FOR_KIND.get(self.kind, ()))
            raise SetupError(
                f"a {self.kind} sweep cannot come from a {self.bench} bench",
                remedy=f"for {self.kind} data choose the {allowed} bench",
            )
        if not (math.isfinite(self.reading_gain) and self.reading_gain > 0):
            raise SetupError(f"the reading gain must be above 0, not {self.reading_gain!r}")
        for name in ("source_ohm", "z0_ohm", "probe_f"):
            value = getattr(self, name)
            if not (math.isfinite(value) and value >= 0):
                raise SetupError(f"{name} = {value!r} must be a finite value >= 0")
        if self.amplitude_vrms is not None and not (
            math.isfinite(self.amplitude_vrms) and self.amplitude_vrms > 0
        ):
            raise SetupError(
                f"the generator amplitude must be above 0 V, not {self.amplitude_vrms!r}",
                remedy="give it as set on the generator, e.g. '2 Vpp'",
            )
        if self.z0_ohm <= 0:
            raise SetupError("the reference impedance must be above 0 ohm")
        if self.bench == "divider" and not self.shape_only:
            if self.sense_ohm is None or not self.sense_ohm > 0:
                raise SetupError(
                    "a divider sweep needs the sense resistor's value",
                    remedy="give it, e.g. --sense-r 47 (or sense_resistor in the setup file); "
                    "if the scope read the voltage across the circuit instead, say "
                    "--bench across --feed-r <the feed resistor>",
                )
        if self.bench == "across" and (self.feed_ohm is None or not self.feed_ohm > 0):
            raise SetupError(
                "an across sweep needs the value of the resistor feeding the circuit",
                remedy="give it, e.g. --feed-r 10k (or feed_resistor in the setup file)",
            )
        if self.relative and self.bench not in GENERATOR_BENCHES:
            raise SetupError(
                f"only a generator sweep can be relative; a {self.bench} sweep has its own scale",
                remedy="drop the relative flag",
            )

    @property
    def shape_only(self) -> bool:
        """A relative divider sweep with no fixture values: only its shape counts. The
        loop then reads ``H ~ 1 / Z_loop``, whose shape fixes f0 and the loaded Q and
        nothing more; the fixture's resistance stays inside the fitted loop."""
        return self.relative and self.bench == "divider" and self.sense_ohm is None

    @property
    def emf_vrms(self) -> float | None:
        """The generator's open-circuit EMF behind its source resistance."""
        if self.amplitude_vrms is None:
            return None
        return self.amplitude_vrms * (2.0 if self.display == "matched" else 1.0)

    @property
    def source_in_loop(self) -> bool:
        return self.kind == "volts" or self.reference == "open-circuit"

    def coefficients(self, freq_hz: np.ndarray) -> tuple:
        """The bilinear map ``m = (a Z + b) / (c Z + d)`` at each frequency (the reading
        gain scales ``a`` and ``b``)."""
        a, b, c, d = self._map(freq_hz)
        if self.reading_gain != 1.0:
            a, b = self.reading_gain * a, self.reading_gain * b
        return a, b, c, d

    def _map(self, freq_hz: np.ndarray) -> tuple:
        """The bench's own map, before the reading gain."""
        w = 2.0 * np.pi * np.asarray(freq_hz, dtype=np.float64)
        one = np.ones_like(w)
        if self.shape_only:
            return 0.0 * one, one, one, 0.0 * one  # H = 1 / Z_loop; the gain takes the scale
        if self.bench == "divider":
            zs = self.sense_ohm / (1.0 + 1j * w * self.probe_f * self.sense_ohm)
            scale = self.emf_vrms if (self.kind == "volts" and self.emf_vrms is not None) else 1.0
            rsrc = self.source_ohm if self.source_in_loop else 0.0
            return 0.0 * one, scale * zs, one, rsrc + zs
        if self.bench == "across":
            scale = self.emf_vrms if (self.kind == "volts" and self.emf_vrms is not None) else 1.0
            rfeed = self.feed_ohm + (self.source_ohm if self.source_in_loop else 0.0)
            return scale * one, 0.0 * one, 1.0 + 1j * w * self.probe_f * rfeed, rfeed * one
        if self.bench == "impedance":
            return one, 0.0 * one, 0.0 * one, one
        z0 = self.z0_ohm
        if self.bench == "reflection":
            return one, -z0 * one, one, z0 * one
        if self.bench == "series-through":
            return 0.0 * one, 2 * z0 * one, one, 2 * z0 * one
        return 2.0 * one, 0.0 * one, 2.0 * one, z0 * one  # shunt-through

    def response(self, z: np.ndarray, freq_hz: np.ndarray, coefficients=None) -> np.ndarray:
        """What the instrument reads when the circuit has impedance ``z``.

        ``coefficients``, from :meth:`coefficients` at the same frequencies, saves
        computing them again inside a fit's loop.
        """
        a, b, c, d = self.coefficients(freq_hz) if coefficients is None else coefficients
        return (a * z + b) / (c * z + d)

    def response_slope(self, z: np.ndarray, coefficients: tuple) -> np.ndarray:
        """d(reading)/dZ of :meth:`response` at impedance ``z``: ``(ad - bc) / (cZ + d)^2``."""
        a, b, c, d = coefficients
        return (a * d - b * c) / (c * z + d) ** 2

    def impedance_from(self, measured: np.ndarray, freq_hz: np.ndarray) -> tuple:
        """Invert :meth:`response`: the circuit's Z and ``|dZ/dm|`` (noise gain)."""
        a, b, c, d = self.coefficients(freq_hz)
        denom = a - c * measured
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (d * measured - b) / denom
            gain = np.abs((a * d - b * c) / denom**2)
        return z, gain

    @property
    def external_ohm(self) -> float:
        """Resistance the fixture puts in series with the circuit (probe ignored).

        The loaded Q is ``w0 L / (R + external_ohm)``.
        """
        source = self.source_ohm if self.source_in_loop else 0.0
        if self.shape_only:
            return 0.0
        if self.bench == "divider":
            return source + self.sense_ohm
        if self.bench == "across":
            return source + self.feed_ohm
        _, _, c, d = (float(np.real(x[0])) for x in self.coefficients(np.array([1.0])))
        return 0.0 if c == 0 else d / c

    @property
    def is_calibrated(self) -> bool:
        """True when the measured scale ties Z to ohms."""
        if self.relative:
            return False
        return not (self.kind == "volts" and self.amplitude_vrms is None)

    def u_of(self, field: str) -> float | None:
        """The stated standard uncertainty of a fixture value (None: not stated)."""
        return dict(self.uncertainty).get(field)

    def _value(self, field: str, unit: str) -> str:
        return format_quantity(getattr(self, field), unit, self.u_of(field))

    def describe(self) -> str:
        """One line saying what was assumed."""
        if self.bench in GENERATOR_BENCHES:
            if self.shape_only:
                return "divider, relative scale and no fixture values: only the shape counts"
            if self.bench == "divider":
                parts = [f"divider, sense resistor {self._value('sense_ohm', 'ohm')}"]
            else:
                parts = [f"across the circuit, fed through {self._value('feed_ohm', 'ohm')}"]
            if self.source_in_loop:
                parts.append(f"source {self._value('source_ohm', 'ohm')} in the loop")
            else:
                parts.append("ratio against the generator terminal")
            if self.probe_f or self.u_of("probe_f"):
                parts.append(f"probe {self._value('probe_f', 'F')}")
            if self.kind == "volts":
                if self.amplitude_vrms is None:
                    parts.append("generator amplitude not given")
                else:
                    parts.append(
                        f"generator {self._value('amplitude_vrms', 'Vrms')} "
                        f"({self.display} display, EMF {format_quantity(self.emf_vrms, 'Vrms')})"
                    )
            if self.relative:
                parts.append("relative (uncalibrated) scale")
            return ", ".join(parts) + self._gain_words()
        if self.bench == "impedance":
            return "impedance read directly" + self._gain_words()
        return f"{self.bench}, reference impedance {self._value('z0_ohm', 'ohm')}" + (
            self._gain_words()
        )

    def _gain_words(self) -> str:
        if self.reading_gain == 1.0 and not self.u_of("reading_gain"):
            return ""
        return f", reading gain {self._value('reading_gain', '')}"

    def to_dict(self) -> dict:
        return asdict(self)


def _check_choice(what: str, value: str, allowed: tuple) -> None:
    if value not in allowed:
        raise SetupError(
            f"unknown {what} {value!r}",
            remedy=f"choose one of: {', '.join(allowed)}",
        )

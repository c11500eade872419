"""CircuitFit: fitted values with uncertainties and correlations, fit quality, and where
they came from. Serialises to JSON and back, so later commands can start from a saved fit.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field

import numpy as np
from uncertainties import correlated_values, ufloat

from fitkit.errors import InputError
from fitkit.names import COMPONENTS, FIT_FORMAT, OPTIONAL, QUANTITIES, upgrade_fit
from fitkit.units import format_quantity, format_to
from fitkit.version import __version__


def nominal(x) -> float:
    """The value of a float or an ``uncertainties`` number."""
    return float(getattr(x, "nominal_value", x).real)


def std_dev(x) -> float:
    """The standard error of an ``uncertainties`` number; 0 for a plain float."""
    return float(getattr(x, "std_dev", 0.0))


@dataclass(frozen=True)
class Quantity:
    """A reported value: SI value and standard uncertainty, or the reason it is not known.

    The uncertainty is ``stderr`` here, as lmfit names it, and ``u`` in saved JSON.
    """

    name: str
    value: float | None
    stderr: float | None
    reason: str = ""
    #: why the value is not to be trusted as printed (empty when it is)
    doubtful: str = ""
    #: a 68 % interval (low, high) where the linearised error was doubtful
    interval: tuple | None = None
    #: the sweep's own share of ``stderr`` where the setup states uncertainties of its
    #: fixture values (None: ``stderr`` is all the sweep's)
    u_sweep: float | None = None

    @property
    def own_u(self) -> float | None:
        """The sweep's own share of the standard uncertainty."""
        return self.stderr if self.u_sweep is None else self.u_sweep

    @property
    def unit(self) -> str:
        return QUANTITIES[self.name][0]

    @property
    def determined(self) -> bool:
        return self.value is not None

    def text(self) -> str:
        if not self.determined:
            return "not determined"
        text = format_quantity(self.value, self.unit, self.stderr)
        if self.interval:
            low, high = (format_to(x, self.unit, self.stderr) for x in self.interval)
            text += f" (68% interval {low} to {high})"
        return f"{text}  (doubtful)" if self.doubtful else text

    def to_dict(self) -> dict:
        out = {"value": self.value, "u": self.stderr, "unit": self.unit}
        out["determined"] = self.determined
        if self.reason:
            out["reason"] = self.reason
        if self.doubtful:
            out["doubtful"] = self.doubtful
        if self.interval:
            out["interval_68"] = list(self.interval)
        if self.u_sweep is not None:
            out["u_sweep"] = self.u_sweep
        return out


@dataclass
class FitStats:
    """How well the model describes the sweep, and what the fit did on the way."""

    points: int
    used_points: int
    redchi: float
    rms: float
    rms_unit: str
    aic: float
    bic: float
    converged: bool
    noise: str
    start: str
    outliers_hz: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    outlier_reasons: list = field(default_factory=list)


@dataclass
class CircuitFit:
    """The result of fitting a circuit to a sweep (see :func:`fitkit.fit_sweep`)."""

    topology: str
    quantities: dict
    covariance_names: list
    covariance: np.ndarray
    stats: FitStats
    setup: dict
    sweep: dict
    known: dict
    undetermined: list
    choice: str = ""
    model_curve: tuple | None = None  # (freq_hz, measured, fitted) when made from a sweep

    def __getitem__(self, name: str) -> Quantity:
        return self.quantities[name]

    def __str__(self) -> str:
        """The table ``fitkit fit`` prints."""
        from fitkit.report.table import fit_table

        return fit_table(self)

    def __repr__(self) -> str:
        shown = ", ".join(
            f"{n}={self.quantities[n].text()}" for n in (*COMPONENTS, "f0", "Q")
            if n in self.quantities
        )  # fmt: skip
        return f"<CircuitFit {self.topology}: {shown}>"

    def _repr_html_(self) -> str:
        """An HTML table of the values, for a notebook."""
        from fitkit.report.html import fit_fragment

        return fit_fragment(self)

    def correlated(self) -> dict:
        """Correlated ``uncertainties`` values of every determined quantity, for predictions."""
        names = self.covariance_names
        cov = np.asarray(self.covariance, dtype=float)
        # values known exactly stay plain floats (an error-free ufloat is deprecated)
        keep = [i for i, n in enumerate(names) if cov[i, i] > 0]
        base = correlated_values(
            [self.quantities[names[i]].value for i in keep], cov[np.ix_(keep, keep)]
        )
        out = {n: self.quantities[n].value for n in names}
        out.update({names[i]: u for i, u in zip(keep, base)})
        for name, kv in self.known.items():
            u = kv.get("u") or 0.0
            out.setdefault(name, ufloat(kv["value"], u) if u else kv["value"])
        return out

    def correlations(self) -> dict:
        names = self.covariance_names
        cov = np.asarray(self.covariance, dtype=float)
        sd = np.sqrt(np.diag(cov))
        with np.errstate(divide="ignore", invalid="ignore"):
            corr = np.round(cov / np.outer(sd, sd), 6)
        # a value with no spread (known exactly) has no correlation: null in JSON
        matrix = [[x if math.isfinite(x) else None for x in row] for row in corr.tolist()]
        return {"names": list(names), "matrix": matrix}

    def correlation(self, a: str, b: str) -> float | None:
        corr = self.correlations()
        if a not in corr["names"] or b not in corr["names"]:
            return None
        value = corr["matrix"][corr["names"].index(a)][corr["names"].index(b)]
        return None if value is None or not math.isfinite(value) else value

    def to_dict(self) -> dict:
        q = self.quantities
        return {
            "fitkit_version": __version__,
            "format": FIT_FORMAT,
            "topology": self.topology,
            "model_choice": self.choice,
            "values": {n: q[n].to_dict() for n in COMPONENTS},
            "derived": {n: q[n].to_dict() for n in QUANTITIES if n not in COMPONENTS and n in q},
            "correlations": self.correlations(),
            "covariance": {
                "names": list(self.covariance_names),
                "matrix": np.asarray(self.covariance).tolist(),
            },
            "undetermined": self.undetermined,
            "known": self.known,
            "fit": {
                "points": self.stats.points,
                "used_points": self.stats.used_points,
                "reduced_chi_square": self.stats.redchi,
                "rms": self.stats.rms,
                "rms_unit": self.stats.rms_unit,
                "aic": self.stats.aic,
                "bic": self.stats.bic,
                "converged": self.stats.converged,
                "noise": self.stats.noise,
                "start": self.stats.start,
                "outliers_hz": self.stats.outliers_hz,
                "outlier_reasons": self.stats.outlier_reasons,
                "warnings": self.stats.warnings,
            },
            "setup": self.setup,
            "sweep": self.sweep,
        }

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, allow_nan=False)

    @classmethod
    def from_dict(cls, data: dict, source: str = "<json>") -> CircuitFit:
        """Rebuild a saved fit (the plot curve is not kept); one saved by an earlier
        version, with its old names, is read too."""
        try:
            data = upgrade_fit(data)
            quantities = {}
            for name in QUANTITIES:
                if name in OPTIONAL and name not in data["derived"]:
                    continue
                entry = data["values"][name] if name in COMPONENTS else data["derived"][name]
                quantities[name] = Quantity(
                    name,
                    entry["value"],
                    entry["u"],
                    entry.get("reason", ""),
                    entry.get("doubtful", ""),
                    tuple(entry["interval_68"]) if entry.get("interval_68") else None,
                    entry.get("u_sweep"),
                )
            saved = dict(data["fit"])
            stats = FitStats(redchi=saved.pop("reduced_chi_square"), **saved)
            return cls(
                topology=data["topology"],
                quantities=quantities,
                covariance_names=list(data["covariance"]["names"]),
                covariance=np.asarray(data["covariance"]["matrix"], dtype=float),
                stats=stats,
                setup=data["setup"],
                sweep=data["sweep"],
                known=data.get("known", {}),
                undetermined=data.get("undetermined", []),
                choice=data.get("model_choice", ""),
            )
        except (KeyError, TypeError, ValueError) as exc:
            raise InputError(
                f"not a saved fitkit fit: missing or malformed entry {exc}",
                remedy="save a fit with 'fitkit fit SWEEP --json > fit.json' and use that file",
                path=source,
            ) from None


def load_fit(path) -> CircuitFit:
    """Read a fit saved as JSON by ``fitkit fit --json``."""
    try:
        with open(path, encoding="utf-8") as fh:
            data = json.load(fh)
    except FileNotFoundError:
        raise InputError(
            "no such file", remedy="check the path to the saved fit", path=path
        ) from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(
            f"not JSON ({exc})",
            remedy="give a fit saved with 'fitkit fit SWEEP --json > fit.json'",
            path=path,
        ) from None
    return CircuitFit.from_dict(data, str(path))

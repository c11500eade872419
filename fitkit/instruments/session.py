"""Taking a sweep: connect, switch the output on, sample adaptively, save, switch off.

The order of work:

1. refuse a generator amplitude above the ceiling before anything is connected;
2. connect, set up and switch the output on (:func:`fitkit.instruments.powered.powered`);
3. a coarse pass over the span finds the resonance (the fit's closed-form start needs
   only the complex ratio, so a few points across the span suffice);
4. rounds of a few points each where the Fisher information of the chosen model is
   largest (:mod:`fitkit.instruments.placement`), refitting after each round, until the
   target precision is reached, or the point budget or the time limit is;
5. the output goes off at the end, on Ctrl-C and on any error.

Every point is saved as it comes (:mod:`fitkit.instruments.sweep_file`); a stopped sweep
can be continued from its file.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fitkit.errors import FitError, FitkitError, SetupError
from fitkit.fitting import fit_sweep
from fitkit.instruments.placement import InformationModel
from fitkit.instruments.powered import DEFAULT_CEILING_VPP, check_amplitude, powered
from fitkit.instruments.profile import Profile
from fitkit.instruments.reading import ReadSettings
from fitkit.instruments.sweep_file import read_points, write_points
from fitkit.result import CircuitFit
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import get_topology

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0  # shifts the candidate grid between rounds
_MIN_EXTRA = 8  # points placed by information before the target may stop the sweep


@dataclass(frozen=True)
class SweepRequest:
    """What sweep to take and when to stop.

    Attributes
    ----------
    start_hz, stop_hz : float
        The span of the coarse pass (it must hold the resonance).
    amplitude_vpp : float
        Generator amplitude, volts peak-to-peak as set on its display.
    ceiling_vpp : float
        The largest amplitude allowed; above it the sweep is refused.
    topology : str
        The model fitted as points come in: any :func:`fitkit.fitting.fit_sweep` takes
        (``"series"``, ``"tank"``, ``"coil"``, one of them with ``-sqrtf``, or
        ``"auto"``).
    target : str
        The value to pin down, as the fit names it (``"Q"``, ``"L"``, ``"f0"``,
        ``"Q_loaded"``...).
    target_rel : float
        Its wanted relative standard uncertainty (0.005 for 0.5%).
    coarse_points : int
        Points of the coarse pass, spaced geometrically over the span.
    max_points : int
        The point budget.
    time_limit_s : float
        Stop after this long.
    batch : int
        Points per round between refits.
    """

    start_hz: float
    stop_hz: float
    amplitude_vpp: float = 1.0
    ceiling_vpp: float = DEFAULT_CEILING_VPP
    topology: str = "series"
    target: str = "Q"
    target_rel: float = 0.01
    coarse_points: int = 21
    max_points: int = 200
    time_limit_s: float = 600.0
    batch: int = 4

    def check(self, setup: Setup | None = None) -> None:
        """Refuse an unsafe or impossible request before anything is connected (with
        the ``setup``, also a target that its sweep cannot determine)."""
        check_amplitude(self.amplitude_vpp, self.ceiling_vpp)
        if not (0 < self.start_hz < self.stop_hz):
            raise SetupError(
                f"the span {self.start_hz:g} Hz to {self.stop_hz:g} Hz is not a span",
                remedy="give --span START:STOP with START below STOP, e.g. 100k:1M",
            )
        if self.topology != "auto":
            get_topology(self.topology)  # refuses an unknown model, naming the known ones
        family = _ONLY_IN.get(self.target)
        if family and (self.topology == "auto" or get_topology(self.topology).family != family):
            raise SetupError(
                f"the {self.topology} model has no {self.target} to aim at",
                remedy=f"choose --model {family}, or aim at a value every model has "
                "(f0, Q, L, C...)",
            )
        if setup is not None and _shape_only(setup):
            self._check_shape_only()

    def _check_shape_only(self) -> None:
        """A relative divider sweep: only the shape's values, and no coil model."""
        if self.topology.startswith("coil"):
            raise SetupError(
                "a relative divider sweep cannot tell the fixture's resistance from the "
                "coil's loss, so the coil model does not fit it",
                remedy="calibrate the ratio (drop --relative and give --sense-r), or fit the "
                "series model (--model series)",
            )
        if self.target not in SHAPE_TARGETS:
            raise SetupError(
                f"a relative divider sweep fixes only the resonance and the loaded Q, "
                f"not {self.target}: nothing ties its scale to ohms",
                remedy="aim at the loaded Q or f0 (--target Q_loaded=0.5%), or calibrate the "
                "ratio (drop --relative and give --sense-r)",
            )
        if not (self.coarse_points >= 6 and self.max_points > self.coarse_points):
            raise SetupError(
                f"{self.max_points} points in all cannot follow a coarse pass of "
                f"{self.coarse_points}",
                remedy="allow more points (--max-points) than the coarse pass takes",
            )


#: targets only one family of models has
_ONLY_IN = {"R_dynamic": "tank", "C_self": "coil", "f_self": "coil"}
#: what a relative divider sweep determines (its scale is open: see fitkit.setups)
SHAPE_TARGETS = ("f0", "Q_loaded", "loaded_bandwidth")


def _shape_only(setup: Setup) -> bool:
    """A relative divider sweep: ``H = gain / Z_loop`` leaves the loop's scale open."""
    return setup.relative and setup.bench == "divider"


@dataclass
class TakenSweep:
    """The outcome: the points, the last fit, and why the sweep stopped."""

    path: Path
    points: list
    fit: CircuitFit | None
    stopped: str
    identities: dict = field(default_factory=dict)


def take_sweep(
    request: SweepRequest,
    setup: Setup,
    profile: Profile,
    addresses: dict,
    out_path: str | Path,
    *,
    settings: ReadSettings | None = None,
    resume: bool = False,
    progress=None,
) -> TakenSweep:
    """Take a sweep with a generator and a digitiser, adaptively, saving as it goes.

    Parameters
    ----------
    request : SweepRequest
        Span, amplitude and its ceiling, model, target and limits.
    setup : Setup
        The bench arrangement (a ``ratio`` sweep: output channel over input channel).
    profile : Profile
        The instruments' commands.
    addresses : dict
        VISA addresses, ``{"generator": ..., "digitiser": ...}``.
    out_path : str or Path
        The sweep file, rewritten after every point.
    settings : ReadSettings, optional
        How each point is read (default: sine fits of captured records).
    resume : bool
        Continue the sweep in ``out_path`` (its points count toward the budget).
    progress : callable, optional
        Called with ``(points, fit)`` after each round, for a progress line.

    Returns
    -------
    TakenSweep

    Raises
    ------
    SetupError
        An amplitude above the ceiling, or an impossible request (nothing connected).
    InstrumentError
        An instrument failed; the points so far are saved and the output is off.
    """
    request.check(setup)
    settings = settings or ReadSettings()
    profile.require_mode(settings.mode)
    points = read_points(out_path)[0] if resume else []
    metadata = {
        "state": "incomplete",
        "settings": f"{request.amplitude_vpp:.4g} Vpp, read by {settings.mode}, "
        f"profile {profile.name}",
    }
    result = TakenSweep(Path(out_path), points, None, "")
    try:
        with powered(
            profile,
            addresses,
            request.amplitude_vpp,
            ceiling_vpp=request.ceiling_vpp,
            settings=settings,
        ) as reader:
            result.identities = {
                inst.role: inst.identity for inst in (reader.generator, reader.digitiser)
            }
            metadata.update(result.identities)
            _sweep(request, setup, reader, result, metadata, progress)
    except FitkitError as exc:
        raise _with_saved(exc, result) from None
    return result


def _sweep(request, setup, reader, result, metadata, progress) -> None:
    started = time.monotonic()
    points = result.points

    def take(freqs) -> None:
        for f in freqs:
            pt = reader.read(f)
            for inst in (reader.generator, reader.digitiser):
                inst.check_errors(f"the point at {f:.6g} Hz")  # a point read in error is lost
            points.append(pt)
            write_points(result.path, points, metadata)

    have = np.array([pt.freq_hz for pt in points])
    coarse = np.geomspace(request.start_hz, request.stop_hz, request.coarse_points)
    take([float(f) for f in coarse if not np.any(np.abs(have / f - 1.0) < 1e-9)])
    sigmas = [pt.sigma for pt in points if math.isfinite(pt.sigma)]
    if sigmas and reader.settings.equal_noise:
        reader.noise_goal = float(np.median(sigmas))
    placed = 0
    for round_no in range(request.max_points):
        result.fit = _fit(points, setup, request.topology, result.path)
        if progress is not None:
            progress(len(points), result.fit)
        rel = _relative(result.fit, request.target)
        if placed >= _MIN_EXTRA and rel <= request.target_rel:
            result.stopped = f"target reached ({rel:.2%} <= {request.target_rel:.2%})"
            break
        if len(points) >= request.max_points:
            result.stopped = f"point budget reached ({request.max_points} points)"
            break
        if time.monotonic() - started > request.time_limit_s:
            result.stopped = f"time limit reached ({request.time_limit_s:g} s)"
            break
        model = InformationModel.from_fit(result.fit, setup, request.target)
        reader.settle_for(model.loaded_q())
        freqs = np.array([pt.freq_hz for pt in points])
        count = min(request.batch, request.max_points - len(points))
        chosen = model.next_frequencies(
            freqs,
            _sigmas(points, result.fit),
            count,
            shift=round_no * _GOLDEN,
            span_hz=(request.start_hz, request.stop_hz),
        )
        if not chosen:
            result.stopped = "no new frequency left to take in the span"
            break
        take(chosen)
        placed += len(chosen)
    metadata["state"] = "complete"
    metadata["stopped"] = result.stopped
    write_points(result.path, points, metadata)


def _fit(points, setup: Setup, topology: str, path) -> CircuitFit:
    """The fit of the points so far, each weighted by its own sigma when all have one
    (as the fit of the written file weights them)."""
    rows = sorted(points, key=lambda pt: pt.freq_hz)
    sigma = np.array([pt.sigma for pt in rows])
    sweep = Sweep(
        np.array([pt.freq_hz for pt in rows]),
        np.array([pt.ratio for pt in rows]),
        "ratio",
        source=str(path),
        sigma=sigma if np.all(np.isfinite(sigma)) else None,
    )
    try:
        return fit_sweep(sweep, setup, topology=topology)
    except FitError as exc:
        raise FitError(
            f"cannot find the resonance in the points taken so far ({exc.message})",
            remedy="check the span holds the resonance and the bench options are right",
            path=path,
        ) from None


def _relative(fit: CircuitFit, target: str) -> float:
    """The fit's relative standard uncertainty of the target, refused if undetermined."""
    q = fit[target]
    if not q.determined:
        raise FitError(
            f"the sweep cannot determine {target}: {q.reason}",
            remedy="aim the --target at a value the bench determines, e.g. Q or f0",
            path=fit.sweep.get("source"),
        )
    return q.stderr / abs(q.value)


def _sigmas(points, fit: CircuitFit) -> np.ndarray:
    """Each point's own sigma; the fit's residual RMS where a point has none."""
    fallback = fit.stats.rms / math.sqrt(2.0) if fit.stats.rms > 0 else 1e-3
    return np.array([pt.sigma if math.isfinite(pt.sigma) else fallback for pt in points])


def _with_saved(exc: FitkitError, result: TakenSweep) -> FitkitError:
    """The same error, saying where the points so far are and how to go on."""
    if not result.points:
        return exc
    saved = (
        f"the {len(result.points)} points taken are saved in {result.path}; "
        "fix the cause and add --resume to continue"
    )
    remedy = f"{exc.remedy}\n  {saved}" if exc.remedy else saved
    new = type(exc)(exc.message, remedy=remedy, path=exc.path, line=exc.line, column=exc.column)
    return new

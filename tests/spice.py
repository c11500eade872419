"""Run ngspice AC analyses from tests: the independent simulator fitkit is checked against.

Reuse in a test module::

    from tests.spice import assert_complex_close, require_ngspice, run_ac, spice_value

    @pytest.mark.ngspice
    def test_something(tmp_path):
        require_ngspice()  # skips without ngspice; fails instead when CI=true
        freq, v = run_ac(netlist, ["out"], tmp_path)  # netlist holds elements and an .ac card
        assert_complex_close(fitkit_value_at(freq), v["out"])

The netlist text holds a title line, the elements, any ``.subckt`` definitions and one
``.ac`` card (``.ac dec|lin|oct <points> <fstart> <fstop>``); no ``.control`` block and no
``.end`` (this module appends both). Write values with :func:`spice_value`: SPICE reads
``1M`` as milli, so plain exponent notation is the safe form. ngspice runs in batch mode
in ``tmp_path``; the results are written with 16 significant digits, and the analysis is
rejected (``RuntimeError``, with ngspice's own output) when ngspice reports an error or a
singular matrix, so a malformed netlist never passes as a result.

Every node needs a DC path to ground (ngspice solves an operating point before the AC
analysis); a node reached only through a capacitor, as behind a current source, needs a
path that leaves the AC result alone, e.g. a 1e12 H inductor to ground.

The executable is ``$FITKIT_NGSPICE`` when set, else ``ngspice`` on ``PATH`` (Debian
package ``ngspice``). Without it :func:`require_ngspice` skips the test, except when the
environment variable ``CI`` is ``true``: there it fails, so CI cannot silently skip.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

#: Output that means ngspice did not solve the circuit as written.
_TROUBLE = re.compile(
    r"^\s*error\b|singular matrix|gmin stepping|source stepping|timestep too small|"
    r"unknown (device|subckt|parameter)|could not find|no such vector",
    re.IGNORECASE | re.MULTILINE,
)
_RESULT_FILE = "ac_result.txt"


def ngspice_path() -> str | None:
    """The ngspice executable to use, or None when there is none."""
    override = os.environ.get("FITKIT_NGSPICE", "").strip()
    if override:
        return override if os.access(override, os.X_OK) else None
    return shutil.which("ngspice")


def ngspice_available() -> bool:
    """True when an ngspice executable can be run."""
    return ngspice_path() is not None


def under_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() == "true"


def require_ngspice() -> str:
    """Return the ngspice path; skip the calling test without one (fail under ``CI=true``)."""
    path = ngspice_path()
    if path is not None:
        return path
    reason = "ngspice not found (install the Debian package 'ngspice' or set FITKIT_NGSPICE)"
    if under_ci():
        pytest.fail(f"{reason}; CI=true, so the ngspice cross-checks must run", pytrace=False)
    pytest.skip(reason)


@pytest.fixture
def ngspice() -> str:
    """Fixture form of :func:`require_ngspice` (import it into the test module to use it)."""
    return require_ngspice()


def spice_value(x: float) -> str:
    """A number as SPICE reads it exactly: exponent notation, full precision, no suffix."""
    x = float(x)
    if not np.isfinite(x):
        raise ValueError(f"not a finite value for a netlist: {x!r}")
    return repr(x)


def _vector(node: str) -> str:
    """``out`` -> ``v(out)``; anything already written as a vector (``i(v1)``) as is."""
    node = node.strip().lower()
    return node if "(" in node else f"v({node})"


def run_ac(netlist_text: str, nodes, tmp_path, timeout_s: float = 60.0) -> tuple:
    """Run the netlist's ``.ac`` analysis; return ``(freq_hz, {node: complex array})``.

    ``nodes`` are node names (``"out"`` reads ``v(out)``) or vector expressions such as
    ``"i(v1)"``; the dictionary is keyed by the names as given. ``freq_hz`` holds the
    frequencies ngspice solved at, as it wrote them, so evaluate the model there.
    """
    nodes = list(nodes)
    if not nodes:
        raise ValueError("name at least one node to read")
    lines = netlist_text.strip().splitlines()
    if lines and lines[-1].strip().lower() == ".end":
        lines.pop()
    body = "\n".join(lines)
    if not re.search(r"^\s*\.ac\s", body, re.IGNORECASE | re.MULTILINE):
        raise ValueError("the netlist needs an .ac card")
    if re.search(r"^\s*\.(control|endc)\b", body, re.IGNORECASE | re.MULTILINE):
        raise ValueError("leave the .control block to run_ac")
    exe = require_ngspice()
    workdir = Path(tmp_path)
    workdir.mkdir(parents=True, exist_ok=True)
    out = workdir / _RESULT_FILE
    if out.exists():
        out.unlink()
    vectors = [_vector(n) for n in nodes]
    control = "\n".join(
        [
            ".control",
            "set wr_singlescale",
            "set wr_vecnames",
            "set numdgt=15",
            "run",
            f"wrdata {_RESULT_FILE} {' '.join(vectors)}",
            "quit",
            ".endc",
            ".end",
        ]
    )
    cir = workdir / "ac_netlist.cir"
    cir.write_text(body + "\n" + control + "\n", encoding="ascii")
    proc = subprocess.run(
        [exe, "-b", cir.name],
        cwd=workdir,
        capture_output=True,
        text=True,
        timeout=timeout_s,
        check=False,
    )
    said = proc.stdout + proc.stderr
    if proc.returncode != 0 or _TROUBLE.search(said) or not out.exists():
        raise RuntimeError(
            f"ngspice failed (exit status {proc.returncode}) on {cir}:\n"
            f"{cir.read_text()}\n--- ngspice said ---\n{said}"
        )
    return _read_wrdata(out, nodes, vectors)


def _read_wrdata(path: Path, nodes: list, vectors: list) -> tuple:
    with open(path, encoding="ascii") as fh:
        header = fh.readline().split()
    expected = ["frequency"] + [v for v in vectors for _ in range(2)]
    if [h.lower() for h in header] != expected:
        raise RuntimeError(f"unexpected ngspice result header {header} (wanted {expected})")
    table = np.loadtxt(path, skiprows=1, ndmin=2)
    if table.shape[1] != 1 + 2 * len(nodes):
        raise RuntimeError(f"ngspice wrote {table.shape[1]} columns, wanted {1 + 2 * len(nodes)}")
    freq = table[:, 0].copy()
    values = {node: table[:, 1 + 2 * k] + 1j * table[:, 2 + 2 * k] for k, node in enumerate(nodes)}
    return freq, values


def assert_complex_close(
    got, want, rtol_mag: float = 1e-6, atol_deg: float = 1e-4, freq_hz=None, what: str = ""
) -> None:
    """Magnitudes agree within ``rtol_mag`` (relative) and phases within ``atol_deg``.

    The phase is compared as the angle of ``got / want``, so wrapping at +-180 degrees
    does not matter. The message names the worst point.
    """
    got = np.asarray(got, dtype=complex)
    want = np.asarray(want, dtype=complex)
    assert got.shape == want.shape, f"{what}: shapes {got.shape} and {want.shape} differ"
    assert np.all(np.isfinite(got)) and np.all(np.isfinite(want)), f"{what}: non-finite values"
    assert np.all(np.abs(want) > 0), f"{what}: a reference value is exactly zero"
    mag_err = np.abs(np.abs(got) / np.abs(want) - 1.0)
    deg_err = np.abs(np.degrees(np.angle(got / want)))
    where = "" if freq_hz is None else " at {:.9g} Hz"
    i = int(np.argmax(mag_err))
    assert mag_err[i] <= rtol_mag, (
        f"{what}: magnitude off by {mag_err[i]:.3g} (relative){where.format(*_at(freq_hz, i))}: "
        f"got {got[i]:.12g}, want {want[i]:.12g}"
    )
    j = int(np.argmax(deg_err))
    assert deg_err[j] <= atol_deg, (
        f"{what}: phase off by {deg_err[j]:.3g} deg{where.format(*_at(freq_hz, j))}: "
        f"got {got[j]:.12g}, want {want[j]:.12g}"
    )


def _at(freq_hz, i: int) -> tuple:
    return () if freq_hz is None else (float(np.asarray(freq_hz)[i]),)


def spice_rejection_db(netlist_text: str, node: str, wanted_hz: float, tmp_path) -> tuple:
    """ngspice's rejection at ``node`` relative to the grid point nearest ``wanted_hz``.

    Returns ``(freq_hz, wanted grid frequency, rejection_db array)``.
    """
    freq, v = run_ac(netlist_text, [node], tmp_path)
    i = int(np.argmin(np.abs(freq - wanted_hz)))
    return freq, freq[i], 20.0 * np.log10(np.abs(v[node][i]) / np.abs(v[node]))

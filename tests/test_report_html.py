"""The HTML pages as a reader sees them: rendered in headless Chromium (JavaScript off),
read back, checked for overflow on a 1280 px screen and at A4 print width, screenshots
written to the test's temporary folder.
"""

from __future__ import annotations

import hashlib
import re
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main
from tests.browser import A4_PRINT, SCREEN

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"
SPEC = KITS / "spec.toml"
# a file name a browser would run if it were pasted into the page unescaped
HOSTILE = '<script>kit<img src=x onerror="document.body.dataset.hacked=1">.csv'


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def fits_on_screen_and_paper(reader, page: Path, tmp_path: Path) -> dict:
    """The page at 1280 px and at A4 print width: no horizontal overflow at either."""
    seen = reader.look(page, tmp_path)
    assert seen["scroll_width"] <= seen["inner_width"] == SCREEN["width"]
    printed = reader.look(page, tmp_path, viewport=A4_PRINT, media="print")
    assert printed["scroll_width"] <= printed["inner_width"] == A4_PRINT["width"]
    assert seen["screenshot"].stat().st_size > 10_000
    assert printed["screenshot"].stat().st_size > 10_000
    pdf = reader.print_pdf(page, tmp_path)
    assert pdf.read_bytes().startswith(b"%PDF") and pdf.stat().st_size > 10_000
    return seen


def test_single_fit_report_shows_values_limits_verdicts_plot_and_checksum(reader, tmp_path):
    page = tmp_path / "kit-04.html"
    result = run("report", KITS / "kit-04.csv", "--spec", SPEC, "--out", page)
    assert result.exit_code == 0, result.output
    seen = fits_on_screen_and_paper(reader, page, tmp_path)
    text = " ".join(seen["text"].split())
    # the sample scenario (make_kits.py): kit 04's coil sits on its upper limit, 493.5 uH
    assert re.search(r"L 493\.\d+ uH \+/- 0\.\d+ uH 446\.5 uH to 493\.5 uH \? undecided", text)
    assert "pass" in text and "ILAC-G8:09/2019" in text
    assert "fitkit version 0.1.0" in text
    assert hashlib.sha256((KITS / "kit-04.csv").read_bytes()).hexdigest() in text
    assert "kits/fitkit-setup.toml" in text and "sense resistor 22 ohm" in text
    assert "circuit model series R-L-C (" in text  # and why it was chosen
    assert (seen["images"], seen["decoded"]) == (1, 1)


def test_report_is_not_overwritten_without_force(tmp_path):
    page = tmp_path / "r.html"
    page.write_text("keep me")
    result = run("report", KITS / "kit-01.csv", "--out", page)
    assert result.exit_code == 2 and "--force" in result.output
    assert page.read_text() == "keep me"


@pytest.fixture(scope="module")
def kit_batch(tmp_path_factory):
    """A batch of the sample kits plus one with a hostile name, with its report."""
    root = tmp_path_factory.mktemp("batch")
    folder = root / "kits"
    folder.mkdir()
    for name in ("kit-01.csv", "kit-04.csv", "kit-07.csv", "kit-10.csv", "fitkit-setup.toml"):
        shutil.copy(KITS / name, folder / name)
    (folder / "older").mkdir()
    shutil.copy(KITS / "kit-02.csv", folder / "older" / HOSTILE)
    shutil.copy(KITS / "fitkit-setup.toml", folder / "older" / "fitkit-setup.toml")
    out = root / "out"
    result = run("batch", folder, "--spec", SPEC, "--out", out, "--report", "--workers", "1")
    assert result.exit_code == 0, result.output
    return out / "report.html"


def test_batch_report_puts_failures_first_with_limits_charts_and_short_names(
    reader,
    kit_batch,
    tmp_path,
):
    seen = fits_on_screen_and_paper(reader, kit_batch, tmp_path)
    text = seen["text"]
    units = text[text.index("\nUnits") :]
    # failures, then undecided, then the file not fitted, then passes (make_kits.py:
    # kit 07 has a capacitor from the wrong bin, kit 04 a coil on its limit, kit 10 is cut)
    order = [units.index(n) for n in ("kit-07.csv", "kit-04.csv", "kit-10.csv", "kit-01.csv")]
    assert order == sorted(order)
    assert "/kits/" not in units.split("checksum")[0]  # names relative to the batch root
    assert "older/" in units
    # distinct headers: the value and its verdict
    for name in ("L", "C", "R", "Q"):
        assert name in seen["headers"] and f"{name} verdict" in seen["headers"]
    # the limits of spec.toml: L 470 uH +- 5 %, C 2.2 nF +- 5 %
    assert "446.5 uH to 493.5 uH" in text and "2.09 nF to 2.31 nF" in text
    assert "above the limit 2.3100 nF" in text  # kit 07's failure, in full
    # the reason of the file not fitted is shown whole
    assert "the file holds 1 point(s) of data" in text and "export it again" in text
    # a value standing out is named by its label, not by its name alone
    assert not re.search(r"stands out: f0 \(z", text)
    # one chart per judged value (4) plus one fit plot per fitted unit (4), all decoded
    assert seen["images"] == seen["decoded"] == 8
    assert "Circle: pass; diamond: undecided; cross: fail" in text


def test_batch_report_checksums_are_collapsed_and_file_names_escaped(reader, kit_batch, tmp_path):
    seen = reader.look(kit_batch, tmp_path, javascript=True)
    assert seen["hacked"] is None and seen["scripts"] == 0  # the onerror in the name never ran
    assert HOSTILE in seen["text"]  # shown as text, as the file is named
    sha = hashlib.sha256((KITS / "kit-07.csv").read_bytes()).hexdigest()
    assert sha not in seen["text"]  # inside a closed <details>: not shown until opened
    assert sha in kit_batch.read_text(encoding="utf-8")


def test_drift_page_overlays_both_sweeps_and_shows_changes_with_uncertainties(reader, tmp_path):
    drift = KITS.parent / "drift"
    page = tmp_path / "drift.html"
    result = run("report", drift / "drifted.csv", "--against", drift / "reference.csv",
                 "--out", page)  # fmt: skip
    assert result.exit_code == 0, result.output
    seen = fits_on_screen_and_paper(reader, page, tmp_path)
    text = " ".join(seen["text"].split())
    # the scenario (make_kits.py, sample_sweeps/README.md): C = 180 pF grew by 6 %
    assert re.search(r"C 179\.9\d+ pF \+/- 0\.0\d+ pF 190\.9\d+ pF \+/- 0\.0\d+ pF "
                     r"10\.9\d+ pF \+/- 0\.0\d+ pF 6\.0\d+ \+/- 0\.0\d+ %", text)  # fmt: skip
    assert "C has grown by about 6.1%" in text
    assert "reference.csv" in text and "drifted.csv" in text
    assert (seen["images"], seen["decoded"]) == (1, 1)


def test_drift_page_needs_a_shared_value(tmp_path):
    result = run("report", KITS / "kit-01.csv", "--against", KITS / "kit-10.csv",
                 "--out", tmp_path / "d.html")  # fmt: skip
    assert result.exit_code == 2 and "kit-10.csv" in result.output
    assert not (tmp_path / "d.html").exists()
    result = run("report", KITS / "kit-01.csv", "--against", KITS / "kit-02.csv",
                 "--spec", SPEC, "--out", tmp_path / "d.html")  # fmt: skip
    assert result.exit_code == 2 and "no --spec" in result.output


def test_pages_show_warnings_doubtful_marks_and_the_correction(reader, kit_batch, tmp_path):
    """Fields the fit core and the drift diagnosis may add are rendered when present."""
    import json

    from fitkit.report.batch_page import batch_report
    from fitkit.report.drift_page import drift_report
    from fitkit.workflow import fit_file

    summary = json.loads((kit_batch.parent / "results.json").read_text())
    row = next(r for r in summary["rows"] if r["file"].endswith("kit-01.csv"))
    row["warnings"] = "the residuals show a pattern"
    row["L_doubtful"] = "the interval rests on a linearised covariance"
    page = tmp_path / "batch-marks.html"
    page.write_text(batch_report(summary, summary["settings"], {}), encoding="utf-8")
    text = " ".join(reader.look(page, tmp_path)["text"].split())
    assert "warning: the residuals show a pattern" in text
    assert "doubtful: the interval rests on a linearised covariance" in text

    drift = KITS.parent / "drift"
    now, ref = fit_file(drift / "drifted.csv")[0], fit_file(drift / "reference.csv")[0]
    result = {
        "changes": {"C": {"reference": 180e-12, "reference_u": 4e-14, "value": 191e-12,
                          "value_u": 4e-14, "change": 11e-12, "change_u": 6e-14,
                          "relative": 0.061, "z": 183.0, "significant": True,
                          "absolute": "11 pF"}},
        "reading": ["C has grown by about 6.1%"],
        "correction": "remove about 11 pF: fit a 180 pF capacitor in its place",
        "doubtful": {"L": "leaks from C"},
    }  # fmt: skip
    page = tmp_path / "drift-marks.html"
    page.write_text(drift_report(now, ref, result), encoding="utf-8")
    seen = reader.look(page, tmp_path)
    text = " ".join(seen["text"].split())
    assert "Correction remove about 11 pF: fit a 180 pF capacitor in its place" in text
    assert "absolute" in seen["headers"] and "11 pF" in text
    assert "doubtful L: leaks from C" in text
    assert seen["scroll_width"] <= seen["inner_width"]

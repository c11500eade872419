"""A CircuitFit shows itself: the fit table in a console, an HTML table in a notebook."""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

from fitkit import fit_file
from fitkit.report.table import fit_table

SWEEP = Path(__file__).resolve().parent.parent / "sample_sweeps" / "hand_wound_series" / "sweep.csv"


class Cells(HTMLParser):
    def __init__(self):
        super().__init__()
        self.cells, self.tags = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "td":
            self.cells.append("")

    def handle_data(self, data):
        if self.tags and self.tags[-1] == "td":
            self.cells[-1] += data


def test_console_and_notebook_show_the_values_with_units():
    fit, _ = fit_file(SWEEP)
    assert str(fit) == fit_table(fit)
    assert re.match(r"<CircuitFit series: R=6\.7\d+ ohm \+/- .*L=220\.\d+ uH", repr(fit))
    fit.sweep = {**fit.sweep, "source": "<b>bench</b> 3.csv"}
    page = fit._repr_html_()
    assert "<b>bench</b>" not in page and "&lt;b&gt;bench&lt;/b&gt; 3.csv" in page
    parser = Cells()
    parser.feed(page)
    cells = [c.strip() for c in parser.cells]
    pairs = dict(zip(cells[::2], cells[1::2]))
    # README's sample output: L 220.079 uH +/- 0.056 uH, Q 69.26 +/- 0.38
    assert pairs["L"] == fit["L"].text() and pairs["L"].endswith(" uH")
    assert pairs["Q (circuit, unloaded)"] == fit["Q"].text()
    assert "reduced chi-square" in page


def test_a_doubtful_mark_is_shown_beside_its_value():
    from dataclasses import replace

    from fitkit.report.plots import values_box

    fit, _ = fit_file(SWEEP)
    q = fit["L"]
    fit.quantities["L"] = replace(q, doubtful="profile differs")
    assert "(doubtful: profile differs)" in fit._repr_html_()
    assert f"L = {q.text()}  (doubtful)" in values_box(fit)
    assert values_box(fit).count("(doubtful)") == 1

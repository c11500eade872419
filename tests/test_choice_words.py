"""The model choice in words, on Kass and Raftery's scale for BIC differences
("Bayes Factors", JASA 90, 1995, from memory: 2 ln B of 2, 6 and 10 separate
positive, strong and very strong evidence)."""

from __future__ import annotations

import pytest

from fitkit.report.choice import choice_in_words, evidence


@pytest.mark.parametrize(
    "delta, words",
    [(0.5, "not worth more than a bare mention"), (2.5, "positive"), (7.0, "strong"),
     (10.5, "very strong"), (227212964.0, "very strong")],
)  # fmt: skip
def test_evidence_follows_the_published_scale(delta, words):
    assert evidence(delta)[1] == words


def test_a_clear_winner_reads_as_the_issue_asks():
    text = choice_in_words("tank", {"series": 227213000.0, "tank": 36.0})
    assert text == "the tank fits far better than the series circuit (evidence very strong)"
    assert "227" not in text  # the numbers stay in the JSON


def test_a_simpler_model_reported_when_the_evidence_is_weak():
    text = choice_in_words("series", {"series": 105.0, "coil": 101.0},
                           failed={"tank": "no resonance in the sweep"})  # fmt: skip
    assert text.startswith("the series circuit and the coil with self-capacitance fit about as")
    assert "evidence for the coil with self-capacitance: positive" in text
    assert text.count("better than") == 0
    three = choice_in_words("tank", {"series": 160.0, "tank": 100.0, "coil": 107.0})
    assert three == (
        "the tank fits clearly better than the coil with self-capacitance (evidence strong); "
        "far better than the series circuit (evidence very strong)"
    )
    assert "the tank did not fit (no resonance in the sweep)" in text

"""The choice of circuit model in words a bench reader can weigh.

The fit core compares the models it tried by the Bayesian information criterion (BIC).
A difference of BIC approximates twice the log of the Bayes factor, and Kass and Raftery
("Bayes Factors", JASA 90, 1995, from memory) read ``2 ln B`` as: below 2 not worth more
than a bare mention, 2 to 6 positive, 6 to 10 strong, above 10 very strong evidence.
"""

from __future__ import annotations

#: (lowest BIC difference, how much better it fits, the evidence), strongest first
SCALE = (
    (10.0, "far better", "very strong"),
    (6.0, "clearly better", "strong"),
    (2.0, "better", "positive"),
    (0.0, "about as well", "not worth more than a bare mention"),
)
NAMES = {
    "series": "series circuit",
    "tank": "tank",
    "coil": "coil with self-capacitance",
}


def evidence(delta_bic: float) -> tuple[str, str]:
    """(how much better, the evidence) for a BIC difference (Kass and Raftery's scale).

    Examples
    --------
    >>> evidence(227212964.0)
    ('far better', 'very strong')
    >>> evidence(3.1)
    ('better', 'positive')
    """
    for lowest, better, strength in SCALE:
        if delta_bic >= lowest:
            return better, strength
    return SCALE[-1][1:]


def choice_in_words(chosen: str, bic: dict, *, failed: dict | None = None) -> str:
    """The model choice in words, e.g. "the tank fits far better than the series circuit
    (evidence very strong)"; the numbers belong in the JSON.

    Parameters
    ----------
    chosen : str
        The reported model (``series``, ``tank``, ``coil``); it may be a simpler model
        than the lowest BIC when the two cannot be told apart.
    bic : dict
        ``{model: BIC}`` of every model that was fitted, on the same points.
    failed : dict, optional
        ``{model: reason}`` of the models that did not fit.

    Returns
    -------
    str
    """
    best = min(bic, key=bic.get)
    name = NAMES.get(chosen, chosen)
    parts = []
    if chosen != best:
        _, strength = evidence(bic[chosen] - bic[best])
        parts.append(
            f"the {name} and the {NAMES.get(best, best)} fit about as well (evidence for the "
            f"{NAMES.get(best, best)}: {strength}); the simpler {name} is reported"
        )
    others = sorted((m for m in bic if m not in (chosen, best)), key=bic.get)
    if chosen == best and not others:
        parts.append(f"the {name} was the only model fitted")
    elif others:
        phrases = []
        for m in others:
            better, strength = evidence(bic[m] - bic[chosen])
            phrases.append(f"{better} than the {NAMES.get(m, m)} (evidence {strength})")
        if chosen == best:
            parts.append(f"the {name} fits " + "; ".join(phrases))
        else:
            parts.append("it fits " + "; ".join(phrases))
    for m, reason in (failed or {}).items():
        parts.append(f"the {NAMES.get(m, m)} did not fit ({reason})")
    return "; ".join(parts)

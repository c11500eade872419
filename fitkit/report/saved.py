"""Saved results read back for ``fitkit show``: a fit, a prediction or a drift diagnosis
(the JSON that ``fit --json``, ``predict --json`` and ``drift --json`` print)."""

from __future__ import annotations

import json
from dataclasses import fields

from uncertainties import ufloat

from fitkit.errors import InputError
from fitkit.names import upgrade_entries

KINDS = ("fit", "prediction", "drift")
_SAVE_HINT = "save one with 'fitkit fit SWEEP --json > fit.json' (or predict/drift --json)"


def read_saved(path) -> tuple[str, dict]:
    """(kind, data) of a saved result; kind is one of :data:`KINDS`. A prediction or
    drift saved by an earlier version comes back in today's names (a fit is translated
    by :meth:`fitkit.result.CircuitFit.from_dict`).

    Raises
    ------
    InputError
        When the file is missing, not JSON, or not a result fitkit saved.
    """
    try:
        with open(path, encoding="utf-8") as fh:
            data = json.load(fh)
    except FileNotFoundError:
        raise InputError("no such file", remedy="check the path", path=path) from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"not JSON ({exc})", remedy=_SAVE_HINT, path=path) from None
    if isinstance(data, dict):
        if "topology" in data and "values" in data:
            return "fit", data
        if "carriers" in data and "chain" in data:
            return "prediction", upgrade_entries(data)
        if "changes" in data:
            return "drift", upgrade_entries(data)
    raise InputError(
        "not a fit, prediction or drift result saved by fitkit", remedy=_SAVE_HINT, path=path
    )


def _uvalue(entry: dict):
    u = entry.get("u") or 0.0
    return ufloat(entry["value"], u) if u else entry["value"]


def prediction_from_dict(data: dict, source: str = "<json>"):
    """Rebuild a :class:`fitkit.predict.Prediction` from ``predict --json`` output.

    Raises
    ------
    InputError
        When an entry is missing or malformed.
    """
    from fitkit.chain import Chain
    from fitkit.predict import BandCover, Carrier, CarrierResult, LossLimit, Prediction

    try:
        chain_fields = {f.name for f in fields(Chain)}
        chain = Chain(**{k: v for k, v in data["chain"].items() if k in chain_fields})
        carriers = [
            CarrierResult(
                Carrier(c["freq_hz"], c["level_db"], c.get("label", "")),
                _uvalue(c["rejection_db"]),
            )
            for c in data["carriers"]
        ]
        band = None
        if data.get("band"):
            b = data["band"]
            band = BandCover(tuple(b["band_hz"]), tuple(_uvalue(c) for c in b["c_needed_f"]),
                             b["ratio_needed"], b["ratio_given"], b["covered"])  # fmt: skip
        limit = None
        if data.get("loss_limit"):
            lim = data["loss_limit"]
            limit = LossLimit(lim["required_db"], Carrier(lim["binding_freq_hz"]),
                              _uvalue(lim["r_max_ohm"]), _uvalue(lim["q_loaded_min"]))  # fmt: skip
        c_range = data.get("c_range_f")
        extremum = (data.get("extremum") or {}).get("freq_hz")
        return Prediction(
            values={n: _uvalue(e) for n, e in data["values"].items()},
            c_origin=data["c_origin"],
            chain=chain,
            wanted_hz=data["wanted_hz"],
            tune_hz=data["tune_hz"],
            q_loaded=_uvalue(data["Q_loaded"]),
            carriers=carriers,
            band=band,
            limit=limit,
            c_range_f=tuple(c_range) if c_range else None,
            extremum_hz=_uvalue(extremum) if extremum else None,
            notes=tuple(data.get("notes", ())),
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(
            f"not a saved fitkit prediction: missing or malformed entry {exc}",
            remedy="save one with 'fitkit predict ... --json > prediction.json'",
            path=source,
        ) from None

"""Instrument profiles: the commands of a generator and a digitiser, as TOML templates.

Instruments differ in how they spell a command, so fitkit keeps them in a small TOML file
the user edits. A profile has a ``name``, a ``[generator]`` and a ``[digitiser]`` table.
Each table holds connection settings (``timeout_ms``, ``read_termination``,
``write_termination``), a few numbers (the generator's ``source``, the digitiser's
``input_channel``, ``output_channel`` and ``ranges``) and command templates whose
placeholders in braces fitkit fills in: ``{frequency}`` (Hz), ``{amplitude}`` (volts
peak-to-peak), ``{source}``, ``{channel}``, ``{reference}`` (the input channel),
``{range}`` (full-scale peak volts), ``{duration}`` (seconds), ``{points}``.

A profile is checked when loaded: unknown tables or keys, a template missing a
placeholder it needs or holding one it cannot have, and missing required commands are
refused with the file and key named. The shipped ``scpi.toml`` uses only IEEE 488.2
common commands and the SCPI command tree.
"""

from __future__ import annotations

import string
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

from fitkit.errors import InputError
from fitkit.tomlfile import read_toml

#: command -> (placeholders it must hold, placeholders it may hold)
_GENERATOR_COMMANDS = {
    "identify": ((), ()),
    "reset": ((), ()),
    "wait": ((), ()),
    "error": ((), ()),
    "amplitude_unit": ((), ("source",)),
    "set_frequency": (("frequency",), ("source",)),
    "set_amplitude": (("amplitude",), ("source",)),
    "output_on": ((), ("source",)),
    "output_off": ((), ("source",)),
}
_DIGITISER_COMMANDS = {
    "identify": ((), ()),
    "reset": ((), ()),
    "wait": ((), ()),
    "error": ((), ()),
    "set_range": (("range",), ("channel",)),
    "set_duration": (("duration",), ()),
    "set_points": (("points",), ()),
    "capture": ((), ()),
    "fetch": ((), ("channel",)),
    "measure_amplitude": ((), ("channel",)),
    "measure_phase": ((), ("channel", "reference")),
}
#: commands a profile must give; the rest are used when present
_REQUIRED = {
    "generator": (
        "identify",
        "wait",
        "error",
        "set_frequency",
        "set_amplitude",
        "output_on",
        "output_off",
    ),
    "digitiser": ("identify", "wait", "error", "set_range"),
}
#: what each way of reading a point needs from the digitiser
MODE_COMMANDS = {
    "waveform": ("set_duration", "set_points", "capture", "fetch"),
    "scope": ("measure_amplitude", "measure_phase"),
}
_SETTINGS = {
    "generator": {
        "timeout_ms": int,
        "read_termination": str,
        "write_termination": str,
        "source": int,
    },
    "digitiser": {
        "timeout_ms": int,
        "read_termination": str,
        "write_termination": str,
        "input_channel": int,
        "output_channel": int,
        "ranges": list,
    },
}
_COMMANDS = {"generator": _GENERATOR_COMMANDS, "digitiser": _DIGITISER_COMMANDS}
_DEFAULTS = {
    "timeout_ms": 3000,
    "read_termination": "\n",
    "write_termination": "\n",
    "source": 1,
    "input_channel": 1,
    "output_channel": 2,
    "ranges": [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0],
}
_LAYOUT = "see 'Writing a profile' in docs/acquiring.md, or copy the shipped scpi.toml"


@dataclass(frozen=True)
class InstrumentProfile:
    """One instrument's settings and command templates, checked.

    Attributes
    ----------
    role : str
        ``"generator"`` or ``"digitiser"``.
    settings : dict
        Connection settings and numbers, defaults filled in.
    commands : dict
        Command name -> template.
    source : str
        The profile file, for messages.
    """

    role: str
    settings: dict
    commands: dict
    source: str

    def has(self, name: str) -> bool:
        """True when the profile gives this command."""
        return name in self.commands

    def command(self, name: str, **values) -> str:
        """The command ``name`` with its placeholders filled in.

        Numbers are written with up to 10 significant digits, in plain SI units.
        """
        if name not in self.commands:
            raise InputError(
                f"the {self.role} profile has no '{name}' command",
                remedy=f'add {name} = "..." to the [{self.role}] table',
                path=self.source,
            )
        filled = {**{k: self.settings.get(k) for k in ("source",)}, **values}
        text = {k: format(v, ".10g") if isinstance(v, float) else v for k, v in filled.items()}
        return self.commands[name].format(**text)


@dataclass(frozen=True)
class Profile:
    """A checked profile: its name and the two instruments' parts."""

    name: str
    generator: InstrumentProfile
    digitiser: InstrumentProfile
    source: str

    def require_mode(self, mode: str) -> None:
        """Refuse when the digitiser's part lacks a command the reading mode needs."""
        missing = [c for c in MODE_COMMANDS[mode] if not self.digitiser.has(c)]
        if missing:
            raise InputError(
                f"reading points by '{mode}' needs the digitiser command(s) " + ", ".join(missing),
                remedy="add them to the [digitiser] table, or choose the other --read mode",
                path=self.source,
            )


def shipped_profile_path() -> Path:
    """The profile that ships with fitkit (SCPI and IEEE 488.2 common commands)."""
    return Path(str(resources.files("fitkit.instruments") / "profiles" / "scpi.toml"))


def load_profile(path: str | Path | None = None) -> Profile:
    """Read and check an instrument profile (the shipped one when ``path`` is None).

    Raises
    ------
    InputError
        A missing or unreadable file, an unknown table or key, a setting of the wrong
        type, a required command left out, or a template whose placeholders are wrong;
        the message names the file and the key.
    """
    p = Path(path) if path is not None else shipped_profile_path()
    data = read_toml(p, what="instrument profile", option="--profile", layout=_LAYOUT)
    unknown = set(data) - {"name", "generator", "digitiser"}
    if unknown:
        raise InputError(
            f"unknown key(s) {', '.join(sorted(unknown))}",
            remedy="a profile holds name, [generator] and [digitiser]",
            path=p,
        )
    parts = {role: _check_part(role, data.get(role), p) for role in _COMMANDS}
    return Profile(str(data.get("name", p.stem)), parts["generator"], parts["digitiser"], str(p))


def _check_part(role: str, table, path: Path) -> InstrumentProfile:
    if not isinstance(table, dict):
        raise InputError(f"the profile has no [{role}] table", remedy=_LAYOUT, path=path)
    commands, settings = {}, {}
    allowed = _COMMANDS[role]
    for key, value in table.items():
        if key in _SETTINGS[role]:
            settings[key] = _check_setting(role, key, value, path)
        elif key in allowed:
            commands[key] = _check_template(role, key, value, allowed[key], path)
        else:
            raise InputError(
                f"unknown key '{key}' in [{role}]",
                remedy="known keys: " + ", ".join([*_SETTINGS[role], *allowed]),
                path=path,
            )
    missing = [c for c in _REQUIRED[role] if c not in commands]
    if missing:
        raise InputError(
            f"[{role}] lacks the command(s) {', '.join(missing)}",
            remedy=_LAYOUT,
            path=path,
        )
    for key in _SETTINGS[role]:
        settings.setdefault(key, _DEFAULTS[key])
    return InstrumentProfile(role, settings, commands, str(path))


def _check_setting(role: str, key: str, value, path: Path):
    kind = _SETTINGS[role][key]
    ok = isinstance(value, kind) and not isinstance(value, bool)
    if key == "ranges":
        ok = (
            ok
            and bool(value)
            and all(
                isinstance(v, (int, float)) and not isinstance(v, bool) and v > 0 for v in value
            )
        )
        ok = ok and list(value) == sorted(value)
    elif kind is int:
        ok = ok and value > 0
    if not ok:
        want = {
            "ranges": "a list of full-scale volts, smallest first, e.g. [0.1, 1.0, 10.0]",
            "timeout_ms": "a whole number of milliseconds above 0",
        }.get(key, "a whole number above 0" if kind is int else 'a text, e.g. "\\n"')
        raise InputError(
            f"[{role}] {key} = {value!r} is not {want}",
            remedy=f"write {key} as {want}",
            path=path,
        )
    return [float(v) for v in value] if key == "ranges" else value


def _check_template(role: str, key: str, value, spec: tuple, path: Path) -> str:
    need, may = spec
    if not isinstance(value, str) or not value.strip():
        raise InputError(f"[{role}] {key} must be a command text", remedy=_LAYOUT, path=path)
    try:
        found = {name for _, name, _, _ in string.Formatter().parse(value) if name is not None}
    except ValueError as exc:
        raise InputError(
            f"[{role}] {key}: cannot read the template {value!r} ({exc})",
            remedy="write placeholders as {name}; a literal brace as {{ or }}",
            path=path,
        ) from None
    missing = [n for n in need if n not in found]
    stray = sorted(found - set(need) - set(may))
    if missing or stray:
        said = []
        if missing:
            said.append("lacks " + ", ".join(f"{{{n}}}" for n in missing))
        if stray:
            said.append("holds unknown " + ", ".join(f"{{{n}}}" for n in stray))
        allowed = [*need, *may]
        raise InputError(
            f"[{role}] {key} = {value!r} " + " and ".join(said),
            remedy="its placeholders: " + (", ".join(f"{{{n}}}" for n in allowed) or "none"),
            path=path,
        )
    return value

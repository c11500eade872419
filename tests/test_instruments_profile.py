"""Instrument profiles: the shipped one loads, and every kind of mistake is named."""

from __future__ import annotations

import pytest

from fitkit.errors import InputError
from fitkit.instruments.profile import load_profile, shipped_profile_path


def _variant(tmp_path, old: str, new: str):
    text = shipped_profile_path().read_text(encoding="utf-8")
    assert old in text
    p = tmp_path / "bench.toml"
    p.write_text(text.replace(old, new, 1), encoding="utf-8")
    return p


def test_shipped_profile_uses_scpi_and_ieee488_common_commands():
    profile = load_profile()
    # IEEE Std 488.2 common commands and SCPI's error queue (SCPI-1999 vol. 2, SYSTem)
    assert profile.generator.command("identify") == "*IDN?"
    assert profile.generator.command("wait") == "*OPC?"
    assert profile.generator.command("error") == "SYSTem:ERRor?"
    assert profile.generator.command("set_frequency", frequency=455e3) == (
        "SOURce1:FREQuency 455000"
    )
    assert profile.digitiser.command("fetch", channel=2) == "TRACe:DATA? TRACE2"


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('reset = "*RST"', 'rest = "*RST"', "unknown key 'rest' in \\[generator\\]"),
        (
            'set_frequency = "SOURce{source}:FREQuency {frequency}"',
            'set_frequency = "SOURce{source}:FREQuency"',
            "set_frequency .* lacks \\{frequency\\}",
        ),
        (
            'set_range = "SENSe{channel}:VOLTage:RANGe {range}"',
            'set_range = "SENSe{chanel}:VOLTage:RANGe {range}"',
            "set_range .* holds unknown \\{chanel\\}",
        ),
        ('output_off = "OUTPut{source}:STATe OFF"', "", "lacks the command\\(s\\) output_off"),
        ("timeout_ms = 3000", 'timeout_ms = "slow"', "timeout_ms = 'slow' is not"),
        ("ranges = [0.01,", "ranges = [1.0, 0.01,", "ranges"),
        ("[digitiser]", "[scope]", "unknown key\\(s\\) scope"),
    ],
)
def test_profile_mistakes_are_named_with_file_and_key(tmp_path, old, new, message):
    path = _variant(tmp_path, old, new)
    with pytest.raises(InputError, match=message) as info:
        load_profile(path)
    assert info.value.path == str(path)
    assert info.value.remedy


def test_missing_profile_file_is_a_clear_error(tmp_path):
    with pytest.raises(InputError, match="no such instrument profile"):
        load_profile(tmp_path / "none.toml")


def test_a_reading_mode_needs_its_commands(tmp_path):
    path = _variant(tmp_path, 'fetch = "TRACe:DATA? TRACE{channel}"\n', "")
    profile = load_profile(path)
    profile.require_mode("scope")
    with pytest.raises(InputError, match="'waveform' needs the digitiser command\\(s\\) fetch"):
        profile.require_mode("waveform")

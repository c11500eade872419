"""Channel rasters against their published sources (named beside each check)."""

from __future__ import annotations

import pytest

from fitkit.errors import PredictionError
from fitkit.rasters import RASTERS, get_raster


def test_us_fm_channels_match_47_cfr_73_201():
    # 47 CFR 73.201 [read]: channel 201 = 88.1 MHz ... channel 300 = 107.9 MHz, 200 kHz apart
    fm = get_raster("fm-us")
    assert fm.channel_hz(201) == 88_100_000
    assert fm.channel_hz(300) == 107_900_000
    assert fm.channel_hz(202) - fm.channel_hz(201) == 200_000
    assert fm.count == 100
    with pytest.raises(PredictionError, match="not 100"):
        fm.channel_hz(301)


def test_region1_fm_band_is_87_5_to_108_mhz_on_100_khz():
    # ITU GE84, Region 1 FM band 87.5-108 MHz on a 100 kHz raster [from memory]
    fm = get_raster("fm-region1")
    assert fm.carrier_hz(0) == 87_500_000
    assert fm.carrier_hz(fm.count - 1) == 108_000_000
    assert fm.count == 206
    assert fm.on_raster(100.1e6)
    assert not fm.on_raster(100.15e6)


def test_ge75_medium_wave_is_9_khz_from_531_khz():
    # ITU GE75 plan, Regions 1 and 3 [read]: 531 to 1602 kHz in 9 kHz steps
    mw = get_raster("mw-9k")
    assert mw.carrier_hz(0) == 531_000
    assert mw.carrier_hz(1) == 540_000
    assert mw.carrier_hz(mw.count - 1) == 1_602_000
    assert mw.count == 120
    assert mw.neighbours_hz(531e3) == [540_000, 549_000]  # nothing below the band edge


def test_region2_am_is_10_khz_from_540_khz():
    # 47 CFR 73.14, US AM band 540-1700 kHz on 10 kHz [from memory]
    am = get_raster("mw-10k")
    assert am.carrier_hz(0) == 540_000
    assert am.carrier_hz(am.count - 1) == 1_700_000
    assert am.neighbours_hz(1000e3, spacings=(1,)) == [990_000, 1_010_000]


def test_every_raster_names_its_source_and_how_it_was_checked():
    for raster in RASTERS.values():
        assert raster.source and isinstance(raster.read, bool), raster.name
        assert "memory" not in raster.describe(), raster.name  # printed: the citation only
        assert (raster.last_hz - raster.first_hz) % raster.spacing_hz == 0, raster.name


def test_off_raster_wanted_carrier_and_unknown_name_are_refused():
    with pytest.raises(PredictionError, match="not on the mw-9k raster"):
        get_raster("mw-9k").neighbours_hz(1000e3)
    with pytest.raises(PredictionError, match="choose one of"):
        get_raster("lw")
    with pytest.raises(PredictionError, match="does not number"):
        get_raster("mw-9k").channel_hz(1)

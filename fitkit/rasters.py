"""Channel rasters of the broadcast trade, each with the published source it comes from.

A raster is a first and last carrier and a fixed spacing; the carriers are
``first + k * spacing``. Frequencies are kept in whole hertz so that channel 300 of the
US FM band is exactly 107.9 MHz, not a float sum of 99 steps. Each source is marked
``read`` (read when this list was made) or not (recalled from memory; check before
relying on it); the mark is for the code and docs, the printed source is the citation.
"""

from __future__ import annotations

from dataclasses import dataclass

from fitkit.errors import PredictionError
from fitkit.units import format_quantity


@dataclass(frozen=True)
class Raster:
    """Carriers on a fixed spacing.

    Attributes
    ----------
    name : str
        Short name used on the command line.
    first_hz, last_hz, spacing_hz : int
        The lowest and highest carrier and the channel spacing, in whole hertz.
    source : str
        The published source, as printed.
    read : bool
        The source was read when this list was made (else recalled: check it).
    first_channel : int or None
        The number the source gives the first carrier, where it numbers channels.
    """

    name: str
    first_hz: int
    last_hz: int
    spacing_hz: int
    source: str
    read: bool
    first_channel: int | None = None

    @property
    def count(self) -> int:
        """How many carriers the raster holds."""
        return (self.last_hz - self.first_hz) // self.spacing_hz + 1

    def carrier_hz(self, index: int) -> int:
        """The carrier ``index`` steps above the first (0 is the first carrier)."""
        if not 0 <= index < self.count:
            raise PredictionError(
                f"{self.name} has carriers 0 to {self.count - 1}, not {index}",
                remedy="choose a carrier inside the band",
            )
        return self.first_hz + index * self.spacing_hz

    def channel_hz(self, channel: int) -> int:
        """The carrier of a numbered channel, for rasters whose source numbers them."""
        if self.first_channel is None:
            raise PredictionError(
                f"{self.name} ({self.source}) does not number its channels",
                remedy="give the carrier frequency instead",
            )
        return self.carrier_hz(channel - self.first_channel)

    def on_raster(self, freq_hz: float) -> bool:
        """True when ``freq_hz`` is one of the raster's carriers (to 1 Hz)."""
        steps = (freq_hz - self.first_hz) / self.spacing_hz
        return (
            self.first_hz - 1 <= freq_hz <= self.last_hz + 1
            and abs(steps - round(steps)) * self.spacing_hz < 1.0
        )

    def neighbours_hz(self, wanted_hz: float, spacings: tuple = (1, 2)) -> list[int]:
        """Carriers at the given numbers of spacings either side of the wanted one.

        Raises
        ------
        PredictionError
            When the wanted carrier is not on the raster.

        Examples
        --------
        >>> RASTERS["mw-9k"].neighbours_hz(999e3)
        [981000, 990000, 1008000, 1017000]
        """
        if not self.on_raster(wanted_hz):
            raise PredictionError(
                f"the wanted carrier {format_quantity(wanted_hz, 'Hz')} is not on the "
                f"{self.name} raster ({self.describe()})",
                remedy="choose a wanted carrier on the raster, or list the neighbours as carriers",
            )
        centre = self.first_hz + round((wanted_hz - self.first_hz) / self.spacing_hz) * (
            self.spacing_hz
        )
        out = {centre + sign * n * self.spacing_hz for n in spacings for sign in (-1, 1)}
        return sorted(f for f in out if self.first_hz <= f <= self.last_hz)

    def describe(self) -> str:
        """One line: band, spacing and source."""
        return (
            f"{format_quantity(self.first_hz, 'Hz')} to {format_quantity(self.last_hz, 'Hz')} "
            f"every {format_quantity(self.spacing_hz, 'Hz')}; {self.source}"
        )


RASTERS = {
    r.name: r
    for r in (
        # 47 CFR 73.201: FM channels 201 to 300 are 88.1 to 107.9 MHz, 200 kHz apart [read]
        Raster(
            "fm-us",
            88_100_000,
            107_900_000,
            200_000,
            "47 CFR 73.201 (US FM channels 201-300)",
            True,
            first_channel=201,
        ),
        # ITU Region 1 FM band 87.5 to 108 MHz on a 100 kHz raster, GE84 [from memory]
        Raster(
            "fm-region1",
            87_500_000,
            108_000_000,
            100_000,
            "ITU Geneva 1984 plan (GE84), Region 1 FM",
            False,
        ),
        # GE75 (ITU Regions 1 and 3): medium wave 531 to 1602 kHz on 9 kHz [read]
        Raster(
            "mw-9k",
            531_000,
            1_602_000,
            9_000,
            "ITU Geneva 1975 plan (GE75), Regions 1 and 3 medium wave",
            True,
        ),
        # Region 2 (US) AM 540 to 1700 kHz on 10 kHz, 47 CFR 73.14 [from memory]
        Raster(
            "mw-10k",
            540_000,
            1_700_000,
            10_000,
            "47 CFR 73.14, US AM band (ITU Region 2)",
            False,
        ),
    )
}


def get_raster(name: str) -> Raster:
    """The raster called ``name``.

    Raises
    ------
    PredictionError
        For an unknown name; the message lists the known ones.
    """
    try:
        return RASTERS[name]
    except KeyError:
        raise PredictionError(
            f"no channel raster called {name!r}",
            remedy=f"choose one of: {', '.join(RASTERS)}",
        ) from None

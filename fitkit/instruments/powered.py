"""The generator and digitiser connected, set up, and the output on only inside a block.

:func:`powered` is the one way fitkit switches a generator's output on: it refuses an
amplitude above the ceiling before connecting, connects both instruments (``with``
blocks), asks who they are, resets them where the profile says how, sets the amplitude,
reads both error queues, puts the digitiser on its largest ranges and switches the
output on; on leaving the block, normally, on Ctrl-C or on any error, the output goes
off. If the connection is gone it is opened again to switch the output off, and if even
that fails the error says to switch it off by hand.
"""

from __future__ import annotations

import contextlib
import sys

from fitkit.errors import SetupError
from fitkit.instruments.profile import Profile
from fitkit.instruments.reading import PointReader, ReadSettings
from fitkit.instruments.transport import InstrumentError, connect, resource_manager

#: the default ceiling of the generator amplitude, volts peak-to-peak
DEFAULT_CEILING_VPP = 5.0


def check_amplitude(amplitude_vpp: float, ceiling_vpp: float = DEFAULT_CEILING_VPP) -> None:
    """Refuse an amplitude above the ceiling (or not above zero).

    Raises
    ------
    SetupError
        With the remedy: lower the amplitude.
    """
    if not (0 < amplitude_vpp <= ceiling_vpp):
        raise SetupError(
            f"the generator amplitude {amplitude_vpp:g} Vpp is above the ceiling "
            f"of {ceiling_vpp:g} Vpp (or not above zero)",
            remedy="lower --amplitude; raise --max-amplitude only if the circuit and "
            "everyone near it are safe at that level",
        )


@contextlib.contextmanager
def powered(
    profile: Profile,
    addresses: dict,
    amplitude_vpp: float,
    *,
    ceiling_vpp: float = DEFAULT_CEILING_VPP,
    settings: ReadSettings | None = None,
):
    """Yield a :class:`PointReader` with the generator's output on; off on leaving.

    Parameters
    ----------
    profile : Profile
        The instruments' commands.
    addresses : dict
        VISA addresses, ``{"generator": ..., "digitiser": ...}``.
    amplitude_vpp : float
        Generator amplitude, volts peak-to-peak as set on its display.
    ceiling_vpp : float
        The largest amplitude allowed.
    settings : ReadSettings, optional
        How each point is read.

    Raises
    ------
    SetupError
        An amplitude above the ceiling (nothing is connected then).
    InstrumentError
        An instrument that cannot be reached, answers wrongly or reports an error.
    """
    check_amplitude(amplitude_vpp, ceiling_vpp)
    manager = resource_manager()
    try:
        with (
            connect(manager, addresses["generator"], profile.generator) as gen,
            connect(manager, addresses["digitiser"], profile.digitiser) as dig,
        ):
            for inst in (gen, dig):
                inst.identify()
                if inst.profile.has("reset"):
                    inst.send("reset")
                inst.wait()
                inst.check_errors("the reset")
            if gen.profile.has("amplitude_unit"):
                gen.send("amplitude_unit")
            gen.send("set_amplitude", amplitude=float(amplitude_vpp))
            reader = PointReader(gen, dig, settings or ReadSettings())
            reader.prepare()
            gen.check_errors("setting the amplitude")
            dig.check_errors("setting the ranges")
            try:
                gen.send("output_on")
                yield reader
            finally:
                _switch_off(manager, gen, addresses["generator"], profile)
    finally:
        manager.close()


def _switch_off(manager, gen, address: str, profile: Profile) -> None:
    """Switch the generator output off; reconnect once if the connection is gone."""
    stopped = sys.exc_info()[1]  # called from a finally: the error that stopped the sweep
    try:
        gen.send("output_off")
        gen.wait()  # the instrument has taken the command, not only the cable
        return
    except InstrumentError:
        pass
    try:
        with connect(manager, address, profile.generator) as again:
            again.send("output_off")
            again.wait()
    except InstrumentError:
        why = getattr(stopped, "message", type(stopped).__name__)
        why = f" (the sweep had stopped: {why})" if stopped else ""
        raise InstrumentError(
            "could not switch the generator output off" + why,
            remedy="SWITCH THE GENERATOR OUTPUT OFF BY HAND, then check the connection",
            path=address,
        ) from None

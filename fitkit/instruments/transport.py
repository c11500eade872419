"""Talking to one instrument through pyvisa with the pure-Python pyvisa-py backend.

An :class:`Instrument` wraps an open pyvisa resource: explicit timeout and termination
characters from the profile, every query's reply checked (not empty, a number where a
number is wanted), the instrument's error queue read with its ``error`` command, and
every pyvisa failure (timeout, lost connection) turned into an :class:`InstrumentError`
that names the instrument, the command and what to check. Resources are opened in a
``with`` block (:func:`connect`), so they are closed on any exit.
"""

from __future__ import annotations

import contextlib
import re

from fitkit.errors import FitkitError
from fitkit.instruments.profile import InstrumentProfile

_ERROR_REPLY = re.compile(r"\s*([-+]?\d+)\s*(?:,\s*\"?(.*?)\"?)?\s*$")


class InstrumentError(FitkitError):
    """An instrument that did not answer, answered wrongly, or reported an error."""


class Instrument:
    """One connected instrument: commands from its profile, replies checked.

    Parameters
    ----------
    resource : pyvisa resource
        The open resource.
    profile : InstrumentProfile
        Its part of the instrument profile.
    address : str
        The VISA resource address, for messages.
    """

    def __init__(self, resource, profile: InstrumentProfile, address: str) -> None:
        self.resource = resource
        self.profile = profile
        self.address = address
        self.identity = ""

    @property
    def role(self) -> str:
        return self.profile.role

    def send(self, name: str, **values) -> None:
        """Write the profile's command ``name`` with its placeholders filled in."""
        text = self.profile.command(name, **values)
        self._guard(text, lambda: self.resource.write(text))

    def ask(self, name: str, **values) -> str:
        """Query the profile's command ``name``; the reply, checked to be not empty."""
        text = self.profile.command(name, **values)
        reply = self._guard(text, lambda: self.resource.query(text)).strip()
        if not reply:
            raise InstrumentError(
                f"the {self.role} gave an empty reply to {text!r}",
                remedy="check the command in the profile and the termination characters",
                path=self.address,
            )
        return reply

    def ask_number(self, name: str, **values) -> float:
        """Query and read the reply as one number."""
        reply = self.ask(name, **values)
        try:
            return float(reply.split(",")[0])
        except ValueError:
            raise InstrumentError(
                f"the {self.role} replied {reply[:60]!r} to {name}, not a number",
                remedy="check the command in the profile",
                path=self.address,
            ) from None

    def ask_numbers(self, name: str, **values) -> list:
        """Query and read the reply as comma-separated numbers."""
        reply = self.ask(name, **values)
        try:
            return [float(x) for x in reply.split(",")]
        except ValueError:
            raise InstrumentError(
                f"the {self.role} replied with text that is not comma-separated numbers "
                f"to {name} ({reply[:60]!r}...)",
                remedy="set the instrument to send ASCII numbers, or fix the fetch command",
                path=self.address,
            ) from None

    def wait(self) -> None:
        """Wait for pending operations (``*OPC?`` answers 1 when they are done)."""
        reply = self.ask("wait")
        if reply.strip().lstrip("+") not in ("1", "1.0"):
            raise InstrumentError(
                f"the {self.role} answered {reply!r} to the operation-complete query",
                remedy="check the 'wait' command of the profile (it should answer 1)",
                path=self.address,
            )

    def identify(self) -> str:
        """Ask the instrument who it is; remembered for the sweep file."""
        self.identity = self.ask("identify")
        return self.identity

    def check_errors(self, after: str) -> None:
        """Read the error queue; refuse to go on when it holds an error.

        Parameters
        ----------
        after : str
            What was just done, for the message.
        """
        reply = self.ask("error")
        m = _ERROR_REPLY.match(reply)
        if not m:
            raise InstrumentError(
                f"cannot read the {self.role}'s error reply {reply!r}",
                remedy="the 'error' command should answer like 0,\"No error\"",
                path=self.address,
            )
        if int(m.group(1)) != 0:
            raise InstrumentError(
                f"the {self.role} reported error {m.group(1)} ({m.group(2) or 'no text'}) "
                f"after {after}",
                remedy="check the instrument's settings and the profile's commands",
                path=self.address,
            )

    def _guard(self, text: str, action):
        import pyvisa

        try:
            return action()
        except pyvisa.errors.VisaIOError as exc:
            timed_out = exc.error_code == pyvisa.constants.StatusCode.error_timeout
            if timed_out and not self._peer_closed():
                raise InstrumentError(
                    f"the {self.role} did not answer {text!r} within {self.resource.timeout:g} ms",
                    remedy="check the cable and the address; raise timeout_ms in the profile "
                    "if the instrument is slow",
                    path=self.address,
                ) from None
            raise InstrumentError(
                f"lost the connection to the {self.role} at {text!r}",
                remedy="check the cable, the network and that the instrument is on",
                path=self.address,
            ) from None
        except ConnectionRefusedError:
            raise InstrumentError(
                f"nothing answers at this address (connection refused at {text!r})",
                remedy="check the address and port, and that the instrument is on and its "
                "remote interface enabled",
                path=self.address,
            ) from None
        except (OSError, EOFError) as exc:
            raise InstrumentError(
                f"lost the connection to the {self.role} at {text!r} ({exc})",
                remedy="check the cable, the network and that the instrument is on",
                path=self.address,
            ) from None

    def _peer_closed(self) -> bool:
        """True when a socket connection was closed by the other end.

        pyvisa-py reports a closed raw socket as a timeout; a peek that reads end of
        stream at once tells the two apart. Any other transport: False.
        """
        import socket

        try:
            sock = self.resource.visalib.sessions[self.resource.session].interface
            if not isinstance(sock, socket.socket):
                return False
            return sock.recv(1, socket.MSG_PEEK | socket.MSG_DONTWAIT) == b""
        except (AttributeError, KeyError, OSError):
            return False


def resource_manager():
    """A pyvisa resource manager on the pyvisa-py backend (no vendor library needed)."""
    try:
        import pyvisa
    except ImportError:
        raise InstrumentError(
            "taking a sweep needs the pyvisa and pyvisa-py packages",
            remedy="pip install 'fitkit[instruments]'",
        ) from None
    return pyvisa.ResourceManager("@py")


@contextlib.contextmanager
def connect(manager, address: str, profile: InstrumentProfile):
    """Open ``address`` with the profile's timeout and terminations, closed on exit.

    Raises
    ------
    InstrumentError
        The address cannot be opened.
    """
    import pyvisa

    settings = profile.settings
    try:
        resource = manager.open_resource(
            address,
            timeout=settings["timeout_ms"],
            read_termination=settings["read_termination"],
            write_termination=settings["write_termination"],
        )
    except (pyvisa.errors.VisaIOError, OSError, ValueError) as exc:
        raise InstrumentError(
            f"cannot open the {profile.role} at this address ({exc})",
            remedy="check the address (e.g. TCPIP::192.168.1.20::5025::SOCKET) and that "
            "the instrument is on and reachable",
            path=address,
        ) from None
    try:
        yield Instrument(resource, profile, address)
    finally:
        with contextlib.suppress(Exception):
            resource.close()

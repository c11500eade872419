"""A simulated bench on the loopback interface: a generator and a two-channel digitiser.

Each instrument is a small TCP server (``socketserver``) on 127.0.0.1 and an ephemeral
port, never any other address, speaking line-terminated SCPI as the shipped profile
writes it (``*IDN?``, ``*RST``, ``*OPC?``, ``SYSTem:ERRor?``, ``SOURce:FREQuency``,
``SOURce:VOLTage``, ``OUTPut:STATe``, ``SENSe:VOLTage:RANGe``, ``SENSe:SWEep:TIME``,
``SENSe:SWEep:POINts``, ``INITiate``, ``TRACe:DATA?``, ``MEASure:VOLTage:AC?``,
``MEASure:PHASe?``; long or short mnemonics, any case). Commands it does not know go to
its error queue as SCPI error -113, values out of range as -222, as a real instrument
does. pyvisa reaches it at ``TCPIP::127.0.0.1::PORT::SOCKET``.

For tests of the failure paths an instrument can be told to fail after a number of
commands: close the connection once (``"drop"``), stop answering for good
(``"silent"``), put an
error in its queue (``"error"``) or overload its inputs (``"overload"``: a transient far
above every range, so every record clips).
"""

from __future__ import annotations

import math
import re
import socket
import socketserver
import threading
from dataclasses import dataclass, field

import numpy as np

from fitkit.instruments.bench_model import BenchModel

LOOPBACK = "127.0.0.1"
_MAX_POINTS = 200_000
_MAX_VPP = 20.0
_MEASURE_PERIODS = 10
_MEASURE_POINTS = 1000
_IDENTITY = {
    "generator": "fitkit,simulated generator,0,1",
    "digitiser": "fitkit,simulated digitiser,0,1",
}


def _pattern(spec: str) -> re.Pattern:
    """``"[SOURce#]:FREQuency"`` -> a regex for the long or short form.

    ``#`` marks an optional numeric suffix, brackets a node that may be left out (SCPI's
    default nodes, e.g. ``FREQ`` for ``SOURce1:FREQuency``).
    """
    words = spec.split(":")
    pieces = []
    for i, word in enumerate(words):
        optional = word.startswith("[")
        word = word.strip("[]")
        suffix = word.endswith("#")
        word = word.rstrip("#")
        short = "".join(c for c in word if c.isupper() or not c.isalpha())
        rest = word[len(short) :].upper()
        part = re.escape(short) + (f"(?:{re.escape(rest)})?" if rest else "")
        part += r"(\d*)" if suffix else ""
        if optional:
            pieces.append(f"(?:{part}:)?")
        else:
            pieces.append(part + (":" if i < len(words) - 1 else ""))
    return re.compile(":?" + "".join(pieces) + r"(\?)?(?:\s+(.*))?$", re.IGNORECASE)


@dataclass
class _State:
    """What both instruments share: the generator's settings and the circuit."""

    model: BenchModel
    freq_hz: float = 1e3
    vpp: float = 0.1
    output_on: bool = False
    ranges: dict = field(default_factory=lambda: {1: 1.0, 2: 1.0})
    duration_s: float = 1e-3
    points: int = 1000
    records: dict = field(default_factory=dict)
    overload: bool = False
    lock: threading.Lock = field(default_factory=threading.Lock)


class _Instrument:
    """One simulated instrument: its commands, its error queue, its injected fault."""

    def __init__(self, role: str, state: _State, fault: tuple | None) -> None:
        self.role = role
        self.state = state
        self.errors: list = []
        self.count = 0
        self.fault = fault  # (kind, after how many commands)
        table = _GENERATOR if role == "generator" else _DIGITISER
        self.table = [(_pattern(spec), name) for spec, name in table]

    def handle(self, line: str):
        """The reply to one command line (None for no reply), or a fault's action."""
        self.count += 1
        if self.fault and self.count > self.fault[1]:
            if self.fault[0] == "drop":  # once: a connection made again works
                self.fault = None
                return "drop"
            if self.fault[0] == "silent":  # for good: the instrument has hung
                return "silent"
            if self.fault[0] == "overload":
                self.state.overload = True
            else:
                self.errors.append('-222,"Data out of range"')
            self.fault = None
        for pattern, name in self.table:
            m = pattern.match(line.strip())
            if m:
                suffix, query, arg = m.group(1) if m.re.groups == 3 else None, *m.groups()[-2:]
                with self.state.lock:
                    try:
                        return getattr(self, name)(suffix, bool(query), (arg or "").strip())
                    except ValueError:
                        self.errors.append('-222,"Data out of range"')
                        return None
        self.errors.append('-113,"Undefined header"')
        return "0" if line.strip().endswith("?") else None

    # IEEE 488.2 common commands and SCPI's error queue
    def idn(self, suffix, query, arg):
        return _IDENTITY[self.role]

    def rst(self, suffix, query, arg):
        if self.role == "generator":
            self.state.output_on = False
            self.state.vpp = 0.1
        return None

    def opc(self, suffix, query, arg):
        return "1" if query else None

    def cls(self, suffix, query, arg):
        self.errors.clear()

    def err(self, suffix, query, arg):
        return self.errors.pop(0) if self.errors else '0,"No error"'

    # generator
    def freq(self, suffix, query, arg):
        if query:
            return f"{self.state.freq_hz:.10g}"
        value = float(arg)
        if not 1e-3 <= value <= 1e9:
            raise ValueError(value)
        self.state.freq_hz = value

    def volt(self, suffix, query, arg):
        if query:
            return f"{self.state.vpp:.10g}"
        value = float(arg)
        if not 0 < value <= _MAX_VPP:
            raise ValueError(value)
        self.state.vpp = value

    def unit(self, suffix, query, arg):
        if query:
            return "VPP"
        if arg.upper() != "VPP":
            raise ValueError(arg)

    def outp(self, suffix, query, arg):
        if query:
            return "1" if self.state.output_on else "0"
        if arg.upper() not in ("ON", "OFF", "1", "0"):
            raise ValueError(arg)
        self.state.output_on = arg.upper() in ("ON", "1")

    # digitiser
    def range_(self, suffix, query, arg):
        channel = int(suffix or 1)
        if channel not in self.state.ranges:
            raise ValueError(channel)
        if query:
            return f"{self.state.ranges[channel]:.10g}"
        value = float(arg)
        if not 1e-3 <= value <= 100:
            raise ValueError(value)
        self.state.ranges[channel] = value

    def time_(self, suffix, query, arg):
        if query:
            return f"{self.state.duration_s:.10g}"
        value = float(arg)
        if not 0 < value <= 10:
            raise ValueError(value)
        self.state.duration_s = value

    def points(self, suffix, query, arg):
        if query:
            return str(self.state.points)
        value = int(float(arg))
        if not 16 <= value <= _MAX_POINTS:
            raise ValueError(value)
        self.state.points = value

    def init(self, suffix, query, arg):
        s = self.state
        s.records = self._capture(s.duration_s, s.points)

    def _capture(self, duration_s: float, points: int) -> dict:
        s = self.state
        emf = s.vpp if s.output_on else 0.0  # a matched display: EMF peak = set Vpp
        emf *= 1e4 if s.overload else 1.0
        records = s.model.capture(s.freq_hz, emf, duration_s, points, (s.ranges[1], s.ranges[2]))
        return {1: records[0], 2: records[1]}

    def trace(self, suffix, query, arg):
        m = re.fullmatch(r"(?:TRACE)?(\d)", arg.upper())
        if not m or int(m.group(1)) not in self.state.records:
            raise ValueError(arg)
        return ",".join(f"{v:.6g}" for v in self.state.records[int(m.group(1))])

    def meas_ac(self, suffix, query, arg):
        y = self._measured()[int(suffix or 1)]
        return f"{float(np.sqrt(np.mean((y - y.mean()) ** 2))):.6g}"

    def meas_phase(self, suffix, query, arg):
        channel, reference = int(suffix or 2), int(arg or 1)
        records = self._measured()
        if channel not in records or reference not in records:
            raise ValueError((channel, reference))
        a, b = (self._correlate(records[c]) for c in (channel, reference))
        return f"{math.degrees(float(np.angle(a / b))):.6g}"

    def _measured(self) -> dict:
        # a scope measures continuously, on a timebase of its own showing a few periods
        return self._capture(_MEASURE_PERIODS / self.state.freq_hz, _MEASURE_POINTS)

    def _correlate(self, y: np.ndarray) -> complex:
        t = np.arange(y.size) * (_MEASURE_PERIODS / self.state.freq_hz / y.size)
        return complex(np.sum(y * np.exp(-2j * math.pi * self.state.freq_hz * t)))


_COMMON = [
    ("*IDN", "idn"),
    ("*RST", "rst"),
    ("*OPC", "opc"),
    ("*CLS", "cls"),
    ("SYSTem:ERRor:NEXT", "err"),
    ("SYSTem:ERRor", "err"),
]
_GENERATOR = _COMMON + [
    ("[SOURce#]:FREQuency", "freq"),
    ("[SOURce#]:VOLTage:UNIT", "unit"),
    ("[SOURce#]:VOLTage", "volt"),
    ("OUTPut#:STATe", "outp"),
    ("OUTPut#", "outp"),
]
_DIGITISER = _COMMON + [
    ("[SENSe#]:VOLTage:RANGe", "range_"),
    ("[SENSe]:SWEep:TIME", "time_"),
    ("[SENSe]:SWEep:POINts", "points"),
    ("INITiate", "init"),
    ("TRACe:DATA", "trace"),
    ("MEASure#:VOLTage:AC", "meas_ac"),
    ("MEASure#:PHASe", "meas_phase"),
]


class _Handler(socketserver.StreamRequestHandler):
    def handle(self) -> None:
        instrument = self.server.instrument
        quick = getattr(socket, "TCP_QUICKACK", None)
        for raw in self.rfile:
            if quick is not None:
                # acknowledge at once: a client's next small command would otherwise
                # wait out the delayed acknowledgement (Nagle's algorithm, RFC 896)
                self.request.setsockopt(socket.IPPROTO_TCP, quick, 1)
            line = raw.decode("ascii", errors="replace").strip()
            if not line:
                continue
            reply = instrument.handle(line)
            if reply == "drop":
                return
            if reply == "silent":
                continue
            if reply is not None:
                self.wfile.write((reply + "\n").encode("ascii"))


class _Server(socketserver.ThreadingTCPServer):
    daemon_threads = True
    allow_reuse_address = True

    def __init__(self, instrument: _Instrument) -> None:
        super().__init__((LOOPBACK, 0), _Handler)
        self.instrument = instrument


class SimulatedBench:
    """A generator and a digitiser on loopback ports, in front of a :class:`BenchModel`.

    Use it as a context manager; the servers run in background threads until it closes.

    Parameters
    ----------
    model : BenchModel
        The circuit and the bench's imperfections.
    faults : dict, optional
        ``{"digitiser": ("drop", 40)}``: after 40 commands that instrument closes the
        connection (``"drop"``), stops answering (``"silent"``) or queues an error
        (``"error"``).

    Examples
    --------
    >>> with SimulatedBench(BenchModel()) as bench:  # doctest: +SKIP
    ...     print(bench.addresses["generator"])
    TCPIP::127.0.0.1::40123::SOCKET
    """

    def __init__(self, model: BenchModel, faults: dict | None = None) -> None:
        self.state = _State(model)
        faults = faults or {}
        self.instruments = {r: _Instrument(r, self.state, faults.get(r)) for r in _IDENTITY}
        self.servers = {r: _Server(i) for r, i in self.instruments.items()}
        self.threads: list = []

    @property
    def addresses(self) -> dict:
        """VISA resource addresses of the two instruments."""
        return {
            r: f"TCPIP::{LOOPBACK}::{s.server_address[1]}::SOCKET" for r, s in self.servers.items()
        }

    @property
    def output_on(self) -> bool:
        """Whether the generator's output is on."""
        return self.state.output_on

    def start(self) -> SimulatedBench:
        for server in self.servers.values():
            thread = threading.Thread(target=server.serve_forever, args=(0.05,), daemon=True)
            thread.start()
            self.threads.append(thread)
        return self

    def close(self) -> None:
        for server in self.servers.values():
            server.shutdown()
            server.server_close()

    def __enter__(self) -> SimulatedBench:
        return self.start()

    def __exit__(self, *exc) -> None:
        self.close()

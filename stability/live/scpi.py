"""Talk to a counter with SCPI: over a raw TCP socket, or through VISA where it is installed.

SCPI [1]_ instruments on a network listen on a raw TCP port (5025 by common
practice) for commands ending with a newline and answer queries (commands
ending with ``?``) with one line. :class:`SocketLink` speaks exactly that, to
the one address and port it is given, with a timeout on every connect, send and
receive, and a bound on the length of an answer. :class:`VisaLink` does the
same through pyvisa [2]_ with the pure-Python pyvisa-py backend (the optional
``instruments`` extra), for instruments reached by a VISA resource name.

No instrument model is known here: what to send comes from the capture's
settings (:class:`CaptureSettings`, from options or a small TOML file), and
every command is checked to be one line of printable text before it is sent.

References
----------
.. [1] SCPI Consortium, *Standard Commands for Programmable Instruments*, 1999,
   vol. 1, sections 4 and 6 (program messages end with a newline; ``*IDN?``);
   IEEE Std 488.2-1992, section 10.14 (``*IDN?``).
.. [2] pyvisa documentation, "Communicating with your instrument" (``query``,
   ``write``, ``timeout`` in milliseconds, ``read_termination``).
"""

from __future__ import annotations

import math
import os
import re
import socket
import tomllib
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, Protocol

from ..errors import InputError
from ..units import parse_duration

__all__ = [
    "LinkLost",
    "Link",
    "SocketLink",
    "VisaLink",
    "CaptureSettings",
    "check_command",
    "check_host",
    "load_capture_settings",
    "IDENTIFY",
    "MAX_ANSWER",
]

#: The identification query of IEEE 488.2 (answered by every SCPI instrument).
IDENTIFY = "*IDN?"
#: Longest answer accepted (bytes); a reading or an identity is far shorter.
MAX_ANSWER = 4096
#: Longest command accepted (characters).
MAX_COMMAND = 200
_HOST = re.compile(r"^(?:[A-Za-z0-9](?:[A-Za-z0-9-]{0,61}[A-Za-z0-9])?\.?)+$|^[0-9a-fA-F:.]+$")


class LinkLost(Exception):
    """The connection to the instrument failed or timed out (the capture retries)."""


class Link(Protocol):
    """What the capture needs of a connection to an instrument."""

    where: str

    def connect(self) -> None: ...
    def write(self, command: str) -> None: ...
    def query(self, command: str) -> str: ...
    def close(self) -> None: ...


def check_command(text: Any, what: str = "command") -> str:
    """One SCPI command: one line of printable ASCII text, not empty, at most 200 characters."""
    if not isinstance(text, str):
        raise InputError(f"the {what} must be text, got {text!r}")
    command = text.strip()
    if not command:
        raise InputError(f"the {what} is empty", hint="give an SCPI command such as READ?")
    if len(command) > MAX_COMMAND:
        raise InputError(f"the {what} is longer than {MAX_COMMAND} characters: {command[:40]!r}...")
    bad = [ch for ch in command if not (" " <= ch <= "~")]
    if bad:
        kind = "more than one line" if any(ch in "\r\n" for ch in bad) else "control characters"
        raise InputError(
            f"the {what} {command!r} holds {kind}",
            hint="give one command per line, printable text only",
        )
    return command


def check_host(host: Any) -> str:
    """An instrument's host name or IP address (no scheme, port, path or spaces)."""
    text = str(host).strip() if host is not None else ""
    if not text or len(text) > 253 or not _HOST.match(text):
        raise InputError(
            f"the instrument address must be a host name or an IP address, got {host!r}",
            hint="for example --address 192.168.1.50 --port 5025",
        )
    return text


def _check_port(port: Any) -> int:
    try:
        value = int(port) if not isinstance(port, bool) else -1
    except (TypeError, ValueError):
        value = -1
    if not (1 <= value <= 65535) or str(port).strip() != str(value):
        raise InputError(f"the port must be a number from 1 to 65535, got {port!r}")
    return value


def _seconds(value: Any, what: str, low: float, high: float) -> float:
    s = parse_duration(value, what)
    if not (low <= s <= high):
        raise InputError(
            f"{what} must be from {low:g} s to {high:g} s, got {value!r}",
            hint=f"pass {what} 1s, for example",
        )
    return s


# ---------------------------------------------------------------------------- settings
@dataclass(frozen=True)
class CaptureSettings:
    """What to talk to, what to send and how often (every value checked).

    Attributes
    ----------
    address, port
        The instrument's host and raw SCPI port (None with ``visa``).
    visa
        A VISA resource name instead of address and port, or None.
    setup
        Commands sent after each connection, in order (queries among them are
        answered and the answers written into the preamble).
    query
        The query that returns one reading.
    interval
        Seconds between readings.
    timeout
        Seconds allowed for a connection, a command and an answer.
    retry_max
        Longest wait between attempts to reconnect (the wait doubles from 1 s).
    """

    query: str
    address: str | None = None
    port: int | None = None
    visa: str | None = None
    setup: tuple[str, ...] = ()
    interval: float = 1.0
    timeout: float = 5.0
    retry_max: float = 60.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "query", check_command(self.query, "reading query"))
        if not self.query.endswith("?"):
            raise InputError(
                f"the reading query {self.query!r} is not a query (an SCPI query ends with ?)",
                hint="give the query that returns one reading, such as READ?",
            )
        setup = tuple(check_command(c, "setup command") for c in self.setup)
        object.__setattr__(self, "setup", setup)
        if self.visa is not None:
            if self.address is not None or self.port is not None:
                raise InputError(
                    "give either a VISA resource or an address and port, not both",
                    hint="drop --visa, or drop --address and --port",
                )
            object.__setattr__(self, "visa", check_command(self.visa, "VISA resource"))
        else:
            if self.address is None or self.port is None:
                raise InputError(
                    "no instrument: give --address and --port (or a VISA resource)",
                    hint="for example --address 192.168.1.50 --port 5025",
                )
            object.__setattr__(self, "address", check_host(self.address))
            object.__setattr__(self, "port", _check_port(self.port))
        for name, low, high in (
            ("interval", 1e-3, 86400.0),
            ("timeout", 1e-3, 600.0),
            ("retry_max", 1e-3, 3600.0),
        ):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and math.isfinite(value)):
                raise InputError(f"{name} must be a number of seconds, got {value!r}")
            if not (low <= float(value) <= high):
                raise InputError(f"{name} must be from {low:g} s to {high:g} s, got {value!r}")

    @property
    def where(self) -> str:
        """The instrument as the log names it."""
        return f"VISA {self.visa}" if self.visa else f"{self.address}:{self.port} (raw SCPI socket)"

    def link(self) -> Link:
        """A (not yet connected) link to the instrument."""
        if self.visa:
            return VisaLink(self.visa, self.timeout)
        assert self.address is not None and self.port is not None
        return SocketLink(self.address, self.port, self.timeout)


_TOML_KEYS = ("address", "port", "visa", "setup", "query", "interval", "timeout", "retry_max")


def load_capture_settings(
    path: str | os.PathLike[str] | None = None, **given: Any
) -> CaptureSettings:
    """Settings from a TOML file's ``[instrument]`` table, with ``given`` values on top.

    Durations may be numbers of seconds or text (``"1s"``, ``"100ms"``); a
    value given as None is taken from the file.
    """
    values: dict[str, Any] = {}
    if path is not None:
        try:
            with open(path, "rb") as fh:
                doc = tomllib.load(fh)
        except OSError as exc:
            raise InputError(f"cannot read the settings: {exc.strerror}", path=str(path)) from None
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"not a TOML file: {exc}", path=str(path)) from None
        table = doc.get("instrument")
        if not isinstance(table, dict):
            raise InputError(
                "no [instrument] table",
                path=str(path),
                hint="write the address, port, setup and query under [instrument]",
            )
        unknown = sorted(set(table) - set(_TOML_KEYS))
        if unknown:
            raise InputError(
                f"unknown key {unknown[0]!r} in [instrument]",
                path=str(path),
                hint=f"the keys are {', '.join(_TOML_KEYS)}",
            )
        values.update(table)
    values.update({k: v for k, v in given.items() if v is not None})
    setup = values.get("setup", ())
    if isinstance(setup, str) or not isinstance(setup, (list, tuple)):
        raise InputError(f"setup must be a list of commands, got {setup!r}")
    if "query" not in values:
        raise InputError(
            "no reading query", hint="give --query (or query in the settings file), e.g. READ?"
        )
    for name in ("interval", "timeout", "retry_max"):
        if name in values:
            values[name] = _seconds(values[name], name, 1e-3, 86400.0)
    return CaptureSettings(
        query=values["query"],
        address=values.get("address"),
        port=values.get("port"),
        visa=values.get("visa"),
        setup=tuple(setup),
        **{k: values[k] for k in ("interval", "timeout", "retry_max") if k in values},
    )


# ---------------------------------------------------------------------------- links
@dataclass
class SocketLink:
    """A raw SCPI socket to one address and port; every operation has a timeout."""

    host: str
    port: int
    timeout: float = 5.0
    opener: Callable[..., socket.socket] = socket.create_connection
    _sock: socket.socket | None = field(default=None, init=False, repr=False)
    _buffer: bytes = field(default=b"", init=False, repr=False)

    @property
    def where(self) -> str:
        return f"{self.host}:{self.port}"

    def connect(self) -> None:
        self.close()
        try:
            self._sock = self.opener((self.host, self.port), timeout=self.timeout)
            self._sock.settimeout(self.timeout)
        except OSError as exc:
            raise LinkLost(_reason(exc)) from None

    def write(self, command: str) -> None:
        if self._sock is None:
            raise LinkLost("not connected")
        try:
            self._sock.sendall(check_command(command).encode("ascii") + b"\n")
        except OSError as exc:
            self.close()
            raise LinkLost(_reason(exc)) from None

    def query(self, command: str) -> str:
        self.write(command)
        assert self._sock is not None
        while b"\n" not in self._buffer:
            if len(self._buffer) > MAX_ANSWER:
                self.close()
                raise LinkLost(f"an answer longer than {MAX_ANSWER} bytes")
            try:
                got = self._sock.recv(MAX_ANSWER)
            except OSError as exc:
                self.close()
                raise LinkLost(_reason(exc)) from None
            if not got:
                self.close()
                raise LinkLost("the instrument closed the connection")
            self._buffer += got
        line, self._buffer = self._buffer.split(b"\n", 1)
        return line.decode("ascii", errors="replace").strip()

    def close(self) -> None:
        sock, self._sock, self._buffer = self._sock, None, b""
        if sock is not None:
            try:
                sock.close()
            except OSError:
                pass


@dataclass
class VisaLink:
    """An instrument reached through VISA (pyvisa with the pyvisa-py backend)."""

    resource: str
    timeout: float = 5.0
    _inst: Any = field(default=None, init=False, repr=False)
    _manager: Any = field(default=None, init=False, repr=False)

    @property
    def where(self) -> str:
        return self.resource

    def connect(self) -> None:
        try:
            import pyvisa  # the optional instruments extra; loaded only for VISA
        except ImportError:
            raise InputError(
                "VISA needs pyvisa and pyvisa-py",
                hint="pip install 'oscillator-stability[instruments]', or use --address and --port",
            ) from None
        self.close()
        try:
            if self._manager is None:
                self._manager = pyvisa.ResourceManager("@py")
            inst = self._manager.open_resource(self.resource)
            inst.timeout = int(self.timeout * 1000)  # milliseconds
            inst.read_termination = "\n"
            inst.write_termination = "\n"
            self._inst = inst
        except (OSError, pyvisa.errors.Error, ValueError) as exc:
            raise LinkLost(str(exc).splitlines()[0] if str(exc) else type(exc).__name__) from None

    def _call(self, name: str, command: str) -> Any:
        if self._inst is None:
            raise LinkLost("not connected")
        import pyvisa

        try:
            return getattr(self._inst, name)(check_command(command))
        except (OSError, pyvisa.errors.Error) as exc:
            self.close()
            raise LinkLost(str(exc).splitlines()[0] if str(exc) else type(exc).__name__) from None

    def write(self, command: str) -> None:
        self._call("write", command)

    def query(self, command: str) -> str:
        return str(self._call("query", command)).strip()

    def close(self) -> None:
        inst, self._inst = self._inst, None
        if inst is not None:
            try:
                inst.close()
            except Exception:  # closing a broken session must not end the capture
                pass


def _reason(exc: OSError) -> str:
    if isinstance(exc, TimeoutError | socket.timeout):
        return "no answer within the timeout"
    return exc.strerror or str(exc) or type(exc).__name__

"""Log a counter's readings to a file that ``stability analyze`` reads as it is.

The log is CSV with a ``#`` comment preamble (the instrument's ``*IDN?``
answer, where it was reached, the setup commands and their answers, the reading
query, the interval and the start time), a header ``time_utc,reading``, and one
line per reading: an ISO 8601 UTC time stamp [1]_ taken when the query was sent
and the answer as the instrument wrote it. Each line is written whole and
flushed, so a reader (``stability watch``) never sees half a reading.

What can go wrong is written down, never skipped in silence:

* an answer that is not a number (an SCPI error string) is written as the
  reading ``error``, which the reader takes as a gap, with a comment line
  holding the instrument's words;
* a lost connection is a comment line; the capture reconnects with a back-off
  (1 s, doubling, at most ``retry_max``), sends the setup again, says in a
  second comment line how long the outage lasted, and the readings missed in
  between are gaps of the time grid;
* the log is never truncated: an existing log is refused, unless ``append``
  resumes it (a comment line marks the resumption).

References
----------
.. [1] ISO 8601-1:2019, *Date and time - Representations for information interchange*.
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.14 (gaps are recorded, not silently removed).
"""

from __future__ import annotations

import math
import os
import re
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import IO

from .._version import __version__
from ..errors import InputError
from ..outputs import Interrupted
from ..units import format_duration
from .scpi import IDENTIFY, CaptureSettings, Link, LinkLost

__all__ = ["Capture", "CaptureResult", "HEADER", "ERROR_READING"]

#: The header line of a capture log.
HEADER = "time_utc,reading"
#: What an answer that is not a number is written as (the reader takes it as a gap).
ERROR_READING = "error"
#: How late (in intervals) a reading may still be taken for its slot.
_LATE = 0.25
_NUMBER = re.compile(r"^[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?$")


def _stamp(moment: datetime) -> str:
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _clean(text: str) -> str:
    """An instrument's answer made safe for one comment line."""
    return "".join(ch if " " <= ch <= "~" else "?" for ch in text)[:200]


@dataclass
class CaptureResult:
    """What a capture wrote."""

    path: Path
    readings: int = 0
    errors: int = 0
    outages: int = 0
    #: Slots missed because an answer came later than the next slot.
    late: int = 0
    identity: str = ""
    stopped: str = ""


@dataclass
class Capture:
    """Query a counter every ``settings.interval`` and append each reading to ``path``.

    Parameters
    ----------
    settings
        The instrument, its setup and its reading query.
    path
        The log to write; refused when it exists, unless ``append``.
    append
        Resume an existing capture log (its header must be this format's).
    link
        The connection (default: ``settings.link()``); injectable for tests.
    now, clock, sleep
        Wall-clock time (UTC), a monotonic clock and sleep; injectable for tests.
    """

    settings: CaptureSettings
    path: str | os.PathLike[str]
    append: bool = False
    link: Link | None = None
    now: Callable[[], datetime] = field(default=lambda: datetime.now(UTC))
    clock: Callable[[], float] = time.monotonic
    sleep: Callable[[float], None] = time.sleep
    on_line: Callable[[str], None] | None = None

    def __post_init__(self) -> None:
        self.path = Path(self.path)
        if self.link is None:
            self.link = self.settings.link()
        self.result = CaptureResult(self.path)
        self._fh: IO[str] | None = None

    # ------------------------------------------------------------------ the log
    def _check_existing(self) -> None:
        """Refuse an existing log (or, to append, one that is not a capture log)."""
        p = self.path
        self._header_written = False
        if not p.exists():
            return
        if not self.append:
            raise InputError(
                "the log exists; capture never overwrites a log",
                path=str(p),
                hint="pass --append to resume it, or give a new file name",
            )
        head = ""
        with open(p, encoding="utf-8", errors="replace") as fh:
            for line in fh:
                if line.strip() and not line.startswith("#"):
                    head = line.strip()
                    break
        if head and head != HEADER:
            raise InputError(
                f"the log's header is {head[:60]!r}, not a capture log's {HEADER!r}",
                path=str(p),
                hint="append only to a log capture wrote, or give a new file",
            )
        self._header_written = bool(head)

    def _open(self) -> IO[str]:
        """Open the log: a new file, or (append) the end of an existing capture log."""
        p = self.path
        if self.append and p.exists():
            cut = p.stat().st_size > 0 and not _ends_with_newline(p)
            fh = open(p, "a", encoding="utf-8", newline="\n")  # held open while capturing
            if cut:
                fh.write("\n")  # a line cut short by an earlier stop becomes its own junk line
            return fh
        try:
            return open(p, "x", encoding="utf-8", newline="\n")  # held open while capturing
        except FileExistsError:
            raise InputError(
                "the log exists; capture never overwrites a log",
                path=str(p),
                hint="pass --append to resume it, or give a new file name",
            ) from None
        except OSError as exc:
            raise InputError(f"cannot create the log: {exc.strerror}", path=str(p)) from None

    def _write(self, line: str) -> None:
        assert self._fh is not None
        self._fh.write(line + "\n")
        self._fh.flush()
        if self.on_line is not None:
            self.on_line(line)

    def _comment(self, text: str) -> None:
        self._write(f"# {_stamp(self.now())} {text}")

    # ------------------------------------------------------------------ the instrument
    def _connect(self) -> list[str]:
        """Connect, identify and send the setup; the preamble lines it gives."""
        assert self.link is not None
        self.link.connect()
        identity = _clean(self.link.query(IDENTIFY))
        lines = [f"instrument: {identity}"]
        if self.result.identity and identity != self.result.identity:
            lines.append(f"note: the instrument now answers {IDENTIFY} differently")
        self.result.identity = identity
        for command in self.settings.setup:
            if command.endswith("?"):
                lines.append(f"setup: {command} -> {_clean(self.link.query(command))}")
            else:
                self.link.write(command)
                lines.append(f"setup: {command}")
        return lines

    def _reconnect(self, reason: str, until: float | None) -> bool:
        """Write the outage and reconnect with back-off; False when the time ran out."""
        self.result.outages += 1
        self._comment(f"connection lost ({_clean(reason)}); reconnecting")
        lost = self.clock()
        wait = 1.0
        while True:
            if until is not None and self.clock() >= until:
                self._comment(f"still no connection after {format_duration(self.clock() - lost)}")
                return False
            self.sleep(min(wait, self.settings.retry_max))
            wait = min(wait * 2, self.settings.retry_max)
            try:
                lines = self._connect()
            except LinkLost:
                continue
            self._comment(
                f"connection restored after {format_duration(self.clock() - lost)}; "
                "readings missed in between are gaps"
            )
            for line in lines:
                if line.startswith("note:"):
                    self._comment(line[len("note: ") :])
            return True

    # ------------------------------------------------------------------ the loop
    def run(self, count: int | None = None, duration: float | None = None) -> CaptureResult:
        """Capture until ``count`` readings, ``duration`` seconds, or Ctrl-C; never raises on it.

        The first connection must succeed (a wrong address is an error); later
        losses are retried. Readings are taken on a fixed grid of the interval
        from the start: a slot missed (an outage, a slow answer) is skipped,
        never made up later.
        """
        if count is not None and (isinstance(count, bool) or int(count) < 1):
            raise InputError(f"count must be a positive number of readings, got {count!r}")
        if duration is not None and not (0 < duration < math.inf):
            raise InputError(f"duration must be a positive number of seconds, got {duration!r}")
        assert self.link is not None
        self._check_existing()  # before the instrument is touched
        try:
            lines = self._connect()
        except LinkLost as exc:
            raise InputError(
                f"cannot reach the instrument at {self.settings.where}: {exc}",
                hint="check the address, the port and that the instrument listens for SCPI",
            ) from None
        self._fh = self._open()
        start = self.clock()
        until = None if duration is None else start + duration
        try:
            self._preamble(lines)
            self._loop(start, count, until)
        except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM/SIGHUP as the CLI handles them
            by_signal = isinstance(exc, Interrupted)
            self.result.stopped = str(exc) if by_signal else "stopped by the user"
        finally:
            try:
                self._comment(
                    f"capture ended ({self.result.stopped or 'done'}): "
                    f"readings {self.result.readings}, error answers {self.result.errors}, "
                    f"outages {self.result.outages}"
                )
            finally:
                self._fh.close()
                self.link.close()
        return self.result

    def _preamble(self, lines: list[str]) -> None:
        started = _stamp(self.now())
        first = "resumed" if self.append and self._header_written else "started"
        self._write(f"# stability capture {__version__}: {first} {started}")
        self._write(f"# address: {self.settings.where}")
        for line in lines:
            self._write(f"# {line}")
        self._write(f"# query: {self.settings.query}")
        # the interval asked for; the stamps say when each reading was taken
        self._write(f"# requested interval: {format_duration(self.settings.interval)}")
        self._write("# readings as answered; 'error' marks an answer that is not a number")
        if not self._header_written:
            self._write(HEADER)
            self._header_written = True

    def _loop(self, start: float, count: int | None, until: float | None) -> None:
        assert self.link is not None
        step = self.settings.interval
        slot = 0
        while count is None or self.result.readings + self.result.errors < count:
            due = start + slot * step
            wait = due - self.clock()
            if until is not None and due >= until:
                self.result.stopped = "duration reached"
                return
            if wait > 0:
                self.sleep(wait)
            moment = self.now()
            try:
                answer = self.link.query(self.settings.query)
            except LinkLost as exc:
                if not self._reconnect(str(exc), until):
                    self.result.stopped = "duration reached"
                    return
                answer = None
            if answer is not None:
                self._reading(moment, answer)
                if count is not None and self.result.readings + self.result.errors >= count:
                    break
            # the next slot not yet passed by more than a quarter interval (a stamp that
            # late still sits on its slot); slots missed stay gaps, never made up
            following = max(slot + 1, math.ceil((self.clock() - start) / step - _LATE))
            if answer is not None and following > slot + 1:
                self.result.late += following - slot - 1
                if self.result.late == following - slot - 1:  # said once, the first time
                    self._comment(
                        "the instrument took longer than the interval to answer; readings "
                        "are missed (gaps): lengthen the interval or shorten the gate time"
                    )
            slot = following
        self.result.stopped = "count reached"

    def _reading(self, moment: datetime, answer: str) -> None:
        text = answer.strip()
        if _NUMBER.match(text) and math.isfinite(float(text)):
            self._write(f"{_stamp(moment)},{text}")
            self.result.readings += 1
            return
        self._write(f"# {_stamp(moment)} the instrument answered {_clean(text)!r}; a gap")
        self._write(f"{_stamp(moment)},{ERROR_READING}")
        self.result.errors += 1


def _ends_with_newline(p: Path) -> bool:
    with open(p, "rb") as fh:
        fh.seek(-1, os.SEEK_END)
        return fh.read(1) == b"\n"

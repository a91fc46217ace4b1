"""A counter log of our own for the live tests, and a writer that grows it in random chunks.

The readings are a 10 MHz oscillator's frequency with seeded white frequency
noise (invented data, a scenario of our own), written one second apart with UTC
stamps, with the things a night's log holds: comment lines, an instrument error
string, a blank line, a stretch of missing readings.
"""

from __future__ import annotations

import os
import random
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

START = datetime(2026, 3, 4, 22, 0, 0, tzinfo=UTC)


def counter_lines(n: int, *, seed: int = 7, start: datetime = START, preamble: bool = True):
    """The lines (without newlines) of a counter log of ``n`` one-second readings."""
    rng = np.random.default_rng(seed)
    out = []
    if preamble:
        out += [
            "# counter log (invented data)",
            f"# started {start:%Y-%m-%dT%H:%M:%SZ}",
            "time_utc,frequency_hz",
        ]
    for i in range(n):
        stamp = (start + timedelta(seconds=i)).strftime("%Y-%m-%dT%H:%M:%S.000Z")
        if i == n // 3:
            out.append(f"# {stamp} connection lost; retrying")
        if n // 3 <= i < n // 3 + 7:
            continue  # readings lost in the outage
        if i == n // 2:
            out.append(f"{stamp},ERROR")
            continue
        if i == (2 * n) // 3:
            out.append("")
        out.append(f"{stamp},{10e6 + 1e-4 * rng.standard_normal():.6f}")
    return out


def counter_bytes(n: int, **kwargs) -> bytes:
    return ("\n".join(counter_lines(n, **kwargs)) + "\n").encode()


class ChunkWriter:
    """Appends a log's bytes to a file in random chunk sizes (cut anywhere, mid-line too)."""

    def __init__(self, path: Path, data: bytes, *, seed: int = 1, lo: int = 1, hi: int = 4000):
        self.path, self.data, self.pos = Path(path), data, 0
        self.rng = random.Random(seed)
        self.lo, self.hi = lo, hi

    @property
    def done(self) -> bool:
        return self.pos >= len(self.data)

    def write(self) -> bytes:
        step = self.rng.randint(self.lo, self.hi)
        piece = self.data[self.pos : self.pos + step]
        with open(self.path, "ab") as fh:
            fh.write(piece)
            fh.flush()
            os.fsync(fh.fileno())
        self.pos += len(piece)
        return piece

    def complete(self) -> bytes:
        """The complete lines written so far."""
        written = self.data[: self.pos]
        return written[: written.rfind(b"\n") + 1]
